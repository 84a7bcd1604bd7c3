"""The solid's outline: its connected pieces and which surface claims each edge.

Regions are joined as the mesher joins them (within the on-path tolerance), so
what validation finds here is what the mesh will have.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

from . import geometry
from .checker import Checker, fmt_point
from .types import Model, Point

@dataclass(frozen=True)
class OutlineEdge:
    """One straight piece of the solid's outline.

    Attributes
    ----------
    start, end : (x, y)
        End points [length_unit].
    surface : int or None
        Index into ``model.surfaces`` of the surface claiming the edge;
        ``None`` for an adiabatic edge (cut-off or symmetry plane).
    piece : int
        Index of the connected piece of the solid the edge bounds.
    """

    start: Point
    end: Point
    surface: int | None
    piece: int


def region_shapes(model: Model) -> list:
    """The regions as shapely polygons [length_unit], in model order."""
    return [shapely.Polygon([(float(x), float(y)) for x, y in r.vertices],
                            [[(float(x), float(y)) for x, y in hole] for hole in r.holes])
            for r in model.regions]


def solid_pieces(model: Model) -> list:
    """Connected pieces of the solid (union of all regions), shapely polygons.

    Regions are joined as the mesher joins them: gmsh's boolean tolerance is
    the on-path tolerance (:func:`bridgecalc.model.geometry.on_path_tolerance`), so
    a corner or edge of one region within it of another region's corner or
    edge is snapped onto it before the union; two regions 200 and
    200.0000001 mm from the origin are one piece, not two. Regions meeting at a
    single point stay separate pieces.
    """
    tol = geometry.on_path_tolerance([r.vertices for r in model.regions])
    union = None
    for shape in region_shapes(model):
        if union is None:
            union = shape
            continue
        shape = _polygonal(shapely.snap(shape, union, tol))
        union = _polygonal(shapely.snap(union, shape, tol))
        union = _polygonal(shapely.union(union, shape))
    return list(getattr(union, "geoms", [union]))


def _polygonal(geom):
    """The polygons of a geometry (valid), without lines or points left by snapping."""
    if not geom.is_valid:
        geom = shapely.make_valid(geom)
    parts = [g for g in getattr(geom, "geoms", [geom])
             if isinstance(g, (shapely.Polygon, shapely.MultiPolygon)) and not g.is_empty]
    return shapely.unary_union(parts) if len(parts) != 1 else parts[0]


def outline_edges(model: Model, _check: Checker | None = None) -> list[OutlineEdge]:
    """Split the solid's outline into edges and say which surface claims each.

    The outline rings of the union of all regions are split at every vertex of
    every surface path (:func:`bridgecalc.model.geometry.insert_breakpoints`); an
    edge belongs to a surface when it lies wholly on the surface's path
    (:func:`bridgecalc.model.geometry.edges_on_path`, tolerance
    :func:`bridgecalc.model.geometry.on_path_tolerance` of all region vertices).

    Parameters
    ----------
    model : Model
        A model whose regions and surfaces are well formed.

    Raises
    ------
    ModelError
        When a surface path claims no edge, or two surfaces claim one edge.
    """
    check = _check or Checker(model.origin)
    tol = geometry.on_path_tolerance([r.vertices for r in model.regions])
    breakpoints = np.concatenate([np.asarray(s.path, dtype=float).reshape(-1, 2)
                                  for s in model.surfaces]) if model.surfaces else []
    starts, ends, piece_of = [], [], []
    for p, piece in enumerate(solid_pieces(model)):
        for ring in [piece.exterior, *piece.interiors]:
            verts = list(ring.coords)[:-1]
            verts = geometry.insert_breakpoints(verts, breakpoints, tol)
            for k in range(len(verts)):
                starts.append(verts[k])
                ends.append(verts[(k + 1) % len(verts)])
                piece_of.append(p)
    starts_a, ends_a = np.asarray(starts, dtype=float), np.asarray(ends, dtype=float)
    owner = [None] * len(starts)
    for i, surf in enumerate(model.surfaces):
        on = geometry.edges_on_path(starts_a, ends_a, surf.path, tol)
        hits = np.flatnonzero(on)
        if len(hits) == 0:
            check.fail(f"surfaces[{i}].path",
                       f"lies on no outline edge of the solid (within {tol:.3g} "
                       f"{model.length_unit}); an outline edge faces this surface's "
                       f"environment only when it lies wholly on the path")
        for e in hits:
            if owner[e] is not None:
                j = owner[e]
                check.fail(f"surfaces[{i}].path",
                           f"claims the outline edge {fmt_point(starts[e])}–"
                           f"{fmt_point(ends[e])} that surfaces[{j}] (environment "
                           f"{model.surfaces[j].environment!r}) already claims; an edge "
                           f"can face only one environment")
            owner[e] = i
    return [OutlineEdge(tuple(starts[e]), tuple(ends[e]), owner[e], piece_of[e])
            for e in range(len(starts))]
