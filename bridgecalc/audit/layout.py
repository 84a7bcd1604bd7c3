"""The model as the audit reads it: outline rings with their owners, straight
pieces of the outline, and what material is seen where.

Built once per audit (:func:`read_layout`) from the same outline the
validation and the mesher use (:func:`bridgecalc.model.outline.outline_edges`),
so what the audit points at is what the calculation has.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import shapely

from ..model import geometry
from ..model.outline import outline_edges, region_shapes, solid_pieces
from ..model.types import Model

#: Voids narrower than this between or within parts of the solid are gaps [m]:
#: a drawing's gap between two materials that should touch (a 1 mm slit
#: between masonry and insulation turned a Ψ of 0.47 into −0.25 W/(m·K)).
#: Cavities that are meant are drawn as a material (an air layer), never as
#: a void.
SLIT_WIDTH = 0.005
#: Two outline edges are one straight piece when the sine of the angle between
#: them is below this [-].
COLLINEAR_SINE = 1e-9


@dataclass(frozen=True)
class Piece:
    """A straight piece of one ring of the outline: consecutive collinear edges
    with the same owner.

    Attributes
    ----------
    start, end : ndarray, shape (2,)
        End points [length_unit], in the ring's order.
    surface : int or None
        Index of the surface claiming it; None where it is adiabatic.
    normal : ndarray, shape (2,)
        Unit normal pointing out of the solid [-].
    ring : int
        Index of the ring in :attr:`Layout.rings`.
    """

    start: np.ndarray
    end: np.ndarray
    surface: int | None
    normal: np.ndarray
    ring: int

    @property
    def length(self) -> float:
        """[length_unit]"""
        return float(np.hypot(*(self.end - self.start)))

    @property
    def middle(self) -> tuple[float, float]:
        """Midpoint [length_unit]."""
        m = (self.start + self.end) / 2
        return float(m[0]), float(m[1])


@dataclass(frozen=True)
class Ring:
    """One closed ring of the outline: a piece's exterior or one of its voids.

    Attributes
    ----------
    pieces : list of Piece
        In order around the ring (the last joins the first).
    hole : bool
        The ring bounds a void enclosed by the solid.
    solid_piece : int
        Index of the connected piece of the solid it bounds.
    """

    pieces: list
    hole: bool
    solid_piece: int


@dataclass
class Layout:
    """What the audit rules share.

    Attributes
    ----------
    model : Model
    pieces : list of shapely.Polygon
        Connected pieces of the solid.
    rings : list of Ring
    visible : list of (str, shapely geometry)
        Material name and the part of the solid where that material shows
        (painter's order applied, one geometry per material).
    size : float
        Largest dimension of the model [length_unit].
    tol : float
        On-path tolerance [length_unit].
    metres : float
        Metres per length unit.
    gaps : list of shapely.Polygon
        Voids narrower than :data:`SLIT_WIDTH` between or within the pieces.
    stopped_short : list of (Piece, list of Piece, int)
        Adiabatic pieces that go on straight from a surface's edge: the
        piece, its straight run, and the surface.
    """

    model: Model
    pieces: list
    rings: list
    visible: list
    size: float
    tol: float
    metres: float
    gaps: list = field(default_factory=list)
    stopped_short: list = field(default_factory=list)
    _gap_zone: object = field(default=None, repr=False)

    def along_gap(self, piece: Piece) -> bool:
        """At least half of the piece borders a narrow gap (:attr:`gaps`)."""
        if not self.gaps:
            return False
        if self._gap_zone is None:
            self._gap_zone = shapely.union_all(self.gaps).buffer(10 * self.tol)
        line = shapely.LineString([piece.start, piece.end])
        return shapely.intersection(line, self._gap_zone).length >= 0.5 * line.length

    @property
    def solid_vertices(self) -> np.ndarray:
        """Every vertex of the solid's outline, shape (N, 2) [length_unit]."""
        return np.concatenate([shapely.get_coordinates(p) for p in self.pieces])

    def extent(self, normal) -> float:
        """How far the solid reaches in direction ``normal``: max of p·n over
        the solid [length_unit]."""
        return float((self.solid_vertices @ np.asarray(normal)).max())

    def on_extent(self, piece: Piece) -> bool:
        """The piece lies on the outer extent of the model in its outward
        direction: the whole solid is on its inner side."""
        return float(piece.start @ piece.normal) >= self.extent(piece.normal) - 10 * self.tol

    def section(self, start, end) -> list[tuple[str, float, float]]:
        """Materials met along the segment start→end, in order.

        Returns
        -------
        list of (material, from, to)
            Distances from ``start`` [length_unit]; neighbouring stretches of
            the same material are joined.
        """
        start, end = np.asarray(start, float), np.asarray(end, float)
        length = float(np.hypot(*(end - start)))
        if length <= 0:
            return []
        line = shapely.LineString([start, end])
        unit = (end - start) / length
        stretches = []
        for name, shape in self.visible:
            cut = shapely.intersection(line, shape)
            for part in getattr(cut, "geoms", [cut]):
                if isinstance(part, shapely.LineString) and part.length > self.tol:
                    t = shapely.get_coordinates(part) @ unit - start @ unit
                    stretches.append((name, float(t.min()), float(t.max())))
        stretches.sort(key=lambda s: s[1])
        joined = []
        for name, a, b in stretches:
            if joined and joined[-1][0] == name and a <= joined[-1][2] + self.tol:
                joined[-1] = (name, joined[-1][1], max(b, joined[-1][2]))
            else:
                joined.append((name, a, b))
        return joined


def read_layout(model: Model) -> Layout:
    """The outline, its straight pieces and the visible materials of a valid model."""
    polygons = [r.vertices for r in model.regions]
    size = geometry.largest_dimension(polygons)
    tol = geometry.on_path_tolerance(polygons)
    pieces = solid_pieces(model)
    edges = outline_edges(model)
    rings = []
    seen_pieces = set()
    k = 0
    while k < len(edges):
        first = k
        # the ring closes where an edge ends at its start and the next edge
        # does not go on from there (a ring may touch itself at a vertex)
        while not (edges[k].end == edges[first].start
                   and (k + 1 == len(edges) or edges[k + 1].start != edges[k].end)):
            k += 1
        ring_edges = edges[first:k + 1]
        k += 1
        piece = ring_edges[0].piece
        hole = piece in seen_pieces          # a piece's exterior ring comes first
        seen_pieces.add(piece)
        rings.append(_ring(ring_edges, hole, piece, len(rings)))
    layout = Layout(model, pieces, rings, _visible(model), size, tol, model.metres_per_unit)
    layout.gaps = _gaps(layout)
    layout.stopped_short = _stopped_short(layout)
    return layout


def _gaps(layout: Layout) -> list:
    """Voids narrower than :data:`SLIT_WIDTH`: what closing the solid with a
    square-cornered offset of half that width adds. Square corners come back
    as they were, so only what is narrower is filled (and slivers at acute
    notches, left out by their area)."""
    half = SLIT_WIDTH / 2 / layout.metres
    solid = shapely.union_all(layout.pieces)
    closed = solid.buffer(half, join_style="mitre", mitre_limit=10.0).buffer(
        -half, join_style="mitre", mitre_limit=10.0)
    extra = shapely.difference(closed, solid)
    return [p for p in getattr(extra, "geoms", [extra])
            if isinstance(p, shapely.Polygon) and p.area > 0.5 * half * half]


def _stopped_short(layout: Layout) -> list:
    out = []
    for ring in layout.rings:
        for run in straight_runs(ring):
            if all(p.surface is None for p in run) or all(p.surface is not None for p in run):
                continue
            for k, p in enumerate(run):
                if p.surface is not None:
                    continue
                beside = [q.surface for q in (run[k - 1] if k > 0 else None,
                                              run[k + 1] if k + 1 < len(run) else None)
                          if q is not None and q.surface is not None]
                if beside:
                    out.append((p, run, beside[0]))
    return out


def _ring(edges, hole: bool, piece: int, index: int) -> Ring:
    pts = np.array([e.start for e in edges], float)
    nxt = np.roll(pts, -1, axis=0)
    signed_area = 0.5 * float((pts[:, 0] * nxt[:, 1] - nxt[:, 0] * pts[:, 1]).sum())
    # outward normal of the solid: right of the direction on a counter-clockwise
    # exterior ring, left on a clockwise one; the other way round on a void
    right = (signed_area > 0) != hole
    pieces = []
    for e in edges:
        a, b = np.asarray(e.start, float), np.asarray(e.end, float)
        d = b - a
        length = float(np.hypot(*d))
        if length == 0:
            continue
        d = d / length
        normal = np.array([d[1], -d[0]]) if right else np.array([-d[1], d[0]])
        if pieces:
            last = pieces[-1]
            ld = (last.end - last.start) / last.length
            if last.surface == e.surface and abs(ld[0] * d[1] - ld[1] * d[0]) < COLLINEAR_SINE \
                    and ld @ d > 0:
                pieces[-1] = Piece(last.start, b, last.surface, last.normal, index)
                continue
        pieces.append(Piece(a, b, e.surface, normal, index))
    if len(pieces) > 1:                       # the ring's start may cut a straight piece
        first, last = pieces[0], pieces[-1]
        fd = (first.end - first.start) / first.length
        ld = (last.end - last.start) / last.length
        if first.surface == last.surface and abs(ld[0] * fd[1] - ld[1] * fd[0]) < COLLINEAR_SINE \
                and ld @ fd > 0 and np.allclose(last.end, first.start):
            pieces = [Piece(last.start, first.end, first.surface, first.normal, index),
                      *pieces[1:-1]]
    return Ring(pieces, hole, piece)


def _visible(model: Model) -> list:
    """(material, geometry) where each material shows, painter's order applied."""
    shapes = region_shapes(model)
    covered = None
    parts: dict = {}
    for region, shape in zip(reversed(model.regions), reversed(shapes)):
        seen = shape if covered is None else shapely.difference(shape, covered)
        covered = shape if covered is None else shapely.union(covered, shape)
        if not seen.is_empty:
            parts.setdefault(region.material, []).append(seen)
    return [(name, shapely.union_all(geoms)) for name, geoms in parts.items()]


def straight_runs(ring: Ring) -> list[list[Piece]]:
    """The ring's pieces grouped into maximal straight runs, whatever their owner."""
    groups: list[list[Piece]] = []
    for p in ring.pieces:
        if groups and _continues(groups[-1][-1], p):
            groups[-1].append(p)
        else:
            groups.append([p])
    if len(groups) > 1 and _continues(groups[-1][-1], groups[0][0]):
        groups[0] = groups.pop() + groups[0]
    return groups


def _continues(a: Piece, b: Piece) -> bool:
    da = (a.end - a.start) / a.length
    db = (b.end - b.start) / b.length
    return abs(da[0] * db[1] - da[1] * db[0]) < COLLINEAR_SINE and da @ db > 0
