"""Thin strips (liners, foils, membranes, sheets): one element across, the
neighbours' size along (step 3a of :mod:`bridgecalc.mesh.build`).

The vertices of each long side are projected onto the other, and each piece
of one side is meshed as a copy of the piece facing it (gmsh periodic curves),
so the nodes on the two sides face each other and the strip is a ladder of
right-angled needles.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .types import MeshOptions


class StripMeshingFailed(Exception):
    """gmsh could not mesh the model with its thin strips as ladders."""


# -- thin strips: one element across, the neighbours' size along ---------------

#: Ends of a strip may be oblique: up to this many thicknesses long [-].
STRIP_END_RATIO = 3.0
#: Long sides of a strip are parallel when their distance varies by less than
#: this share of the thickness [-].
STRIP_PARALLEL = 0.01
#: A vertex of one long side faces one of the other side when their
#: projections are closer than this share of the thickness [-].
STRIP_SNAP = 0.5
#: A strip is meshed as one only when its own element size is at most this
#: share of its neighbours' [-].
STRIP_NEIGHBOUR_RATIO = 0.25


@dataclass
class _Strip:
    """A fragment meshed as a ladder of needles.

    ``sides`` holds the two long sides, each a list of (curve, start, end)
    in the same direction along the strip [m]; ``ends`` the curves across.
    """

    surface: int
    thickness: float
    sides: tuple
    ends: list
    pairs: list = field(default_factory=list)   # (curve A, curve B, B's start facing A's start)
    #: Point tags of its vertices other than those added by projection.
    vertices: set = field(default_factory=set)


def _point_xy(gmsh, tag: int) -> np.ndarray:
    return np.asarray(gmsh.model.getValue(0, tag, []), dtype=float)[:2]


def _loop(gmsh, surface: int):
    """The outline of a fragment as one closed chain of (curve, start, end) with
    point coordinates [m], or None (holes, closed curves)."""
    items = []
    for _, c in gmsh.model.getBoundary([(2, surface)], combined=False, oriented=True):
        _, pts = gmsh.model.getAdjacencies(1, abs(c))
        if len(pts) != 2:
            return None
        a, b = (int(pts[0]), int(pts[1])) if c > 0 else (int(pts[1]), int(pts[0]))
        items.append((abs(c), a, b))
    by_start = {a: (c, a, b) for c, a, b in items}
    if len(by_start) != len(items):
        return None
    chain, seen = [items[0]], {items[0][0]}
    while len(chain) < len(items):
        nxt = by_start.get(chain[-1][2])
        if nxt is None or nxt[0] in seen:          # a second loop: the fragment has a hole
            return None
        chain.append(nxt)
        seen.add(nxt[0])
    if chain[-1][2] != chain[0][1]:
        return None
    return [(c, _point_xy(gmsh, a), _point_xy(gmsh, b)) for c, a, b in chain]


def _strip_of(gmsh, surface: int, aspect: float, tol: float):
    """The fragment as a :class:`_Strip`, or None when it is no straight thin strip."""
    loop = _loop(gmsh, surface)
    if loop is None or len(loop) < 4:
        return None
    n = len(loop)

    def is_corner(i):            # between loop[i - 1] and loop[i]
        u, v, w = loop[i - 1][1], loop[i][1], loop[i][2]
        d = w - u
        length = math.hypot(*d)
        return length <= tol or abs(d[0] * (v - u)[1] - d[1] * (v - u)[0]) / length > tol

    corners = [i for i in range(n) if is_corner(i)]
    if len(corners) != 4:
        return None
    sides = [[loop[j % n] for j in range(a, b if b > a else b + n)]
             for a, b in zip(corners, corners[1:] + corners[:1])]
    lengths = [math.hypot(*(side[-1][2] - side[0][1])) for side in sides]
    for k in (0, 1):
        side_a, side_b = sides[k], sides[k + 2]
        p0, p1 = side_a[0][1], side_a[-1][2]
        axis = (p1 - p0) / lengths[k]
        normal = np.array([-axis[1], axis[0]])
        offsets = [float((side_b[0][1] - p0) @ normal), float((side_b[-1][2] - p0) @ normal)]
        thickness = abs(0.5 * (offsets[0] + offsets[1]))
        if thickness <= tol or abs(offsets[0] - offsets[1]) > STRIP_PARALLEL * thickness:
            continue
        if max(lengths[k + 1], lengths[(k + 3) % 4]) > STRIP_END_RATIO * thickness:
            continue
        if min(lengths[k], lengths[k + 2]) < aspect * thickness:
            continue
        # side B runs against the loop; store it in A's direction
        reversed_b = [(c, b, a) for c, a, b in reversed(side_b)]
        ends = [c for c, _, _ in sides[k + 1] + sides[(k + 3) % 4]]
        return _Strip(surface, thickness, (side_a, reversed_b), ends)
    return None


def _foot(point, start, end):
    """Parameter [m] along start→end of the projection of ``point``, and the foot."""
    axis = end - start
    length = math.hypot(*axis)
    t = float((point - start) @ axis) / length
    return t, start + axis * (t / length)


def thin_strips(gmsh, owner: dict, options: MeshOptions, h_max: float, tol: float):
    """Find the thin strips and make the vertices of their long sides face each other.

    A strip qualifies when it is at least ``options.thin_aspect`` times
    longer than thick and its own element size (thickness /
    cells_across_part) is at most :data:`STRIP_NEIGHBOUR_RATIO` of the
    smallest size of the other parts it touches: where the neighbours are
    about as fine anyway, meshing it on its own terms costs nothing.

    Every vertex of a long side (and, in a stack of strips, of the strips
    beyond) is projected onto the facing side; projections that do not fall
    on a vertex there (within :data:`STRIP_SNAP` of the thickness) become new
    vertices, by an OpenCASCADE fragment of the surfaces with those points.

    Returns
    -------
    owner : dict
        Surface tag -> region index, after the fragment.
    strips : list of _Strip
        With ``pairs``: the facing pieces of the two long sides.
    """
    occ = gmsh.model.occ
    aspect = options.thin_aspect
    strips = [st for st in (_strip_of(gmsh, s, aspect, tol) for s in sorted(owner)) if st]
    curves = {s: {abs(c) for _, c in gmsh.model.getBoundary([(2, s)], combined=False,
                                                           oriented=False)} for s in owner}
    # a strip's neighbours are the parts along its long sides, not those at its ends
    for st in strips:
        curves[st.surface] = {c for side in st.sides for c, _, _ in side}

    def own_size(thickness):
        return min(h_max, thickness / options.cells_across_part / options.refinement)

    sizes = {s: own_size(fragment_thickness(gmsh, s)) for s in owner}
    while True:        # a strip left out is a neighbour of the others: until none drops
        chosen = {st.surface for st in strips}

        def neighbour_size(surface):
            return min((sizes[other] for other in owner
                        if other not in chosen and curves[surface] & curves[other]),
                       default=h_max)

        kept = [st for st in strips
                if own_size(st.thickness) <= STRIP_NEIGHBOUR_RATIO * neighbour_size(st.surface)]
        if len(kept) == len(strips):
            break
        strips = kept
    if not strips or len(strips) == len(owner):
        return owner, []
    segments = [(st, [(side[0][1], side[-1][2]) for side in st.sides]) for st in strips]
    vertices = [[np.array([side[0][1]] + [b for _, _, b in side]) for side in st.sides]
                for st in strips]
    added: list[np.ndarray] = []

    def on_side(point, start, end):
        t, foot = _foot(point, start, end)
        return math.hypot(*(point - foot)) <= tol and -tol <= t <= math.hypot(*(end - start)) + tol

    for _ in range(len(strips) + 1):            # a stack of k strips needs k rounds
        new = []
        for (st, ends), verts in zip(segments, vertices):
            snap = STRIP_SNAP * st.thickness
            for here, there in ((0, 1), (1, 0)):
                start, end = ends[there]
                length = math.hypot(*(end - start))
                mine = list(verts[here]) + [q for q in added + new if on_side(q, *ends[here])]
                theirs = list(verts[there]) + [q for q in added + new
                                               if on_side(q, start, end)]
                for point in mine:
                    t, foot = _foot(point, start, end)
                    if not (snap < t < length - snap):
                        continue
                    if min(math.hypot(*(foot - q)) for q in theirs) > snap:
                        new.append(foot)
                        theirs.append(foot)
        if not new:
            break
        added.extend(new)
    if added:
        points = [(0, occ.addPoint(float(x), float(y), 0.0)) for x, y in added]
        surfaces = [(2, s) for s in sorted(owner)]
        _, mapping = occ.fragment(surfaces, points)
        occ.synchronize()
        renamed, chosen = {}, {st.surface for st in strips}
        new_tags = []
        for (_, old), pieces in zip(surfaces, mapping):
            for dim, tag in pieces:
                if dim == 2:
                    renamed[tag] = owner[old]
                    if old in chosen:
                        new_tags.append(tag)
        owner = renamed
        strips = [st for st in (_strip_of(gmsh, s, aspect, tol) for s in sorted(new_tags)) if st]
    kept = []
    for st in strips:
        if _pair_sides(st):
            for _, p in gmsh.model.getBoundary([(2, st.surface)], combined=False,
                                               oriented=False, recursive=True):
                xy = _point_xy(gmsh, p)
                if all(math.hypot(*(xy - q)) > tol for q in added):
                    st.vertices.add(p)
            kept.append(st)
    if not kept:                          # vertices were added for strips that are none
        raise StripMeshingFailed("no strip could be paired")
    return owner, kept


def _pair_sides(strip: _Strip) -> bool:
    """Pair each piece of one long side with the piece facing it. Pieces left
    unpaired may only be the short ones at oblique ends; otherwise the strip
    is not meshed as one (False)."""
    side_a, side_b = strip.sides
    snap = STRIP_SNAP * strip.thickness
    start_b, end_b = side_b[0][1], side_b[-1][2]
    paired_b = set()
    for c, a0, a1 in side_a:
        _, f0 = _foot(a0, start_b, end_b)
        _, f1 = _foot(a1, start_b, end_b)
        match = None
        for j, (cb, b0, b1) in enumerate(side_b):
            if math.hypot(*(b0 - f0)) <= snap and math.hypot(*(b1 - f1)) <= snap:
                match = j
                break
        if match is None:
            if math.hypot(*(a1 - a0)) > STRIP_END_RATIO * strip.thickness:
                return False
            continue
        paired_b.add(match)
        strip.pairs.append((c, a0, a1, side_b[match]))
    for j, (cb, b0, b1) in enumerate(side_b):
        if j not in paired_b and math.hypot(*(b1 - b0)) > STRIP_END_RATIO * strip.thickness:
            return False
    return bool(strip.pairs)


def align_strips(gmsh, strips, part_size: dict) -> None:
    """One segment across each strip's ends; facing pieces of the long sides
    meshed as copies of one another (periodic curves).

    In a group of pieces joined through stacked strips, the master is the
    piece next to the finest neighbouring part, so every copy gets the
    finest spacing any side of the stack asks for.
    """
    mesh = gmsh.model.mesh
    # curve -> size of the non-thin part next to it
    neighbour = {}
    for s, h in part_size.items():
        for _, c in gmsh.model.getBoundary([(2, s)], combined=False, oriented=False):
            neighbour[abs(c)] = min(neighbour.get(abs(c), math.inf), h)
    # graph of facing pieces: curve -> [(other curve, map of my ends to its ends)]
    ends_of = {}
    links: dict[int, list] = {}
    for st in strips:
        for c, a0, a1, (cb, b0, b1) in st.pairs:
            ends_of.setdefault(c, (a0, a1))
            ends_of.setdefault(cb, (b0, b1))
            links.setdefault(c, []).append((cb, (a0, a1), (b0, b1)))
            links.setdefault(cb, []).append((c, (b0, b1), (a0, a1)))
    seen = set()
    for start in sorted(links):
        if start in seen:
            continue
        group, stack = {start: ends_of[start]}, [start]       # curve -> ends facing root's
        while stack:
            c = stack.pop()
            for other, mine, theirs in links[c]:
                if other in group:
                    continue
                # group[c] lists c's points in the root's order; follow the correspondence
                first = 0 if (math.hypot(*(group[c][0] - mine[0]))
                              <= math.hypot(*(group[c][0] - mine[1]))) else 1
                group[other] = (theirs[first], theirs[1 - first])
                stack.append(other)
        seen.update(group)
        root = min(group, key=lambda c: (neighbour.get(c, math.inf), c))
        r0, r1 = group[root]
        # the geometric orientation of each curve, to map its start and end
        for c, (m0, m1) in group.items():
            if c == root:
                continue
            mesh.setPeriodic(1, [c], [root], _similarity(r0, r1, m0, m1))


def _similarity(r0, r1, m0, m1) -> list:
    """Row-major 4×4 affine matrix of the similarity (rotation, scale,
    translation) of the plane taking r0 to m0 and r1 to m1."""
    a = complex(*(m1 - m0)) / complex(*(r1 - r0))
    b = complex(*m0) - a * complex(*r0)
    return [a.real, -a.imag, 0.0, b.real,
            a.imag, a.real, 0.0, b.imag,
            0.0, 0.0, 1.0, 0.0,
            0.0, 0.0, 0.0, 1.0]


def fragment_thickness(gmsh, tag: int) -> float:
    """Thickness of a part, 2·area/perimeter [m] (exact for a long thin strip)."""
    area = gmsh.model.occ.getMass(2, tag)
    perimeter = sum(gmsh.model.occ.getMass(1, abs(c))
                    for _, c in gmsh.model.getBoundary([(2, tag)], oriented=False))
    return 2.0 * area / perimeter
