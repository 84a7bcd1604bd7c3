"""Timber stud in a timber-frame wall with a service void, in plan.

Layers, interior to exterior: plasterboard; an unventilated service void
(air layer, equivalent conductivity λ = d/R with R from ISO 6946 Annex D,
from memory, via :func:`bridgecalc.model.air_layer_material`); plywood;
the stud zone (mineral wool between softwood studs); a mineral-wool board
outside. The cladding and its ventilated cavity are left out and the outer
face of the board is taken as the exterior surface (a simplification).

One stud is modelled between the two symmetry planes half a stud spacing
either side of it: ISO 10211 (from memory) allows cut-off planes at symmetry
planes; they are adiabatic. Ψ is the linear thermal transmittance of one
stud per metre of its height, against the wall clear of studs.

Plan: x = 0 is the interior face, x grows to the outside; the stud is
centred on y = 0. Boundary conditions (ISO 6946 Table 7 and ISO 13788, from
memory): interior Rsi 0.13, 0.25 for surface temperatures; exterior Rse 0.04.

Dimension system: external (straight wall: all systems agree); the flanking
element is the wall clear of studs over one stud spacing.

Defaults: the fictional Tarnwick Yard top-floor infill, see ``docs/scenario.md``.
"""

from bridgecalc.model.junctions import (EXTERIOR, assemble, check_parameters,
                                  flanking_from_stack, materials, require,
                                  require_positive, stack_regions, surface_along)
from bridgecalc.model import AirLayer, Region, air_layer_material

SCRIPT = "timber_stud"
DIMENSION_SYSTEM = "external"

PARAMETERS = {
    "lining_thickness_mm": 12.5,         # plasterboard [mm]
    "service_void_mm": 50.0,             # unventilated air layer [mm]
    "sheathing_thickness_mm": 15.0,      # plywood [mm]
    "stud_depth_mm": 200.0,              # stud zone, across the wall [mm]
    "stud_width_mm": 45.0,               # along the wall [mm]
    "stud_spacing_mm": 600.0,            # centre to centre [mm]
    "outer_insulation_mm": 60.0,         # mineral-wool board outside the studs [mm]
}


def build(**params):
    """The timber-stud model [mm] for the given parameters.

    Parameters
    ----------
    lining_thickness_mm : float
        Plasterboard [mm], >= 0.
    service_void_mm : float
        Unventilated air layer [mm], > 0 (heat flow horizontal).
    sheathing_thickness_mm : float
        Plywood [mm], >= 0.
    stud_depth_mm, stud_width_mm : float
        Stud section [mm], > 0.
    stud_spacing_mm : float
        Centre-to-centre spacing [mm], greater than the stud width.
    outer_insulation_mm : float
        Board outside the studs [mm], >= 0.

    Returns
    -------
    bridgecalc.Model
    """
    p = check_parameters(SCRIPT, PARAMETERS, params)
    require_positive(SCRIPT, p, ("service_void_mm", "stud_depth_mm", "stud_width_mm",
                                 "stud_spacing_mm"))
    width, spacing = p["stud_width_mm"], p["stud_spacing_mm"]
    require(width < spacing, SCRIPT, "stud_width_mm",
            f"({width} mm) must be less than stud_spacing_mm ({spacing} mm)")
    void = p["service_void_mm"]
    air = air_layer_material("service_void", AirLayer(void, "horizontal"), "mm",
                             f"unventilated air layer {void:g} mm, horizontal heat "
                             "flow, ISO 6946 Annex D (from memory)")

    stack = [("plasterboard", p["lining_thickness_mm"]), ("service_void", void),
             ("plywood", p["sheathing_thickness_mm"]),
             ("mineral_wool", p["stud_depth_mm"]),
             ("mineral_wool", p["outer_insulation_mm"])]
    half = spacing / 2.0
    # 1. the wall clear of studs; 2. the stud over the stud zone
    regions, x_out = stack_regions(stack, 0.0, (-half, half), "+x")
    x_stud = sum(d for _, d in stack[:3])
    regions.append(Region.rectangle("softwood", x_stud, -width / 2,
                                    x_stud + p["stud_depth_mm"], width / 2))

    surfaces = [surface_along([(0.0, -half), (0.0, half)]),
                surface_along([(x_out, -half), (x_out, half)], EXTERIOR)]
    flanking = [flanking_from_stack("wall clear of studs", stack, spacing)]
    probes = [("interior face at the stud", (0.0, 0.0))]
    return assemble("Timber stud with service void, Tarnwick Yard infill demo",
                    DIMENSION_SYSTEM,
                    materials("plasterboard", "plywood", "mineral_wool", "softwood",
                              extra={"service_void": air}),
                    regions, surfaces, flanking, probes, script=SCRIPT)
