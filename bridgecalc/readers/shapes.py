"""What a CAD user means by the shapes of a drawing: regions and surface paths.

Drawings are messy. The same outline is drawn twice (a polyline and the
hatch filling it), shapes stop a hair short of each other or overlap by one,
vertices repeat, segments have no length, rings run either way round. This
module turns the pieces of :mod:`bridgecalc.readers.drawing` (already in the
model's length unit) into regions and surface paths, treating what a CAD
user would call the same shape the same way:

1. **Snapping** (tolerance ``snap``, default :data:`SNAP_MM` = 0.1 mm, the
   flattening tolerance of curves: the drawing is read to 0.1 mm). Vertices
   of all shapes closer than ``snap`` become one point (the first drawn);
   then a vertex closer than ``snap`` to an edge of another shape is moved
   onto that edge, so hairline gaps close and hairline overlaps vanish.
   Surface-path vertices snap onto the shapes' vertices, else edges.
2. **Cleaning**: repeated vertices, zero-length segments and spikes (a
   segment run back on itself) are dropped; a shape that collapses (thinner
   than ``snap``) is an error naming it.
3. **Open pieces** on a material layer (lines, arcs, open polylines) that
   join end to end within ``snap`` into closed loops are those loops; an
   open polyline whose ends meet is closed; anything left open is an error.
4. **Duplicates**: on one layer, a shape that covers the same area as an
   earlier one (within ``snap`` along its outline) is dropped; an outline
   (polyline, circle, ...) that traces a boundary of a hatch on its layer is
   that hatch's outline, not a shape of its own.
5. **Holes**: a hatch's boundary paths nest by odd parity (its style 0;
   style 1 fills only the outermost level and its islands, style 2 ignores
   islands); outlines on one layer nest the same way, so a closed outline
   inside another on the same layer is a hole in it.
6. **Orientation**: either way round is the same shape; rings keep the
   direction and first vertex they were drawn with (so a drawing the tool
   wrote reads back to the very same polygons).

Within a layer all shapes are one material, so their order among themselves
does not change the model; layers are drawn in the order the model file
lists them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from scipy.spatial import cKDTree

from .drawing import DrawingError, Piece, Source

#: Default snapping tolerance [mm]; equal to the curve flattening tolerance.
SNAP_MM = 0.1


@dataclass
class Shape:
    """One region from the drawing: an outline with holes [model length unit]."""

    layer: str
    source: Source
    order: int
    outline: np.ndarray
    holes: list


@dataclass
class Ring:
    """A closed ring as indices into the shared point array, with its origin."""

    layer: str
    piece: Piece
    points: list           # indices
    hatch: int | None      # index of the hatch among the layer's pieces, None for an outline
    polygon: object = None  # shapely Polygon of the cleaned ring


def _fail(where: str, source: Source, message: str):
    raise DrawingError(f"{where}: {source.describe()}: {message}")


# -- 3. open pieces into closed loops ----------------------------------------------


def close_open_pieces(pieces: list, snap: float, where: str) -> list[tuple[Piece, np.ndarray]]:
    """(piece, ring) for every closed outline of a layer's non-hatch pieces:
    closed entities, open ones whose ends meet, and loops of open pieces
    joined end to end within ``snap``."""
    rings, lines = [], []
    for piece in pieces:
        if piece.is_hatch:
            continue
        if piece.line is None:
            rings.append((piece, piece.rings[0]))
            continue
        line = piece.line
        if len(line) > 2 and np.hypot(*(line[0] - line[-1])) <= snap:
            rings.append((piece, line[:-1]))
        else:
            lines.append(piece)
    if not lines:
        return rings
    ends = np.array([[p.line[0], p.line[-1]] for p in lines]).reshape(-1, 2)
    tree = cKDTree(ends)
    partner = {}
    for a, b in sorted(tree.query_pairs(snap)):
        if a // 2 == b // 2:
            continue
        partner.setdefault(a, []).append(b)
        partner.setdefault(b, []).append(a)
    for e in range(len(ends)):
        if len(partner.get(e, [])) != 1:
            piece = lines[e // 2]
            x, y = ends[e]
            what = ("meets no other line" if not partner.get(e)
                    else f"meets {len(partner[e])} other lines")
            _fail(where, piece.source,
                  f"is an open shape on a material layer: its end at ({x:g}, {y:g}) {what} "
                  f"(within the snapping tolerance {snap:g}); close the outline (a closed "
                  f"polyline, or lines that join end to end)")
    done = set()
    for start in range(len(lines)):
        if start in done:
            continue
        chain, line, end = [], start, 1          # leave `start` by its end point
        while True:
            done.add(line)
            pts = lines[line].line
            chain.extend(pts if end == 1 else pts[::-1])
            nxt = partner[2 * line + end][0]
            line, end = nxt // 2, 1 - nxt % 2    # enter at nxt, leave by the other end
            if line == start:
                break
        rings.append((lines[start], np.asarray(chain)))
    return rings


# -- 1. snapping ----------------------------------------------------------------------


def _cluster(points: np.ndarray, snap: float) -> np.ndarray:
    """For each point, the index of the first point of its cluster (points
    joined by chains of distances <= snap)."""
    parent = np.arange(len(points))

    def root(i):
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    if snap > 0 and len(points) > 1:
        pairs = cKDTree(points).query_pairs(snap, output_type="ndarray")
        for a, b in pairs:
            ra, rb = root(a), root(b)
            if ra != rb:
                parent[max(ra, rb)] = min(ra, rb)
    return np.array([root(i) for i in range(len(points))])


def _edges(rings: list[Ring]):
    """All edges (a, b, ring index) of the rings, as point indices."""
    starts, ends, owner = [], [], []
    for r, ring in enumerate(rings):
        idx = ring.points
        starts.extend(idx)
        ends.extend(idx[1:] + idx[:1])
        owner.extend([r] * len(idx))
    return np.array(starts, dtype=int), np.array(ends, dtype=int), np.array(owner, dtype=int)


def _nearest_on_edges(xy: np.ndarray, pts: np.ndarray, a: np.ndarray, b: np.ndarray):
    """Projection of each point of ``xy`` on the segments a–b (paired) and its distance."""
    p, q = pts[a], pts[b]
    d = q - p
    length2 = np.maximum((d * d).sum(axis=1), np.finfo(float).tiny)
    t = np.clip(((xy - p) * d).sum(axis=1) / length2, 0.0, 1.0)
    foot = p + t[:, None] * d
    return foot, np.hypot(*(xy - foot).T)


def snap_vertices_to_edges(pts: np.ndarray, rings: list[Ring], snap: float) -> np.ndarray:
    """Move each vertex that lies within ``snap`` of another ring's edge (and
    is not one of its end points) onto the nearest such edge."""
    if snap <= 0 or not rings:
        return pts
    a, b, owner = _edges(rings)
    keep = a != b
    a, b, owner = a[keep], b[keep], owner[keep]
    rings_of = {}
    for r, ring in enumerate(rings):
        for i in ring.points:
            rings_of.setdefault(i, set()).add(r)
    used = np.array(sorted(rings_of))
    lines = shapely.linestrings(np.stack([pts[a], pts[b]], axis=1))
    tree = shapely.STRtree(lines)
    vi, ei = tree.query(shapely.points(pts[used]), predicate="dwithin", distance=snap)
    if len(vi) == 0:
        return pts
    v = used[vi]
    mine = np.array([owner[e] in rings_of[i] for i, e in zip(v, ei)], dtype=bool)
    ends = (a[ei] == v) | (b[ei] == v)
    sel = ~mine & ~ends
    v, ei = v[sel], ei[sel]
    if len(v) == 0:
        return pts
    foot, dist = _nearest_on_edges(pts[v], pts, a[ei], b[ei])
    out = pts.copy()
    best = {}
    for k in np.argsort(dist, kind="stable"):
        if dist[k] > 0 and v[k] not in best:
            best[v[k]] = foot[k]
    for i, f in best.items():
        out[i] = f
    return out


def snap_paths(paths: list[np.ndarray], pts: np.ndarray, rings: list[Ring],
               snap: float) -> list[np.ndarray]:
    """Surface-path vertices onto the shapes' vertices within ``snap``, else onto
    their edges."""
    if snap <= 0 or not rings or not paths:
        return paths
    used = np.array(sorted({i for ring in rings for i in ring.points}))
    tree = cKDTree(pts[used])
    a, b, _ = _edges(rings)
    lines = shapely.linestrings(np.stack([pts[a], pts[b]], axis=1))
    edge_tree = shapely.STRtree(lines)
    out = []
    for path in paths:
        path = path.copy()
        dist, near = tree.query(path, distance_upper_bound=snap)
        for k, (d, n) in enumerate(zip(dist, near)):
            if np.isfinite(d):
                path[k] = pts[used[n]]
                continue
            hits = edge_tree.query(shapely.points(path[k]), predicate="dwithin", distance=snap)
            if len(hits):
                foot, dd = _nearest_on_edges(np.repeat(path[k:k + 1], len(hits), axis=0),
                                             pts, a[hits], b[hits])
                path[k] = foot[int(np.argmin(dd))]
        out.append(path)
    return out


# -- 2. cleaning ----------------------------------------------------------------------


def clean_ring(indices: list) -> list:
    """Drop repeated vertices (zero-length segments) and spikes (a → b → a)."""
    ring = list(indices)
    changed = True
    while changed and len(ring) >= 3:
        changed = False
        out = [i for k, i in enumerate(ring) if i != ring[k - 1]] if len(ring) > 1 else ring
        if len(out) != len(ring):
            changed = True
        ring = out
        n = len(ring)
        for k in range(n):
            if n >= 3 and ring[k - 1] == ring[(k + 1) % n]:
                del ring[k]
                changed = True
                break
    return ring


# -- 4./5. duplicates and holes -------------------------------------------------------


def _polygon(pts: np.ndarray, ring: list):
    return shapely.Polygon(pts[ring])


def same_area(p, q, snap: float) -> bool:
    """Two polygons cover the same area, within ``snap`` along their outlines."""
    if p.is_empty or q.is_empty:
        return False
    a, b = np.array(p.bounds), np.array(q.bounds)
    if np.max(np.abs(a - b)) > snap + 1e-12 * max(np.max(np.abs(a)), 1.0):
        return False
    limit = max(snap, 1e-9 * max(p.length, q.length)) * max(p.length, q.length)
    try:
        return shapely.symmetric_difference(p, q).area <= limit
    except shapely.errors.GEOSException:
        return False


def _nest(polys: list, snap: float) -> tuple[list, list]:
    """Odd-parity nesting: (depth, parent) of each polygon among ``polys``."""
    n = len(polys)
    if n == 0:
        return [], []
    tree = shapely.STRtree(polys)
    inner, outer = tree.query(polys, predicate="covered_by")
    containers = [[] for _ in range(n)]
    for i, j in zip(inner, outer):
        if i != j:
            containers[i].append(j)
    depth = [len(c) for c in containers]
    parent = [max(c, key=lambda j: depth[j]) if c else None for c in containers]
    return depth, parent


def layer_shapes(layer: str, rings: list[Ring], pts: np.ndarray, snap: float,
                 where: str) -> list[Shape]:
    """The shapes of one material layer: duplicates dropped, holes nested."""
    polys = [r.polygon for r in rings]
    dropped = [False] * len(rings)
    # candidates for "the same area": rings whose envelopes lie within snap
    tree = shapely.STRtree(polys)
    first, second = tree.query(polys, predicate="dwithin", distance=snap)
    for i, j in sorted(zip(first.tolist(), second.tolist())):
        if i >= j or dropped[i] or dropped[j]:
            continue
        ri, rj = rings[i], rings[j]
        if ri.hatch is not None and rj.hatch is not None:
            continue          # hatches compare as whole shapes below
        if not same_area(polys[i], polys[j], snap):
            continue
        if ri.hatch is None and rj.hatch is not None:
            dropped[i] = True   # an outline tracing a hatch boundary is the hatch's outline
        elif rj.hatch is None:
            dropped[j] = True   # the later of two equal outlines, or an outline over a hatch
    shapes = []
    # outlines: odd-parity nesting among the layer's outlines
    idx = [k for k, r in enumerate(rings) if r.hatch is None and not dropped[k]]
    shapes += _nested_shapes(layer, [rings[k] for k in idx], [polys[k] for k in idx], pts,
                             snap, style=0)
    # hatches: nesting among each hatch's own boundary paths
    hatches = {}
    for k, r in enumerate(rings):
        if r.hatch is not None:
            hatches.setdefault(r.hatch, []).append(k)
    for members in hatches.values():
        style = rings[members[0]].piece.hatch_style
        shapes += _nested_shapes(layer, [rings[k] for k in members],
                                 [polys[k] for k in members], pts, snap, style)
    # whole shapes that repeat an earlier one on the layer (a hatch drawn twice,
    # a hatch over the outlines that bound it)
    shapes.sort(key=lambda s: s.order)
    geoms = [shapely.Polygon(s.outline, s.holes) for s in shapes]
    gone = [False] * len(shapes)
    if geoms:
        first, second = shapely.STRtree(geoms).query(geoms, predicate="dwithin", distance=snap)
        for i, j in sorted(zip(first.tolist(), second.tolist())):
            if i < j and not gone[i] and not gone[j] and same_area(geoms[i], geoms[j], snap):
                gone[j] = True
    return [s for s, g in zip(shapes, gone) if not g]


def _nested_shapes(layer, rings, polys, pts, snap, style) -> list[Shape]:
    depth, parent = _nest(polys, snap)
    shapes = {}
    for k, ring in enumerate(rings):
        d = depth[k]
        filled = d % 2 == 0 if style == 0 else d == 0
        if filled:
            shapes[k] = Shape(layer, ring.piece.source, ring.piece.order,
                              pts[ring.points], [])
    for k, ring in enumerate(rings):
        d = depth[k]
        is_hole = (d % 2 == 1) if style == 0 else (d == 1 and style == 1)
        if is_hole and parent[k] in shapes:
            shapes[parent[k]].holes.append(pts[ring.points])
    return list(shapes.values())


# -- surface paths -----------------------------------------------------------------------


def _covered(p, q, accepted: list, tol: float) -> list:
    """Parts of segment p–q not covered by the accepted collinear segments, as
    (start, end) parameter pairs in [0, 1]."""
    d = q - p
    length = float(np.hypot(*d))
    if length <= tol:
        return []
    unit = d / length
    normal = np.array([-unit[1], unit[0]])
    free = [(0.0, length)]
    for a, b in accepted:
        if abs((a - p) @ normal) > tol or abs((b - p) @ normal) > tol:
            continue
        ta, tb = sorted(((a - p) @ unit, (b - p) @ unit))
        nxt = []
        for lo, hi in free:
            if tb <= lo + tol or ta >= hi - tol:
                nxt.append((lo, hi))
                continue
            if ta > lo + tol:
                nxt.append((lo, ta))
            if tb < hi - tol:
                nxt.append((tb, hi))
        free = nxt
    return [(lo / length, hi / length) for lo, hi in free if hi - lo > tol]


def surface_paths(pieces: list, paths: list[np.ndarray], tol: float) -> list[tuple]:
    """(polyline, source) for a surface layer: each entity's path less what
    earlier entities on the layer already draw (a line drawn twice claims its
    edges once), split where parts were removed."""
    accepted = []
    out = []

    def flush(current, source):
        if len(current) >= 2:
            out.append((np.array(current), source))

    for piece, path in zip(pieces, paths):
        current = []
        for p, q in zip(path[:-1], path[1:]):
            for lo, hi in _covered(p, q, accepted, tol):
                a = p if lo == 0.0 else p + lo * (q - p)
                b = q if hi == 1.0 else p + hi * (q - p)
                if current and np.array_equal(current[-1], a):
                    current.append(b)
                else:
                    flush(current, piece.source)
                    current = [a, b]
            accepted.append((p, q))
        flush(current, piece.source)
    return out


# -- everything --------------------------------------------------------------------------


def build(material_layers: list[str], surface_layers: list[str], pieces: dict, scale: float,
          snap: float, where: str) -> tuple[list[Shape], dict]:
    """Regions and surface paths of a drawing.

    Parameters
    ----------
    material_layers : list of str
        Listed material layers (upper case), in the model file's order.
    surface_layers : list of str
        Layers of surface paths (upper case).
    pieces : dict of str to list of Piece
        :attr:`bridgecalc.readers.drawing.DrawingContent.pieces`.
    scale : float
        Model length units per drawing unit [-].
    snap : float
        Snapping tolerance [model length unit].
    where : str
        Start of every message.

    Returns
    -------
    list of Shape
        In painter's order (layers as listed, shapes in drawing order).
    dict of str to list of (ndarray, Source)
        Per surface layer, its paths [model length unit].
    """
    rings: list[Ring] = []
    coords = []
    count = 0
    for layer in material_layers:
        layer_pieces = pieces.get(layer, [])
        for piece in layer_pieces:
            for k in range(len(piece.rings)):
                piece.rings[k] = piece.rings[k] * scale
            if piece.line is not None:
                piece.line = piece.line * scale
        closed = close_open_pieces(layer_pieces, snap, where)
        for h, piece in enumerate(layer_pieces):
            if piece.is_hatch:
                for ring in piece.rings:
                    closed.append((piece, ring, h))
        closed = [c if len(c) == 3 else (c[0], c[1], None) for c in closed]
        closed.sort(key=lambda c: c[0].order)
        for piece, ring, h in closed:
            coords.append(np.asarray(ring, dtype=float).reshape(-1, 2))
            rings.append(Ring(layer, piece, list(range(count, count + len(coords[-1]))), h))
            count += len(coords[-1])
    pts = np.concatenate(coords) if coords else np.zeros((0, 2))
    if len(pts):
        rep = _cluster(pts, snap)
        for ring in rings:
            ring.points = [int(rep[i]) for i in ring.points]
        pts = snap_vertices_to_edges(pts, rings, snap)
    for ring in rings:
        cleaned = clean_ring(ring.points)
        poly = _polygon(pts, cleaned) if len(set(cleaned)) >= 3 else None
        if poly is not None and not poly.is_valid:
            reason = shapely.is_valid_reason(poly)
            _fail(where, ring.piece.source, f"its outline crosses or touches itself ({reason}); "
                                            f"draw it as a simple closed outline")
        if poly is None or abs(poly.area) <= 0:
            _fail(where, ring.piece.source,
                  f"collapses to a line or a point at the snapping tolerance {snap:g} "
                  f"(it is thinner than that, or has no area); draw it thicker, or set "
                  f"[drawing] snap to a smaller value")
        ring.points, ring.polygon = cleaned, poly
    shapes = []
    for layer in material_layers:
        shapes += layer_shapes(layer, [r for r in rings if r.layer == layer], pts, snap, where)
    paths = {}
    for layer in surface_layers:
        layer_pieces = pieces.get(layer, [])
        lines = [piece.line * scale for piece in layer_pieces]
        lines = snap_paths(lines, pts, rings, snap)
        paths[layer] = surface_paths(layer_pieces, lines, max(snap, 0.0) or 1e-12)
    return shapes, paths
