"""Isotherms: which temperatures get a line, and where each gets its label."""

from __future__ import annotations

import math

import numpy as np

from ...model.rules import temperature_levels
from .layout import nice_step
from .style import INK


#: Isotherms drawn at most in one figure; a finer step is coarsened (and says so).
MAX_ISOTHERMS = 200


def isotherm_levels(lo: float, hi: float, step: float):
    """Isotherm temperatures strictly between ``lo`` and ``hi`` [°C], multiples of ``step``
    [K], and the step used: ``step``, or past :data:`MAX_ISOTHERMS` lines, the
    1-2-5 step that keeps within it."""
    if (hi - lo) / step > MAX_ISOTHERMS:
        step = nice_step((hi - lo) / MAX_ISOTHERMS)
    levels = _multiples(lo, hi, step)
    return levels[(levels > lo) & (levels < hi)], step


def _multiples(lo: float, hi: float, step: float) -> np.ndarray:
    """Multiples of ``step`` from ``lo`` to ``hi``, both included to round-off."""
    return np.arange(math.ceil(lo / step - 1e-9) * step, hi + 1e-9 * step, step)


def default_isotherm_step(model) -> float:
    """1, 2 or 5 × 10ⁿ K near a tenth of the span of the environment
    temperatures (θi − θe with two) [K]."""
    levels = temperature_levels(model)
    return nice_step((levels[-1] - levels[0]) / 10)


def bar_ticks(lo, hi, step):
    """Colour-bar ticks [°C]: multiples of the isotherm step, doubled until at most 12."""
    count = (hi - lo) / step
    if count > 12:
        step *= 2.0 ** math.ceil(math.log2(count / 12))
    return _multiples(lo, hi, step)


#: Isotherm labels [pt]: font size, and the clear space kept around each.
ISOTHERM_LABEL_SIZE, ISOTHERM_LABEL_CLEARANCE = 6.5, 3.0


