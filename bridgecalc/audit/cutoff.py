"""Rules on the cut-off planes: how far they lie from the junction, and
whether the flanking elements' layers match the section drawn there.

A cut-off plane here is an adiabatic straight edge on the model's outer
extent (:func:`cut_off_planes`); the section drawn there is the sequence of
materials met along it.
"""

from __future__ import annotations

import numpy as np
import shapely
from shapely import affinity

from .findings import Finding
from .layout import Layout, Piece

#: ISO 10211:2017, 5.2.2 (from memory): a cut-off plane lies at least 1 m
#: from the central element, or three times the thickness of the flanking
#: element it cuts where that is larger [m].
CUT_OFF_MINIMUM = 1.0
CUT_OFF_THICKNESS_FACTOR = 3.0
#: Distances are measured from the cut-off plane to the nearest face of the
#: junction, which ISO 10211 measures to the central element; within this
#: fraction of the distance asked for, a plane passes [-].
CUT_OFF_SLACK = 0.10
#: Sections cut thicker than this [m] are not building elements but ground
#: blocks and the like, whose extent ISO 10211 / ISO 13370 set otherwise
#: (20 m of ground, from memory); their distance is not checked.
THICKEST_ELEMENT = 1.5
#: A flanking element's layers and the section drawn where it is cut may
#: differ by this fraction of the layers' total [-] (a plaster coat or a
#: membrane left out of one of them).
STACK_SLACK = 0.05


def cut_off_planes(layout: Layout) -> list[Piece]:
    """Adiabatic straight pieces of exterior rings on the outer extent (neither
    a surface path's continuation nor the side of a gap)."""
    short = {id(p) for p, _, _ in layout.stopped_short}
    return [p for ring in layout.rings if not ring.hole for p in ring.pieces
            if p.surface is None and id(p) not in short and layout.on_extent(p)
            and not layout.along_gap(p)]


def distance_to_junction(layout: Layout, plane: Piece, planes: list[Piece]) -> float:
    """How far the section cut by the plane stays as it is, going into the
    model [length_unit].

    A ray is cast inward, square to the plane, from the middle of each
    material the plane cuts and from its two ends; each stops at the first outline or material
    boundary it meets. A ray that crosses the whole model to another cut-off
    plane (the insulation running past a slab) says nothing; of the others,
    the junction is as far as the farthest goes: beside a sloping roof's
    underside the ray by the outer face stops short of the one by the room's
    face, and ISO 10211 measures to the central element. ``inf`` when every
    ray crosses the model.
    """
    inward = -plane.normal
    along = (plane.end - plane.start) / plane.length
    reach = 4 * layout.size
    tol = 10 * layout.tol
    boundaries = shapely.union_all([g.boundary for _, g in layout.visible])
    others = shapely.MultiLineString([[p.start, p.end] for p in planes if p is not plane]
                                     or [[(0, 0), (0, 0)]])
    farthest = float("-inf")
    starts = [tol] + [(a + b) / 2 for _, a, b in layout.section(plane.start, plane.end)]
    for t in starts + [plane.length - tol]:
        origin = plane.start + along * t
        ray = shapely.LineString([origin + inward * tol, origin + inward * reach])
        hits = shapely.get_coordinates(shapely.intersection(ray, boundaries))
        if len(hits) == 0:
            continue
        s = (hits - origin) @ inward
        first = hits[int(np.argmin(s))]
        if others.distance(shapely.Point(first)) <= tol:
            continue
        farthest = max(farthest, float(s.min()))
    return farthest if farthest > float("-inf") else float("inf")


def mirrored_pair(layout: Layout, plane: Piece, planes: list[Piece]) -> bool:
    """The plane and an opposite parallel plane of the same length bound a
    model that is its own mirror image about the line halfway between them:
    a repeating element (a stud, a tie) between its two symmetry planes."""
    shapes = shapely.union_all([g for _, g in layout.visible])
    for other in planes:
        if other is plane or not np.allclose(other.normal, -plane.normal, atol=1e-9):
            continue
        if abs(other.length - plane.length) > 10 * layout.tol:
            continue
        width = float((other.start - plane.start) @ (-plane.normal))
        if width <= 0:
            continue
        centre = plane.start - plane.normal * width / 2
        n = plane.normal
        # reflection across the line through `centre` with normal n
        a, b = 1 - 2 * n[0] ** 2, -2 * n[0] * n[1]
        d = 1 - 2 * n[1] ** 2
        c = 2 * float(centre @ n)
        matrix = [a, b, b, d, c * n[0], c * n[1]]
        if all(shapely.symmetric_difference(g, affinity.affine_transform(g, matrix)).area
               <= 1e-6 * max(shapes.area, 1e-300) for _, g in layout.visible):
            return True
    return False


