"""The model: plain data describing one junction's cross-section.

The dataclasses here hold the same content as a model file (format 1, see
``docs/model-format.md``). Coordinates, thicknesses and lengths are kept in the
model's own ``length_unit`` exactly as written, so that a model written back to
a file reads as the user wrote it; later stages convert to metres once, with
:attr:`Model.metres_per_unit`.

Validation lives here so that every later stage can trust its input. No gmsh,
and no numerics beyond coordinates.
"""

from __future__ import annotations

import difflib
import math
import numbers
import os
import re
import sys
import tomllib
from dataclasses import dataclass, field

import numpy as np
import shapely
import tomli_w

from . import geometry, layers as iso6946
from .errors import ModelError

FORMAT = 1
LENGTH_UNITS = {"mm": 1e-3, "m": 1.0}
ENVIRONMENT_KINDS = ("interior", "exterior")
#: 0 K in °C, by the definition of the Celsius scale (ISO 80000-5, from memory).
ABSOLUTE_ZERO = -273.15
#: Largest |coordinate| accepted, in the model's length unit [mm or m]: 1000 km
#: in mm, more than any projected survey grid in m; beyond it squares of
#: coordinates lose their meaning in the geometry checks (1e200² overflows).
MAX_COORDINATE = 1e9

Point = tuple[float, float]


@dataclass(frozen=True)
class AirLayer:
    """An unventilated air layer treated as a solid of equivalent conductivity.

    Added by bridgecalc to format 1 (``docs/model-format.md``, "Keys added by
    bridgecalc"). The equivalent conductivity is λ = d / R with R from
    ISO 6946:2017 Annex D, see :func:`bridgecalc.layers.air_layer_conductivity`.

    Attributes
    ----------
    thickness : float
        d, the layer thickness in the direction of heat flow [length_unit].
    direction : str
        Heat-flow direction: ``"horizontal"``, ``"upward"`` or ``"downward"``.
    emissivities : (float, float)
        Hemispherical emissivities of the two bounding surfaces [-], in (0, 1].
    """

    thickness: float
    direction: str = "horizontal"
    emissivities: tuple[float, float] = (0.9, 0.9)


@dataclass(frozen=True)
class Material:
    """A solid material.

    Attributes
    ----------
    name : str
        Key of the material under ``[materials]``.
    conductivity : float
        Design thermal conductivity λ [W/(m·K)].
    source : str or None
        Free text saying where λ comes from; carried to the report.
    air_layer : AirLayer or None
        Set when the material is an unventilated air layer; ``conductivity``
        is then its equivalent conductivity, see :func:`air_layer_material`.
    """

    name: str
    conductivity: float
    source: str | None = None
    air_layer: AirLayer | None = None


@dataclass(frozen=True)
class Region:
    """A polygon of one material; later regions are drawn over earlier ones.

    Attributes
    ----------
    material : str
        Name of a material of the model.
    vertices : tuple of (x, y)
        Polygon vertices [length_unit], closed implicitly.
    heat_source : float
        Uniform heat generation over the region's visible part [W/m³].
    shape : str
        ``"rectangle"`` or ``"polygon"``: how the region is written to a file.
    """

    material: str
    vertices: tuple[Point, ...]
    heat_source: float = 0.0
    shape: str = "polygon"

    @classmethod
    def rectangle(cls, material: str, x0: float, y0: float, x1: float, y1: float,
                  heat_source: float = 0.0) -> "Region":
        """A rectangle from corner (x0, y0) to (x1, y1) [length_unit]."""
        vertices = ((x0, y0), (x1, y0), (x1, y1), (x0, y1))
        return cls(material, vertices, heat_source, "rectangle")

    @classmethod
    def polygon(cls, material: str, vertices, heat_source: float = 0.0) -> "Region":
        """A simple polygon through ``vertices`` [length_unit]."""
        return cls(material, tuple((float(x), float(y)) for x, y in vertices),
                   heat_source, "polygon")


@dataclass(frozen=True)
class Environment:
    """An air space or held temperature that touches the model.

    Attributes
    ----------
    name : str
        Unique name.
    temperature : float
        Air or held temperature [°C].
    kind : str
        ``"interior"`` or ``"exterior"``.
    """

    name: str
    temperature: float
    kind: str


@dataclass(frozen=True)
class Surface:
    """Outline edges facing one environment through a surface resistance.

    Attributes
    ----------
    environment : str
        Name of the environment the edges face.
    resistance : float
        Surface resistance for heat flow and Ψ [m²·K/W]; 0 holds the surface
        at the environment temperature.
    path : tuple of (x, y)
        Polyline [length_unit]; every outline edge lying on it gets this
        condition.
    resistance_surface_temperature : float or None
        Surface resistance for θsi,min and fRsi [m²·K/W] (ISO 13788);
        ``None`` means the same as ``resistance``.
    """

    environment: str
    resistance: float
    path: tuple[Point, ...]
    resistance_surface_temperature: float | None = None

    @property
    def resistance_for_surface_temperature(self) -> float:
        """Resistance used in the surface-temperature case [m²·K/W]."""
        if self.resistance_surface_temperature is None:
            return self.resistance
        return self.resistance_surface_temperature


@dataclass(frozen=True)
class Layer:
    """One plane layer of a flanking element's build-up.

    Attributes
    ----------
    material : str
        Name of a material of the model.
    thickness : float
        Layer thickness [length_unit].
    """

    material: str
    thickness: float


