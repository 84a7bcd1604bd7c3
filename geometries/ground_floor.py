"""Ground-floor slab edge, with the ground modelled as part of the solid.

An insulated ground-bearing floor (screed, concrete slab, insulation below)
meets an externally insulated masonry wall standing on a concrete foundation
wall; perimeter insulation runs down the outside of the foundation wall to
``perimeter_insulation_depth_mm`` below ground level.

The ground block follows ISO 10211 (from memory): from the interior wall
face 0.5·b inside (a symmetry plane), 2.5·b outside the wall's outer face and
2.5·b deep below ground level, with b the building width; for b unknown, b =
8 m gives the 4 m / 20 m / 20 m block. Ground conductivity 2.0 W/(m·K) when
the soil is unknown (ISO 13370, from memory). Every side and the bottom of
the block are adiabatic cut-off planes; the ground top outside is an exterior
surface (Rse 0.04).

Section: x = 0 is the interior wall face, x grows to the outside; y = 0 is
the ground level outside; the finished floor is at ``floor_level_mm``.

Boundary conditions (ISO 6946 Table 7 and ISO 13788, from memory): floor
Rsi 0.17 (heat flow down), wall 0.13, 0.25 on interior faces for surface
temperatures; exterior Rse 0.04. The wall is cut max(1 m, 3 × wall
thickness) above the floor (ISO 10211, from memory).

Flanking elements and dimension system: external. The wall counts from the
finished floor level up to its cut-off (the floor's upper surface taken as
its external plane; common practice, no single source). The floor counts from
the wall's outer face to the symmetry plane, 0.5·b + wall thickness, with U
of the floor on the ground from ISO 13370 (see :func:`floor_u_value`), so that
Ψ = L2D − U_wall·l_wall − U_floor·l_floor is the ground-floor Ψ of ISO 10211
(from memory).

Defaults: the fictional Tarnwick Yard block, see ``docs/scenario.md``.
"""

import math

from bridgecalc.model.junctions import (EXTERIOR, MATERIALS_TABLE, assemble, check_parameters,
                                  cut_off_distance, flanking_from_stack, materials,
                                  require, require_positive, stack_regions,
                                  stack_thickness, surface_along)
from bridgecalc.physics.iso6946 import RSE, RSI_DOWNWARD
from bridgecalc.model import Flanking, Region

SCRIPT = "ground_floor"
DIMENSION_SYSTEM = "external"

PARAMETERS = {
    "wall_thickness_mm": 240.0,               # clay masonry leaf, also the foundation wall [mm]
    "insulation_thickness_mm": 160.0,         # external EPS on the wall [mm]
    "screed_thickness_mm": 60.0,              # cement screed [mm]
    "slab_thickness_mm": 200.0,               # concrete ground slab [mm]
    "floor_insulation_mm": 120.0,             # XPS below the slab [mm]
    "perimeter_insulation_mm": 100.0,         # XPS outside the foundation wall [mm]
    "perimeter_insulation_depth_mm": 1000.0,  # below ground level [mm]
    "foundation_depth_mm": 1000.0,            # foundation wall below ground level [mm]
    "floor_level_mm": 150.0,                  # finished floor above ground level [mm]
    "building_width_mm": 8000.0,              # b; 8000 gives the b-unknown block [mm]
    "ground_conductivity_w_mk": 2.0,          # ISO 13370, soil unknown (from memory)
}


def floor_u_value(characteristic_dimension_m, wall_thickness_m, floor_resistance,
                  ground_conductivity):
    """U of a slab-on-ground floor [W/(m²·K)], ISO 13370 (from memory).

    d_t = w + λ·(Rsi + Rf + Rse) with Rsi = 0.17, Rse = 0.04; then
    U = 2λ / (π·B' + d_t) · ln(π·B'/d_t + 1) if d_t < B', else
    U = λ / (0.457·B' + d_t).

    Parameters
    ----------
    characteristic_dimension_m : float
        B' = A / (0.5·P) [m]; for the long strip of a 2D model, the building
        width b.
    wall_thickness_m : float
        w, full thickness of the external wall [m].
    floor_resistance : float
        Rf, thermal resistance of the floor layers [m²·K/W].
    ground_conductivity : float
        λ of the ground [W/(m·K)].
    """
    b = characteristic_dimension_m
    lam = ground_conductivity
    d_t = wall_thickness_m + lam * (RSI_DOWNWARD + floor_resistance + RSE)
    if d_t < b:
        return 2.0 * lam / (math.pi * b + d_t) * math.log(math.pi * b / d_t + 1.0)
    return lam / (0.457 * b + d_t)


