"""Building steps shared by the junction library in ``geometries/``.

Each geometry script defines ``PARAMETERS`` (defaults with units in the names)
and ``build(**params)``; the steps they have in common live here, one function
per step, so that no two scripts draw, check or name things differently:

- :func:`check_parameters` -- unknown names, types, negative lengths;
- :func:`require` -- one rule on a parameter, with a message naming it;
- :func:`materials` -- the common materials table (typical λ, marked as such);
- :func:`stack_regions` -- a layer stack drawn as rectangles;
- :func:`surface_along` -- a surface along a wall, floor or roof face;
- :func:`flanking_from_stack` -- a flanking element from a layer stack;
- :func:`cut_off_distance` -- the ISO 10211 cut-off distance;
- :func:`assemble` -- the two environments and the finished :class:`Model`.

Conventions of the library: lengths in mm; x horizontal, y vertical (up);
environments interior 20 °C and exterior 0 °C; lengths of flanking elements
in the dimension system each script states in ``DIMENSION_SYSTEM``.

Surface resistances (ISO 6946, 6.8 / Table 7, from memory): interior 0.13
horizontal, 0.10 upward, 0.17 downward heat flow; exterior 0.04. For surface
temperatures (ISO 13788, from memory) 0.25 on opaque interior surfaces and
0.13 on glazing and frames.

The demo data (defaults of the scripts) belong to a fictional building, see
``docs/scenario.md``. Results support, and do not replace, the judgement of a
qualified practitioner; conductivities, surface resistances and criteria must
follow the codes in force where the building stands.
"""

from __future__ import annotations

import math
from numbers import Real

from ..errors import ModelError
from ..physics.iso6946 import (RSE, RSI_DOWNWARD, RSI_HORIZONTAL, RSI_SURFACE_TEMPERATURE,
                     RSI_UPWARD)
from .types import (Environment, Flanking, Layer, Material, Model, Probe, Region,
                    Surface)

#: Interior surface resistance on glazing and frames for surface temperatures
#: [m²·K/W], ISO 13788 (from memory).
RSI_SURFACE_TEMPERATURE_GLAZING = 0.13

#: Air temperatures of the two environments [°C]: the usual design pair of a
#: 2D calculation (ISO 10211 allows any two; Ψ and fRsi do not depend on them).
INTERIOR_TEMPERATURE = 20.0
EXTERIOR_TEMPERATURE = 0.0
INTERIOR = "inside"
EXTERIOR = "outside"

#: Minimum distance of a cut-off plane from the central element [mm],
#: ISO 10211, 9.2 (from memory).
MIN_CUT_OFF_MM = 1000.0

_TYPICAL = "typical design value (from memory of ISO 10456 tables and common declared values)"

#: The common materials table: name -> (λ [W/(m·K)], where the value comes from).
#: Every value is typical, not a product's declared value; override for real work.
MATERIALS_TABLE: dict[str, tuple[float, str]] = {
    "reinforced_concrete": (2.3, "reinforced concrete, 1 % steel; " + _TYPICAL),
    "dense_concrete": (2.0, "unreinforced dense concrete; " + _TYPICAL),
    "clay_masonry": (0.7, "clay brick masonry (range 0.6-0.9); " + _TYPICAL),
    "aerated_concrete": (0.16, "aerated concrete (range 0.11-0.20); " + _TYPICAL),
    "cement_screed": (1.4, "cement screed; " + _TYPICAL),
    "eps": (0.035, "expanded polystyrene (range 0.030-0.038); " + _TYPICAL),
    "xps": (0.034, "extruded polystyrene (range 0.030-0.035); " + _TYPICAL),
    "mineral_wool": (0.035, "mineral wool (range 0.032-0.040); " + _TYPICAL),
    "pir": (0.025, "PIR/PUR board (range 0.022-0.028); " + _TYPICAL),
    "softwood": (0.13, "softwood; " + _TYPICAL),
    "plywood": (0.15, "plywood (range 0.13-0.17); " + _TYPICAL),
    "plasterboard": (0.25, "gypsum plasterboard; " + _TYPICAL),
    "structural_steel": (50.0, "structural steel; " + _TYPICAL),
    "stainless_steel": (17.0, "stainless steel; " + _TYPICAL),
    "aluminium": (160.0, "aluminium alloy; " + _TYPICAL),
    "bitumen": (0.17, "bitumen membrane; " + _TYPICAL),
    "ground": (2.0, "ground of unknown soil, ISO 13370 default (from memory)"),
}


# --------------------------------------------------------------------------- parameters

