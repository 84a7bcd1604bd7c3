"""Flat roof with a masonry parapet on an externally insulated wall.

A reinforced-concrete roof slab bears on the masonry leaf; the warm-roof
insulation and its membrane lie on the slab; the masonry continues above the
slab as a parapet of height ``parapet_height_mm`` above the roof surface. The
wall insulation runs up the outside of the parapet, and the roof insulation
returns up its inner face (``upstand_insulation_mm``); the parapet top is
left bare (no capping insulation) unless the parameters say otherwise.

Section: x = 0 is the interior wall face, x grows to the outside; y = 0 is
the slab soffit; the room is below the slab, x < 0.

Boundary conditions (ISO 6946 Table 7 and ISO 13788, from memory): wall face
Rsi 0.13, ceiling 0.10 (upward heat flow), 0.25 on interior faces for surface
temperatures; all outside faces Rse 0.04. Cut-off planes (adiabatic, ISO
10211, from memory): the wall max(1 m, 3 × wall thickness) below the slab;
the roof max(1 m, 3 × roof thickness) from the interior wall face.

Dimension system: external. The wall counts from its cut-off up to the roof's
outside surface; the roof from the wall's outside face to its cut-off.

Defaults: the fictional Tarnwick Yard main block, see ``docs/scenario.md``.
"""

from bridgecalc.model.junctions import (EXTERIOR, assemble, check_parameters,
                                  cut_off_distance, flanking_from_stack, materials,
                                  require, require_positive, stack_regions,
                                  stack_thickness, surface_along)
from bridgecalc.model import Region

SCRIPT = "parapet"
DIMENSION_SYSTEM = "external"

PARAMETERS = {
    "wall_thickness_mm": 240.0,          # clay masonry leaf and parapet [mm]
    "insulation_thickness_mm": 160.0,    # external EPS insulation [mm]
    "slab_thickness_mm": 220.0,          # concrete roof slab [mm]
    "roof_insulation_mm": 200.0,         # PIR on the slab [mm]
    "membrane_thickness_mm": 10.0,       # bitumen membrane [mm]
    "parapet_height_mm": 600.0,          # above the roof surface [mm]
    "upstand_insulation_mm": 80.0,       # PIR on the parapet's inner face [mm]
}


def build(**params):
    """The parapet model [mm] for the given parameters.

    Parameters
    ----------
    wall_thickness_mm : float
        Masonry leaf [mm], > 0.
    insulation_thickness_mm : float
        External wall insulation [mm], >= 0.
    slab_thickness_mm : float
        Roof slab [mm], > 0.
    roof_insulation_mm : float
        Roof insulation [mm], > 0.
    membrane_thickness_mm : float
        Membrane [mm], >= 0.
    parapet_height_mm : float
        Parapet above the roof surface [mm], > 0.
    upstand_insulation_mm : float
        Insulation on the parapet's inner face [mm], >= 0, less than the roof
        cut-off distance.

    Returns
    -------
    bridgecalc.Model
    """
    p = check_parameters(SCRIPT, PARAMETERS, params)
    require_positive(SCRIPT, p, ("wall_thickness_mm", "slab_thickness_mm",
                                 "roof_insulation_mm", "parapet_height_mm"))
    t_wall, t_slab = p["wall_thickness_mm"], p["slab_thickness_mm"]
    t_upstand = p["upstand_insulation_mm"]
    wall = [("clay_masonry", t_wall), ("eps", p["insulation_thickness_mm"])]
    roof = [("reinforced_concrete", t_slab), ("pir", p["roof_insulation_mm"]),
            ("bitumen", p["membrane_thickness_mm"])]
    h = cut_off_distance(stack_thickness(wall))
    reach = cut_off_distance(stack_thickness(roof))
    require(t_upstand < reach / 2, SCRIPT, "upstand_insulation_mm",
            f"({t_upstand} mm) must be less than {reach / 2:.0f} mm, half the roof "
            "cut-off distance")
    y_roof = stack_thickness(roof)                  # roof surface
    y_top = y_roof + p["parapet_height_mm"]

    # 1. wall and parapet, full height; 2. roof stack from the cut-off to the
    # masonry (the slab bears on the whole masonry leaf); 3. upstand insulation
    regions, x_out = stack_regions(wall, 0.0, (-h, y_top), "+x")
    slab, _ = stack_regions(roof[:1], 0.0, (-reach, t_wall), "+y")
    above, _ = stack_regions(roof[1:], t_slab, (-reach, 0.0), "+y")
    regions += slab + above
    if t_upstand > 0:
        regions.append(Region.rectangle("pir", -t_upstand, t_slab, 0.0, y_top))

    surfaces = [
        surface_along([(-reach, 0.0), (0.0, 0.0)], heat_flow="upward"),
        surface_along([(0.0, 0.0), (0.0, -h)]),
        surface_along([(-reach, y_roof), (-t_upstand, y_roof), (-t_upstand, y_top),
                       (x_out, y_top), (x_out, -h)], EXTERIOR),
    ]
    flanking = [flanking_from_stack("external wall", wall, y_roof + h),
                flanking_from_stack("roof", roof, reach + x_out, heat_flow="upward")]
    probes = [("wall to ceiling corner", (0.0, 0.0))]
    return assemble("Parapet, Tarnwick Yard main block demo", DIMENSION_SYSTEM,
                    materials("clay_masonry", "eps", "reinforced_concrete", "pir",
                              "bitumen"),
                    regions, surfaces, flanking, probes, script=SCRIPT)