def build(**params):
    """The ground-floor model [mm] for the given parameters.

    Parameters
    ----------
    wall_thickness_mm, insulation_thickness_mm : float
        Masonry leaf (> 0) and its external insulation [mm].
    screed_thickness_mm, slab_thickness_mm, floor_insulation_mm : float
        Floor layers, top down [mm]; the slab > 0.
    perimeter_insulation_mm, perimeter_insulation_depth_mm : float
        Perimeter insulation thickness and depth below ground level [mm].
    foundation_depth_mm : float
        Foundation wall below ground level [mm], > 0, less than 2.5·b.
    floor_level_mm : float
        Finished floor above ground level [mm], less than the floor build-up
        (the floor must sit on the ground).
    building_width_mm : float
        b [mm], > 0.
    ground_conductivity_w_mk : float
        λ of the ground [W/(m·K)].

    Returns
    -------
    bridgecalc.Model
    """
    p = check_parameters(SCRIPT, PARAMETERS, params)
    require_positive(SCRIPT, p, ("wall_thickness_mm", "slab_thickness_mm",
                                 "foundation_depth_mm", "building_width_mm"))
    t_wall, b = p["wall_thickness_mm"], p["building_width_mm"]
    wall = [("clay_masonry", t_wall), ("eps", p["insulation_thickness_mm"])]
    floor = [("cement_screed", p["screed_thickness_mm"]),
             ("reinforced_concrete", p["slab_thickness_mm"]),
             ("xps", p["floor_insulation_mm"])]
    t = stack_thickness(wall)
    y_floor = p["floor_level_mm"]
    t_floor = stack_thickness(floor)
    require(y_floor < t_floor, SCRIPT, "floor_level_mm",
            f"({y_floor} mm) must be less than the floor build-up ({t_floor} mm) "
            "so that the floor sits on the ground")
    inside, outside, deep = 0.5 * b, 2.5 * b, 2.5 * b
    for name in ("foundation_depth_mm", "perimeter_insulation_depth_mm"):
        require(p[name] < deep, SCRIPT, name,
                f"({p[name]} mm) must be less than the ground block depth 2.5·b "
                f"({deep} mm)")
    y_top = y_floor + cut_off_distance(t)
    x_far = t + outside

    # 1. ground block; 2. foundation wall; 3. perimeter insulation; 4. floor
    # layers from the finished floor down; 5. wall above ground level
    regions = [Region.rectangle("ground", -inside, -deep, x_far, 0.0),
               Region.rectangle("dense_concrete", 0.0, -p["foundation_depth_mm"],
                                t_wall, 0.0)]
    if p["perimeter_insulation_mm"] > 0 and p["perimeter_insulation_depth_mm"] > 0:
        regions.append(Region.rectangle(
            "xps", t_wall, -p["perimeter_insulation_depth_mm"],
            t_wall + p["perimeter_insulation_mm"], 0.0))
    floor_regions, _ = stack_regions(floor, y_floor, (-inside, 0.0), "-y")
    wall_regions, x_out = stack_regions(wall, 0.0, (0.0, y_top), "+x")
    regions += floor_regions + wall_regions

    surfaces = [
        surface_along([(-inside, y_floor), (0.0, y_floor)], heat_flow="downward"),
        surface_along([(0.0, y_floor), (0.0, y_top)]),
        surface_along([(x_far, 0.0), (x_out, 0.0), (x_out, y_top)], EXTERIOR),
    ]
    table = materials("clay_masonry", "eps", "cement_screed", "reinforced_concrete",
                      "xps", "dense_concrete",
                      extra={"ground": (p["ground_conductivity_w_mk"],
                                        MATERIALS_TABLE["ground"][1]
                                        + "; parameter ground_conductivity_w_mk")})
    floor_resistance = math.fsum(d / 1000.0 / table[m].conductivity
                                 for m, d in floor if d > 0)
    u_floor = floor_u_value(b / 1000.0, t / 1000.0, floor_resistance,
                            p["ground_conductivity_w_mk"])
    flanking = [flanking_from_stack("external wall", wall, y_top - y_floor),
                Flanking(name="ground floor (U from ISO 13370)", length=inside + t,
                         u_value=u_floor)]
    probes = [("floor to wall corner", (0.0, y_floor))]
    return assemble("Ground floor edge, Tarnwick Yard demo", DIMENSION_SYSTEM, table,
                    regions, surfaces, flanking, probes, script=SCRIPT)
