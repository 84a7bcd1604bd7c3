"""The model: plain data describing one junction's cross-section.

The dataclasses here hold the same content as a model file (format 1, see
``docs/model-format.md``). Coordinates, thicknesses and lengths are kept in the
model's own ``length_unit`` exactly as written, so that a model written back to
a file reads as the user wrote it; later stages convert to metres once, with
:attr:`Model.metres_per_unit`.

No gmsh, and no numerics beyond coordinates.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ..errors import ModelError
from ..physics import iso6946
from .title_block import TitleBlock

FORMAT = 1
LENGTH_UNITS = {"mm": 1e-3, "m": 1.0}
#: What an environment is: a heated room (searched for θsi,min), the outside
#: air or ground, or an unheated or other adjacent space (a garage, a
#: stairwell, a loft), whose surfaces count in the heat flows only.
ENVIRONMENT_KINDS = ("interior", "exterior", "unheated")
#: The dimension systems of ISO 14683 in which flanking lengths are measured.
DIMENSION_SYSTEMS = ("internal", "overall internal", "external")
#: 0 K in °C, by the definition of the Celsius scale (ISO 80000-5, from memory).
ABSOLUTE_ZERO = -273.15
#: Largest |coordinate| accepted, in the model's length unit [mm or m]: 1000 km
#: in mm, more than any projected survey grid in m; beyond it squares of
#: coordinates lose their meaning in the geometry checks (1e200² overflows).
MAX_COORDINATE = 1e9

#: Surface resistances at or below this are taken as 0, the surface held at
#: its environment's temperature [m²·K/W]. Beside the resistance of any
#: building element (0.1 m²·K/W and more with its surfaces) such a
#: resistance changes a heat flow by less than 1e-8 relative, far below the
#: study's tolerance, while its coefficient 1/R would swamp the matrix or
#: overflow (R = 5e-324 gives 1/R = inf).
HELD_RESISTANCE = 1e-9

Point = tuple[float, float]


def holds_temperature(resistance: float) -> bool:
    """Whether a surface of this resistance [m²·K/W] is held at its
    environment's temperature (:data:`HELD_RESISTANCE`)."""
    return resistance <= HELD_RESISTANCE


@dataclass(frozen=True)
class AirLayer:
    """An unventilated air layer treated as a solid of equivalent conductivity.

    Added by bridgecalc to format 1 (``docs/model-format.md``, "Keys added by
    bridgecalc"). The equivalent conductivity is λ = d / R with R from
    ISO 6946:2017 Annex D, see :func:`bridgecalc.physics.iso6946.air_layer_conductivity`.

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
    holes : tuple of tuple of (x, y)
        Polygons strictly inside ``vertices`` that are not part of the region
        [length_unit] (polygon regions only): what lies below shows through,
        and where nothing does, it is outside the model.
    """

    material: str
    vertices: tuple[Point, ...]
    heat_source: float = 0.0
    shape: str = "polygon"
    holes: tuple[tuple[Point, ...], ...] = ()

    @classmethod
    def rectangle(cls, material: str, x0: float, y0: float, x1: float, y1: float,
                  heat_source: float = 0.0) -> "Region":
        """A rectangle from corner (x0, y0) to (x1, y1) [length_unit]."""
        vertices = ((x0, y0), (x1, y0), (x1, y1), (x0, y1))
        return cls(material, vertices, heat_source, "rectangle")

    @classmethod
    def polygon(cls, material: str, vertices, heat_source: float = 0.0,
                holes=()) -> "Region":
        """A simple polygon through ``vertices`` [length_unit], less its ``holes``."""
        return cls(material, tuple((float(x), float(y)) for x, y in vertices),
                   heat_source, "polygon",
                   tuple(tuple((float(x), float(y)) for x, y in hole) for hole in holes))

    @property
    def rings(self) -> tuple[tuple[Point, ...], ...]:
        """The outline and then each hole [length_unit]."""
        return (self.vertices, *self.holes)


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
        ``"interior"``, ``"exterior"`` or ``"unheated"`` (:data:`ENVIRONMENT_KINDS`).
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
        Surface resistance for heat flow and Ψ [m²·K/W]; 0 (or at most
        :data:`HELD_RESISTANCE`) holds the surface at the environment temperature.
    path : tuple of (x, y)
        Polyline [length_unit]; every outline edge lying on it gets this
        condition.
    resistance_surface_temperature : float or None
        Surface resistance for θsi,min and fRsi [m²·K/W] (ISO 13788);
        ``None`` means the same as ``resistance``.
    assess : bool
        False leaves an interior surface out of the search for θsi,min and
        fRsi (glazing and frames, which have criteria of their own); it still
        carries heat (model format 1, addition F).
    """

    environment: str
    resistance: float
    path: tuple[Point, ...]
    resistance_surface_temperature: float | None = None
    assess: bool = True

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
    between : (str, str) or None
        The pair of environments the element separates: its U·l counts in
        Ψ_ij = L_ij − Σ U·l of that pair. May be left out when the
        environments hold two temperatures; it then counts in the Ψ between
        them.
    """

    name: str
    length: float
    u_value: float | None = None
    layers: tuple[Layer, ...] | None = None
    surface_resistances: tuple[float, float] | None = None
    between: tuple[str, str] | None = None


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