@dataclass(frozen=True)
class Flanking:
    """A flanking element j for Ψ = L2D − Σ Uj·lj (ISO 10211, 10.4).

    Give either ``u_value`` or ``layers`` (with optional
    ``surface_resistances``), from which U is computed by ISO 6946 for plane
    layers.

    Attributes
    ----------
    name : str
        Shown in outputs.
    length : float
        Length lj over which U applies [length_unit], in the dimension system
        the user chose.
    u_value : float or None
        Thermal transmittance Uj [W/(m²·K)].
    layers : tuple of Layer or None
        Build-up from the interior to the exterior side.
    surface_resistances : (float, float) or None
        (Rsi, Rse) [m²·K/W] for the layer calculation; default (0.13, 0.04),
        ISO 6946 horizontal heat flow (from memory).
    """

    name: str
    length: float
    u_value: float | None = None
    layers: tuple[Layer, ...] | None = None
    surface_resistances: tuple[float, float] | None = None


@dataclass(frozen=True)
class Probe:
    """A named point whose temperature is reported.

    Attributes
    ----------
    name : str
        Shown in outputs.
    at : (x, y)
        Position [length_unit]; inside the solid or on its outline.
    """

    name: str
    at: Point


@dataclass
class Model:
    """One junction's cross-section with its boundary conditions.

    The in-memory form of a model file; geometry scripts return one.

    Attributes
    ----------
    length_unit : str
        ``"mm"`` or ``"m"``; applies to every coordinate, thickness and length.
    materials : dict of str to Material
    regions : list of Region
        Drawn in order: where two overlap, the later one wins.
    environments : list of Environment
    surfaces : list of Surface
    flanking : list of Flanking
    probes : list of Probe
    name : str or None
        Shown in outputs.
    origin : str
        Where the model came from (a file path or a script), used in messages.
    """

    length_unit: str
    materials: dict[str, Material]
    regions: list[Region]
    environments: list[Environment]
    surfaces: list[Surface]
    flanking: list[Flanking] = field(default_factory=list)
    probes: list[Probe] = field(default_factory=list)
    name: str | None = None
    # Where the model came from is not part of its content: a model written to
    # a file and read back equals the original.
    origin: str = field(default="<model>", compare=False)
    format: int = FORMAT

    @property
    def metres_per_unit(self) -> float:
        """Scale from ``length_unit`` to metres [m per length_unit]."""
        try:
            return LENGTH_UNITS[self.length_unit]
        except KeyError:
            raise ModelError(
                f"{self.origin}: length_unit: unknown unit {self.length_unit!r}; "
                f"use one of {', '.join(repr(u) for u in LENGTH_UNITS)}") from None

    def environment(self, name: str) -> Environment:
        """The environment called ``name``."""
        for env in self.environments:
            if env.name == name:
                return env
        raise ModelError(f"{self.origin}: no environment named {name!r}")


# ---------------------------------------------------------------------------
# Reading, writing and validating model files (format 1)
# ---------------------------------------------------------------------------

#: Keys each table of a format-1 file may hold (plus ``air_layer``, added by
#: bridgecalc, see docs/model-format.md).
TOP_LEVEL_KEYS = ("format", "name", "length_unit", "materials", "regions",
                  "environments", "surfaces", "flanking", "probes")
MATERIAL_KEYS = ("conductivity", "source", "air_layer")
AIR_LAYER_KEYS = ("thickness", "direction", "emissivities")
REGION_KEYS = ("material", "rectangle", "polygon", "heat_source")
ENVIRONMENT_KEYS = ("name", "temperature", "kind")
SURFACE_KEYS = ("environment", "resistance", "resistance_surface_temperature", "path")
FLANKING_KEYS = ("name", "u_value", "length", "layers", "surface_resistances")
LAYER_KEYS = ("material", "thickness")
PROBE_KEYS = ("name", "at")

DEFAULT_EMISSIVITIES = (0.9, 0.9)

_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")


def _key_text(name) -> str:
    """A TOML key as written in a file: bare when it can be, else quoted."""
    name = str(name)
    if _BARE_KEY.match(name):
        return name
    return tomli_w.dumps({name: 0}).rsplit(" = ", 1)[0]


def material_where(name) -> str:
    """Location of a material in messages, e.g. ``materials.concrete``."""
    return f"materials.{_key_text(name)}"


class _Checker:
    """Raises ModelError with ``origin: where: message``."""

    def __init__(self, origin: str):
        self.origin = origin

    def fail(self, where: str, message: str):
        prefix = f"{self.origin}: {where}: " if where else f"{self.origin}: "
        raise ModelError(prefix + message)

    # -- types -------------------------------------------------------------

    def number(self, value, where: str, *, minimum=None, strictly=False,
               optional=False) -> float | None:
        """Check a finite real number (booleans are not numbers)."""
        if value is None and optional:
            return None
        if not _is_real(value):
            self.fail(where, f"expected a number, got {_describe(value)}")
        try:
            value = float(value)
        except OverflowError:            # an integer beyond the range of a float
            self.fail(where, "expected a finite number, got an integer too large "
                             "for a floating-point number")
        if not math.isfinite(value):
            self.fail(where, f"expected a finite number, got {value!r}")
        if minimum is not None:
            if strictly and not value > minimum:
                self.fail(where, f"must be greater than {_fmt(minimum)}, got {_fmt(value)}")
            if not strictly and not value >= minimum:
                self.fail(where, f"must be {_fmt(minimum)} or more, got {_fmt(value)}")
        return value

    def string(self, value, where: str, *, optional=False) -> str | None:
        if value is None and optional:
            return None
        if not isinstance(value, str):
            self.fail(where, f"expected a string, got {_describe(value)}")
        return value

    def coordinate(self, value, where: str) -> float:
        """Check a coordinate: a finite number within ±:data:`MAX_COORDINATE`."""
        value = self.number(value, where)
        if not abs(value) <= MAX_COORDINATE:
            self.fail(where, f"coordinate {_fmt(value)} lies beyond ±{MAX_COORDINATE:.0e} "
                             f"length units; draw the section near the origin")
        return value

    def point(self, value, where: str) -> tuple[float, float]:
        if not _is_sequence(value) or len(value) != 2:
            self.fail(where, f"expected a point [x, y], got {_describe(value)}")
        return (self.coordinate(value[0], f"{where}[0]"),
                self.coordinate(value[1], f"{where}[1]"))

    def points(self, value, where: str, minimum: int, what: str) -> list[tuple[float, float]]:
        if not _is_sequence(value):
            self.fail(where, f"expected a list of [x, y] points, got {_describe(value)}")
        if len(value) < minimum:
            self.fail(where, f"{what} needs at least {minimum} points, got {len(value)}")
        return [self.point(p, f"{where}[{k}]") for k, p in enumerate(value)]

    def keys(self, table, allowed, where: str):
        """Reject keys not in ``allowed`` (a typo must not pass silently)."""
        for key in table:
            if key not in allowed:
                hint = difflib.get_close_matches(str(key), allowed, n=1)
                did_you_mean = f"; did you mean {hint[0]!r}?" if hint else ""
                place = f"{where}.{_key_text(key)}" if where else _key_text(key)
                self.fail(place, f"unknown key{did_you_mean} (allowed here: "
                                 f"{', '.join(allowed)})")


