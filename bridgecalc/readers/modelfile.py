"""Model files (TOML, format 1): read, checked and written.

``read``/``loads`` turn a file into a validated :class:`bridgecalc.model.Model`;
``write``/``dumps`` turn any valid model back into a file that reads to the
same model.
"""

from __future__ import annotations

import dataclasses
import os
import sys
import tomllib

import tomli_w

from ..errors import ModelError
from ..model.checker import (Checker, describe, is_real, is_sequence, key_text,
                             material_where)
from ..model.types import (FORMAT, LENGTH_UNITS, AirLayer, Environment, Flanking, Layer,
                           Material, Model, Probe, Region, Surface, air_layer_material)
from ..model.rules import check_air_layer, validate
from .climate import moisture_text, read_moisture
from . import drawing_table
from .title_block import read_title_block


#: Keys each table of a format-1 file may hold (plus ``air_layer``, added by
#: bridgecalc, see docs/model-format.md).
TOP_LEVEL_KEYS = ("format", "name", "length_unit", "dimension_system", "materials", "regions",
                  "environments", "surfaces", "flanking", "probes", "moisture", "drawing",
                  "report")
MATERIAL_KEYS = ("conductivity", "source", "air_layer")
AIR_LAYER_KEYS = ("thickness", "direction", "emissivities")
REGION_KEYS = ("material", "rectangle", "polygon", "holes", "heat_source")
ENVIRONMENT_KEYS = ("name", "temperature", "kind")
SURFACE_KEYS = ("environment", "resistance", "resistance_surface_temperature", "path",
                "assess", "layer")
FLANKING_KEYS = ("name", "between", "u_value", "length", "layers", "surface_resistances")
LAYER_KEYS = ("material", "thickness")
PROBE_KEYS = ("name", "at")

DEFAULT_EMISSIVITIES = (0.9, 0.9)


def read(path) -> Model:
    """Read and validate a model file.

    Parameters
    ----------
    path : str or os.PathLike
        A TOML file in model format 1.

    Raises
    ------
    ModelError
        When the file cannot be read or breaks a rule of the format; the
        message names the file, the table and the key.
    """
    return loads(read_text(path, "model file"), origin=os.fspath(path))


def read_text(path, kind: str) -> str:
    """The text of a TOML file of the tool (a model or a project file).

    Parameters
    ----------
    path : str or os.PathLike
    kind : str
        What the file is, for messages ("model file", "project file").

    Raises
    ------
    ModelError
        When the file is missing, a folder, unreadable or not UTF-8 text.
    """
    origin = os.fspath(path)
    try:
        with open(path, "rb") as fh:
            raw = fh.read()
    except FileNotFoundError:
        raise ModelError(f"{origin}: no such {kind}") from None
    except IsADirectoryError:
        raise ModelError(f"{origin}: is a folder, not a {kind}") from None
    except OSError as exc:
        raise ModelError(f"{origin}: cannot read the {kind} ({exc.strerror or exc})") from None
    try:
        return raw.decode("utf-8-sig")    # a byte-order mark (some Windows editors) is dropped
    except UnicodeDecodeError as exc:
        raise ModelError(f"{origin}: not a text file in UTF-8 (bad byte at position "
                         f"{exc.start}); a {kind} is TOML text") from None


def parse_toml(text: str, check: Checker) -> dict:
    """The tables of TOML ``text``; what TOML or Python cannot read fails ``check``
    with the reason (bad syntax, nesting thousands deep, numbers too long)."""
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        check.fail("", f"not a valid TOML file: {exc}")
    except RecursionError:       # arrays or inline tables nested thousands deep
        check.fail("", "arrays or inline tables are nested too deeply to read; the "
                       "tool's files nest at most a few levels (a polygon's holes: three)")
    except ValueError:           # Python's limit on converting long integers
        check.fail("", "a number in the file has too many digits to read "
                       f"(over {sys.get_int_max_str_digits()})")


