"""Steel column in an externally insulated masonry wall, in plan.

A steel I-section column (flanges parallel to the wall) stands in the
masonry leaf; its outer flange projects ``column_projection_mm`` beyond the
masonry into the insulation layer, so the insulation over it is thinner.
The section is drawn as its true outline (two flanges and a web, a polygon of
twelve vertices, root radii left out); the spaces between the flanges are
filled by the masonry inside the masonry plane and by insulation beyond it.

Plan: x = 0 is the interior wall face, x grows to the outside; the column's
web lies on y = 0. Cut-off planes (adiabatic, ISO 10211, from memory) at
max(1 m, 3 × wall thickness) either side of the web.

Boundary conditions (ISO 6946 Table 7 and ISO 13788, from memory): interior
face Rsi 0.13 (horizontal heat flow), 0.25 for surface temperatures; exterior
Rse 0.04.

Dimension system: external (the wall faces are straight, so internal and
external lengths agree). Ψ is per metre of column height.

Defaults: the fictional Tarnwick Yard entrance, see ``docs/scenario.md``.
"""

from bridgecalc.model.junctions import (EXTERIOR, assemble, check_parameters,
                                  cut_off_distance, flanking_from_stack, materials,
                                  require, require_positive, stack_regions,
                                  stack_thickness, surface_along)
from bridgecalc.model import Region

SCRIPT = "steel_beam"
DIMENSION_SYSTEM = "external"

PARAMETERS = {
    "wall_thickness_mm": 240.0,          # clay masonry leaf [mm]
    "insulation_thickness_mm": 160.0,    # external EPS insulation [mm]
    "section_depth_mm": 200.0,           # column depth, across the wall [mm]
    "flange_width_mm": 200.0,            # along the wall [mm]
    "flange_thickness_mm": 15.0,         # [mm]
    "web_thickness_mm": 9.0,             # [mm]
    "column_projection_mm": 60.0,        # outer flange beyond the masonry [mm]
}


def i_section(x_inner, depth, width, flange, web):
    """Outline of an I-section [mm], web on y = 0, flanges at x_inner and
    x_inner + depth; twelve vertices, counter-clockwise."""
    x0, x1 = x_inner, x_inner + depth
    hw, tw = width / 2.0, web / 2.0
    return [(x0, -hw), (x0 + flange, -hw), (x0 + flange, -tw), (x1 - flange, -tw),
            (x1 - flange, -hw), (x1, -hw), (x1, hw), (x1 - flange, hw),
            (x1 - flange, tw), (x0 + flange, tw), (x0 + flange, hw), (x0, hw)]


def build(**params):
    """The steel-column model [mm] for the given parameters.

    Parameters
    ----------
    wall_thickness_mm : float
        Masonry leaf [mm], > 0.
    insulation_thickness_mm : float
        External insulation [mm], > 0.
    section_depth_mm, flange_width_mm, flange_thickness_mm, web_thickness_mm : float
        The I-section [mm], all > 0; two flanges thinner than the depth, the
        web thinner than the flange width.
    column_projection_mm : float
        Outer flange beyond the masonry's outer face [mm], less than the
        insulation thickness; the column must fit in the wall.

    Returns
    -------
    bridgecalc.Model
    """
    p = check_parameters(SCRIPT, PARAMETERS, params)
    require_positive(SCRIPT, p, ("wall_thickness_mm", "insulation_thickness_mm",
                                 "section_depth_mm", "flange_width_mm",
                                 "flange_thickness_mm", "web_thickness_mm"))
    t_wall, t_ins = p["wall_thickness_mm"], p["insulation_thickness_mm"]
    depth, width = p["section_depth_mm"], p["flange_width_mm"]
    flange, web = p["flange_thickness_mm"], p["web_thickness_mm"]
    projection = p["column_projection_mm"]
    require(2 * flange < depth, SCRIPT, "flange_thickness_mm",
            f"({flange} mm) must be less than half of section_depth_mm ({depth} mm)")
    require(web < width, SCRIPT, "web_thickness_mm",
            f"({web} mm) must be less than flange_width_mm ({width} mm)")
    require(projection < t_ins, SCRIPT, "column_projection_mm",
            f"({projection} mm) must be less than insulation_thickness_mm ({t_ins} mm)")
    x_inner = t_wall + projection - depth
    require(x_inner > 0, SCRIPT, "section_depth_mm",
            f"({depth} mm) does not fit: the column would reach the interior face; "
            f"it must be less than wall_thickness_mm + column_projection_mm "
            f"({t_wall + projection} mm)")

    wall = [("clay_masonry", t_wall), ("eps", t_ins)]
    reach = cut_off_distance(stack_thickness(wall))
    # 1. wall; 2. the column over it
    regions, x_out = stack_regions(wall, 0.0, (-reach, reach), "+x")
    regions.append(Region.polygon("structural_steel",
                                  i_section(x_inner, depth, width, flange, web)))

    surfaces = [surface_along([(0.0, -reach), (0.0, reach)]),
                surface_along([(x_out, -reach), (x_out, reach)], EXTERIOR)]
    flanking = [flanking_from_stack("external wall", wall, 2 * reach)]
    probes = [("interior face at the column", (0.0, 0.0))]
    return assemble("Steel column in the wall, Tarnwick Yard entrance demo",
                    DIMENSION_SYSTEM,
                    materials("clay_masonry", "eps", "structural_steel"),
                    regions, surfaces, flanking, probes, script=SCRIPT)
