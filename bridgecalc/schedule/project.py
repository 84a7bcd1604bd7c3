"""Project files (model format 1, addition E): a building's junctions, each a
model with its length in the building, read and checked before anything runs.

A project file names each junction's model (a model file or a geometry
script, relative to the project file), the script parameters it is built with
(``set``), its length in the building in metres, and optionally a reference Ψ
to compare with and which pair of environments to count. Every mistake a
project file can hold on its own is found here, with a message naming the
file, the table (``junctions[2]``) and the key; nothing runs and nothing is
written when one is found.
"""

from __future__ import annotations

import math
import os
import re
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import ModelError
from ..model import DIMENSION_SYSTEMS, FORMAT
from ..model.checker import Checker, describe, is_real
from ..model.title_block import TitleBlock
from ..readers import script as scripts
from ..readers.modelfile import parse_toml, read_text
from ..readers.title_block import read_title_block

TOP_LEVEL_KEYS = ("format", "name", "dimension_system", "junctions", "report", "f_rsi_min",
                  "tolerance", "max_nodes")
JUNCTION_KEYS = ("name", "model", "set", "length", "psi_reference", "between")

#: A length written as text with a unit: "42.5 m", "4250 cm", "12 ft".
_LENGTH_WITH_UNIT = re.compile(r"^\s*([-+]?[0-9.]+(?:[eE][-+]?[0-9]+)?)\s*([A-Za-zµ]+)\s*$")
_METRES_PER = {"mm": 1e-3, "cm": 1e-2, "dm": 0.1, "m": 1.0, "km": 1e3}


@dataclass(frozen=True)
class JunctionSpec:
    """One ``[[junctions]]`` entry, checked.

    Attributes
    ----------
    index : int
        Position in the project file, from 0.
    name : str
    model : Path
        The model file or geometry script, resolved against the project file.
    model_text : str
        ``model`` as written in the project file.
    params : dict
        Script parameters (``set``); empty for a model file.
    length : float
        Length of the junction in the building [m].
    psi_reference : float or None
        A value to compare Ψ with [W/(m·K)].
    between : (str, str) or None
        Which Ψ_ij to count.
    folder : str
        The junction's output folder, e.g. ``01-balcony-levels-2-to-6``.
    """

    index: int
    name: str
    model: Path
    model_text: str
    params: dict
    length: float
    psi_reference: float | None = None
    between: tuple[str, str] | None = None
    folder: str = ""

    @property
    def where(self) -> str:
        return f"junctions[{self.index}]"


@dataclass(frozen=True)
class Project:
    """A project file, checked.

    Attributes
    ----------
    origin : str
        The project file as given (named in messages).
    name : str or None
    dimension_system : str or None
        The ISO 14683 dimension system the lengths and Ψ are in.
    junctions : tuple of JunctionSpec
    report : TitleBlock or None
        The ``[report]`` table, the schedule's title block and the default of
        every junction report's.
    f_rsi_min : float or None
        The fRsi criterion [-] each junction is judged against (the
        ``criterion_met`` of a row); None: no verdict.
    tolerance : float or None
        Target relative error of each junction's convergence study [-];
        None: the default of ``bridgecalc run``.
    max_nodes : int or None
        Node budget of each study; None: the default.
    warnings : tuple of str
        What may be a slip but can be meant.
    """

    origin: str
    name: str | None
    dimension_system: str | None
    junctions: tuple
    report: TitleBlock | None = None
    f_rsi_min: float | None = None
    tolerance: float | None = None
    max_nodes: int | None = None
    warnings: tuple = field(default_factory=tuple)


def folder_name(index: int, name: str, count: int) -> str:
    """The output folder of junction ``index`` (from 0) of ``count``:
    ``NN-words-of-its-name``, numbered so that folders sort in file order."""
    width = max(2, len(str(count)))
    slug = re.sub(r"[^a-z0-9]+", "-", name.lower()).strip("-")[:48].strip("-")
    return f"{index + 1:0{width}d}" + (f"-{slug}" if slug else "")


