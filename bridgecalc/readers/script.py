"""Geometry scripts: Python files that build a model from parameters.

A script defines ``PARAMETERS``, a dict of defaults (units in the names), and
``build(**params)``, which returns a :class:`bridgecalc.Model`. A module-level
``DIMENSION_SYSTEM`` string states the model's dimension system when the
model it builds does not.
"""

from __future__ import annotations

import importlib.util
import sys
import uuid
from pathlib import Path

from ..errors import BridgecalcError, ModelError
from ..model import Model


def load_module(path):
    """Import a geometry script by path, without touching sys.modules for good."""
    path = Path(path)
    if path.is_dir():
        raise ModelError(f"{path}: is a folder, not a geometry script")
    if not path.is_file():
        raise ModelError(f"{path}: no such geometry script")
    name = f"bridgecalc_script_{uuid.uuid4().hex}"
    spec = importlib.util.spec_from_file_location(name, path)
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module             # dataclasses in scripts need their module registered
    try:
        spec.loader.exec_module(module)
    except BridgecalcError:
        raise
    except (Exception, SystemExit) as exc:  # a user's script: report, do not crash
        raise ModelError(f"{path}: the geometry script failed to load: "
                         f"{_failure(exc)}") from exc
    finally:
        sys.modules.pop(name, None)
    for attribute in ("PARAMETERS", "build"):
        if not hasattr(module, attribute):
            raise ModelError(f"{path}: a geometry script must define {attribute}")
    if not isinstance(module.PARAMETERS, dict):
        raise ModelError(f"{path}: PARAMETERS must be a dict of parameter defaults")
    return module


def _failure(exc: BaseException) -> str:
    """What went wrong in a user's script, in one line."""
    if isinstance(exc, SystemExit):     # sys.exit() would end bridgecalc with its code
        return f"it called sys.exit({exc.code!r})"
    return f"{type(exc).__name__}: {exc}"


def parse_value(text: str, default):
    """A ``--set`` value, read as the type of the parameter's default."""
    if isinstance(default, bool):
        lowered = text.strip().lower()
        if lowered in ("true", "yes", "1", "on"):
            return True
        if lowered in ("false", "no", "0", "off"):
            return False
        raise ValueError("expected true or false")
    if isinstance(default, int):
        try:
            return int(text)
        except ValueError:
            return float(text)
    if isinstance(default, float):
        return float(text)
    return text


def parse_assignments(module, assignments, origin) -> dict:
    """``["name=value", ...]`` -> parameters, checked against PARAMETERS."""
    params = {}
    for item in assignments or ():
        name, sep, text = item.partition("=")
        name = name.strip()
        if not sep or not name:
            raise ModelError(f"--set {item!r}: expected NAME=VALUE")
        if name not in module.PARAMETERS:
            known = ", ".join(sorted(module.PARAMETERS))
            raise ModelError(f"{origin}: --set {name}: no such parameter (parameters: {known})")
        try:
            params[name] = parse_value(text, module.PARAMETERS[name])
        except ValueError as exc:
            raise ModelError(f"{origin}: --set {name}={text}: {exc}") from None
    return params


def build(path, params=None, module=None) -> Model:
    """Run a geometry script's ``build`` with its defaults updated by ``params``.

    ``module`` is the script as :func:`load_module` returned it, when the
    caller has loaded it already (so the script is executed once).
    """
    if module is None:
        module = load_module(path)
    params = dict(params or {})
    unknown = sorted(set(params) - set(module.PARAMETERS))
    if unknown:
        known = ", ".join(sorted(module.PARAMETERS))
        raise ModelError(f"{path}: no such parameter {', '.join(unknown)} (parameters: {known})")
    values = {**module.PARAMETERS, **params}
    try:
        model = module.build(**values)
    except BridgecalcError:
        raise
    except (Exception, SystemExit) as exc:
        raise ModelError(f"{path}: build() failed: {_failure(exc)}") from exc
    if not isinstance(model, Model):
        raise ModelError(f"{path}: build() must return a bridgecalc.Model, "
                         f"got {type(model).__name__}")
    if model.origin == "<model>":
        model.origin = str(path)
    stated = getattr(module, "DIMENSION_SYSTEM", None)
    if model.dimension_system is None and isinstance(stated, str):
        model.dimension_system = stated       # validated with the rest of the model
    return model


#: Units read from the end of a parameter's name, when its comment gives none.
NAME_UNITS = (("_w_mk", "W/(m·K)"), ("_m2k_w", "m²·K/W"), ("_mm", "mm"), ("_deg", "°"),
              ("_c", "°C"), ("_m", "m"))


def parameter_table(path) -> list[tuple[str, object, str, str]]:
    """A geometry script's parameters: (name, default, unit, note) each, in its order.

    The note is the comment on the parameter's line of ``PARAMETERS`` in the
    script's source; the unit is the last ``[...]`` in that comment, or
    follows from the name's ending (:data:`NAME_UNITS`), or is empty.

    Raises
    ------
    ModelError
        When ``path`` is no geometry script (:func:`load_module`).
    """
    import re
    path = Path(path)
    module = load_module(path)
    comments = {}
    try:
        source = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError):
        source = ""
    for line in source.splitlines():
        found = re.match(r"""\s*["'](\w+)["']\s*:.*?#\s*(.*?)\s*$""", line)
        if found and found.group(1) in module.PARAMETERS:
            comments.setdefault(found.group(1), found.group(2))
    rows = []
    for name, default in module.PARAMETERS.items():
        note = comments.get(name, "")
        brackets = list(re.finditer(r"\[([^\[\]]+)\]", note))
        unit = ""
        if brackets:
            unit = brackets[-1].group(1)
            note = " ".join((note[:brackets[-1].start()] + note[brackets[-1].end():]).split())
        else:
            unit = next((u for suffix, u in NAME_UNITS if name.endswith(suffix)), "")
        rows.append((name, default, unit, note))
    return rows
