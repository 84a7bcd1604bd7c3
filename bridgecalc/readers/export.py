"""Any model written out: a self-contained model file, or a DXF drawing with the
model file that reads it (model format 1, addition C).

Files are written whole or not at all: each to a temporary name in its
folder, renamed into place at the end.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from ..errors import BridgecalcError
from ..model.rules import validate
from ..model.types import Model
from . import dxf_writer, modelfile

#: What ``--to`` may end in.
SUFFIXES = (".toml", ".dxf")


def _sources(model: Model) -> set[Path]:
    """The files a model was read from (its model file and drawing)."""
    out = set()
    origin = Path(model.origin)
    if origin.is_file():
        out.add(origin.resolve())
        if model.drawing is not None:
            out.add((origin.parent / model.drawing.file).resolve())
    return out


def export(model: Model, to) -> list[Path]:
    """Write ``model`` to ``to``: a ``.toml`` model file with every region a
    polygon and every surface a path, or a ``.dxf`` drawing plus the model
    file (same name, ``.toml``) that reads it.

    Returns
    -------
    list of Path
        The files written.

    Raises
    ------
    BridgecalcError
        For another suffix, a target that is one of the model's own files,
        or a folder that cannot be written.
    """
    to = Path(to)
    if to.suffix.lower() not in SUFFIXES:
        raise BridgecalcError(f"--to {to}: write a model file (.toml) or a drawing (.dxf)")
    validate(model)
    if to.suffix.lower() == ".toml":
        texts = {to: modelfile.dumps(model)}
        doc = None
    else:
        companion = to.with_suffix(".toml")
        doc, drawing = dxf_writer.write_drawing(model, to, to.name)
        texts = {companion: modelfile.dumps(model, drawing)}
    targets = [to] + [p for p in texts if p != to]
    own = _sources(model)
    for target in targets:
        if target.resolve() in own:
            raise BridgecalcError(f"--to {to}: would overwrite {target}, which the model "
                                  f"was read from; choose another name")
        if target.exists() and target.is_dir():
            raise BridgecalcError(f"--to {to}: {target} is a folder")
    folder = to.parent if str(to.parent) else Path(".")
    if not folder.is_dir():
        raise BridgecalcError(f"--to {to}: no folder {folder}")
    staged = {}
    try:
        for target in targets:
            fd, name = tempfile.mkstemp(prefix=f".{target.name}.", dir=target.parent)
            os.close(fd)
            staged[target] = Path(name)
            os.chmod(name, 0o644)          # as a plain new file, not mkstemp's 0600
            if target in texts:
                staged[target].write_text(texts[target], encoding="utf-8", newline="\n")
            else:
                dxf_writer.save(doc, staged[target])
        for target in targets:
            os.replace(staged[target], target)
    except OSError as exc:
        raise BridgecalcError(f"--to {to}: cannot write ({exc.strerror or exc})") from None
    finally:
        for path in staged.values():
            if path.exists():
                path.unlink()
    return targets