def loads(text: str, origin: str = "<string>") -> Model:
    """Parse and validate the text of a model file.

    Parameters
    ----------
    text : str
        TOML text in model format 1.
    origin : str
        Name of the file or source, used in messages.

    Raises
    ------
    ModelError
        When the text breaks a rule of the format.
    """
    check = Checker(origin)
    if not isinstance(text, str):
        check.fail("", f"expected the text of a model file, got {describe(text)}")
    data = parse_toml(text, check)
    if not data:
        check.fail("", "the file is empty; a model needs at least format, length_unit, "
                       "materials, regions, environments and surfaces")
    check.keys(data, TOP_LEVEL_KEYS, "")
    if "format" not in data:
        check.fail("format", f"missing; write format = {FORMAT} at the top of the file")
    if "length_unit" not in data:
        check.fail("length_unit", "missing; write length_unit = \"mm\" or \"m\"")
    fmt = data["format"]
    if isinstance(fmt, bool) or not isinstance(fmt, int):
        check.fail("format", f"expected the integer {FORMAT}, got {describe(fmt)}")
    if fmt != FORMAT:
        check.fail("format", f"unknown format {fmt}; this version of bridgecalc reads "
                             f"format {FORMAT}")
    unit = check.string(data["length_unit"], "length_unit")
    if unit not in LENGTH_UNITS:
        check.fail("length_unit", f"unknown unit {unit!r}; use one of "
                                  f"{', '.join(repr(u) for u in LENGTH_UNITS)}")

    materials = {}
    for name, table in _table(check, data, "materials").items():
        where = material_where(name)
        table = _require_table(check, table, where)
        check.keys(table, MATERIAL_KEYS, where)
        materials[name] = _read_material(check, name, table, where, unit)

    regions = []
    for i, table in enumerate(_array_of_tables(check, data, "regions")):
        where = f"regions[{i}]"
        check.keys(table, REGION_KEYS, where)
        if "rectangle" in table and "polygon" in table:
            check.fail(where, "give either rectangle or polygon, not both")
        if "rectangle" not in table and "polygon" not in table:
            check.fail(where, "give the region's shape as rectangle = [x0, y0, x1, y1] "
                              "or polygon = [[x, y], ...]")
        material = _required(check, table, "material", where)
        heat_source = table.get("heat_source", 0.0)
        heat_source = _as_float(heat_source)
        holes = table.get("holes", [])
        if not isinstance(holes, list):
            check.fail(f"{where}.holes", f"expected a list of polygons [[[x, y], ...], ...], "
                                         f"got {describe(holes)}")
        holes = tuple(tuple(check.points(hole, f"{where}.holes[{k}]", 3, "a hole"))
                      for k, hole in enumerate(holes))
        if "rectangle" in table:
            rect = table["rectangle"]
            if not is_sequence(rect) or len(rect) != 4:
                check.fail(f"{where}.rectangle",
                           f"expected four numbers [x0, y0, x1, y1], got {describe(rect)}")
            x0, y0, x1, y1 = (check.coordinate(c, f"{where}.rectangle[{k}]")
                              for k, c in enumerate(rect))
            regions.append(dataclasses.replace(
                Region.rectangle(material, x0, y0, x1, y1, heat_source), holes=holes))
        else:
            vertices = check.points(table["polygon"], f"{where}.polygon", 3, "a polygon")
            regions.append(Region(material, tuple(vertices), heat_source, "polygon", holes))

    environments = []
    for i, table in enumerate(_array_of_tables(check, data, "environments")):
        where = f"environments[{i}]"
        check.keys(table, ENVIRONMENT_KEYS, where)
        environments.append(Environment(
            _required(check, table, "name", where),
            _as_float(_required(check, table, "temperature", where)),
            _required(check, table, "kind", where)))

    surfaces = []
    for i, table in enumerate(_array_of_tables(check, data, "surfaces")):
        where = f"surfaces[{i}]"
        check.keys(table, SURFACE_KEYS, where)
        if "layer" in table:            # the paths come from a drawing (addition C)
            if "path" in table:
                check.fail(where, "give either path or layer, not both")
            if "drawing" not in data:
                check.fail(f"{where}.layer", "takes its paths from a drawing; add a "
                                             "[drawing] table naming it")
            path = ()
        else:
            path = tuple(check.points(_required(check, table, "path", where), f"{where}.path",
                                      2, "a surface path"))
        surface = Surface(
            _required(check, table, "environment", where),
            _as_float(_required(check, table, "resistance", where)),
            path,
            _as_float(table.get("resistance_surface_temperature")),
            table.get("assess", True))
        if "layer" in table:
            surface = drawing_table.LayerSurface(
                i, check.string(table["layer"], f"{where}.layer"), surface)
        surfaces.append(surface)

    flanking = []
    for i, table in enumerate(_array_of_tables(check, data, "flanking")):
        where = f"flanking[{i}]"
        check.keys(table, FLANKING_KEYS, where)
        stack = None
        if "layers" in table:
            raw_layers = table["layers"]
            if not isinstance(raw_layers, list):
                check.fail(f"{where}.layers", "expected a list of "
                           f"{{ material = ..., thickness = ... }} tables, got "
                           f"{describe(raw_layers)}")
            stack = []
            for j, layer in enumerate(raw_layers):
                lwhere = f"{where}.layers[{j}]"
                layer = _require_table(check, layer, lwhere)
                check.keys(layer, LAYER_KEYS, lwhere)
                stack.append(Layer(_required(check, layer, "material", lwhere),
                                   _as_float(_required(check, layer, "thickness", lwhere))))
            stack = tuple(stack)
        resistances = table.get("surface_resistances")
        if resistances is not None:
            resistances = (tuple(_as_float(r) for r in resistances)
                           if isinstance(resistances, list) else resistances)
        between = table.get("between")
        if isinstance(between, list):
            between = tuple(between)
        flanking.append(Flanking(
            _required(check, table, "name", where),
            _as_float(_required(check, table, "length", where)),
            _as_float(table.get("u_value")),
            stack,
            resistances,
            between))

    probes = []
    for i, table in enumerate(_array_of_tables(check, data, "probes")):
        where = f"probes[{i}]"
        check.keys(table, PROBE_KEYS, where)
        at = check.point(_required(check, table, "at", where), f"{where}.at")
        probes.append(Probe(_required(check, table, "name", where), at))

    moisture = (read_moisture(check, data["moisture"], origin, environments)
                if "moisture" in data else None)
    drawn = None
    if "drawing" in data:               # regions and surface paths from a drawing (addition C)
        drawn = drawing_table.read_table(check, data["drawing"], origin, unit, materials,
                                         surfaces)
        regions, surfaces = drawn.regions + regions, drawn.surfaces
    model = Model(length_unit=unit, materials=materials, regions=regions,
                  environments=environments, surfaces=surfaces, flanking=flanking,
                  probes=probes, name=data.get("name"),
                  dimension_system=data.get("dimension_system"), moisture=moisture,
                  origin=origin, format=fmt, drawing=drawn.source if drawn else None,
                  report=read_title_block(check, data.get("report")))
    validate(model)
    return model


