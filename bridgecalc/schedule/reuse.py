"""Reusing a junction's results from the schedule's previous run.

A junction is computed again only when something that can change its
results or its outputs changed: the model as built (after its script ran with
its parameters; the model is hashed, not the file, so an edit that builds the
same model changes nothing), the calculation's options, or the tool (its
version, and the fingerprint of its code and solver libraries that the
validation stamp uses). Otherwise its row and its folder are taken from the
schedule already in the output folder.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import os
import shutil
from pathlib import Path

import numpy as np

#: The schedule's own file in its folder.
SCHEDULE_FILE = "schedule.json"


def _canonical(value, out: list) -> None:
    """Append a canonical text of ``value`` to ``out``: dataclasses field by
    field (fields that are not part of the value, ``compare=False``, left
    out), floats exactly (``repr``), containers in their order."""
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        out.append(f"<{type(value).__name__}")
        for f in dataclasses.fields(value):
            if f.compare:
                out.append(f" {f.name}=")
                _canonical(getattr(value, f.name), out)
        out.append(">")
    elif isinstance(value, dict):
        out.append("{")
        for key, item in value.items():
            _canonical(key, out)
            out.append(":")
            _canonical(item, out)
            out.append(",")
        out.append("}")
    elif isinstance(value, (list, tuple)):
        out.append("[")
        for item in value:
            _canonical(item, out)
            out.append(",")
        out.append("]")
    elif isinstance(value, np.ndarray):
        out.append(f"array{value.dtype.str}{value.shape}:{value.tobytes().hex()}")
    elif isinstance(value, (bool, np.bool_)):
        out.append("true" if value else "false")
    elif isinstance(value, (float, np.floating)):
        out.append(repr(float(value)))
    elif isinstance(value, (int, np.integer)):
        out.append(str(int(value)))
    elif value is None or isinstance(value, str):
        out.append(json.dumps(value, ensure_ascii=True))
    else:
        out.append(f"{type(value).__name__}:{value!r}")


def model_digest(model) -> str:
    """SHA-256 of the model's content (not of the file it came from)."""
    out: list = []
    _canonical(model, out)
    return hashlib.sha256("".join(out).encode("utf-8")).hexdigest()


def tool_identity() -> str:
    """The tool's version and the fingerprint of its build (code and solver
    libraries, :func:`bridgecalc.validation.stamp.cache_key`), read now."""
    import bridgecalc
    from ..validation.stamp import cache_key
    return f"bridgecalc {bridgecalc.__version__} build {cache_key()[:16]}"


def reuse_key(model, options: dict, between, tool: str) -> str:
    """What a junction's results depend on, as one digest.

    Parameters
    ----------
    model : Model
        As built (after its script ran).
    options : dict
        The calculation's and the outputs' options (tolerance, node budget,
        fRsi criterion).
    between : (str, str) or None
        The pair whose Ψ the row counts.
    tool : str
        :func:`tool_identity`.
    """
    out = [tool, "\n", model_digest(model), "\n"]
    _canonical(dict(sorted(options.items())), out)
    _canonical(None if between is None else list(between), out)
    return hashlib.sha256("".join(out).encode("utf-8")).hexdigest()


def previous_entries(out_dir) -> dict:
    """The junctions computed by the schedule already in ``out_dir``, by reuse key.

    Returns
    -------
    dict of str to (dict, Path)
        Each computed junction's entry of schedule.json and its folder; only
        junctions that were computed without error and whose folder still
        holds its results. Empty when ``out_dir`` holds no readable schedule.
    """
    out_dir = Path(out_dir)
    try:
        data = json.loads((out_dir / SCHEDULE_FILE).read_text(encoding="utf-8"))
        entries = list(data["junctions"])
    except (OSError, ValueError, KeyError, TypeError):
        return {}
    found = {}
    for entry in entries:
        if not isinstance(entry, dict):
            continue
        key, folder = entry.get("reuse_key"), entry.get("folder")
        if entry.get("status") != "ok" or not isinstance(key, str) or not isinstance(folder, str):
            continue
        source = out_dir / folder
        if (Path(folder).name == folder and (source / "results.json").is_file()
                and (source / "report.html").is_file()):
            found[key] = (entry, source)
    return found


def copy_file(source, target) -> None:
    """A hard link where the file system allows one (no data copied), else a copy."""
    try:
        os.link(source, target)
    except OSError:
        shutil.copy2(source, target)


def copy_folder(source: Path, target: Path) -> None:
    """The previous run's junction folder, into the new schedule's staging folder."""
    shutil.copytree(source, target, copy_function=copy_file)
