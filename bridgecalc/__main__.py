"""``python -m bridgecalc``: the same as the ``bridgecalc`` command."""

import sys

from .cli import main

sys.exit(main())
