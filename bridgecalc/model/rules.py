"""Every rule of model format 1, checked on a model however it was made.

Works on models read from files and on models built in memory (geometry
scripts), so every later stage can trust its input.
"""

from __future__ import annotations

import difflib
import math

import shapely

from . import geometry
from .moisture import check_moisture
from .checker import (Checker, describe, fmt, fmt_point, is_real, is_sequence,
                      material_where)
from .outline import outline_edges, region_shapes, solid_pieces
from .types import (ABSOLUTE_ZERO, DIMENSION_SYSTEMS, ENVIRONMENT_KINDS, FORMAT, LENGTH_UNITS,
                    AirLayer, Environment, Flanking, Layer, Material, Model, Probe, Region,
                    Surface, air_layer_material)
from ..physics import iso6946

def check_air_layer(check: Checker, layer, where: str):
    if not isinstance(layer, AirLayer):
        check.fail(where, f"expected an AirLayer, got {describe(layer)}")
    check.number(layer.thickness, f"{where}.thickness", minimum=0.0, strictly=True)
    check.string(layer.direction, f"{where}.direction")
    if layer.direction not in iso6946.HEAT_FLOW_DIRECTIONS:
        check.fail(f"{where}.direction",
                   f"unknown heat-flow direction {layer.direction!r}; use one of "
                   f"{', '.join(iso6946.HEAT_FLOW_DIRECTIONS)}")
    ems = layer.emissivities
    if not is_sequence(ems) or len(ems) != 2:
        check.fail(f"{where}.emissivities",
                   f"expected two emissivities [e1, e2], got {describe(ems)}")
    for k, e in enumerate(ems):
        e = check.number(e, f"{where}.emissivities[{k}]")
        if not 0 < e <= 1:
            check.fail(f"{where}.emissivities[{k}]",
                       f"an emissivity lies in (0, 1], got {fmt(e)}")


# -- validation --------------------------------------------------------------


def validate(model: Model) -> None:
    """Check a model against every rule of model format 1.

    Works on models read from files and on models built in memory (geometry
    scripts). Does not change the model; calling it again has no effect.

    Raises
    ------
    ModelError
        At the first broken rule, naming the model's origin, the table (e.g.
        ``regions[3]``, counted from 0) and the key.
    """
    drawing = getattr(model, "drawing", None)
    check = Checker(getattr(model, "origin", "<model>"), drawing.places if drawing else ())
    if not isinstance(model, Model):
        check.fail("", f"expected a bridgecalc Model, got {describe(model)}")
    version = model.format
    if isinstance(version, bool) or not isinstance(version, int) or version != FORMAT:
        check.fail("format", f"unknown format {version!r}; this version of bridgecalc reads "
                             f"format {FORMAT}")
    check.string(model.length_unit, "length_unit")
    if model.length_unit not in LENGTH_UNITS:
        check.fail("length_unit", f"unknown unit {model.length_unit!r}; use one of "
                                  f"{', '.join(repr(u) for u in LENGTH_UNITS)}")
    check.string(model.name, "name", optional=True)
    check.string(model.dimension_system, "dimension_system", optional=True)
    if model.dimension_system is not None and model.dimension_system not in DIMENSION_SYSTEMS:
        systems = ", ".join(repr(d) for d in DIMENSION_SYSTEMS)
        check.fail("dimension_system", f"unknown dimension system {model.dimension_system!r}; "
                                       f"use one of {systems} (ISO 14683)")
    for table, noun in (("regions", "Region"), ("environments", "Environment"),
                        ("surfaces", "Surface"), ("flanking", "Flanking"), ("probes", "Probe")):
        value = getattr(model, table)
        if not isinstance(value, (list, tuple)):
            check.fail(table, f"expected a list of {noun}, got {describe(value)}")
    _check_materials(check, model)
    _check_regions(check, model)
    _check_environments(check, model)
    _check_surfaces(check, model)
    _check_flanking(check, model)
    _check_probes(check, model)
    if model.moisture is not None:
        check_moisture(check, model.moisture, model.environments)
    _check_geometry(check, model)


