"""Rules on the numbers of the materials and surfaces: conductivities and
resistances outside the range of building materials (a slip of unit or of
decimal point, a heat transfer coefficient given for a resistance)."""

from __future__ import annotations

from ..model.types import HELD_RESISTANCE
from .findings import Finding
from .layout import Layout

#: Design conductivities of building materials [W/(m·K)]: from vacuum
#: insulation panels, about 0.004-0.008 at the centre of the panel (common
#: declared values, from memory), to copper, 380 in ISO 10456:2007, Table 3
#: (from memory); ISO 10456's tables (from memory) span 0.02 (insulation) to
#: 380, and ISO 6946 Annex D's equivalent conductivities of unventilated
#: air layers fall inside.
CONDUCTIVITY_RANGE = (0.003, 400.0)
CONDUCTIVITY_SOURCE = ("ISO 10456 tables, insulation to copper 380 W/(m·K), and vacuum "
                       "insulation panels about 0.004 W/(m·K); from memory")
#: Surface resistances of building surfaces [m²·K/W]: Rse 0.04 and Rsi
#: 0.10-0.17 (ISO 6946:2017, Table 7, from memory), 0.25 for surface
#: temperatures (ISO 13788, from memory), up to 0.5 behind furniture in some
#: national rules (common practice); 0 holds the surface at the
#: environment's temperature and is always accepted. Exterior resistances in
#: strong wind fall to about 0.02 (ISO 6946 Annex C, from memory).
RESISTANCE_RANGE = (0.02, 1.0)
RESISTANCE_SOURCE = ("ISO 6946 Table 7 (Rse 0.04, Rsi 0.10-0.17) and ISO 13788 (0.25), "
                     "with room for wind and furniture; from memory")


def _anchor(layout: Layout, material: str):
    """A place where ``material`` shows, or the first region's first vertex."""
    for name, shape in layout.visible:
        if name == material:
            p = shape.representative_point()
            return float(p.x), float(p.y)
    first = layout.model.regions[0].vertices[0]
    return float(first[0]), float(first[1])


def conductivities(layout: Layout) -> list[Finding]:
    """Materials used by a region or a flanking layer whose λ lies outside
    :data:`CONDUCTIVITY_RANGE`."""
    model = layout.model
    used = {r.material for r in model.regions}
    used |= {layer.material for f in model.flanking for layer in (f.layers or ())}
    low, high = CONDUCTIVITY_RANGE
    found = []
    for name, material in model.materials.items():
        k = material.conductivity
        if name not in used or low <= k <= high:
            continue
        hint = ("a value in mW/(m·K)?" if k > high else
                "a value in W/(cm·K) or a misplaced decimal point?")
        found.append(Finding(
            "conductivity out of range", _anchor(layout, name),
            f"material {name!r} has λ = {k:g} W/(m·K), outside the range of building "
            f"materials, {low:g} to {high:g} W/(m·K) ({CONDUCTIVITY_SOURCE})",
            f"check materials.{name}.conductivity ({hint})"))
    return found


def resistances(layout: Layout) -> list[Finding]:
    """Surface resistances, and those of flanking elements, outside
    :data:`RESISTANCE_RANGE` (0 excepted)."""
    model = layout.model
    low, high = RESISTANCE_RANGE
    found = []

    def odd(value):
        return value is not None and value != 0 and not low <= value <= high

    def hint(value):
        return (f"a heat transfer coefficient h in W/(m²·K)? The resistance is 1/h = "
                f"{1 / value:.3g} m²·K/W" if value > high else
                f"0, or anything up to {HELD_RESISTANCE:g} m²·K/W, holds the surface at the "
                f"environment's temperature, and is taken so")

    for i, surface in enumerate(model.surfaces):
        at = tuple(float(c) for c in surface.path[0])
        for key, value in (("resistance", surface.resistance),
                           ("resistance_surface_temperature",
                            surface.resistance_surface_temperature)):
            if odd(value):
                found.append(Finding(
                    "resistance out of range", at,
                    f"surfaces[{i}].{key} = {value:g} m²·K/W lies outside the range of "
                    f"building surfaces, {low:g} to {high:g} m²·K/W ({RESISTANCE_SOURCE})",
                    f"check surfaces[{i}].{key} ({hint(value)})"))
    for i, flank in enumerate(model.flanking):
        for k, value in enumerate(flank.surface_resistances or ()):
            if odd(value):
                found.append(Finding(
                    "resistance out of range", _anchor(layout, model.regions[0].material),
                    f"flanking[{i}].surface_resistances[{k}] = {value:g} m²·K/W lies outside "
                    f"the range of building surfaces, {low:g} to {high:g} m²·K/W "
                    f"({RESISTANCE_SOURCE})",
                    f"check flanking[{i}].surface_resistances ({hint(value)})"))
    return found
