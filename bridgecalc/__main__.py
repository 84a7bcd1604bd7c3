"""``python -m bridgecalc``: the same as the ``bridgecalc`` command."""

from .cli import console

console()
