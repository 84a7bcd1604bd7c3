"""Plane geometry shared by model validation and meshing.

Pure numpy on coordinates; one definition of "an edge lies on a surface path"
so that the reader's checks and the mesher's boundary tags cannot disagree.
All lengths are in whatever unit the caller uses, consistently.
"""

from __future__ import annotations

import numpy as np

#: An edge is "on" a path within this fraction of the model's largest
#: dimension (model format 1).
ON_PATH_RELATIVE_TOLERANCE = 1e-6


def largest_dimension(polygons) -> float:
    """Largest side of the bounding box of all ``polygons`` [length]."""
    pts = np.concatenate([np.asarray(p, dtype=float).reshape(-1, 2) for p in polygons])
    span = pts.max(axis=0) - pts.min(axis=0)
    return float(max(span.max(), np.finfo(float).tiny))


#: Positions are printed to this fraction of the model's largest dimension.
PRINTED_RESOLUTION_RELATIVE = 1e-4


def position_text(point, size: float) -> str:
    """``(x, y)`` for people: rounded to a ten-thousandth of ``size``.

    A mesh node of a 24 m ground model sits at x = −6.86813 mm; what a reader
    can use is (−7, 150). Trailing zeros go, a minus zero prints as 0; the
    minus sign is the ASCII hyphen (callers that typeset replace it).

    Parameters
    ----------
    point : sequence of float
        Coordinates [length].
    size : float
        The model's largest dimension [length] (:func:`largest_dimension`).
    """
    step = PRINTED_RESOLUTION_RELATIVE * size
    decimals = max(0, -int(np.floor(np.log10(step)))) if step > 0 else 6

    def one(value):
        text = f"{float(value):.{decimals}f}"
        if "." in text:
            text = text.rstrip("0").rstrip(".")
        return "0" if text in ("-0", "") else text

    return "(" + ", ".join(one(c) for c in point) + ")"


def on_path_tolerance(polygons) -> float:
    """Distance within which a point counts as on a path [length]."""
    return ON_PATH_RELATIVE_TOLERANCE * largest_dimension(polygons)


def _path_segments(path):
    path = np.asarray(path, dtype=float).reshape(-1, 2)
    return path[:-1], path[1:]


def distance_to_polyline(points, path) -> np.ndarray:
    """Shortest distance from each point to the polyline ``path`` [length].

    Parameters
    ----------
    points : array_like, shape (N, 2)
    path : array_like, shape (M, 2), M >= 2
    """
    pts = np.asarray(points, dtype=float).reshape(-1, 2)
    p, q = _path_segments(path)
    d = q - p                                      # (S, 2)
    length2 = np.maximum((d * d).sum(axis=1), np.finfo(float).tiny)
    rel = pts[:, None, :] - p[None, :, :]          # (N, S, 2)
    t = np.clip((rel * d[None]).sum(axis=2) / length2[None], 0.0, 1.0)
    nearest = p[None] + t[..., None] * d[None]
    return np.sqrt(((pts[:, None, :] - nearest) ** 2).sum(axis=2)).min(axis=1)


def edges_on_path(starts, ends, path, tol) -> np.ndarray:
    """Which edges lie wholly on the polyline ``path``.

    An edge AB lies on the path when the parts of it covered by path segments
    collinear with it (both A and B within ``tol`` of the segment's line) add
    up to its whole length, within ``tol``.

    Parameters
    ----------
    starts, ends : array_like, shape (N, 2)
        Edge end points [length].
    path : array_like, shape (M, 2)
        Polyline vertices [length].
    tol : float
        On-path tolerance [length].

    Returns
    -------
    ndarray of bool, shape (N,)
    """
    a = np.asarray(starts, dtype=float).reshape(-1, 2)
    b = np.asarray(ends, dtype=float).reshape(-1, 2)
    ab = b - a
    edge_len = np.sqrt((ab * ab).sum(axis=1))
    covered = np.zeros(len(a))
    p, q = _path_segments(path)
    for p0, q0 in zip(p, q):
        pq = q0 - p0
        seg_len = np.hypot(*pq)
        if seg_len <= tol:
            continue
        normal = np.array([-pq[1], pq[0]]) / seg_len
        collinear = (np.abs((a - p0) @ normal) <= tol) & (np.abs((b - p0) @ normal) <= tol)
        # parameters of P and Q along each edge, in units of the edge length
        safe = np.where(edge_len > 0, edge_len, 1.0)
        unit = ab / safe[:, None]
        tp = ((p0 - a) * unit).sum(axis=1)
        tq = ((q0 - a) * unit).sum(axis=1)
        lo = np.maximum(np.minimum(tp, tq), 0.0)
        hi = np.minimum(np.maximum(tp, tq), edge_len)
        covered += np.where(collinear, np.maximum(hi - lo, 0.0), 0.0)
    return (covered >= edge_len - tol) & (edge_len > tol)


def insert_breakpoints(vertices, breakpoints, tol):
    """Split a closed polygon's edges at the breakpoints lying inside them.

    Used so that the ends of surface paths become polygon vertices, and hence
    mesh nodes, and no boundary element straddles the end of a path.

    Parameters
    ----------
    vertices : sequence of (x, y)
        Polygon, closed implicitly [length].
    breakpoints : array_like, shape (K, 2)
    tol : float
        [length]

    Returns
    -------
    list of (x, y)
    """
    verts = [tuple(map(float, v)) for v in vertices]
    bps = np.asarray(breakpoints, dtype=float).reshape(-1, 2)
    out = []
    n = len(verts)
    for i in range(n):
        a = np.array(verts[i])
        b = np.array(verts[(i + 1) % n])
        out.append(verts[i])
        ab = b - a
        length = np.hypot(*ab)
        if len(bps) == 0 or length <= tol:
            continue
        unit = ab / length
        rel = bps - a
        t = rel @ unit
        off = np.abs(rel @ np.array([-unit[1], unit[0]]))
        inside = (off <= tol) & (t > tol) & (t < length - tol)
        last = -np.inf
        for tt in np.sort(t[inside]):
            if tt - last > tol:          # one vertex for breakpoints closer than tol
                out.append(tuple(float(c) for c in a + unit * tt))
                last = tt
    return out
