"""Eaves: a pitched roof on an externally insulated masonry wall.

The roof is one band of insulation between rafters, homogenised to an
equivalent conductivity (``roof_conductivity_w_mk``; a common simplification
for a roof of rafters and insulation), at pitch ``roof_pitch_deg``. Its
underside passes through the top of the wall's interior face; the wall is cut
by that plane. The roof overhangs the wall by ``overhang_mm`` beyond the
insulation face, measured horizontally. x = 0 is the interior wall face, x
grows to the outside; y = 0 at the top of the interior wall face, where the
roof underside meets it; the roof rises to the left, over the room.

The outside face of the roof band is taken as the exterior surface; tiles,
battens and a ventilated layer above it are left out (a simplification that
puts the exterior at the top of the insulation).

Boundary conditions (ISO 6946 Table 7 and ISO 13788, from memory): wall face
Rsi 0.13; roof underside 0.10 (upward heat flow) when the pitch is under 60°,
else 0.13 (heat flow within 30° of horizontal counts as horizontal); 0.25 on
all interior faces for surface temperatures; exterior Rse 0.04. Cut-off
planes (adiabatic, ISO 10211, from memory): the wall max(1 m, 3 × wall
thickness) below y = 0; the roof max(1 m, 3 × roof thickness) up the slope
from the wall's interior top, cut square to the slope.

Dimension system: external. The wall counts from its cut-off up to where
the wall's outside plane meets the roof's outside plane; the roof from that
point up the slope to its cut-off, on its outside face.

Defaults: the fictional Tarnwick Yard side wing, see ``docs/scenario.md``.
"""

import math

from bridgecalc.model.junctions import (EXTERIOR, assemble, check_parameters,
                                  cut_off_distance, flanking_from_stack, materials,
                                  require, stack_thickness, surface_along)
from bridgecalc.model import Region

SCRIPT = "eaves"
DIMENSION_SYSTEM = "external"

PARAMETERS = {
    "wall_thickness_mm": 240.0,          # clay masonry leaf [mm]
    "insulation_thickness_mm": 160.0,    # external EPS insulation [mm]
    "roof_thickness_mm": 240.0,          # roof band, square to the slope [mm]
    "roof_conductivity_w_mk": 0.045,     # rafters + insulation, homogenised (demo value)
    "roof_pitch_deg": 35.0,              # [°] from horizontal
    "overhang_mm": 300.0,                # beyond the wall's outer face [mm]
}


def build(**params):
    """The eaves model [mm] for the given parameters.

    Parameters
    ----------
    wall_thickness_mm : float
        Masonry leaf [mm], > 0.
    insulation_thickness_mm : float
        External wall insulation [mm], >= 0.
    roof_thickness_mm : float
        Roof band thickness square to the slope [mm], > 0.
    roof_conductivity_w_mk : float
        Equivalent conductivity of the roof band [W/(m·K)].
    roof_pitch_deg : float
        Roof pitch [°], between 5 and 60.
    overhang_mm : float
        Horizontal overhang beyond the wall's outer face [mm], >= 0.

    Returns
    -------
    bridgecalc.Model
    """
    p = check_parameters(SCRIPT, PARAMETERS, params)
    t_wall, t_roof = p["wall_thickness_mm"], p["roof_thickness_mm"]
    pitch = p["roof_pitch_deg"]
    require(t_wall > 0, SCRIPT, "wall_thickness_mm", f"must be > 0 mm, got {t_wall}")
    require(t_roof > 0, SCRIPT, "roof_thickness_mm", f"must be > 0 mm, got {t_roof}")
    require(5.0 <= pitch <= 60.0, SCRIPT, "roof_pitch_deg",
            f"must lie between 5 and 60 degrees, got {pitch}")
    wall = [("clay_masonry", t_wall), ("eps", p["insulation_thickness_mm"])]
    t = stack_thickness(wall)
    a = math.radians(pitch)
    tan, cos, sin = math.tan(a), math.cos(a), math.sin(a)
    rise = t_roof / cos                    # vertical thickness of the band

    def underside(x):                      # roof underside, through (0, 0)
        return -x * tan

    h = cut_off_distance(t)
    slope_reach = cut_off_distance(t_roof)
    x_end = t + p["overhang_mm"]
    # left cut-off square to the slope
    lower_left = (-slope_reach * cos, slope_reach * sin)
    upper_left = (lower_left[0] + t_roof * sin, lower_left[1] + t_roof * cos)
    lower_right = (x_end, underside(x_end))
    upper_right = (x_end, underside(x_end) + rise)

    # 1. masonry and insulation, each cut by the roof underside; 2. roof band
    regions = [
        Region.polygon("clay_masonry", [(0.0, -h), (t_wall, -h),
                                        (t_wall, underside(t_wall)), (0.0, 0.0)]),
    ]
    if t > t_wall:
        regions.append(Region.polygon("eps", [(t_wall, -h), (t, -h), (t, underside(t)),
                                              (t_wall, underside(t_wall))]))
    regions.append(Region.polygon("roof", [lower_left, lower_right, upper_right,
                                           upper_left]))

    roof_heat_flow = "upward" if pitch < 60.0 else "horizontal"
    surfaces = [
        surface_along([(0.0, -h), (0.0, 0.0)]),
        surface_along([(0.0, 0.0), lower_left], heat_flow=roof_heat_flow),
        surface_along([(t, -h), (t, underside(t)), lower_right, upper_right,
                       upper_left], EXTERIOR),
    ]
    # external dimensions: outside planes meet at (t, y_meet)
    y_meet = underside(t) + rise
    roof_length = math.hypot(upper_left[0] - t, upper_left[1] - y_meet)
    flanking = [flanking_from_stack("external wall", wall, y_meet + h),
                flanking_from_stack("roof", [("roof", t_roof)], roof_length,
                                    heat_flow=roof_heat_flow)]
    probes = [("wall to roof corner", (0.0, 0.0))]
    return assemble("Eaves, Tarnwick Yard side wing demo", DIMENSION_SYSTEM,
                    materials("clay_masonry", "eps", extra={
                        "roof": (p["roof_conductivity_w_mk"],
                                 "rafters and insulation homogenised; parameter "
                                 "roof_conductivity_w_mk (demo value)")}),
                    regions, surfaces, flanking, probes, script=SCRIPT)
