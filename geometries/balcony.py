"""Cantilever balcony slab through an externally insulated masonry wall.

An intermediate reinforced-concrete floor slab runs through the masonry leaf
and the external insulation and continues outside as a cantilever balcony.
With ``thermal_break`` the concrete in the insulation plane is replaced by a
load-bearing thermal-break element, homogenised to one block of equivalent
conductivity ``break_conductivity_w_mk`` (a common modelling simplification;
use the element maker's declared equivalent value for real work).

Section (x to the outside, y up; x = 0 is the interior wall face, y = 0 the
slab soffit)::

       room above  | masonry | insulation |
    ---------------+---------+-----[brk]--+-------------- balcony
       slab                               |  (outside)
    ---------------+---------+-----[brk]--+--------------
       room below  |         |            |

Boundary conditions (ISO 6946 Table 7 and ISO 13788, from memory): wall faces
Rsi 0.13, floor top 0.17, soffit 0.10, all interior faces 0.25 for surface
temperatures; every outside face, the balcony included, Rse 0.04.
Cut-off planes (adiabatic, ISO 10211, from memory): the wall max(1 m,
3 × wall thickness) above and below the slab, the slab max(1 m, 3 × slab
thickness) into the room. The balcony is modelled whole to its free end.

Dimension system: external; the one flanking element is the wall over the
full external height of the model.

Defaults: the fictional Tarnwick Yard block, see ``docs/scenario.md``.
"""

from bridgecalc.model.junctions import (EXTERIOR, assemble, check_parameters,
                                  cut_off_distance, flanking_from_stack, materials,
                                  require, require_positive, stack_regions,
                                  stack_thickness, surface_along)
from bridgecalc.model import Region

SCRIPT = "balcony"
DIMENSION_SYSTEM = "external"

PARAMETERS = {
    "wall_thickness_mm": 240.0,          # clay masonry leaf [mm]
    "insulation_thickness_mm": 160.0,    # external EPS insulation [mm]
    "slab_thickness_mm": 220.0,          # floor slab and balcony [mm]
    "balcony_depth_mm": 1500.0,          # cantilever beyond the insulation face [mm]
    "thermal_break": True,               # load-bearing break in the insulation plane
    "break_thickness_mm": 80.0,          # break element, along x [mm]
    "break_conductivity_w_mk": 0.15,     # equivalent λ of the break [W/(m·K)] (demo value)
}


def build(**params):
    """The balcony model [mm] for the given parameters.

    Parameters
    ----------
    wall_thickness_mm : float
        Masonry leaf [mm], > 0.
    insulation_thickness_mm : float
        External insulation [mm], > 0.
    slab_thickness_mm : float
        Floor slab and balcony slab [mm], > 0.
    balcony_depth_mm : float
        Cantilever beyond the insulation face [mm], > 0.
    thermal_break : bool
        Whether a thermal-break element replaces the concrete in the
        insulation plane.
    break_thickness_mm : float
        Thickness of the break [mm], > 0 and not more than the insulation; it
        sits flush with the outer face of the insulation.
    break_conductivity_w_mk : float
        Equivalent conductivity of the homogenised break [W/(m·K)].

    Returns
    -------
    bridgecalc.Model
    """
    p = check_parameters(SCRIPT, PARAMETERS, params)
    t_wall, t_ins = p["wall_thickness_mm"], p["insulation_thickness_mm"]
    t_slab, depth = p["slab_thickness_mm"], p["balcony_depth_mm"]
    t_break = p["break_thickness_mm"]
    require_positive(SCRIPT, p, ("wall_thickness_mm", "insulation_thickness_mm",
                                 "slab_thickness_mm", "balcony_depth_mm",
                                 "break_thickness_mm"))
    require(t_break <= t_ins, SCRIPT, "break_thickness_mm",
            f"({t_break} mm) must not exceed insulation_thickness_mm ({t_ins} mm)")

    wall = [("clay_masonry", t_wall), ("eps", t_ins)]
    h = cut_off_distance(stack_thickness(wall))
    reach = cut_off_distance(t_slab)
    top, bottom = t_slab + h, -h

    # 1. wall; 2. one slab from the room cut-off to the balcony end; 3. the break
    regions, x_out = stack_regions(wall, 0.0, (bottom, top), "+x")
    x_end = x_out + depth
    regions.append(Region.rectangle("reinforced_concrete", -reach, 0.0, x_end, t_slab))
    extra = {}
    if p["thermal_break"]:
        regions.append(Region.rectangle("thermal_break", x_out - t_break, 0.0,
                                        x_out, t_slab))
        extra["thermal_break"] = (p["break_conductivity_w_mk"],
                                  "homogenised thermal-break element; parameter "
                                  "break_conductivity_w_mk (demo value)")

    surfaces = [
        surface_along([(0.0, top), (0.0, t_slab)]),
        surface_along([(0.0, t_slab), (-reach, t_slab)], heat_flow="downward"),
        surface_along([(-reach, 0.0), (0.0, 0.0)], heat_flow="upward"),
        surface_along([(0.0, 0.0), (0.0, bottom)]),
        surface_along([(x_out, top), (x_out, t_slab), (x_end, t_slab), (x_end, 0.0),
                       (x_out, 0.0), (x_out, bottom)], EXTERIOR),
    ]
    flanking = [flanking_from_stack("external wall", wall, top - bottom)]
    probes = [("corner above slab", (0.0, t_slab)),
              ("corner below slab", (0.0, 0.0))]
    label = "with thermal break" if p["thermal_break"] else "no thermal break"
    return assemble(f"Balcony slab, {label}, Tarnwick Yard demo", DIMENSION_SYSTEM,
                    materials("clay_masonry", "eps", "reinforced_concrete", extra=extra),
                    regions, surfaces, flanking, probes, script=SCRIPT)
