"""Window jamb in an externally insulated masonry wall, in plan.

The wall runs along y for y < 0; the opening is y > 0. The window frame is an
equivalent block (depth ``frame_depth_mm``, width ``frame_width_mm``,
conductivity ``frame_conductivity_w_mk``) set against the masonry reveal with
its outer face flush with the masonry's outer face. The glazing is an
equivalent panel (``glazing_thickness_mm``, ``glazing_conductivity_w_mk``)
centred in the frame depth. The external insulation returns into the reveal
and covers the outer face of the frame by ``reveal_insulation_mm``::

      y  glazing panel
      ^   ||
      |  [frame]  <- reveal insulation over the frame's outer part
      |--+   +----
      |  |mas|ins|         x = 0 interior face, x grows to the outside
      +-----------> x

Boundary conditions (ISO 6946 Table 7 and ISO 13788, from memory): interior
faces Rsi 0.13 (horizontal heat flow); for surface temperatures 0.25 on the
opaque wall and reveal, 0.13 on the frame and glazing; exterior Rse 0.04.
Cut-off planes (adiabatic, ISO 10211, from memory): the wall at
max(1 m, 3 × wall thickness) from the reveal, the glazing 1 m beyond the frame.

Dimension system: external for the wall (to the plane of the reveal); the
frame and glazing flanking elements are measured from the reveal plane, so
Ψ is the installation Ψ of the frame in the wall as ISO 14683 uses it for
window junctions (from memory). The frame and glazing are equivalent blocks
(a common simplification): for a product, take the frame's equivalent λ from
its ISO 10077-2 calculation.

Defaults: the fictional Tarnwick Yard block, see ``docs/scenario.md``.
"""

from bridgecalc.model.junctions import (EXTERIOR, MIN_CUT_OFF_MM, assemble, check_parameters,
                                  cut_off_distance, flanking_from_stack, materials,
                                  require, require_positive, stack_regions,
                                  stack_thickness, surface_along)
from bridgecalc.model import Region

SCRIPT = "window_jamb"
DIMENSION_SYSTEM = "external"

PARAMETERS = {
    "wall_thickness_mm": 240.0,            # clay masonry leaf [mm]
    "insulation_thickness_mm": 160.0,      # external EPS insulation [mm]
    "frame_depth_mm": 70.0,                # frame block along x [mm]
    "frame_width_mm": 100.0,               # frame block along y [mm]
    "frame_conductivity_w_mk": 0.25,       # equivalent λ of the frame (demo value)
    "glazing_thickness_mm": 28.0,          # equivalent glazing panel [mm]
    "glazing_conductivity_w_mk": 0.035,    # equivalent λ of the glazing (demo value)
    "reveal_insulation_mm": 30.0,          # reveal insulation over the frame [mm]
}


def build(**params):
    """The window-jamb model [mm] for the given parameters.

    Parameters
    ----------
    wall_thickness_mm : float
        Masonry leaf [mm], > 0, at least the frame depth.
    insulation_thickness_mm : float
        External insulation [mm], > 0.
    frame_depth_mm, frame_width_mm : float
        Frame block [mm], > 0.
    frame_conductivity_w_mk : float
        Equivalent conductivity of the frame block [W/(m·K)].
    glazing_thickness_mm : float
        Glazing panel [mm], > 0, at most the frame depth.
    glazing_conductivity_w_mk : float
        Equivalent conductivity of the glazing panel [W/(m·K)].
    reveal_insulation_mm : float
        Insulation returned into the reveal over the frame [mm], less than
        the frame width.

    Returns
    -------
    bridgecalc.Model
    """
    p = check_parameters(SCRIPT, PARAMETERS, params)
    require_positive(SCRIPT, p, ("wall_thickness_mm", "insulation_thickness_mm",
                                 "frame_depth_mm", "frame_width_mm",
                                 "glazing_thickness_mm"))
    t_wall, t_ins = p["wall_thickness_mm"], p["insulation_thickness_mm"]
    d_frame, w_frame = p["frame_depth_mm"], p["frame_width_mm"]
    t_glass, t_rev = p["glazing_thickness_mm"], p["reveal_insulation_mm"]
    require(d_frame <= t_wall, SCRIPT, "frame_depth_mm",
            f"({d_frame} mm) must not exceed wall_thickness_mm ({t_wall} mm)")
    require(t_glass <= d_frame, SCRIPT, "glazing_thickness_mm",
            f"({t_glass} mm) must not exceed frame_depth_mm ({d_frame} mm)")
    require(t_rev < w_frame, SCRIPT, "reveal_insulation_mm",
            f"({t_rev} mm) must be less than frame_width_mm ({w_frame} mm): "
            "the insulation may cover only part of the frame")

    wall = [("clay_masonry", t_wall), ("eps", t_ins)]
    reach = cut_off_distance(stack_thickness(wall))
    glass_end = w_frame + MIN_CUT_OFF_MM

    # 1. wall; 2. frame; 3. glazing; 4. reveal insulation over the frame
    regions, x_out = stack_regions(wall, 0.0, (-reach, 0.0), "+x")
    x_fi = t_wall - d_frame                        # interior face of the frame
    x_gi = t_wall - d_frame / 2 - t_glass / 2      # glazing faces
    x_go = x_gi + t_glass
    regions.append(Region.rectangle("frame", x_fi, 0.0, t_wall, w_frame))
    regions.append(Region.rectangle("glazing", x_gi, w_frame, x_go, glass_end))
    if t_rev > 0:
        regions.append(Region.rectangle("eps", t_wall, 0.0, x_out, t_rev))

    surfaces = [
        surface_along([(x_fi, 0.0), (0.0, 0.0), (0.0, -reach)]),          # reveal, wall
        surface_along([(x_fi, 0.0), (x_fi, w_frame), (x_gi, w_frame),
                       (x_gi, glass_end)], glazing=True),                  # frame, glass
        surface_along([(x_out, -reach), (x_out, t_rev), (t_wall, t_rev),
                       (t_wall, w_frame), (x_go, w_frame), (x_go, glass_end)],
                      EXTERIOR),
    ]
    flanking = [
        flanking_from_stack("external wall", wall, reach),
        flanking_from_stack("frame", [("frame", d_frame)], w_frame),
        flanking_from_stack("glazing", [("glazing", t_glass)], MIN_CUT_OFF_MM),
    ]
    probes = [("reveal corner", (0.0, 0.0)), ("frame to reveal", (x_fi, 0.0))]
    return assemble("Window jamb, Tarnwick Yard demo", DIMENSION_SYSTEM,
                    materials("clay_masonry", "eps", extra={
                        "frame": (p["frame_conductivity_w_mk"],
                                  "window frame as an equivalent block; parameter "
                                  "frame_conductivity_w_mk (demo value)"),
                        "glazing": (p["glazing_conductivity_w_mk"],
                                    "glazing as an equivalent panel; parameter "
                                    "glazing_conductivity_w_mk (demo value)")}),
                    regions, surfaces, flanking, probes, script=SCRIPT)