def _is_real(value) -> bool:
    return (isinstance(value, numbers.Real)
            and not isinstance(value, (bool, np.bool_)))


def _is_sequence(value) -> bool:
    return isinstance(value, (list, tuple, np.ndarray))


def _describe(value) -> str:
    if isinstance(value, bool):
        return f"the boolean {str(value).lower()}"
    if isinstance(value, str):
        return f"the string {value!r}"
    if isinstance(value, dict):
        return "a table"
    if _is_sequence(value):
        return f"a list of {len(value)} items"
    if value is None:
        return "nothing"
    return f"{type(value).__name__} {value!r}"


def _fmt(value: float) -> str:
    return f"{value:g}"


def _fmt_point(p) -> str:
    return f"({_fmt(p[0])}, {_fmt(p[1])})"


# -- reader ------------------------------------------------------------------


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
    origin = os.fspath(path)
    try:
        with open(path, "rb") as fh:
            raw = fh.read()
    except FileNotFoundError:
        raise ModelError(f"{origin}: no such model file") from None
    except IsADirectoryError:
        raise ModelError(f"{origin}: is a folder, not a model file") from None
    except OSError as exc:
        raise ModelError(f"{origin}: cannot read the model file ({exc.strerror or exc})") from None
    try:
        text = raw.decode("utf-8-sig")    # a byte-order mark (some Windows editors) is dropped
    except UnicodeDecodeError as exc:
        raise ModelError(f"{origin}: not a text file in UTF-8 (bad byte at position "
                         f"{exc.start}); a model file is TOML text") from None
    return loads(text, origin=origin)


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
    check = _Checker(origin)
    if not isinstance(text, str):
        check.fail("", f"expected the text of a model file, got {_describe(text)}")
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        check.fail("", f"not a valid TOML file: {exc}")
    except ValueError:           # Python's limit on converting long integers
        check.fail("", "a number in the file has too many digits to read "
                       f"(over {sys.get_int_max_str_digits()})")
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
        check.fail("format", f"expected the integer {FORMAT}, got {_describe(fmt)}")
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
        if "rectangle" in table:
            rect = table["rectangle"]
            if not _is_sequence(rect) or len(rect) != 4:
                check.fail(f"{where}.rectangle",
                           f"expected four numbers [x0, y0, x1, y1], got {_describe(rect)}")
            x0, y0, x1, y1 = (check.coordinate(c, f"{where}.rectangle[{k}]")
                              for k, c in enumerate(rect))
            regions.append(Region.rectangle(material, x0, y0, x1, y1, heat_source))
        else:
            vertices = check.points(table["polygon"], f"{where}.polygon", 3, "a polygon")
            regions.append(Region(material, tuple(vertices), heat_source, "polygon"))

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
        path = check.points(_required(check, table, "path", where), f"{where}.path", 2,
                            "a surface path")
        surfaces.append(Surface(
            _required(check, table, "environment", where),
            _as_float(_required(check, table, "resistance", where)),
            tuple(path),
            _as_float(table.get("resistance_surface_temperature"))))

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
                           f"{_describe(raw_layers)}")
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
        flanking.append(Flanking(
            _required(check, table, "name", where),
            _as_float(_required(check, table, "length", where)),
            _as_float(table.get("u_value")),
            stack,
            resistances))

    probes = []
    for i, table in enumerate(_array_of_tables(check, data, "probes")):
        where = f"probes[{i}]"
        check.keys(table, PROBE_KEYS, where)
        at = check.point(_required(check, table, "at", where), f"{where}.at")
        probes.append(Probe(_required(check, table, "name", where), at))

    model = Model(length_unit=unit, materials=materials, regions=regions,
                  environments=environments, surfaces=surfaces, flanking=flanking,
                  probes=probes, name=data.get("name"), origin=origin, format=fmt)
    validate(model)
    return model


def _as_float(value):
    """Numbers become float; anything else (including an integer too large for a
    float) is kept for validate() to name."""
    if not _is_real(value):
        return value
    try:
        return float(value)
    except OverflowError:
        return value


def _required(check: _Checker, table: dict, key: str, where: str):
    if key not in table:
        check.fail(f"{where}.{key}", "missing")
    return table[key]


