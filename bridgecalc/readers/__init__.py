"""What a model is read from, one module per kind of file.

:func:`read` picks the reader by the file's suffix: ``.toml`` model files
(:mod:`.modelfile`), ``.py`` geometry scripts (:mod:`.script`).
"""

from __future__ import annotations

from pathlib import Path

from ..errors import ModelError
from . import modelfile, script


def read(path, **params):
    """A validated model from a model file (``.toml``) or a geometry script (``.py``).

    Parameters
    ----------
    path : str or Path
    **params
        Geometry script parameters overriding its defaults.

    Raises
    ------
    ModelError
        When the file cannot be read or breaks a rule; the message names the
        file, the table and the key.
    """
    path = Path(path)
    if path.suffix == ".py":
        return script.build(path, params)
    if params:
        raise ModelError(f"{path}: parameters apply to geometry scripts only, not model files")
    return modelfile.read(path)