def _check_materials(check: Checker, model: Model):
    if not isinstance(model.materials, dict):
        check.fail("materials", f"expected a dict of name to Material, got "
                                f"{describe(model.materials)}")
    for key, mat in model.materials.items():
        where = material_where(key)
        if not isinstance(mat, Material):
            check.fail(where, f"expected a Material, got {describe(mat)}")
        if mat.name != key:
            check.fail(f"{where}", f"is stored under the name {key!r} but calls itself "
                                   f"{mat.name!r}")
        check.string(mat.source, f"{where}.source", optional=True)
        if mat.air_layer is None:
            k = check.number(mat.conductivity, f"{where}.conductivity")
            if not k > 0:
                check.fail(f"{where}.conductivity",
                           f"must be greater than 0 W/(m·K), got {fmt(k)}")
            continue
        check_air_layer(check, mat.air_layer, f"{where}.air_layer")
        expected = air_layer_material(key, mat.air_layer, model.length_unit).conductivity
        if not (is_real(mat.conductivity)
                and math.isclose(mat.conductivity, expected, rel_tol=1e-9)):
            check.fail(f"{where}.conductivity",
                       f"{mat.conductivity!r} does not match the air layer's equivalent "
                       f"conductivity {expected:.6g} W/(m·K); build the material with "
                       f"bridgecalc.model.air_layer_material()")


def _defined(check: Checker, noun: str, name, defined: list, where: str):
    """``name`` is one of ``defined`` (a string); else fail with the list and a
    did-you-mean."""
    check.string(name, where)
    if name not in defined:
        hint = difflib.get_close_matches(name, defined, n=1)
        did_you_mean = f"; did you mean {hint[0]!r}?" if hint else ""
        check.fail(where, f"{noun} {name!r} is not defined (defined: "
                          f"{', '.join(defined) or 'none'}){did_you_mean}")


def _defined_material(check: Checker, model: Model, name, where: str):
    _defined(check, "material", name, list(model.materials), where)


def _check_regions(check: Checker, model: Model):
    if not isinstance(model.regions, (list, tuple)) or not model.regions:
        check.fail("regions", "the model has no regions; add at least one [[regions]] "
                              "table with a material and a rectangle or polygon")
    for i, region in enumerate(model.regions):
        where = f"regions[{i}]"
        if not isinstance(region, Region):
            check.fail(where, f"expected a Region, got {describe(region)}")
        _defined_material(check, model, region.material, f"{where}.material")
        check.number(region.heat_source, f"{where}.heat_source")
        if region.shape == "rectangle":
            _check_rectangle(check, region, f"{where}.rectangle")
        elif region.shape == "polygon":
            _check_polygon(check, region.vertices, f"{where}.polygon")
        else:
            check.fail(f"{where}", f"shape must be 'rectangle' or 'polygon', got "
                                   f"{describe(region.shape)}")
        _check_holes(check, region, where)
    tol = geometry.on_path_tolerance([r.vertices for r in model.regions])
    for i, region in enumerate(model.regions):
        _check_clearance(check, region, f"regions[{i}].{region.shape}", tol,
                         model.length_unit)


def _check_clearance(check: Checker, region: Region, where: str, tol: float, unit: str):
    """Reject a region that comes within the on-path tolerance of itself.

    Points closer than the tolerance are one point to the mesher (gmsh's
    geometry tolerance is set to it), so a shorter edge, or a vertex that
    close to an edge it does not belong to, is a degenerate outline there.
    """
    shape = shapely.Polygon([(float(x), float(y)) for x, y in region.vertices],
                            [[(float(x), float(y)) for x, y in hole] for hole in region.holes])
    clearance = shapely.minimum_clearance(shape)
    if not clearance <= tol:
        return
    if region.shape == "rectangle":
        (x0, y0), (x1, y1) = region.vertices[0], region.vertices[2]
        side, size = min((x1 - x0, "x1 - x0"), (y1 - y0, "y1 - y0"))
        check.fail(where, f"{size} = {fmt(side)} {unit} is within the model's tolerance "
                          f"of {tol:.3g} {unit} (1e-6 of its largest dimension); the "
                          f"rectangle is degenerate")
    a, b = shapely.minimum_clearance_line(shape).coords
    check.fail(where, f"the outline comes within {fmt(clearance)} {unit} of itself near "
                      f"{fmt_point(a)}, within the model's tolerance of {tol:.3g} {unit} "
                      f"(1e-6 of its largest dimension): two vertices almost coincide, or "
                      f"a vertex almost touches an edge; merge them or move them apart")