def _require_table(check: _Checker, value, where: str) -> dict:
    if not isinstance(value, dict):
        check.fail(where, f"expected a table, got {_describe(value)}")
    return value


def _table(check: _Checker, data: dict, key: str) -> dict:
    value = data.get(key, {})
    if not isinstance(value, dict):
        check.fail(key, f"expected a table such as [{key}.NAME], got {_describe(value)}")
    return value


def _array_of_tables(check: _Checker, data: dict, key: str) -> list:
    value = data.get(key, [])
    if not isinstance(value, list):
        check.fail(key, f"expected an array of tables written [[{key}]], got "
                        f"{_describe(value)}")
    for i, item in enumerate(value):
        _require_table(check, item, f"{key}[{i}]")
    return value


def _read_material(check: _Checker, name: str, table: dict, where: str,
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
    if _is_sequence(emissivities):
        emissivities = tuple(_as_float(e) for e in emissivities)
    layer = AirLayer(thickness, direction, emissivities)
    _check_air_layer(check, layer, awhere)
    return air_layer_material(name, layer, unit, source)


def air_layer_material(name: str, air_layer: AirLayer, length_unit: str,
                       source: str | None = None) -> Material:
    """A material for an unventilated air layer, λ = d / R by ISO 6946 Annex D.

    Parameters
    ----------
    name : str
        Material name.
    air_layer : AirLayer
        Thickness [length_unit], heat-flow direction and emissivities [-].
    length_unit : str
        Unit of ``air_layer.thickness``: ``"mm"`` or ``"m"``.
    source : str or None
        Free text carried to the report.

    Returns
    -------
    Material
        With ``conductivity`` the equivalent conductivity [W/(m·K)], computed
        by :func:`bridgecalc.layers.air_layer_conductivity` at a mean
        temperature of 10 °C.
    """
    conductivity = iso6946.air_layer_conductivity(
        air_layer.thickness * LENGTH_UNITS[length_unit], air_layer.direction,
        tuple(air_layer.emissivities))
    return Material(name, conductivity, source, air_layer)


def _check_air_layer(check: _Checker, layer, where: str):
    if not isinstance(layer, AirLayer):
        check.fail(where, f"expected an AirLayer, got {_describe(layer)}")
    check.number(layer.thickness, f"{where}.thickness", minimum=0.0, strictly=True)
    check.string(layer.direction, f"{where}.direction")
    if layer.direction not in iso6946.HEAT_FLOW_DIRECTIONS:
        check.fail(f"{where}.direction",
                   f"unknown heat-flow direction {layer.direction!r}; use one of "
                   f"{', '.join(iso6946.HEAT_FLOW_DIRECTIONS)}")
    ems = layer.emissivities
    if not _is_sequence(ems) or len(ems) != 2:
        check.fail(f"{where}.emissivities",
                   f"expected two emissivities [e1, e2], got {_describe(ems)}")
    for k, e in enumerate(ems):
        e = check.number(e, f"{where}.emissivities[{k}]")
        if not 0 < e <= 1:
            check.fail(f"{where}.emissivities[{k}]",
                       f"an emissivity lies in (0, 1], got {_fmt(e)}")


# -- validation --------------------------------------------------------------


def validate(model: Model) -> None:
    """Check a model against every rule of model format 1.

    Works on models read from files and on models built in memory (geometry
    scripts). Does not change the model; calling it again has no effect.

    Raises
    ------
    ModelError
        At the first broken rule, naming the model's origin, the table (e.g.
        ``regions[3]``, counted from 0) and the key.
    """
    check = _Checker(getattr(model, "origin", "<model>"))
    if not isinstance(model, Model):
        check.fail("", f"expected a bridgecalc Model, got {_describe(model)}")
    fmt = model.format
    if isinstance(fmt, bool) or not isinstance(fmt, int) or fmt != FORMAT:
        check.fail("format", f"unknown format {fmt!r}; this version of bridgecalc reads "
                             f"format {FORMAT}")
    check.string(model.length_unit, "length_unit")
    if model.length_unit not in LENGTH_UNITS:
        check.fail("length_unit", f"unknown unit {model.length_unit!r}; use one of "
                                  f"{', '.join(repr(u) for u in LENGTH_UNITS)}")
    check.string(model.name, "name", optional=True)
    for table, noun in (("regions", "Region"), ("environments", "Environment"),
                        ("surfaces", "Surface"), ("flanking", "Flanking"), ("probes", "Probe")):
        value = getattr(model, table)
        if not isinstance(value, (list, tuple)):
            check.fail(table, f"expected a list of {noun}, got {_describe(value)}")
    _check_materials(check, model)
    _check_regions(check, model)
    _check_environments(check, model)
    _check_surfaces(check, model)
    _check_flanking(check, model)
    _check_probes(check, model)
    _check_geometry(check, model)


def _check_materials(check: _Checker, model: Model):
    if not isinstance(model.materials, dict):
        check.fail("materials", f"expected a dict of name to Material, got "
                                f"{_describe(model.materials)}")
    for key, mat in model.materials.items():
        where = material_where(key)
        if not isinstance(mat, Material):
            check.fail(where, f"expected a Material, got {_describe(mat)}")
        if mat.name != key:
            check.fail(f"{where}", f"is stored under the name {key!r} but calls itself "
                                   f"{mat.name!r}")
        check.string(mat.source, f"{where}.source", optional=True)
        if mat.air_layer is None:
            k = check.number(mat.conductivity, f"{where}.conductivity")
            if not k > 0:
                check.fail(f"{where}.conductivity",
                           f"must be greater than 0 W/(m·K), got {_fmt(k)}")
            continue
        _check_air_layer(check, mat.air_layer, f"{where}.air_layer")
        expected = air_layer_material(key, mat.air_layer, model.length_unit).conductivity
        if not (_is_real(mat.conductivity)
                and math.isclose(mat.conductivity, expected, rel_tol=1e-9)):
            check.fail(f"{where}.conductivity",
                       f"{mat.conductivity!r} does not match the air layer's equivalent "
                       f"conductivity {expected:.6g} W/(m·K); build the material with "
                       f"bridgecalc.model.air_layer_material()")


def _defined_material(check: _Checker, model: Model, name, where: str):
    check.string(name, where)
    if name not in model.materials:
        defined = ", ".join(model.materials) or "none"
        hint = difflib.get_close_matches(name, list(model.materials), n=1)
        did_you_mean = f"; did you mean {hint[0]!r}?" if hint else ""
        check.fail(where, f"material {name!r} is not defined (defined: {defined})"
                          f"{did_you_mean}")


def _check_regions(check: _Checker, model: Model):
    if not isinstance(model.regions, (list, tuple)) or not model.regions:
        check.fail("regions", "the model has no regions; add at least one [[regions]] "
                              "table with a material and a rectangle or polygon")
    for i, region in enumerate(model.regions):
        where = f"regions[{i}]"
        if not isinstance(region, Region):
            check.fail(where, f"expected a Region, got {_describe(region)}")
        _defined_material(check, model, region.material, f"{where}.material")
        check.number(region.heat_source, f"{where}.heat_source")
        if region.shape == "rectangle":
            _check_rectangle(check, region, f"{where}.rectangle")
        elif region.shape == "polygon":
            _check_polygon(check, region.vertices, f"{where}.polygon")
        else:
            check.fail(f"{where}", f"shape must be 'rectangle' or 'polygon', got "
                                   f"{_describe(region.shape)}")
    tol = geometry.on_path_tolerance([r.vertices for r in model.regions])
    for i, region in enumerate(model.regions):
        _check_clearance(check, region, f"regions[{i}].{region.shape}", tol,
                         model.length_unit)


def _check_clearance(check: _Checker, region: Region, where: str, tol: float, unit: str):
    """Reject a region that comes within the on-path tolerance of itself.

    Points closer than the tolerance are one point to the mesher (gmsh's
    geometry tolerance is set to it), so a shorter edge, or a vertex that
    close to an edge it does not belong to, is a degenerate outline there.
    """
    shape = shapely.Polygon([(float(x), float(y)) for x, y in region.vertices])
    clearance = shapely.minimum_clearance(shape)
    if not clearance <= tol:
        return
    if region.shape == "rectangle":
        (x0, y0), (x1, y1) = region.vertices[0], region.vertices[2]
        side, size = min((x1 - x0, "x1 - x0"), (y1 - y0, "y1 - y0"))
        check.fail(where, f"{size} = {_fmt(side)} {unit} is within the model's tolerance "
                          f"of {tol:.3g} {unit} (1e-6 of its largest dimension); the "
                          f"rectangle is degenerate")
    a, b = shapely.minimum_clearance_line(shape).coords
    check.fail(where, f"the outline comes within {_fmt(clearance)} {unit} of itself near "
                      f"{_fmt_point(a)}, within the model's tolerance of {tol:.3g} {unit} "
                      f"(1e-6 of its largest dimension): two vertices almost coincide, or "
                      f"a vertex almost touches an edge; merge them or move them apart")


def _check_rectangle(check: _Checker, region: Region, where: str):
    v = region.vertices
    if not _is_sequence(v) or len(v) != 4:
        check.fail(where, f"a rectangle has 4 corners, got {_describe(v)}")
    pts = [check.point(p, where) for p in v]
    (x0, y0), (x1, y1) = pts[0], pts[2]
    if pts != [(x0, y0), (x1, y0), (x1, y1), (x0, y1)]:
        check.fail(where, "corners are not those of an axis-aligned rectangle; build "
                          "it with Region.rectangle() or use a polygon")
    if not x1 > x0:
        check.fail(where, f"x1 ({_fmt(x1)}) must be greater than x0 ({_fmt(x0)})")
    if not y1 > y0:
        check.fail(where, f"y1 ({_fmt(y1)}) must be greater than y0 ({_fmt(y0)})")


def _check_polygon(check: _Checker, vertices, where: str):
    pts = check.points(vertices, where, 3, "a polygon")
    if pts[0] == pts[-1]:
        check.fail(where, f"the last vertex repeats the first {_fmt_point(pts[0])}; "
                          "polygons are closed implicitly, leave it out")
    for k in range(len(pts) - 1):
        if pts[k] == pts[k + 1]:
            check.fail(where, f"vertices {k} and {k + 1} are the same point "
                              f"{_fmt_point(pts[k])}")
    if len(set(pts)) < 3:
        check.fail(where, "a polygon needs at least 3 distinct vertices")
    ring = shapely.LinearRing(pts)
    # all vertices on one line <=> their convex hull has no area
    hull_area = shapely.MultiPoint(pts).convex_hull.area
    if hull_area <= 1e-12 * geometry.largest_dimension([pts]) ** 2:
        check.fail(where, "the polygon has zero area (its vertices lie on one line)")
    if not ring.is_simple:
        check.fail(where, "the polygon intersects itself; its outline must not cross "
                          "or touch itself")


def _unique_name(check: _Checker, seen: dict, name, noun: str, table: str, index: int):
    """Fail when ``name`` was already used in ``table``; else remember it."""
    if name in seen:
        check.fail(f"{table}[{index}].name", f"{noun} name {name!r} is already used by "
                                             f"{table}[{seen[name]}]")
    seen[name] = index


def _check_environments(check: _Checker, model: Model):
    seen = {}
    kinds = set()
    for i, env in enumerate(model.environments):
        where = f"environments[{i}]"
        if not isinstance(env, Environment):
            check.fail(where, f"expected an Environment, got {_describe(env)}")
        check.string(env.name, f"{where}.name")
        _unique_name(check, seen, env.name, "environment", "environments", i)
        temperature = check.number(env.temperature, f"{where}.temperature")
        if temperature < ABSOLUTE_ZERO:
            check.fail(f"{where}.temperature", f"{_fmt(temperature)} °C is below absolute zero "
                                               f"({_fmt(ABSOLUTE_ZERO)} °C)")
        check.string(env.kind, f"{where}.kind")
        if env.kind not in ENVIRONMENT_KINDS:
            check.fail(f"{where}.kind", f"unknown kind {env.kind!r}; use one of "
                                        f"{', '.join(repr(k) for k in ENVIRONMENT_KINDS)}")
        kinds.add(env.kind)
    for kind in ENVIRONMENT_KINDS:
        if kind not in kinds:
            check.fail("environments", f"no {kind} environment; a model needs at least "
                                       f"one with kind = {kind!r}")


def _check_surfaces(check: _Checker, model: Model):
    names = [env.name for env in model.environments]
    if not model.surfaces:
        check.fail("surfaces", "the model has no surfaces, so no heat can enter or leave "
                               "it; add [[surfaces]] tables")
    for i, surf in enumerate(model.surfaces):
        where = f"surfaces[{i}]"
        if not isinstance(surf, Surface):
            check.fail(where, f"expected a Surface, got {_describe(surf)}")
        check.string(surf.environment, f"{where}.environment")
        if surf.environment not in names:
            check.fail(f"{where}.environment",
                       f"environment {surf.environment!r} is not defined "
                       f"(defined: {', '.join(names) or 'none'})")
        check.number(surf.resistance, f"{where}.resistance", minimum=0.0)
        check.number(surf.resistance_surface_temperature,
                     f"{where}.resistance_surface_temperature", minimum=0.0, optional=True)
        check.points(surf.path, f"{where}.path", 2, "a surface path")


#: Smallest |θi − θe| accepted, relative to the larger of |θi|, |θe| and 1 K [-].
TEMPERATURE_DIFFERENCE_RELATIVE = 1e-6


def check_temperature_difference(model: Model, theta_i: float, theta_e: float) -> None:
    """Before a calculation: θi − θe is large enough to divide by.

    L2D and fRsi are divided by θi − θe, while the solver works with the
    temperatures themselves; a difference under a millionth of them is mostly
    round-off (a difference of 1e-12 K at 20 °C gave L2D = −7 W/(m·K)).

    Raises
    ------
    ModelError
        Naming the table ``environments`` and both temperatures.
    """
    limit = TEMPERATURE_DIFFERENCE_RELATIVE * max(abs(theta_i), abs(theta_e), 1.0)
    if abs(theta_i - theta_e) <= limit:
        _Checker(model.origin).fail(
            "environments", f"interior ({theta_i:.15g} °C) and exterior ({theta_e:.15g} °C) "
                            f"differ by {abs(theta_i - theta_e):.3g} K, too little to divide "
                            f"L2D and fRsi by without round-off swamping them; give them a "
                            f"difference of more than {limit:.3g} K")


def unfaced_sides(model: Model) -> dict[str, str]:
    """Environment kinds ("interior", "exterior") that no surface faces, each
    with a message that says so, names the environments and the table.

    Format 1 does not forbid such a file (its own example has no exterior
    surface), so the reader reads it. Without an interior surface there is no
    θsi,min, and ``run`` refuses the model; without an exterior surface no
    heat flows between the sides, L2D = 0, Ψ = −ΣU·l and fRsi = 1 by
    construction, and ``run`` computes it with that warning carried to every
    output.
    """
    faced = {model.environment(s.environment).kind for s in model.surfaces}
    out = {}
    for kind in ENVIRONMENT_KINDS:
        if kind not in faced:
            names = ", ".join(repr(e.name) for e in model.environments if e.kind == kind)
            consequence = ("so there is no interior surface temperature" if kind == "interior"
                           else "so no heat flows between interior and exterior: L2D = 0, "
                                "Ψ = −ΣU·l and fRsi = 1 by construction, and they say "
                                "nothing about the junction")
            out[kind] = (f"{model.origin}: surfaces: no surface faces an {kind} environment "
                         f"({names}), {consequence}; give the {kind} side a [[surfaces]] "
                         f"table")
    return out


def _check_flanking(check: _Checker, model: Model):
    for i, flank in enumerate(model.flanking):
        where = f"flanking[{i}]"
        if not isinstance(flank, Flanking):
            check.fail(where, f"expected a Flanking, got {_describe(flank)}")
        check.string(flank.name, f"{where}.name")
        check.number(flank.length, f"{where}.length", minimum=0.0)
        if flank.u_value is not None and flank.layers is not None:
            check.fail(where, "give either u_value or layers, not both")
        if flank.u_value is None and flank.layers is None:
            check.fail(where, "give its u_value [W/(m²·K)] or its layers")
        if flank.u_value is not None:
            check.number(flank.u_value, f"{where}.u_value", minimum=0.0)
            if flank.surface_resistances is not None:
                check.fail(f"{where}.surface_resistances",
                           "only used with layers; with u_value given, leave it out")
            continue
        if not _is_sequence(flank.layers) or len(flank.layers) == 0:
            got = "an empty list" if _is_sequence(flank.layers) else _describe(flank.layers)
            check.fail(f"{where}.layers", f"expected at least one layer, got {got}")
        for j, layer in enumerate(flank.layers):
            lwhere = f"{where}.layers[{j}]"
            if not isinstance(layer, Layer):
                check.fail(lwhere, f"expected a Layer, got {_describe(layer)}")
            _defined_material(check, model, layer.material, f"{lwhere}.material")
            check.number(layer.thickness, f"{lwhere}.thickness", minimum=0.0, strictly=True)
        rs = flank.surface_resistances
        if rs is not None:
            if not _is_sequence(rs) or len(rs) != 2:
                check.fail(f"{where}.surface_resistances",
                           f"expected two numbers [Rsi, Rse] in m²·K/W, got {_describe(rs)}")
            for k, r in enumerate(rs):
                check.number(r, f"{where}.surface_resistances[{k}]", minimum=0.0)


def _check_probes(check: _Checker, model: Model):
    seen = {}
    for i, probe in enumerate(model.probes):
        where = f"probes[{i}]"
        if not isinstance(probe, Probe):
            check.fail(where, f"expected a Probe, got {_describe(probe)}")
        check.string(probe.name, f"{where}.name")
        _unique_name(check, seen, probe.name, "probe", "probes", i)
        check.point(probe.at, f"{where}.at")


# -- outline -----------------------------------------------------------------


@dataclass(frozen=True)
class OutlineEdge:
    """One straight piece of the solid's outline.

    Attributes
    ----------
    start, end : (x, y)
        End points [length_unit].
    surface : int or None
        Index into ``model.surfaces`` of the surface claiming the edge;
        ``None`` for an adiabatic edge (cut-off or symmetry plane).
    piece : int
        Index of the connected piece of the solid the edge bounds.
    """

    start: Point
    end: Point
    surface: int | None
    piece: int


def region_shapes(model: Model) -> list:
    """The regions as shapely polygons [length_unit], in model order."""
    return [shapely.Polygon([(float(x), float(y)) for x, y in r.vertices])
            for r in model.regions]


def solid_pieces(model: Model) -> list:
    """Connected pieces of the solid (union of all regions), shapely polygons.

    Regions are joined as the mesher joins them: gmsh's boolean tolerance is
    the on-path tolerance (:func:`bridgecalc.geometry.on_path_tolerance`), so
    a corner or edge of one region within it of another region's corner or
    edge is snapped onto it before the union; two regions 200 and
    200.0000001 mm from the origin are one piece, not two. Regions meeting at a
    single point stay separate pieces.
    """
    tol = geometry.on_path_tolerance([r.vertices for r in model.regions])
    union = None
    for shape in region_shapes(model):
        if union is None:
            union = shape
            continue
        shape = _polygonal(shapely.snap(shape, union, tol))
        union = _polygonal(shapely.snap(union, shape, tol))
        union = _polygonal(shapely.union(union, shape))
    return list(getattr(union, "geoms", [union]))


def _polygonal(geom):
    """The polygons of a geometry (valid), without lines or points left by snapping."""
    if not geom.is_valid:
        geom = shapely.make_valid(geom)
    parts = [g for g in getattr(geom, "geoms", [geom])
             if isinstance(g, (shapely.Polygon, shapely.MultiPolygon)) and not g.is_empty]
    return shapely.unary_union(parts) if len(parts) != 1 else parts[0]


def outline_edges(model: Model, _check: _Checker | None = None) -> list[OutlineEdge]:
    """Split the solid's outline into edges and say which surface claims each.

    The outline rings of the union of all regions are split at every vertex of
    every surface path (:func:`bridgecalc.geometry.insert_breakpoints`); an
    edge belongs to a surface when it lies wholly on the surface's path
    (:func:`bridgecalc.geometry.edges_on_path`, tolerance
    :func:`bridgecalc.geometry.on_path_tolerance` of all region vertices).

    Parameters
    ----------
    model : Model
        A model whose regions and surfaces are well formed.

    Raises
    ------
    ModelError
        When a surface path claims no edge, or two surfaces claim one edge.
    """
    check = _check or _Checker(model.origin)
    tol = geometry.on_path_tolerance([r.vertices for r in model.regions])
    breakpoints = np.concatenate([np.asarray(s.path, dtype=float).reshape(-1, 2)
                                  for s in model.surfaces]) if model.surfaces else []
    starts, ends, piece_of = [], [], []
    for p, piece in enumerate(solid_pieces(model)):
        for ring in [piece.exterior, *piece.interiors]:
            verts = list(ring.coords)[:-1]
            verts = geometry.insert_breakpoints(verts, breakpoints, tol)
            for k in range(len(verts)):
                starts.append(verts[k])
                ends.append(verts[(k + 1) % len(verts)])
                piece_of.append(p)
    starts_a, ends_a = np.asarray(starts, dtype=float), np.asarray(ends, dtype=float)
    owner = [None] * len(starts)
    for i, surf in enumerate(model.surfaces):
        on = geometry.edges_on_path(starts_a, ends_a, surf.path, tol)
        hits = np.flatnonzero(on)
        if len(hits) == 0:
            check.fail(f"surfaces[{i}].path",
                       f"lies on no outline edge of the solid (within {tol:.3g} "
                       f"{model.length_unit}); an outline edge faces this surface's "
                       f"environment only when it lies wholly on the path")
        for e in hits:
            if owner[e] is not None:
                j = owner[e]
                check.fail(f"surfaces[{i}].path",
                           f"claims the outline edge {_fmt_point(starts[e])}–"
                           f"{_fmt_point(ends[e])} that surfaces[{j}] (environment "
                           f"{model.surfaces[j].environment!r}) already claims; an edge "
                           f"can face only one environment")
            owner[e] = i
    return [OutlineEdge(tuple(starts[e]), tuple(ends[e]), owner[e], piece_of[e])
            for e in range(len(starts))]


def _check_geometry(check: _Checker, model: Model):
    edges = outline_edges(model, check)
    pieces = solid_pieces(model)
    touched = {e.piece for e in edges if e.surface is not None}
    tol = geometry.on_path_tolerance([r.vertices for r in model.regions])
    if len(touched) < len(pieces):
        shapes = region_shapes(model)
        for p, piece in enumerate(pieces):
            if p in touched:
                continue
            members = [i for i, s in enumerate(shapes)
                       if piece.distance(s.representative_point()) <= tol]
            first = model.regions[members[0]]
            listed = ", ".join(f"regions[{i}]" for i in members)
            check.fail(f"regions[{members[0]}].{first.shape}",
                       f"the solid falls apart into {len(pieces)} separate pieces, and "
                       f"the piece made of {listed} touches no surface, so its "
                       f"temperature is undetermined; join it to the rest or give it a "
                       f"surface")
    if model.probes:
        union = shapely.unary_union(pieces)
        for i, probe in enumerate(model.probes):
            d = union.distance(shapely.Point(*map(float, probe.at)))
            if d > tol:
                check.fail(f"probes[{i}].at",
                           f"point {_fmt_point(probe.at)} lies outside the solid "
                           f"({_fmt(d)} {model.length_unit} from its outline)")


# -- flanking U-value ----------------------------------------------------------


def flanking_u_value(model: Model, flanking: Flanking) -> float:
    """Thermal transmittance Uj of a flanking element [W/(m²·K)].

    The given ``u_value``, or, for a layer stack, U = 1 / (Rsi + ΣRj + Rse)
    by ISO 6946:2017 Formulae (7)–(9) (:func:`bridgecalc.layers.u_value_plane_layers`)
    with thicknesses converted to metres. A layer of an air-layer material
    takes R from ISO 6946 Annex D for that layer's own thickness
    (:func:`bridgecalc.layers.air_layer_resistance`). (Rsi, Rse) default to
    :data:`bridgecalc.layers.DEFAULT_SURFACE_RESISTANCES`.

    Parameters
    ----------
    model : Model
        Supplies materials and the length unit.
    flanking : Flanking
        One of ``model.flanking`` (or any validated flanking element).
    """
    if flanking.u_value is not None:
        return float(flanking.u_value)
    scale = model.metres_per_unit
    resistances = []
    for layer in flanking.layers:
        mat = model.materials.get(layer.material)
        if mat is None:
            raise ModelError(f"{model.origin}: flanking {flanking.name!r}: material "
                             f"{layer.material!r} is not defined")
        d = float(layer.thickness) * scale
        if mat.air_layer is not None:
            resistances.append(iso6946.air_layer_resistance(
                d, mat.air_layer.direction, tuple(mat.air_layer.emissivities)))
        else:
            resistances.append(iso6946.thermal_resistance(d, float(mat.conductivity)))
    rsi, rse = flanking.surface_resistances or iso6946.DEFAULT_SURFACE_RESISTANCES
    return iso6946.u_value_plane_layers(resistances, float(rsi), float(rse))


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
    if isinstance(value, str):
        return tomli_w.dumps({"v": value})[4:-1]
    if isinstance(value, dict):
        inner = ", ".join(f"{_key_text(k)} = {_value_text(v)}" for k, v in value.items())
        return "{ " + inner + " }"
    if _is_sequence(value):
        return "[" + ", ".join(_value_text(v) for v in value) + "]"
    return _number_text(value)


def _assignment(key: str, value) -> str:
    line = f"{_key_text(key)} = {_value_text(value)}"
    if len(line) <= _LINE_WIDTH or not _is_sequence(value) or not value:
        return line
    items = "".join(f"    {_value_text(v)},\n" for v in value)
    return f"{_key_text(key)} = [\n{items}]"


def dumps(model: Model) -> str:
    """The model as the text of a format-1 model file.

    The model is validated first, so the text always reads back: ``loads(dumps(m))``
    equals ``m``.

    Raises
    ------
    ModelError
        When the model breaks a rule of the format.
    """
    validate(model)
    out = ["# bridgecalc model file; lengths in " + model.length_unit,
           f"format = {model.format}"]
    if model.name is not None:
        out.append(_assignment("name", model.name))
    out.append(_assignment("length_unit", model.length_unit))
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
    for region in model.regions:
        out += ["", "[[regions]]", _assignment("material", region.material)]
        if region.shape == "rectangle":
            (x0, y0), (x1, y1) = region.vertices[0], region.vertices[2]
            out.append(_assignment("rectangle", [x0, y0, x1, y1]))
        else:
            out.append(_assignment("polygon", [list(v) for v in region.vertices]))
        if region.heat_source != 0:
            out.append(_assignment("heat_source", region.heat_source))
    for env in model.environments:
        out += ["", "[[environments]]", _assignment("name", env.name),
                _assignment("temperature", env.temperature), _assignment("kind", env.kind)]
    for surf in model.surfaces:
        out += ["", "[[surfaces]]", _assignment("environment", surf.environment),
                _assignment("resistance", surf.resistance)]
        if surf.resistance_surface_temperature is not None:
            out.append(_assignment("resistance_surface_temperature",
                                   surf.resistance_surface_temperature))
        out.append(_assignment("path", [list(p) for p in surf.path]))
    for flank in model.flanking:
        out += ["", "[[flanking]]", _assignment("name", flank.name)]
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