def read_project(path) -> Project:
    """Read and check a project file.

    Parameters
    ----------
    path : str or Path

    Raises
    ------
    ModelError
        Naming the file, the table and the key: not TOML, unknown ``format``,
        unknown keys, an unknown dimension system, no junctions, a junction
        whose model file does not exist, a length missing, negative or
        written as text, two junctions of the same name, a ``set``
        parameter the script does not have or of the wrong type, ``set`` for
        a model file, a malformed ``between`` or ``psi_reference``.
    """
    origin = os.fspath(path)
    check = Checker(origin)
    path = Path(path)
    data = parse_toml(read_text(path, "project file"), check)
    if not data:
        check.fail("", "the file is empty; a project needs format, name, dimension_system "
                       "and [[junctions]]")
    check.keys(data, TOP_LEVEL_KEYS, "")
    if "format" not in data:
        check.fail("format", f"missing; write format = {FORMAT} at the top of the file")
    fmt = data["format"]
    if isinstance(fmt, bool) or not isinstance(fmt, int) or fmt != FORMAT:
        check.fail("format", f"unknown format {describe(fmt)}; this version of bridgecalc "
                             f"reads format {FORMAT}")
    name = check.string(data.get("name"), "name", optional=True)
    warnings = []
    system = check.string(data.get("dimension_system"), "dimension_system", optional=True)
    if system is not None and system not in DIMENSION_SYSTEMS:
        check.fail("dimension_system", f"unknown dimension system {system!r}; use one of "
                                       f"{', '.join(repr(d) for d in DIMENSION_SYSTEMS)} "
                                       f"(ISO 14683)")
    if system is None:
        warnings.append(f"{origin}: dimension_system: not stated; Ψ·l only adds up with "
                        f"lengths and Ψ in one dimension system (ISO 14683): write "
                        f"dimension_system = \"external\", \"overall internal\" or "
                        f"\"internal\"")
    report = read_title_block(check, data.get("report"))
    f_rsi_min = check.number(data.get("f_rsi_min"), "f_rsi_min", optional=True)
    if f_rsi_min is not None and not 0 < f_rsi_min < 1:
        check.fail("f_rsi_min", f"a temperature factor criterion lies between 0 and 1, "
                                f"got {f_rsi_min:g}")
    tolerance = check.number(data.get("tolerance"), "tolerance", optional=True)
    if tolerance is not None and not 0 < tolerance < 1:
        check.fail("tolerance", f"expected a relative error between 0 and 1 (e.g. 0.001 "
                                f"for 0.1 %), got {tolerance:g}")
    max_nodes = data.get("max_nodes")
    if max_nodes is not None and (isinstance(max_nodes, bool) or not isinstance(max_nodes, int)
                                  or max_nodes < 100):
        check.fail("max_nodes", f"expected a whole number of at least 100, "
                                f"got {describe(max_nodes)}")

    tables = data.get("junctions")
    if tables is None:
        check.fail("junctions", "missing; list the building's junctions as [[junctions]] "
                                "tables with name, model and length")
    if not isinstance(tables, list) or not all(isinstance(t, dict) for t in tables):
        check.fail("junctions", f"expected an array of tables written [[junctions]], got "
                                f"{describe(tables)}")
    if not tables:
        check.fail("junctions", "the project lists no junctions")
    seen: dict[str, int] = {}
    modules: dict[Path, object] = {}
    junctions = []
    for i, table in enumerate(tables):
        where = f"junctions[{i}]"
        check.keys(table, JUNCTION_KEYS, where)
        for key in ("name", "model", "length"):
            if key not in table:
                check.fail(f"{where}.{key}", "missing" + (
                    "; give the junction's length in the building in metres, e.g. "
                    "length = 42.5" if key == "length" else ""))
        jname = check.string(table["name"], f"{where}.name").strip()
        if not jname:
            check.fail(f"{where}.name", "empty; give each junction a name")
        if jname in seen:
            check.fail(f"{where}.name", f"{jname!r} is also the name of junctions"
                                        f"[{seen[jname]}]; each junction needs its own name")
        seen[jname] = i
        model_text = check.string(table["model"], f"{where}.model")
        model = (path.parent / model_text).resolve()
        if not model.is_file():
            check.fail(f"{where}.model", f"{model_text}: no such model file or geometry "
                                         f"script (looked for {model})")
        if model.suffix not in (".toml", ".py"):
            check.fail(f"{where}.model", f"{model_text}: expected a model file (.toml) or a "
                                         f"geometry script (.py)")
        length = _length(check, table["length"], f"{where}.length")
        if length == 0:
            warnings.append(f"{origin}: {where}.length: 0 m, so this junction adds nothing "
                            f"to H_TB; give its length in the building or leave it out")
        psi_reference = check.number(table.get("psi_reference"), f"{where}.psi_reference",
                                     optional=True)
        between = _between(check, table.get("between"), f"{where}.between")
        params = _parameters(check, table.get("set"), f"{where}.set", model, model_text,
                             modules)
        junctions.append(JunctionSpec(i, jname, model, model_text, params, length,
                                      psi_reference, between,
                                      folder_name(i, jname, len(tables))))
    return Project(origin, name, system, tuple(junctions), report, f_rsi_min, tolerance,
                   max_nodes, tuple(warnings))