@dataclass(frozen=True)
class DrawingSource:
    """Where a model's regions and surface paths came from: a drawing (model
    format 1, addition C). Not part of the model's content.

    Attributes
    ----------
    file : str
        The drawing's path as the model file gives it.
    unit : str
        The unit its coordinates were read in (``"mm"``, ``"cm"`` or ``"m"``).
    unit_from : str
        ``"header"`` ($INSUNITS), ``"unit"`` (the ``[drawing]`` key) or
        ``"length_unit"`` (the model file's unit).
    snap : float
        Snapping tolerance used [length_unit].
    warnings : tuple of str
        What may be a slip in the drawing (units that disagree, ...).
    places : tuple of (str, str)
        ``("regions[3]", "drawing d.dxf, layer 'CONCRETE', entity 2F (HATCH)")``:
        where each region and surface taken from the drawing was drawn, for
        messages.
    """

    file: str
    unit: str
    unit_from: str
    snap: float
    warnings: tuple[str, ...] = ()
    places: tuple[tuple[str, str], ...] = ()

    def unit_text(self) -> str:
        """The unit and where it came from, in words."""
        origin = {"header": "from its header ($INSUNITS)",
                  "unit": "from [drawing] unit; the header gives none",
                  "length_unit": "the model's length_unit; neither header nor [drawing] "
                                 "unit gives one"}[self.unit_from]
        return f"{self.unit} ({origin})"


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
    dimension_system : str or None
        The ISO 14683 dimension system the flanking lengths are measured in
        (:data:`DIMENSION_SYSTEMS`), or None when not stated.
    moisture : bridgecalc.model.moisture.MoistureCheck or None
        The ISO 13788 surface-humidity check asked for (``[moisture]``).
    origin : str
        Where the model came from (a file path or a script), used in messages.
    drawing : DrawingSource or None
        The drawing the regions and surface paths were read from, if any.
    report : TitleBlock or None
        The ``[report]`` table: the title block of its reports.
    """

    length_unit: str
    materials: dict[str, Material]
    regions: list[Region]
    environments: list[Environment]
    surfaces: list[Surface]
    flanking: list[Flanking] = field(default_factory=list)
    probes: list[Probe] = field(default_factory=list)
    name: str | None = None
    dimension_system: str | None = None
    moisture: object = None
    # Where the model came from is not part of its content: a model written to
    # a file and read back equals the original.
    origin: str = field(default="<model>", compare=False)
    format: int = FORMAT
    # Set when regions or surface paths were read from a drawing (addition C).
    drawing: DrawingSource | None = field(default=None, compare=False)
    report: TitleBlock | None = None

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
        by :func:`bridgecalc.physics.iso6946.air_layer_conductivity` at a mean
        temperature of 10 °C.
    """
    conductivity = iso6946.air_layer_conductivity(
        air_layer.thickness * LENGTH_UNITS[length_unit], air_layer.direction,
        tuple(air_layer.emissivities))
    return Material(name, conductivity, source, air_layer)
