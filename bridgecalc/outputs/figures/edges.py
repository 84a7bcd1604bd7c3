"""Mesh edges drawn as one path each: material boundaries, every triangle side,
boundary runs joined end to end."""

from __future__ import annotations

import numpy as np
from matplotlib.patches import PathPatch
from matplotlib.path import Path as PlotPath


def material_edges(mesh, label) -> np.ndarray:
    """Mesh edges between triangles of different labels, and the outline.

    Parameters
    ----------
    mesh : bridgecalc.mesh.Mesh
    label : ndarray, shape (T,)
        Any per-triangle label; edges where it changes are returned.

    Returns
    -------
    ndarray of int, shape (E, 2)
        Node index pairs.
    """
    tri = mesh.triangles
    edges = np.concatenate([tri[:, [0, 1]], tri[:, [1, 2]], tri[:, [2, 0]]])
    owner = np.tile(np.arange(len(tri)), 3)
    key = np.sort(edges, axis=1)
    order = np.lexsort((key[:, 1], key[:, 0]))
    key, owner = key[order], owner[order]
    same_as_next = np.all(key[1:] == key[:-1], axis=1)
    keep = np.ones(len(key), dtype=bool)
    pair = np.flatnonzero(same_as_next)
    keep[pair] = label[owner[pair]] != label[owner[pair + 1]]
    keep[pair + 1] = False
    return key[keep]


def material_boundaries(result) -> np.ndarray:
    """Segments [length_unit] between materials and along the outline, shape
    (E, 2, 2): :func:`material_edges` by material, kept on the result
    (:func:`.catalogue.kept`) for every figure that draws them."""
    from .catalogue import kept, material_codes, section_points

    def compute():
        xy, _ = section_points(result)
        return xy[material_edges(result.mesh, material_codes(result)[1])]
    return kept(result, "material_boundaries", compute)


def segments_path(segments, **style) -> PathPatch:
    """Many line segments as one compound path: one element in SVG and PDF.

    Add it with ``ax.add_artist``: the plot limits are set explicitly, and
    ``add_patch`` would walk every segment to update them.

    Parameters
    ----------
    segments : ndarray, shape (S, 2, 2)
        Segment end points [length_unit].
    """
    segments = np.asarray(segments, dtype=float).reshape(-1, 2, 2)
    codes = np.tile(np.array([PlotPath.MOVETO, PlotPath.LINETO], dtype=PlotPath.code_type),
                    len(segments))
    path = PlotPath(segments.reshape(-1, 2), codes) if len(segments) else PlotPath(
        np.zeros((1, 2)), [PlotPath.MOVETO])
    return PathPatch(path, fill=False, **style)


def chained_path(segments, **style) -> PathPatch:
    """Segments joined end to end into polylines, so dash patterns run on along them.

    Parameters
    ----------
    segments : ndarray, shape (S, 2, 2)
        Segment end points [length_unit]; shared end points must be equal.
    """
    segments = np.asarray(segments, dtype=float).reshape(-1, 2, 2)
    keys = [tuple(np.round(p, 9)) for p in segments.reshape(-1, 2)]
    touching: dict = {}
    for k in range(len(segments)):
        for end in (0, 1):
            touching.setdefault(keys[2 * k + end], []).append((k, end))
    used = np.zeros(len(segments), dtype=bool)
    # start at free ends first, then whatever is left (closed loops)
    starts = [k for k in range(len(segments))
              if len(touching[keys[2 * k]]) == 1 or len(touching[keys[2 * k + 1]]) == 1]
    verts, codes = [], []
    for seed in starts + list(range(len(segments))):
        if used[seed]:
            continue
        end = 0 if len(touching[keys[2 * seed]]) == 1 or seed not in starts else 1
        line = [segments[seed, end], segments[seed, 1 - end]]
        used[seed] = True
        point = keys[2 * seed + 1 - end]
        while True:
            nxt = [(k, e) for k, e in touching[point] if not used[k]]
            if not nxt:
                break
            k, e = nxt[0]
            used[k] = True
            line.append(segments[k, 1 - e])
            point = keys[2 * k + 1 - e]
        verts += line
        codes += [PlotPath.MOVETO] + [PlotPath.LINETO] * (len(line) - 1)
    if not verts:
        return segments_path(segments, **style)
    return PathPatch(PlotPath(np.asarray(verts), codes), fill=False, **style)