def _check_holes(check: Checker, region: Region, where: str):
    """Holes: simple polygons strictly inside the region's polygon, apart from
    each other (model format 1, addition B)."""
    holes = region.holes
    if not is_sequence(holes):
        check.fail(f"{where}.holes", f"expected a list of polygons, got {describe(holes)}")
    if not holes:
        return
    if region.shape != "polygon":
        check.fail(f"{where}.holes", "only a polygon region may have holes; write the "
                                     "rectangle as a polygon")
    outline = shapely.Polygon(region.vertices)
    shapes = []
    for k, hole in enumerate(holes):
        hwhere = f"{where}.holes[{k}]"
        _check_polygon(check, hole, hwhere)
        shape = shapely.Polygon(hole)
        if not outline.intersects(shape) or outline.touches(shape):
            check.fail(hwhere, "lies outside the region's polygon; a hole must lie "
                               "strictly inside it")
        if not outline.contains(shape):
            crossing = shapely.intersection(outline.exterior, shape.exterior)
            near = shapely.get_coordinates(crossing)
            at = f" near {fmt_point(near[0])}" if len(near) else ""
            check.fail(hwhere, f"crosses or touches the outline of the region's polygon{at}; "
                               f"a hole must lie strictly inside it (to cut the region "
                               f"open, draw its outline around the gap instead)")
        for j, other in enumerate(shapes):
            if shape.intersects(other):
                check.fail(hwhere, f"overlaps or touches {where}.holes[{j}]; holes of one "
                                   f"region must lie apart (draw overlapping holes as one)")
        shapes.append(shape)


def _check_rectangle(check: Checker, region: Region, where: str):
    v = region.vertices
    if not is_sequence(v) or len(v) != 4:
        check.fail(where, f"a rectangle has 4 corners, got {describe(v)}")
    pts = [check.point(p, where) for p in v]
    (x0, y0), (x1, y1) = pts[0], pts[2]
    if pts != [(x0, y0), (x1, y0), (x1, y1), (x0, y1)]:
        check.fail(where, "corners are not those of an axis-aligned rectangle; build "
                          "it with Region.rectangle() or use a polygon")
    if not x1 > x0:
        check.fail(where, f"x1 ({fmt(x1)}) must be greater than x0 ({fmt(x0)})")
    if not y1 > y0:
        check.fail(where, f"y1 ({fmt(y1)}) must be greater than y0 ({fmt(y0)})")


def _check_polygon(check: Checker, vertices, where: str):
    pts = check.points(vertices, where, 3, "a polygon")
    if pts[0] == pts[-1]:
        check.fail(where, f"the last vertex repeats the first {fmt_point(pts[0])}; "
                          "polygons are closed implicitly, leave it out")
    for k in range(len(pts) - 1):
        if pts[k] == pts[k + 1]:
            check.fail(where, f"vertices {k} and {k + 1} are the same point "
                              f"{fmt_point(pts[k])}")
    if len(set(pts)) < 3:
        check.fail(where, "a polygon needs at least 3 distinct vertices")
    ring = shapely.LinearRing(pts)
    # all vertices on one line <=> their convex hull has no area
    hull_area = shapely.MultiPoint(pts).convex_hull.area
    if hull_area <= 1e-12 * geometry.largest_dimension([pts]) ** 2:
        check.fail(where, "the polygon has zero area (its vertices lie on one line)")
    if not ring.is_simple:
        check.fail(where, "the polygon intersects itself; its outline must not cross "
                          "or touch itself")


def _unique_name(check: Checker, seen: dict, name, noun: str, table: str, index: int):
    """Fail when ``name`` was already used in ``table``; else remember it."""
    if name in seen:
        check.fail(f"{table}[{index}].name", f"{noun} name {name!r} is already used by "
                                             f"{table}[{seen[name]}]")
    seen[name] = index