def _length(check: Checker, value, where: str) -> float:
    """A junction's length [m]: a plain number of metres, zero or more."""
    if isinstance(value, str):
        match = _LENGTH_WITH_UNIT.match(value)
        if match and match.group(2) in _METRES_PER:
            number, unit = float(match.group(1)), match.group(2)
            check.fail(where, f"lengths in a project file are numbers of metres, without a "
                              f"unit: write length = {number * _METRES_PER[unit]:g}, "
                              f"not {value!r}")
        check.fail(where, f"expected a number of metres (e.g. length = 42.5), got "
                          f"{describe(value)}")
    if not is_real(value):
        check.fail(where, f"expected a number of metres (e.g. length = 42.5), got "
                          f"{describe(value)}")
    length = check.number(value, where)
    if length < 0:
        check.fail(where, f"a length cannot be negative, got {length:g} m")
    return length


def _between(check: Checker, value, where: str):
    if value is None:
        return None
    if (not isinstance(value, list) or len(value) != 2
            or not all(isinstance(v, str) for v in value)):
        check.fail(where, f"expected the names of two environments, e.g. "
                          f"[\"room\", \"outside\"], got {describe(value)}")
    if value[0] == value[1]:
        check.fail(where, f"names {value[0]!r} twice; give two different environments")
    return (value[0], value[1])


def _parameters(check: Checker, value, where: str, model: Path, model_text: str,
                modules: dict) -> dict:
    """``set``: script parameters, each known to the script and of its default's type."""
    if value is None:
        return {}
    if not isinstance(value, dict):
        check.fail(where, f"expected a table of script parameters, e.g. "
                          f"{{ thermal_break = true }}, got {describe(value)}")
    if not value:
        return {}
    if model.suffix != ".py":
        check.fail(where, f"{model_text} is a model file; set applies to geometry "
                          f"scripts (.py) only")
    if model not in modules:
        try:
            modules[model] = scripts.load_module(model)
        except ModelError:
            modules[model] = None
    if modules[model] is None:
        # a script that does not load is a bad model: its junction fails in
        # its row (with the script's own message), the others are computed
        return dict(value)
    defaults = modules[model].PARAMETERS
    params = {}
    for key, given in value.items():
        place = f"{where}.{key}"
        if key not in defaults:
            known = ", ".join(sorted(defaults))
            check.fail(place, f"{model_text} has no parameter {key!r} (parameters: {known})")
        params[key] = _typed(check, given, defaults[key], place)
    return params


def _typed(check: Checker, given, default, where: str):
    """``given`` as the type of the script's ``default``."""
    if isinstance(default, bool):
        if not isinstance(given, bool):
            check.fail(where, f"expected true or false, got {describe(given)}")
        return given
    if isinstance(default, (int, float)):
        if not is_real(given) or not math.isfinite(float(given)):
            check.fail(where, f"expected a number, got {describe(given)}")
        if isinstance(default, float):
            return float(given)
        return given
    if isinstance(default, str) and not isinstance(given, str):
        check.fail(where, f"expected text, got {describe(given)}")
    return given