def _as_float(value):
    """Numbers become float; anything else (including an integer too large for a
    float) is kept for validate() to name."""
    if not is_real(value):
        return value
    try:
        return float(value)
    except OverflowError:
        return value


def _required(check: Checker, table: dict, key: str, where: str):
    if key not in table:
        check.fail(f"{where}.{key}", "missing")
    return table[key]


def _require_table(check: Checker, value, where: str) -> dict:
    if not isinstance(value, dict):
        check.fail(where, f"expected a table, got {describe(value)}")
    return value


def _table(check: Checker, data: dict, key: str) -> dict:
    value = data.get(key, {})
    if not isinstance(value, dict):
        check.fail(key, f"expected a table such as [{key}.NAME], got {describe(value)}")
    return value


def _array_of_tables(check: Checker, data: dict, key: str) -> list:
    value = data.get(key, [])
    if not isinstance(value, list):
        check.fail(key, f"expected an array of tables written [[{key}]], got "
                        f"{describe(value)}")
    for i, item in enumerate(value):
        _require_table(check, item, f"{key}[{i}]")
    return value


def _read_material(check: Checker, name: str, table: dict, where: str,
                   unit: str) -> Material:
    source = table.get("source")
    has_k, has_air = "conductivity" in table, "air_layer" in table
    if has_k and has_air:
        check.fail(where, "give either conductivity or air_layer, not both")
    if not has_k and not has_air:
        check.fail(f"{where}.conductivity",
                   "missing; give conductivity [W/(m·K)] or an air_layer table")
    if has_k:
        return Material(name, _as_float(table["conductivity"]), source)
    awhere = f"{where}.air_layer"
    air = _require_table(check, table["air_layer"], awhere)
    check.keys(air, AIR_LAYER_KEYS, awhere)
    thickness = check.number(_required(check, air, "thickness", awhere),
                             f"{awhere}.thickness", minimum=0.0, strictly=True)
    direction = _required(check, air, "direction", awhere)
    emissivities = air.get("emissivities", list(DEFAULT_EMISSIVITIES))
    if is_sequence(emissivities):
        emissivities = tuple(_as_float(e) for e in emissivities)
    layer = AirLayer(thickness, direction, emissivities)
    check_air_layer(check, layer, awhere)
    return air_layer_material(name, layer, unit, source)


# -- writer --------------------------------------------------------------------

#: Arrays longer than this are written one item per line.
_LINE_WIDTH = 88


def _number_text(value) -> str:
    """A number as TOML: integral values without a fraction, others exactly."""
    value = float(value)
    if value.is_integer() and abs(value) < 2 ** 53:
        return str(int(value))
    return repr(value)