def _check_environments(check: Checker, model: Model):
    """Each environment well formed; at least one interior environment, and
    at least two temperatures (model format 1, addition A)."""
    seen = {}
    for i, env in enumerate(model.environments):
        where = f"environments[{i}]"
        if not isinstance(env, Environment):
            check.fail(where, f"expected an Environment, got {describe(env)}")
        check.string(env.name, f"{where}.name")
        _unique_name(check, seen, env.name, "environment", "environments", i)
        temperature = check.number(env.temperature, f"{where}.temperature")
        if temperature < ABSOLUTE_ZERO:
            check.fail(f"{where}.temperature", f"{fmt(temperature)} °C is below absolute zero "
                                               f"({fmt(ABSOLUTE_ZERO)} °C)")
        check.string(env.kind, f"{where}.kind")
        if env.kind not in ENVIRONMENT_KINDS:
            check.fail(f"{where}.kind", f"unknown kind {env.kind!r}; use one of "
                                        f"{', '.join(repr(k) for k in ENVIRONMENT_KINDS)}")
    if not any(env.kind == "interior" for env in model.environments):
        check.fail("environments", "no interior environment; a model needs at least one "
                                   "with kind = 'interior'")
    temperatures = {env.temperature for env in model.environments}
    if len(temperatures) < 2:
        last = len(model.environments) - 1
        if not any(env.kind == "exterior" for env in model.environments):
            check.fail("environments", "no exterior environment, and no two environments "
                                       "at different temperatures; a model needs an "
                                       "exterior environment, or at least two environments "
                                       "at different temperatures")
        check.fail(f"environments[{last}].temperature",
                   f"every environment is at {fmt(temperatures.pop())} °C, so no heat flows "
                   f"and there is no temperature difference to compute coupling "
                   f"coefficients, Ψ or fRsi with; give the environments their design "
                   f"temperatures")


def temperature_levels(model: Model) -> list[float]:
    """The distinct environment temperatures [°C], ascending."""
    return sorted({float(env.temperature) for env in model.environments})


def two_temperature_sides(model: Model) -> tuple[float, float] | None:
    """(θi, θe) [°C] of a model whose environments hold exactly two
    temperatures, else None.

    θi is the temperature of the interior environments when they share one
    (the usual case: interior at one temperature, exterior or unheated at
    the other), else the higher of the two; θe is the other. L2D, Ψ and
    fRsi keep their two-temperature meaning for such models (addition A).
    """
    levels = temperature_levels(model)
    if len(levels) != 2:
        return None
    interior = {float(e.temperature) for e in model.environments if e.kind == "interior"}
    theta_i = interior.pop() if len(interior) == 1 else levels[1]
    theta_e = levels[0] if theta_i == levels[1] else levels[1]
    return theta_i, theta_e


def _check_surfaces(check: Checker, model: Model):
    if not model.surfaces:
        check.fail("surfaces", "the model has no surfaces, so no heat can enter or leave "
                               "it; add [[surfaces]] tables")
    for i, surf in enumerate(model.surfaces):
        where = f"surfaces[{i}]"
        if not isinstance(surf, Surface):
            check.fail(where, f"expected a Surface, got {describe(surf)}")
        _defined_environment(check, model, surf.environment, f"{where}.environment")
        check.number(surf.resistance, f"{where}.resistance", minimum=0.0)
        check.number(surf.resistance_surface_temperature,
                     f"{where}.resistance_surface_temperature", minimum=0.0, optional=True)
        check.points(surf.path, f"{where}.path", 2, "a surface path")
        _check_assess(check, model, surf, where)
    interior = [s for s in model.surfaces
                if model.environment(s.environment).kind == "interior"]
    if interior and not any(s.assess for s in interior):
        check.fail("surfaces", "every surface facing an interior environment has "
                               "assess = false, so no interior surface is left to search for "
                               "θsi,min and fRsi; leave assess out (true) on the opaque ones")


def _check_assess(check: Checker, model: Model, surf: Surface, where: str):
    """``assess`` (addition F) is a boolean, and false only where it means something:
    on a surface facing an interior environment."""
    if not isinstance(surf.assess, bool):
        check.fail(f"{where}.assess", f"expected true or false, got {describe(surf.assess)}")
    if not surf.assess and model.environment(surf.environment).kind != "interior":
        check.fail(f"{where}.assess", f"only surfaces facing an interior environment are "
                                      f"searched for θsi,min; this one faces "
                                      f"{surf.environment!r} "
                                      f"({model.environment(surf.environment).kind}), so "
                                      f"assess = false changes nothing: leave it out")