def check_parameters(script: str, defaults: dict, given: dict) -> dict:
    """Merge ``given`` over ``defaults`` after checking every name and value.

    Rules (one message per rule, naming the parameter):

    - a name not in ``defaults`` is refused (a typo must not pass silently);
    - a parameter whose default is a bool takes only ``True`` or ``False``;
    - every other parameter takes a finite real number;
    - a length (name ending in ``_mm``) must not be negative;
    - a conductivity (name ending in ``_w_mk``) must be > 0.

    Parameters
    ----------
    script : str
        Name of the geometry script, used in messages.
    defaults : dict
        The script's ``PARAMETERS``.
    given : dict
        Keyword arguments passed to ``build``.

    Returns
    -------
    dict
        All parameters, defaults filled in.

    Raises
    ------
    ModelError
        Naming the first bad parameter.
    """
    for name in given:
        if name not in defaults:
            raise ModelError(
                f"{script}: unknown parameter {name!r}; known parameters: "
                f"{', '.join(sorted(defaults))}")
    params = dict(defaults)
    params.update(given)
    for name, value in params.items():
        if isinstance(defaults[name], bool):
            if not isinstance(value, bool):
                raise ModelError(f"{script}: parameter {name!r} must be True or False, "
                                 f"got {value!r}")
            continue
        if isinstance(value, bool) or not isinstance(value, Real) or not math.isfinite(value):
            raise ModelError(f"{script}: parameter {name!r} must be a finite number, "
                             f"got {value!r}")
        if name.endswith("_mm") and value < 0:
            raise ModelError(f"{script}: parameter {name!r} is a length and must not be "
                             f"negative, got {value!r} mm")
        if name.endswith("_w_mk") and not value > 0:
            raise ModelError(f"{script}: parameter {name!r} is a thermal conductivity "
                             f"and must be > 0 W/(m·K), got {value!r}")
        params[name] = float(value)
    return params


def require(ok: bool, script: str, parameter: str, message: str) -> None:
    """Raise :class:`ModelError` naming ``parameter`` unless ``ok``.

    Parameters
    ----------
    ok : bool
        The rule holds.
    script, parameter : str
        Named in the message.
    message : str
        What the rule is, e.g. ``"must be less than wall_thickness_mm"``.
    """
    if not ok:
        raise ModelError(f"{script}: parameter {parameter!r} {message}")


def require_positive(script: str, params: dict, names) -> None:
    """Raise :class:`ModelError` naming the first of ``names`` that is not > 0.

    Parameters
    ----------
    script : str
        Named in the message.
    params : dict
        Checked parameters (lengths in [mm]).
    names : iterable of str
        Parameters that must be strictly positive.
    """
    for name in names:
        require(params[name] > 0, script, name, f"must be > 0 mm, got {params[name]}")


# --------------------------------------------------------------------------- materials

def materials(*names: str, extra: dict[str, tuple[float, str]] | None = None
              ) -> dict[str, Material]:
    """Materials from the common table, plus script-specific ones.

    Parameters
    ----------
    *names : str
        Keys of :data:`MATERIALS_TABLE`.
    extra : dict, optional
        Further materials, name -> (λ [W/(m·K)], source) or a ready
        :class:`Material` (e.g. an air layer), such as an equivalent block
        whose λ is a parameter.

    Returns
    -------
    dict of str to Material
    """
    table = {}
    for name in names:
        conductivity, source = MATERIALS_TABLE[name]
        table[name] = Material(name, conductivity, source)
    for name, value in (extra or {}).items():
        if isinstance(value, Material):
            table[name] = value
        else:
            conductivity, source = value
            table[name] = Material(name, float(conductivity), source)
    return table


# --------------------------------------------------------------------------- geometry

def stack_regions(stack, start: float, across: tuple[float, float],
                  direction: str = "+x") -> tuple[list[Region], float]:
    """A layer stack drawn as rectangles, one per layer of non-zero thickness.

    Parameters
    ----------
    stack : sequence of (str, float)
        (material, thickness [mm]) from the first layer drawn to the last.
    start : float
        Coordinate where the first layer starts [mm].
    across : (float, float)
        Extent of every layer in the other coordinate [mm].
    direction : str
        ``"+x"``, ``"-x"``, ``"+y"`` or ``"-y"``: the way the stack grows.

    Returns
    -------
    (list of Region, float)
        The rectangles and the coordinate where the stack ends [mm].
    """
    if direction not in ("+x", "-x", "+y", "-y"):
        raise ValueError(f"direction {direction!r}")
    sign = 1.0 if direction[0] == "+" else -1.0
    lo, hi = min(across), max(across)
    regions = []
    position = float(start)
    for material, thickness in stack:
        if thickness <= 0:
            continue
        end = position + sign * thickness
        a, b = sorted((position, end))
        if direction[1] == "x":
            regions.append(Region.rectangle(material, a, lo, b, hi))
        else:
            regions.append(Region.rectangle(material, lo, a, hi, b))
        position = end
    return regions, position


