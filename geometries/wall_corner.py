"""External wall corner (outside corner), in plan.

Two equal externally insulated masonry walls meet at a right angle. The
room is the quadrant x > 0, y > 0; the interior corner is the origin::

      y
      ^  |ins|mas|  room
      |  |   |   |
      |  |   |   +-------------- interior faces
      |  |   +------------------ masonry
      |  +---------------------- insulation
      +--------------------------> x

Boundary conditions (ISO 6946 Table 7 and ISO 13788, from memory): interior
faces Rsi 0.13 (horizontal heat flow), 0.25 for surface temperatures;
exterior Rse 0.04. Cut-off planes (adiabatic, ISO 10211, from memory) at
max(1 m, 3 × wall thickness) from the interior corner along each wall.

Dimension system: external. Each wall counts from the outer corner to its
cut-off plane.

Defaults: the fictional Tarnwick Yard block, see ``docs/scenario.md``.
"""

from bridgecalc.model.junctions import (EXTERIOR, assemble, check_parameters,
                                  cut_off_distance, flanking_from_stack, materials,
                                  require, stack_regions, stack_thickness,
                                  surface_along)

SCRIPT = "wall_corner"
DIMENSION_SYSTEM = "external"

PARAMETERS = {
    "wall_thickness_mm": 240.0,          # clay masonry leaf [mm]
    "insulation_thickness_mm": 160.0,    # external EPS insulation [mm]
}


def build(**params):
    """The outside-corner model [mm] for the given parameters.

    Parameters
    ----------
    wall_thickness_mm : float
        Masonry leaf of both walls [mm], > 0.
    insulation_thickness_mm : float
        External insulation of both walls [mm], >= 0.

    Returns
    -------
    bridgecalc.Model
    """
    p = check_parameters(SCRIPT, PARAMETERS, params)
    require(p["wall_thickness_mm"] > 0, SCRIPT, "wall_thickness_mm",
            f"must be > 0 mm, got {p['wall_thickness_mm']}")
    wall = [("clay_masonry", p["wall_thickness_mm"]),
            ("eps", p["insulation_thickness_mm"])]
    t = stack_thickness(wall)
    reach = cut_off_distance(t)

    # wall along x (layers grow to -y) and wall along y (layers grow to -x),
    # each drawn across the whole corner square
    along_x, y_out = stack_regions(wall, 0.0, (-t, reach), "-y")
    along_y, x_out = stack_regions(wall, 0.0, (-t, reach), "-x")
    # masonry of both first, then insulation of both: the insulation wins at
    # the corner square outside the masonry
    regions = [r for r in along_x + along_y if r.material == "clay_masonry"]
    regions += [r for r in along_x + along_y if r.material != "clay_masonry"]
    surfaces = [
        surface_along([(reach, 0.0), (0.0, 0.0), (0.0, reach)]),
        surface_along([(reach, y_out), (x_out, y_out), (x_out, reach)], EXTERIOR),
    ]
    flanking = [flanking_from_stack("wall along x", wall, reach + t),
                flanking_from_stack("wall along y", wall, reach + t)]
    probes = [("interior corner", (0.0, 0.0))]
    return assemble("External wall corner, Tarnwick Yard demo", DIMENSION_SYSTEM,
                    materials("clay_masonry", "eps"), regions, surfaces, flanking,
                    probes, script=SCRIPT)