def label_isotherms(ax, contours, field, avoid=(), outline=None):
    """Label each isotherm once, clear of the others where the plot allows.

    A label follows its line (matplotlib turns it along it), so across the
    line it needs half its height clear of other isotherms. Candidate places
    are taken along the middle of every line inside the plot; each label is
    taken as a disc of its width, whatever its turn, and must stay inside
    the plot, off labels already placed, off the boxes in ``avoid`` and off
    the ``outline`` segments: a label is a box of its measured text (and its
    padding) turned any way, so it is kept a disc of the box's half-diagonal
    away from each placed label's disc and from the outline.

    First every level that has a place with that much room gets the one
    with the most room (up to four times the least; then the one nearest the
    middle of its line). Where isotherms crowd, as in insulation, there is
    no such place; those levels get the least crowded place left, on a box
    of the field's own colour at that temperature, which hides the
    neighbouring lines under the label only. A level that finds no place at
    all stays unlabelled; the colour bar's ticks are the isotherm levels.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        With its limits and aspect final.
    contours : matplotlib.contour.ContourSet
    field : matplotlib.cm.ScalarMappable
        Colour map and norm of the field under the isotherms.
    avoid : list of matplotlib.transforms.Bbox
        Display boxes to keep labels off (the θsi,min label, say).
    outline : ndarray, shape (M, 2, 2), optional
        Segments [length_unit] no label may cover (the model's outline).

    Returns
    -------
    list of float
        The levels that got a label.
    """
    fig = ax.get_figure()
    box = ax.get_window_extent()
    per_pt = fig.dpi / 72.0
    clear = ISOTHERM_LABEL_CLEARANCE * per_pt
    across = ISOTHERM_LABEL_SIZE * per_pt / 2 + clear
    text = lambda v: f"{v:g}"                      # noqa: E731
    lines = []               # per level: points a pixel apart along each piece [display]
    for level, path in zip(contours.levels, contours.get_paths()):
        pieces = path.to_polygons(closed_only=False) if len(path.vertices) else []
        lines.append((float(level), [_densify(ax.transData.transform(np.asarray(q, float)),
                                              fig.dpi / 100)
                                     for q in pieces if len(q) >= 2]))
    radii = {k: max(0.62 * len(text(level)) * ISOTHERM_LABEL_SIZE * per_pt / 2 + clear,
                    label_half_diagonal(text(level)) * per_pt)
             for k, (level, _) in enumerate(lines)}
    # distances matter up to the largest any test below makes: the room a
    # score counts (4 × across) and a label's radius off the outline
    reach = max([4 * across, *radii.values()]) + 1.0
    drawn = [(k, np.concatenate(pts)) for k, (_, pts) in enumerate(lines) if pts]
    near = PointsNear(np.concatenate([p for _, p in drawn]), reach,
                      np.concatenate([np.full(len(p), k) for k, p in drawn])) if drawn else None
    edge_points = _outline_points(ax, outline, box)
    edge = None if edge_points is None else PointsNear(edge_points, reach)
    picked = {}
    for k, (level, pieces) in enumerate(lines):
        if not pieces:
            continue
        # up to 41 points along the middle 80 % of each piece; centrality is
        # 1 at a piece's middle and 0.2 at the ends of that stretch
        cand, central = [], []
        for q in pieces:
            pick = np.unique((np.linspace(0.1, 0.9, 41) * (len(q) - 1)).round().astype(int))
            cand.append(q[pick])
            central.append(1 - np.abs(2 * pick / max(len(q) - 1, 1) - 1))
        picked[k] = (np.concatenate(cand), np.concatenate(central))
    candidates = {}
    if picked:
        every = np.concatenate([c for c, _ in picked.values()])
        level_of = np.concatenate([np.full(len(c), k) for k, (c, _) in picked.items()])
        # room: to the nearest point of another isotherm; off_edge: to the outline
        room_all = near.distance(every, level_of)
        edge_all = np.full(len(every), np.inf) if edge is None else edge.distance(every)
        for k, (cand, central) in picked.items():
            mine = level_of == k
            room, off_edge, radius = room_all[mine], edge_all[mine], radii[k]
            keep = off_edge >= radius
            candidates[k] = (cand[keep], central[keep], room[keep], radius)
    discs = []                                    # (x, y, radius) of placed labels
    boxes = [(b.x0, b.y0, b.x1, b.y1) for b in avoid]
    places = {}
    for crowded in (False, True):
        for k, (cand, central, room, radius) in candidates.items():
            if k in places:
                continue
            ok = ((cand[:, 0] >= box.x0 + radius) & (cand[:, 0] <= box.x1 - radius)
                  & (cand[:, 1] >= box.y0 + radius) & (cand[:, 1] <= box.y1 - radius))
            if not crowded:
                ok &= room >= across
            for x, y, r in discs:
                ok &= np.hypot(cand[:, 0] - x, cand[:, 1] - y) >= r + radius
            for x0, y0, x1, y1 in boxes:
                nx = np.clip(cand[:, 0], x0, x1)
                ny = np.clip(cand[:, 1], y0, y1)
                ok &= np.hypot(cand[:, 0] - nx, cand[:, 1] - ny) >= radius
            if not ok.any():
                continue
            score = np.minimum(room, 4 * across) + 1e-3 * across * central
            x, y = cand[int(np.flatnonzero(ok)[np.argmax(score[ok])])]
            discs.append((x, y, radius))
            places[k] = ax.transData.inverted().transform((x, y))
    if not places:
        return []
    order = sorted(places)
    labelled = [lines[k][0] for k in order]
    contours.clabel(levels=labelled, manual=[places[k] for k in order], fmt=text,
                    fontsize=ISOTHERM_LABEL_SIZE, inline=True, inline_spacing=2)
    for label, level in zip(contours.labelTexts, labelled):     # added in this order
        label.set_rotation(upright(label.get_rotation()))
        fill = field.cmap(field.norm(level))
        light = 0.2126 * fill[0] + 0.7152 * fill[1] + 0.0722 * fill[2] > 0.45
        label.set_color(INK if light else "white")
        label.set_bbox(dict(boxstyle=f"square,pad={ISOTHERM_LABEL_PAD}", fc=fill, ec="none"))
    return labelled


#: Padding of an isotherm label's box [share of its font size] (its ``bbox`` pad).
ISOTHERM_LABEL_PAD = 0.12


def label_half_diagonal(text: str) -> float:
    """Half the diagonal [pt] of an isotherm label's box: its text as measured
    from the font's outlines, one line high, with the box's padding; a disc of
    this radius holds the box whichever way it is turned."""
    from matplotlib.font_manager import FontProperties
    from matplotlib.textpath import text_to_path
    size = ISOTHERM_LABEL_SIZE
    width, _, _ = text_to_path.get_text_width_height_descent(
        text, FontProperties(size=size), ismath=False)
    pad = 2 * ISOTHERM_LABEL_PAD * size
    return 0.5 * math.hypot(width + pad, 1.2 * size + pad) + 0.5