#: Smallest |θi − θe| accepted, relative to the larger of |θi|, |θe| and 1 K [-].
TEMPERATURE_DIFFERENCE_RELATIVE = 1e-6


def check_temperature_difference(model: Model, theta_i: float, theta_e: float) -> None:
    """Before a calculation: θi − θe is large enough to divide by.

    L2D and fRsi of a two-temperature model are divided by θi − θe, while the
    solver works with the temperatures themselves; a difference under a
    millionth of them is mostly round-off (a difference of 1e-12 K at 20 °C
    gave L2D = −7 W/(m·K)).

    Raises
    ------
    ModelError
        Naming the table ``environments`` and both temperatures.
    """
    limit = TEMPERATURE_DIFFERENCE_RELATIVE * max(abs(theta_i), abs(theta_e), 1.0)
    if abs(theta_i - theta_e) <= limit:
        Checker(model.origin).fail(
            "environments", f"interior ({theta_i:.15g} °C) and exterior ({theta_e:.15g} °C) "
                            f"differ by {abs(theta_i - theta_e):.3g} K, too little to divide "
                            f"L2D and fRsi by without round-off swamping them; give them a "
                            f"difference of more than {limit:.3g} K")


def unfaced_sides(model: Model) -> dict[str, str]:
    """What the surfaces leave out: environments no surface faces.

    Format 1 does not forbid such a file (its own example has no exterior
    surface), so the reader reads it. Returns messages that name the
    environments and the table:

    * under ``"interior"``, when no surface faces any interior environment:
      there is no θsi,min, and ``run`` refuses the model;
    * under an environment's name, for each other environment no surface
      faces: its coupling coefficients are zero. When what the surfaces face
      is all at one temperature, no heat flows through the model at all (L2D
      = 0, Ψ = −ΣU·l, fRsi = 1 by construction); ``run`` computes it with the
      message as a warning carried to every output.
    """
    faced = {s.environment for s in model.surfaces}
    out = {}
    if not any(model.environment(name).kind == "interior" for name in faced):
        names = ", ".join(repr(e.name) for e in model.environments if e.kind == "interior")
        out["interior"] = (f"{model.origin}: surfaces: no surface faces an interior environment "
                           f"({names}), so there is no interior surface temperature; give the "
                           f"interior side a [[surfaces]] table")
        return out
    no_flow = len({model.environment(name).temperature for name in faced}) < 2
    two_temperatures = len(temperature_levels(model)) == 2
    for env in model.environments:
        if env.name in faced:
            continue
        if no_flow and two_temperatures:
            consequence = ("so no heat flows between interior and exterior: L2D = 0, "
                           "Ψ = −ΣU·l and fRsi = 1 by construction, and they say nothing "
                           "about the junction")
        elif no_flow:
            consequence = ("so no heat flows through the model: every coupling coefficient "
                           "is 0 and the surface temperatures are those of the faced "
                           "environments by construction")
        else:
            consequence = ("so its coupling coefficients are 0 and it takes no part in the "
                           "heat flows")
        out[env.name] = (f"{model.origin}: surfaces: no surface faces an {env.kind} "
                         f"environment ({env.name!r}), {consequence}; give the {env.kind} "
                         f"side a [[surfaces]] table")
    return out


