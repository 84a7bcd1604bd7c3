"""Intermediate floor slab bearing on an externally insulated masonry wall.

The shipped demo junction. A reinforced-concrete floor slab bears on the
masonry leaf of an external wall; the external insulation runs past the slab
unbroken. At the slab front, a strip of insulation (``slab_edge_insulation_mm``)
may take the place of part of the bearing, inside the masonry plane.

Section (x to the outside, y up; x = 0 is the interior wall face, y = 0 the
slab soffit)::

       room above            | masonry | insulation |  outside
    ------------------------ |         |            |
    slab (concrete)     |edge|         |            |
    ------------------------ |         |            |
       room below            |         |            |

Boundary conditions (ISO 6946 Table 7 and ISO 13788, from memory): wall faces
Rsi 0.13, floor top 0.17 (heat flow down), slab soffit 0.10 (heat flow up),
0.25 on all interior faces for surface temperatures; outside Rse 0.04.
Cut-off planes (adiabatic) at ISO 10211 distances (from memory): the wall
max(1 m, 3 × wall thickness) above and below the slab, the slab max(1 m,
3 × slab thickness) into the room.

Dimension system: external. The one flanking element is the wall, over the
full external height of the model (the floor is not part of the envelope).

Defaults: the fictional Tarnwick Yard block, see ``docs/scenario.md``.
"""

from bridgecalc.model.junctions import (EXTERIOR, assemble, check_parameters,
                                  cut_off_distance, flanking_from_stack, materials,
                                  require, stack_regions, stack_thickness,
                                  surface_along)
from bridgecalc.model import Region

SCRIPT = "slab_edge"
DIMENSION_SYSTEM = "external"

PARAMETERS = {
    "wall_thickness_mm": 240.0,           # clay masonry leaf [mm]
    "insulation_thickness_mm": 160.0,     # external EPS insulation [mm]
    "slab_thickness_mm": 220.0,           # reinforced concrete slab [mm]
    "slab_edge_insulation_mm": 60.0,      # insulation strip at the slab front,
                                          # inside the masonry plane [mm]
}


def build(**params):
    """The slab-edge model [mm] for the given parameters.

    Parameters
    ----------
    wall_thickness_mm : float
        Masonry leaf [mm], > 0.
    insulation_thickness_mm : float
        External insulation [mm], >= 0.
    slab_thickness_mm : float
        Floor slab [mm], > 0.
    slab_edge_insulation_mm : float
        Insulation strip at the slab front [mm], less than the wall thickness
        (the slab must still bear on the masonry).

    Returns
    -------
    bridgecalc.Model
    """
    p = check_parameters(SCRIPT, PARAMETERS, params)
    t_wall = p["wall_thickness_mm"]
    t_ins = p["insulation_thickness_mm"]
    t_slab = p["slab_thickness_mm"]
    t_edge = p["slab_edge_insulation_mm"]
    require(t_wall > 0, SCRIPT, "wall_thickness_mm", f"must be > 0 mm, got {t_wall}")
    require(t_slab > 0, SCRIPT, "slab_thickness_mm", f"must be > 0 mm, got {t_slab}")
    require(t_edge < t_wall, SCRIPT, "slab_edge_insulation_mm",
            f"({t_edge} mm) must be less than wall_thickness_mm ({t_wall} mm): "
            "the slab must bear on the masonry")

    wall = [("clay_masonry", t_wall), ("eps", t_ins)]
    t_total = stack_thickness(wall)
    h = cut_off_distance(t_total)          # wall above and below the slab
    reach = cut_off_distance(t_slab)       # slab into the room
    top, bottom = t_slab + h, -h

    # 1. the wall, full height; 2. the slab drawn over the masonry; 3. edge strip
    regions, x_out = stack_regions(wall, 0.0, (bottom, top), "+x")
    regions.append(Region.rectangle("reinforced_concrete", -reach, 0.0,
                                    t_wall - t_edge, t_slab))
    if t_edge > 0:
        regions.append(Region.rectangle("mineral_wool", t_wall - t_edge, 0.0,
                                        t_wall, t_slab))

    surfaces = [
        surface_along([(0.0, top), (0.0, t_slab)]),                          # wall, room above
        surface_along([(0.0, t_slab), (-reach, t_slab)], heat_flow="downward"),  # floor
        surface_along([(-reach, 0.0), (0.0, 0.0)], heat_flow="upward"),      # ceiling below
        surface_along([(0.0, 0.0), (0.0, bottom)]),                          # wall, room below
        surface_along([(x_out, bottom), (x_out, top)], EXTERIOR),
    ]
    flanking = [flanking_from_stack("external wall", wall, top - bottom)]
    probes = [("corner above slab", (0.0, t_slab)),
              ("corner below slab", (0.0, 0.0))]
    return assemble("Slab edge, Tarnwick Yard demo", DIMENSION_SYSTEM,
                    materials("clay_masonry", "eps", "reinforced_concrete",
                              "mineral_wool"),
                    regions, surfaces, flanking, probes, script=SCRIPT)