def close_cut_off_planes(layout: Layout) -> list[Finding]:
    """Cut-off planes nearer the junction than ISO 10211 asks."""
    unit = layout.model.length_unit
    planes = cut_off_planes(layout)
    found = []
    for plane in planes:
        thickness = plane.length * layout.metres
        if thickness > THICKEST_ELEMENT:
            continue
        required = max(CUT_OFF_MINIMUM, CUT_OFF_THICKNESS_FACTOR * thickness) / layout.metres
        distance = distance_to_junction(layout, plane, planes)
        if distance >= (1 - CUT_OFF_SLACK) * required or mirrored_pair(layout, plane, planes):
            continue
        found.append(Finding(
            "cut-off plane too close", plane.middle,
            f"the cut-off plane from {_pt(plane.start)} to {_pt(plane.end)} lies "
            f"{distance:.4g} {unit} from where the section changes (the junction), "
            f"where ISO 10211 asks for {required:.4g} {unit}: at least 1 m, or three times "
            f"the thickness of the element cut ({plane.length:.4g} {unit}) where that is "
            f"larger (ISO 10211, from memory)",
            "extend the flanking element to that distance, or, if the plane is a "
            "symmetry plane, check that the detail really is symmetric about it"))
    return found


def _pt(p) -> str:
    return "(" + ", ".join(f"{float(c):.6g}" for c in p) + ")"


def stack_against_section(layout: Layout) -> list[Finding]:
    """Flanking elements whose layers do not add up to the section drawn
    where that element meets a cut-off plane.

    The element's section at a cut-off plane is a stretch of the plane on
    which only materials of its layers are met, all of those that are drawn
    at all; of several such stretches the closest in thickness is compared.
    """
    model = layout.model
    unit = model.length_unit
    drawn = {name for name, _ in layout.visible}
    planes = cut_off_planes(layout)
    sections = [(p, layout.section(p.start, p.end)) for p in planes]
    found = []
    for i, flank in enumerate(model.flanking):
        if not flank.layers:
            continue
        total = sum(layer.thickness for layer in flank.layers)
        materials = {layer.material for layer in flank.layers}
        wanted = materials & drawn
        if not wanted or total <= 0:
            continue
        best = None
        for plane, section in sections:
            for start, stop in _stretches_of(section, materials, 10 * layout.tol):
                met = {name for name, a, b in section[start:stop]}
                if met != wanted:
                    continue
                thickness = section[stop - 1][2] - section[start][1]
                along = (plane.end - plane.start) / plane.length
                middle = plane.start + along * (section[start][1] + section[stop - 1][2]) / 2
                if best is None or abs(thickness - total) < abs(best[0] - total):
                    best = (thickness, (float(middle[0]), float(middle[1])))
        if best is None or abs(best[0] - total) <= STACK_SLACK * total:
            continue
        layers = " + ".join(f"{layer.thickness:g}" for layer in flank.layers)
        found.append(Finding(
            "flanking layers against the section", best[1],
            f"flanking[{i}] ({flank.name!r}) has layers of {layers} = {total:.4g} {unit}, "
            f"but the section drawn where it meets the cut-off plane is {best[0]:.4g} {unit} "
            f"({100 * (total - best[0]) / best[0]:+.0f} %): its U does not belong to the "
            f"element drawn",
            f"check flanking[{i}].layers against the drawing (a thickness in the wrong "
            f"unit, a layer left out?)"))
    return found


def _stretches_of(section, materials, tol: float) -> list[tuple[int, int]]:
    """Maximal index ranges [start, stop) of ``section`` whose materials are
    all in ``materials`` and which follow each other without a gap."""
    out = []
    start = None
    for k, (name, a, b) in enumerate(section):
        joined = start is not None and a <= section[k - 1][2] + tol
        if name in materials and (start is None or joined):
            if start is None:
                start = k
            continue
        if start is not None:
            out.append((start, k))
            start = None
        if name in materials:
            start = k
    if start is not None:
        out.append((start, len(section)))
    return out