def stack_thickness(stack) -> float:
    """Total thickness of a layer stack [mm]."""
    return math.fsum(thickness for _, thickness in stack)


def cut_off_distance(flanking_thickness_mm: float) -> float:
    """Distance of a cut-off plane from the central element [mm].

    ISO 10211, 9.2 (from memory): at least 1 m, or three times the thickness
    of the flanking element where that is larger.

    Parameters
    ----------
    flanking_thickness_mm : float
        Thickness of the flanking element that is cut [mm].
    """
    return max(MIN_CUT_OFF_MM, 3.0 * flanking_thickness_mm)


# --------------------------------------------------------------------------- boundary

def interior_resistance(heat_flow: str) -> float:
    """Interior surface resistance for heat flow [m²·K/W].

    ISO 6946, Table 7 (from memory): ``"horizontal"`` 0.13 (walls),
    ``"upward"`` 0.10 (ceilings), ``"downward"`` 0.17 (floors).
    Heat flow within ±30° of the horizontal plane counts as horizontal.
    """
    return {"horizontal": RSI_HORIZONTAL, "upward": RSI_UPWARD,
            "downward": RSI_DOWNWARD}[heat_flow]


def surface_along(path, environment: str = INTERIOR, heat_flow: str = "horizontal",
                  glazing: bool = False) -> Surface:
    """A surface along a face of the model.

    Interior surfaces get the resistance for the heat-flow direction (ISO 6946,
    from memory) and, for surface temperatures, 0.25 on opaque elements or
    0.13 on glazing and frames (ISO 13788, from memory). Exterior surfaces get
    Rse = 0.04 for both cases (ISO 6946, from memory).

    Parameters
    ----------
    path : sequence of (x, y)
        Polyline along outline edges [mm].
    environment : str
        :data:`INTERIOR` or :data:`EXTERIOR`.
    heat_flow : str
        Direction of heat flow through an interior surface: ``"horizontal"``,
        ``"upward"`` (a ceiling) or ``"downward"`` (a floor).
    glazing : bool
        The interior surface is glazing or a frame.
    """
    points = []
    for x, y in path:                 # drop repeated points (zero-length steps)
        if not points or (float(x), float(y)) != points[-1]:
            points.append((float(x), float(y)))
    path = tuple(points)
    if environment == EXTERIOR:
        return Surface(EXTERIOR, RSE, path)
    rsi_temperature = RSI_SURFACE_TEMPERATURE_GLAZING if glazing else RSI_SURFACE_TEMPERATURE
    return Surface(INTERIOR, interior_resistance(heat_flow), path, rsi_temperature)


def flanking_from_stack(name: str, stack, length_mm: float,
                        heat_flow: str = "horizontal") -> Flanking:
    """A flanking element whose U the tool computes from its layer stack.

    U by ISO 6946 for plane layers, with Rsi for the heat-flow direction and
    Rse = 0.04 (from memory); Ψ = L2D − Σ U·l, ISO 10211, 10.4 (from memory).

    Parameters
    ----------
    name : str
    stack : sequence of (str, float)
        (material, thickness [mm]); the order does not change U.
    length_mm : float
        Length over which U applies [mm], in the script's dimension system.
    heat_flow : str
        As for :func:`surface_along`.
    """
    layers = tuple(Layer(material, float(thickness)) for material, thickness in stack
                   if thickness > 0)
    return Flanking(name=name, length=float(length_mm), layers=layers,
                    surface_resistances=(interior_resistance(heat_flow), RSE))


def environments() -> list[Environment]:
    """Interior 20 °C and exterior 0 °C."""
    return [Environment(INTERIOR, INTERIOR_TEMPERATURE, "interior"),
            Environment(EXTERIOR, EXTERIOR_TEMPERATURE, "exterior")]


def assemble(name: str, dimension_system: str, materials_: dict[str, Material],
             regions, surfaces, flanking, probes=(), script: str = "<script>") -> Model:
    """The finished model, in mm, with the two environments.

    Parameters
    ----------
    name : str
        Shown in outputs; the dimension system is appended to it.
    dimension_system : str
        ``"external"``, ``"overall internal"`` or ``"internal"`` (ISO 14683).
    materials_ : dict of str to Material
    regions : list of Region
        Painter's order: later regions win.
    surfaces : list of Surface
    flanking : list of Flanking
    probes : sequence of (str, (x, y))
        Named points [mm].
    script : str
        Recorded as the model's origin.
    """
    return Model(
        length_unit="mm",
        materials=dict(materials_),
        regions=list(regions),
        environments=environments(),
        surfaces=list(surfaces),
        flanking=list(flanking),
        probes=[Probe(n, (float(x), float(y))) for n, (x, y) in probes],
        name=f"{name} ({dimension_system} dimensions)",
        dimension_system=dimension_system,
        origin=script,
    )