class PointsNear:
    """Points in the plane, for the distance from others to the nearest of them
    within ``reach``: each point is filed under the square cell of side
    ``reach`` it lies in, so a query looks at the 3 × 3 cells around it only
    (every point nearer than ``reach`` is there). Costs what a k-d tree
    would here, without loading one.

    Parameters
    ----------
    points : ndarray, shape (N, 2)
    reach : float
        Distances of at least this are reported as ``reach``; same unit.
    labels : ndarray, shape (N,), optional
        A label per point (an isotherm's index), for :meth:`distance`'s ``exclude``.
    """

    def __init__(self, points, reach: float, labels=None):
        self.reach = float(reach)
        cells = np.floor(np.asarray(points, float) / self.reach).astype(np.int64)
        self.origin = cells.min(axis=0) - 1
        cells -= self.origin
        self.rows = int(cells[:, 1].max()) + 2
        keys = cells[:, 0] * self.rows + cells[:, 1]
        order = np.argsort(keys, kind="stable")
        self.keys, self.points = keys[order], np.asarray(points, float)[order]
        self.labels = None if labels is None else np.asarray(labels)[order]

    def distance(self, queries, exclude=None) -> np.ndarray:
        """Distance from each of ``queries`` (shape (M, 2)) to the nearest point,
        or ``reach`` where none is nearer; with ``exclude`` (one label per
        query), points of the query's own label do not count."""
        queries = np.asarray(queries, float)
        out = np.full(len(queries), self.reach)
        if not len(queries):
            return out
        cells = np.floor(queries / self.reach).astype(np.int64) - self.origin
        for dx in (-1, 0, 1):
            for dy in (-1, 0, 1):
                cx, cy = cells[:, 0] + dx, cells[:, 1] + dy
                valid = (cx >= 0) & (cy >= 0) & (cy < self.rows)
                keys = np.where(valid, cx * self.rows + cy, -1)
                start = np.searchsorted(self.keys, keys, "left")
                count = np.where(valid, np.searchsorted(self.keys, keys, "right") - start, 0)
                if not count.any():
                    continue
                query = np.repeat(np.arange(len(queries)), count)
                first = np.cumsum(count) - count            # each query's stretch in ``at``
                at = np.repeat(start - first, count) + np.arange(count.sum())
                d = np.hypot(*(self.points[at] - queries[query]).T)
                if exclude is not None:
                    d[self.labels[at] == np.asarray(exclude)[query]] = np.inf
                # ``query`` runs in order, one stretch per query with points:
                # the least of each stretch (ufunc.at would take ten times as long)
                some = np.flatnonzero(count)
                out[some] = np.minimum(out[some], np.minimum.reduceat(d, first[some]))
        return out


def _outline_points(ax, outline, box):
    """The outline segments as points at most a pixel apart [display], or
    None; only segments that reach into the plot's box count."""
    if outline is None or not len(outline):
        return None
    ends = ax.transData.transform(np.asarray(outline, float).reshape(-1, 2)).reshape(-1, 2, 2)
    lo, hi = ends.min(axis=1), ends.max(axis=1)
    near = ((hi[:, 0] >= box.x0 - 50) & (lo[:, 0] <= box.x1 + 50)
            & (hi[:, 1] >= box.y0 - 50) & (lo[:, 1] <= box.y1 + 50))
    ends = ends[near]
    if not len(ends):
        return None
    step = ends[:, 1] - ends[:, 0]
    count = np.maximum(1, np.ceil(np.hypot(step[:, 0], step[:, 1]))).astype(int)
    segment = np.repeat(np.arange(len(ends)), count + 1)
    t = (np.arange((count + 1).sum()) - np.repeat(np.cumsum(count + 1) - count - 1, count + 1))
    t = t / count[segment]
    return ends[segment, 0] + step[segment] * t[:, None]


#: A label within this many degrees of vertical is set vertical, reading from
#: bottom to top as the y-axis label does, so near-vertical labels of one
#: figure read the same way (a "6" read top down beside a "4" read bottom up
#: is what the eye takes for a "9").
VERTICAL_SNAP = 5.0


def upright(degrees: float) -> float:
    """The same line direction read upright: a text angle in (−90°, 90°].

    A label turned along its isotherm takes the line's direction, which may
    point left or down; turned by half a turn it lies along the same line and
    reads from left to right (a vertical one from bottom to top), so a "6" is
    never read as a "9". Within :data:`VERTICAL_SNAP` of vertical, the label
    is set at 90°, reading bottom to top.
    """
    r = float(degrees) % 180.0
    r = r - 180.0 if r > 90.0 else r
    return 90.0 if abs(r) >= 90.0 - VERTICAL_SNAP else r


def _densify(points, spacing):
    """A polyline with points inserted so that none lies more than ``spacing`` apart."""
    step = np.diff(points, axis=0)
    count = np.maximum(1, np.ceil(np.hypot(step[:, 0], step[:, 1]) / spacing)).astype(int)
    segment = np.repeat(np.arange(len(step)), count)
    t = (np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)) / count[segment]
    return np.concatenate([points[segment] + step[segment] * t[:, None], points[-1:]])