def _check_flanking(check: Checker, model: Model):
    for i, flank in enumerate(model.flanking):
        where = f"flanking[{i}]"
        if not isinstance(flank, Flanking):
            check.fail(where, f"expected a Flanking, got {describe(flank)}")
        check.string(flank.name, f"{where}.name")
        check.number(flank.length, f"{where}.length", minimum=0.0)
        _check_between(check, model, flank.between, f"{where}.between")
        if flank.u_value is not None and flank.layers is not None:
            check.fail(where, "give either u_value or layers, not both")
        if flank.u_value is None and flank.layers is None:
            check.fail(where, "give its u_value [W/(m²·K)] or its layers")
        if flank.u_value is not None:
            check.number(flank.u_value, f"{where}.u_value", minimum=0.0)
            if flank.surface_resistances is not None:
                check.fail(f"{where}.surface_resistances",
                           "only used with layers; with u_value given, leave it out")
            continue
        if not is_sequence(flank.layers) or len(flank.layers) == 0:
            got = "an empty list" if is_sequence(flank.layers) else describe(flank.layers)
            check.fail(f"{where}.layers", f"expected at least one layer, got {got}")
        for j, layer in enumerate(flank.layers):
            lwhere = f"{where}.layers[{j}]"
            if not isinstance(layer, Layer):
                check.fail(lwhere, f"expected a Layer, got {describe(layer)}")
            _defined_material(check, model, layer.material, f"{lwhere}.material")
            check.number(layer.thickness, f"{lwhere}.thickness", minimum=0.0, strictly=True)
        rs = flank.surface_resistances
        if rs is not None:
            if not is_sequence(rs) or len(rs) != 2:
                check.fail(f"{where}.surface_resistances",
                           f"expected two numbers [Rsi, Rse] in m²·K/W, got {describe(rs)}")
            for k, r in enumerate(rs):
                check.number(r, f"{where}.surface_resistances[{k}]", minimum=0.0)


def _check_between(check: Checker, model: Model, between, where: str):
    """The pair of environments a flanking element separates (addition A):
    two different defined environments; required when the environments hold
    more than two temperatures, where a Ψ needs its pair named."""
    names = [env.name for env in model.environments]
    if between is None:
        levels = temperature_levels(model)
        if len(levels) > 2:
            listing = ", ".join(f"{e.name} {fmt(e.temperature)} °C" for e in model.environments)
            check.fail(where, f"missing; the model's environments are at more than two "
                              f"temperatures ({listing}), so say which pair of "
                              f"environments this element separates, e.g. between = "
                              f"[{names[0]!r}, {names[-1]!r}]")
        return
    if not is_sequence(between) or len(between) != 2:
        check.fail(where, f"expected the names of two environments, got {describe(between)}")
    for k, name in enumerate(between):
        _defined_environment(check, model, name, f"{where}[{k}]")
    if between[0] == between[1]:
        check.fail(where, f"names {between[0]!r} twice; a flanking element separates two "
                          f"different environments")


def _defined_environment(check: Checker, model: Model, name, where: str):
    _defined(check, "environment", name, [env.name for env in model.environments], where)


def _check_probes(check: Checker, model: Model):
    seen = {}
    for i, probe in enumerate(model.probes):
        where = f"probes[{i}]"
        if not isinstance(probe, Probe):
            check.fail(where, f"expected a Probe, got {describe(probe)}")
        check.string(probe.name, f"{where}.name")
        _unique_name(check, seen, probe.name, "probe", "probes", i)
        check.point(probe.at, f"{where}.at")


def _check_geometry(check: Checker, model: Model):
    edges = outline_edges(model, check)
    pieces = solid_pieces(model)
    touched = {e.piece for e in edges if e.surface is not None}
    tol = geometry.on_path_tolerance([r.vertices for r in model.regions])
    if len(touched) < len(pieces):
        shapes = region_shapes(model)
        for p, piece in enumerate(pieces):
            if p in touched:
                continue
            members = [i for i, s in enumerate(shapes)
                       if piece.distance(s.representative_point()) <= tol]
            first = model.regions[members[0]]
            listed = ", ".join(f"regions[{i}]" for i in members)
            check.fail(f"regions[{members[0]}].{first.shape}",
                       f"the solid falls apart into {len(pieces)} separate pieces, and "
                       f"the piece made of {listed} touches no surface, so its "
                       f"temperature is undetermined; join it to the rest or give it a "
                       f"surface")
    if model.probes:
        union = shapely.unary_union(pieces)
        for i, probe in enumerate(model.probes):
            d = union.distance(shapely.Point(*map(float, probe.at)))
            if d > tol:
                check.fail(f"probes[{i}].at",
                           f"point {fmt_point(probe.at)} lies outside the solid "
                           f"({fmt(d)} {model.length_unit} from its outline)")