def _value_text(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return tomli_w.dumps({"v": value})[4:-1]
    if isinstance(value, dict):
        inner = ", ".join(f"{key_text(k)} = {_value_text(v)}" for k, v in value.items())
        return "{ " + inner + " }"
    if is_sequence(value):
        return "[" + ", ".join(_value_text(v) for v in value) + "]"
    return _number_text(value)


def _assignment(key: str, value) -> str:
    line = f"{key_text(key)} = {_value_text(value)}"
    if len(line) <= _LINE_WIDTH or not is_sequence(value) or not value:
        return line
    items = "".join(f"    {_value_text(v)},\n" for v in value)
    return f"{key_text(key)} = [\n{items}]"


def dumps(model: Model, drawing: dict | None = None) -> str:
    """The model as the text of a format-1 model file.

    The model is validated first, so the text always reads back: ``loads(dumps(m))``
    equals ``m``. A model read from a drawing is written self-contained, its
    regions and surface paths as polygons and polylines.

    Parameters
    ----------
    model : Model
    drawing : dict, optional
        ``{"table": [drawing] content, "surface_layers": [layer per surface]}``
        (:func:`bridgecalc.readers.dxf_writer.write_drawing`): the file then takes
        its regions and surface paths from that drawing instead.

    Raises
    ------
    ModelError
        When the model breaks a rule of the format.
    """
    validate(model)
    out = ["# bridgecalc model file; lengths in " + model.length_unit,
           f"format = {model.format}"]
    if model.drawing is not None and drawing is None:
        out.insert(1, f"# regions and surface paths as read from the drawing "
                      f"{model.drawing.file} in {model.drawing.unit}")
    if model.name is not None:
        out.append(_assignment("name", model.name))
    out.append(_assignment("length_unit", model.length_unit))
    if model.dimension_system is not None:
        out.append(_assignment("dimension_system", model.dimension_system))
    for key, mat in model.materials.items():
        out += ["", f"[{material_where(key)}]"]
        if mat.air_layer is None:
            out.append(_assignment("conductivity", mat.conductivity))
        if mat.source is not None:
            out.append(_assignment("source", mat.source))
        if mat.air_layer is not None:
            air = mat.air_layer
            out.append(_assignment("air_layer", {
                "thickness": air.thickness, "direction": air.direction,
                "emissivities": list(air.emissivities)}))
    if drawing is not None:
        out += ["", "[drawing]"] + [_assignment(k, v) for k, v in drawing["table"].items()]
    for region in model.regions if drawing is None else ():
        out += ["", "[[regions]]", _assignment("material", region.material)]
        if region.shape == "rectangle":
            (x0, y0), (x1, y1) = region.vertices[0], region.vertices[2]
            out.append(_assignment("rectangle", [x0, y0, x1, y1]))
        else:
            out.append(_assignment("polygon", [list(v) for v in region.vertices]))
        if region.holes:
            out.append(_assignment("holes", [[list(v) for v in hole] for hole in region.holes]))
        if region.heat_source != 0:
            out.append(_assignment("heat_source", region.heat_source))
    for env in model.environments:
        out += ["", "[[environments]]", _assignment("name", env.name),
                _assignment("temperature", env.temperature), _assignment("kind", env.kind)]
    for k, surf in enumerate(model.surfaces):
        out += ["", "[[surfaces]]", _assignment("environment", surf.environment),
                _assignment("resistance", surf.resistance)]
        if surf.resistance_surface_temperature is not None:
            out.append(_assignment("resistance_surface_temperature",
                                   surf.resistance_surface_temperature))
        if drawing is None:
            out.append(_assignment("path", [list(p) for p in surf.path]))
        else:
            out.append(_assignment("layer", drawing["surface_layers"][k]))
        if not surf.assess:
            out.append(_assignment("assess", False))
    for flank in model.flanking:
        out += ["", "[[flanking]]", _assignment("name", flank.name)]
        if flank.between is not None:
            out.append(_assignment("between", list(flank.between)))
        if flank.u_value is not None:
            out.append(_assignment("u_value", flank.u_value))
        else:
            out.append(_assignment("layers", [{"material": layer.material,
                                               "thickness": layer.thickness}
                                              for layer in flank.layers]))
            if flank.surface_resistances is not None:
                out.append(_assignment("surface_resistances",
                                       list(flank.surface_resistances)))
        out.append(_assignment("length", flank.length))
    for probe in model.probes:
        out += ["", "[[probes]]", _assignment("name", probe.name),
                _assignment("at", list(probe.at))]
    if model.moisture is not None:
        out += ["", *moisture_text(model.moisture, _assignment)]
    if model.report is not None:
        out += ["", "[report]"] + [_assignment(k, v) for k, v in model.report.to_dict().items()]
    return "\n".join(out) + "\n"


def write(model: Model, path) -> None:
    """Write the model to ``path`` as a format-1 model file (UTF-8).

    The text is built (and the model validated) before the file is opened, so
    a model that breaks a rule leaves no file behind.

    Raises
    ------
    ModelError
        When the model breaks a rule, or the file cannot be written.
    """
    text = dumps(model)
    try:
        with open(path, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
    except OSError as exc:
        raise ModelError(f"{os.fspath(path)}: cannot write the model file "
                         f"({exc.strerror or exc})") from None
