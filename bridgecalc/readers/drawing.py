"""Drawings (DXF) as model input: what each entity on a listed layer draws.

Model format 1, addition C. A model file's ``[drawing]`` table names a DXF
drawing and which of its layers hold which material; surfaces may name a
layer whose lines are their paths. This module opens the drawing with ezdxf,
walks its model space (block references resolved by ezdxf's own
``Insert.virtual_entities``, ``Insert.multi_insert`` for MINSERT arrays), and
turns every entity on a listed layer into plain point lists in the drawing's
world coordinates:

* closed LWPOLYLINE and POLYLINE (bulges are circular arcs), CIRCLE, full
  ELLIPSE, closed SPLINE, SOLID/TRACE, and HATCH boundary paths (polyline
  paths and edge paths of lines, arcs, elliptic arcs and splines) on a
  material layer;
* LINE, ARC, LWPOLYLINE, POLYLINE, CIRCLE, ELLIPSE and SPLINE on a surface
  layer.

Curves are flattened with the exact curve of ezdxf's construction tools
(``ConstructionArc``, ``ConstructionEllipse``, ``BSpline``), so every chord
stays within :data:`FLATTENING_MM` of the curve it replaces.
What a CAD user means by these shapes (snapping, duplicates, holes) is
:mod:`bridgecalc.readers.shapes`' job.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import ModelError

#: Largest distance between a curve and the chords that replace it [mm]
#: (model format 1, addition C: 0.1 mm or finer).
FLATTENING_MM = 0.1
#: $INSUNITS codes the tool reads (DXF reference, header variable $INSUNITS).
HEADER_UNITS = {4: "mm", 5: "cm", 6: "m"}
#: Millimetres per drawing or model unit.
MM_PER_UNIT = {"mm": 1.0, "cm": 10.0, "m": 1000.0}
#: Names of the other $INSUNITS codes, for messages (DXF reference).
OTHER_HEADER_UNITS = {1: "inches", 2: "feet", 3: "miles", 7: "kilometres", 8: "microinches",
                      9: "mils", 10: "yards", 11: "ångströms", 12: "nanometres",
                      13: "microns", 14: "decimetres", 15: "decametres", 16: "hectometres",
                      17: "gigametres", 18: "astronomical units", 19: "light years",
                      20: "parsecs"}

#: Entity types whose closed outline is a shape on a material layer.
SHAPE_TYPES = ("LWPOLYLINE", "POLYLINE", "CIRCLE", "ELLIPSE", "SPLINE", "HATCH", "SOLID",
               "TRACE", "LINE", "ARC")
#: Entity types read as surface paths on a surface layer.
PATH_TYPES = ("LINE", "ARC", "LWPOLYLINE", "POLYLINE", "CIRCLE", "ELLIPSE", "SPLINE")


@dataclass(frozen=True)
class Source:
    """Where a piece of geometry comes from, for messages.

    Attributes
    ----------
    layer : str
        Layer name as the drawing writes it.
    handle : str
        Handle of the entity in model space, or of the entity in its block
        definition for shapes placed by a block reference.
    dxftype : str
        Entity type, e.g. ``"LWPOLYLINE"``.
    inserts : tuple of str
        Handles of the block references (outermost first) that place it.
    """

    layer: str
    handle: str
    dxftype: str
    inserts: tuple[str, ...] = ()

    def describe(self) -> str:
        text = f"layer {self.layer!r}, entity {self.handle} ({self.dxftype})"
        if self.inserts:
            text += " placed by block reference " + " > ".join(self.inserts)
        return text


@dataclass
class Piece:
    """One entity's geometry in drawing coordinates.

    Attributes
    ----------
    source : Source
    order : int
        Position in the drawing's order (model space order, block content in
        its own order at its reference's place).
    rings : list of ndarray (n, 2)
        Closed outlines without a repeated last point (hatches: every
        boundary path; others: one ring). Empty for an open piece.
    line : ndarray (n, 2) or None
        An open polyline (open entities on any layer).
    hatch_style : int or None
        For hatches: 0 odd parity, 1 outermost, 2 ignore islands (DXF group 75).
    """

    source: Source
    order: int
    rings: list = field(default_factory=list)
    line: np.ndarray | None = None
    hatch_style: int | None = None

    @property
    def is_hatch(self) -> bool:
        return self.hatch_style is not None


@dataclass
class DrawingContent:
    """What the listed layers of a drawing hold, in drawing coordinates.

    Attributes
    ----------
    unit : str
        The unit the drawing's coordinates are read in (``"mm"``, ``"cm"``, ``"m"``).
    unit_from : str
        ``"header"`` ($INSUNITS), ``"unit"`` (the ``[drawing]`` key) or
        ``"length_unit"`` (the model file's unit).
    warnings : list of str
    pieces : dict of str to list of Piece
        Per listed layer (upper case), in drawing order.
    """

    unit: str
    unit_from: str
    warnings: list
    pieces: dict


class DrawingError(ModelError):
    """A drawing that cannot be read as the model file asks."""


def open_drawing(path: Path, where: str):
    """The ezdxf document of ``path``.

    Raises
    ------
    DrawingError
        For a missing file, a folder, or a file that is not a DXF drawing.
    """
    import ezdxf
    from ezdxf import recover

    if not path.exists():
        raise DrawingError(f"{where}: no such drawing {os.fspath(path)}")
    if path.is_dir():
        raise DrawingError(f"{where}: {os.fspath(path)} is a folder, not a drawing")
    try:
        is_dxf = ezdxf.is_dxf_file(os.fspath(path))
    except OSError as exc:
        raise DrawingError(f"{where}: cannot read the drawing {os.fspath(path)} "
                           f"({exc.strerror or exc})") from None
    if not is_dxf:
        raise DrawingError(f"{where}: {os.fspath(path)} is not a DXF drawing; save it from "
                           f"the CAD program as DXF")
    try:
        return ezdxf.readfile(path)
    except OSError as exc:
        raise DrawingError(f"{where}: cannot read the drawing {os.fspath(path)} "
                           f"({exc.strerror or exc})") from None
    except ezdxf.DXFStructureError:
        pass
    except Exception:   # ezdxf raises assorted errors on text that is not DXF
        pass
    try:                # a damaged but recoverable file, as CAD programs write them
        doc, auditor = recover.readfile(path)
    except Exception as exc:
        raise DrawingError(f"{where}: {os.fspath(path)} is not a DXF drawing that can be "
                           f"read ({type(exc).__name__}: {exc}); save it from the CAD "
                           f"program as DXF (ASCII)") from None
    if auditor.has_errors:
        raise DrawingError(f"{where}: {os.fspath(path)} is a damaged DXF drawing "
                           f"({len(auditor.errors)} errors found); save it again from the "
                           f"CAD program as DXF")
    return doc


def drawing_unit(doc, unit: str | None, length_unit: str, name: str) -> tuple[str, str, list]:
    """The unit of the drawing's coordinates, where it came from, and warnings.

    $INSUNITS wins when it says mm, cm or m; else the ``[drawing]`` key
    ``unit``; else the model file's ``length_unit`` (addition C).
    """
    warnings = []
    code = doc.header.get("$INSUNITS", 0)
    header = HEADER_UNITS.get(code)
    if header is not None:
        if unit is not None and unit != header:
            warnings.append(f"{name}: the drawing's header ($INSUNITS = {code}) says its unit "
                            f"is {header}, [drawing] unit says {unit}; the header wins and "
                            f"the drawing is read in {header}. Remove unit, or fix the "
                            f"drawing's units in the CAD program")
        return header, "header", warnings
    fallback, origin = (unit, "unit") if unit is not None else (length_unit, "length_unit")
    if code in OTHER_HEADER_UNITS:
        warnings.append(f"{name}: the drawing's header says its unit is "
                        f"{OTHER_HEADER_UNITS[code]} ($INSUNITS = {code}), which bridgecalc "
                        f"does not read; the drawing is read in {fallback} (from "
                        f"{'[drawing] unit' if origin == 'unit' else 'length_unit'}). "
                        f"Redraw or scale it to mm, cm or m")
    return fallback, origin, warnings


def layer_name(entity, inherited: str | None) -> str:
    """The layer an entity is on; inside a block, layer 0 takes the layer of the
    block reference that places it (CAD convention)."""
    name = entity.dxf.get("layer", "0")
    if inherited is not None and name == "0":
        return inherited
    return name


def walk(entities, wanted: set[str], inherited=None, inserts=()):
    """(entity, layer, inserts) for every entity of ``entities`` on a layer of
    ``wanted`` (upper case), with block references resolved and their content
    placed in world coordinates by ezdxf."""
    for entity in entities:
        kind = entity.dxftype()
        layer = layer_name(entity, inherited)
        if kind == "INSERT":
            handle = f"{_handle(entity)} (block {entity.dxf.get('name', '?')!r})"
            skipped = []
            refs = entity.multi_insert() if entity.mcount > 1 else [entity]
            for ref in refs:
                try:
                    content = list(ref.virtual_entities(
                        skipped_entity_callback=lambda e, why: skipped.append((e, why))))
                except Exception as exc:   # a missing block definition, a broken matrix
                    yield (entity, layer, inserts, f"cannot place the block: {exc}")
                    continue
                yield from walk(content, wanted, layer, inserts + (handle,))
            for e, why in skipped:
                if layer_name(e, layer).upper() in wanted:
                    yield (e, layer_name(e, layer), inserts + (handle,),
                           f"cannot be placed as the block reference places it ({why})")
            continue
        if layer.upper() in wanted:
            yield (entity, layer, inserts, None)


def _handle(entity) -> str:
    """The handle of an entity, or of the block-definition entity a virtual copy
    was made from."""
    handle = entity.dxf.get("handle")
    if handle:
        return handle
    origin = getattr(entity, "origin_of_copy", None)
    if origin is not None and origin.dxf.get("handle"):
        return origin.dxf.handle
    return "(none: made by the block reference from an arc or bulge scaled unevenly)"


def read_drawing(path: Path, material_layers: list[str], surface_layers: list[str],
                 unit: str | None, length_unit: str, where: str) -> DrawingContent:
    """Read the listed layers of a drawing.

    Parameters
    ----------
    path : Path
        The DXF file.
    material_layers, surface_layers : list of str
        Layer names as the model file lists them (matched ignoring case, as
        CAD programs do).
    unit : str or None
        The ``[drawing]`` key ``unit``.
    length_unit : str
        The model file's unit, the last fallback.
    where : str
        ``MODEL: drawing FILE``, the start of every message.

    Raises
    ------
    DrawingError
        Naming the drawing, the layer and the entity's handle.
    """
    doc = open_drawing(path, where)
    unit, unit_from, warnings = drawing_unit(doc, unit, length_unit, where)
    distance = FLATTENING_MM / MM_PER_UNIT[unit]        # [drawing unit]
    materials = {name.upper() for name in material_layers}
    surfaces = {name.upper() for name in surface_layers}
    pieces = {name: [] for name in materials | surfaces}
    order = 0
    for entity, layer, inserts, problem in walk(doc.modelspace(), materials | surfaces):
        source = Source(layer, _handle(entity), entity.dxftype(), inserts)
        if problem is not None:
            raise DrawingError(f"{where}: {source.describe()}: {problem}")
        key = layer.upper()
        if key in materials:
            piece = material_piece(entity, source, order, distance, where)
        else:
            piece = path_piece(entity, source, order, distance, where)
        pieces[key].append(piece)
        order += 1
    return DrawingContent(unit, unit_from, warnings, pieces)


# -- entities to points ----------------------------------------------------------


def _xy(points) -> np.ndarray:
    return np.array([(p[0], p[1]) for p in points], dtype=float).reshape(-1, 2)


def _wcs(entity, points, elevation) -> np.ndarray:
    """Points in an entity's own coordinate system (OCS) to world coordinates
    (ezdxf's OCS); the identity for entities drawn in the plan's xy plane."""
    extrusion = entity.dxf.get("extrusion", (0.0, 0.0, 1.0))
    if tuple(extrusion) == (0.0, 0.0, 1.0):
        return _xy(points)
    return _xy(entity.ocs().points_to_wcs([(x, y, elevation) for x, y in points]))


def _closed_ring(points: np.ndarray) -> np.ndarray:
    """A closed outline without its repeated last point."""
    if len(points) > 1 and np.array_equal(points[0], points[-1]):
        return points[:-1]
    return points


def _unreadable(source: Source, where: str, what: str):
    raise DrawingError(f"{where}: {source.describe()}: {what}")


def material_piece(entity, source: Source, order: int, distance: float, where: str) -> Piece:
    """A shape (closed) or an open piece on a material layer."""
    kind = source.dxftype
    if kind == "HATCH" or kind == "MPOLYGON":
        rings = hatch_rings(entity, distance, source, where)
        if not rings:
            _unreadable(source, where, "the hatch has no boundary path")
        return Piece(source, order, rings=rings, hatch_style=int(entity.dxf.get("hatch_style", 0)))
    if kind in ("SOLID", "TRACE"):
        from ezdxf.path import make_path
        pts = _xy(make_path(entity).control_vertices())
        return Piece(source, order, rings=[_closed_ring(pts)])
    if kind not in SHAPE_TYPES:
        _unreadable(source, where, f"bridgecalc does not read {kind} entities on a material "
                                   f"layer; draw the material as a closed polyline, circle, "
                                   f"ellipse, closed spline or hatch, or move the entity to "
                                   f"a layer the model file does not list")
    points, closed = curve_points(entity, distance, source, where)
    if closed:
        return Piece(source, order, rings=[_closed_ring(points)])
    return Piece(source, order, line=points)


def path_piece(entity, source: Source, order: int, distance: float, where: str) -> Piece:
    """A surface path: an open polyline, or a closed one with its first point repeated."""
    if source.dxftype not in PATH_TYPES:
        _unreadable(source, where, f"bridgecalc does not read {source.dxftype} entities on a "
                                   f"surface layer; draw the boundary as lines, polylines, "
                                   f"arcs or circles, or move the entity to a layer the "
                                   f"model file does not list")
    points, closed = curve_points(entity, distance, source, where)
    if closed:
        points = _closed_ring(points)
        points = np.vstack([points, points[:1]])
    return Piece(source, order, line=points)


def curve_points(entity, distance: float, source: Source, where: str) -> tuple[np.ndarray, bool]:
    """Vertices of a curve entity in world coordinates, and whether it is closed.

    Arcs and bulges are flattened with sagitta ``distance``; ellipses and
    splines by ezdxf's adaptive flattening with half of it (it checks the
    distance at each segment's middle only).
    """
    kind = source.dxftype
    if kind == "LINE":
        return _xy([entity.dxf.start, entity.dxf.end]), False
    if kind == "ARC":
        return _xy(entity.flattening(distance)), False
    if kind == "CIRCLE":
        if not entity.dxf.radius > 0:
            _unreadable(source, where, "the circle has no radius")
        return _closed_ring(_xy(entity.flattening(distance))), True
    if kind == "ELLIPSE":
        pts = _xy(entity.flattening(distance / 2))
        full = math.isclose(abs(entity.dxf.end_param - entity.dxf.start_param), math.tau,
                            abs_tol=1e-9)
        return (_closed_ring(pts), True) if full else (pts, False)
    if kind == "SPLINE":
        try:
            pts = _xy(spline_points(entity.construction_tool(), distance / 2))
        except Exception as exc:
            _unreadable(source, where, f"the spline cannot be evaluated ({exc})")
        closed = bool(entity.closed) or (len(pts) > 2 and np.allclose(pts[0], pts[-1],
                                                                      rtol=0, atol=1e-12))
        return (_closed_ring(pts), True) if closed else (pts, False)
    if kind == "LWPOLYLINE":
        vertices = [(x, y, b) for x, y, *_, b in entity.get_points("xyseb")]
        pts = bulge_points(vertices, entity.closed, distance)
        return _wcs(entity, pts, entity.dxf.elevation), bool(entity.closed)
    if kind == "POLYLINE":
        if entity.is_polygon_mesh or entity.is_poly_face_mesh:
            _unreadable(source, where, "a polygon or polyface mesh is not an outline; draw "
                                       "the material as a closed polyline or hatch")
        if entity.is_3d_polyline:
            return _xy(entity.points()), bool(entity.is_closed)
        vertices = [(v.dxf.location.x, v.dxf.location.y, v.dxf.get("bulge", 0.0))
                    for v in entity.vertices]
        pts = bulge_points(vertices, entity.is_closed, distance)
        z = entity.dxf.elevation.z if entity.dxf.hasattr("elevation") else 0.0
        return _wcs(entity, pts, z), bool(entity.is_closed)
    _unreadable(source, where, f"bridgecalc does not read {kind} entities here")


def bulge_points(vertices, closed: bool, distance: float) -> list:
    """Points of a 2D polyline with bulges (x, y, bulge) in its own coordinates,
    each bulge flattened as the circular arc it stands for (ezdxf's
    ``bulge_to_arc`` and ``ConstructionArc.flattening``, sagitta ``distance``).

    The last point of a closed polyline is not repeated.
    """
    from ezdxf.math import ConstructionArc, Vec2, bulge_to_arc

    out = []
    n = len(vertices)
    count = n if closed else n - 1
    for i in range(n):
        x, y, _ = vertices[i]
        out.append((float(x), float(y)))
        if i >= count:
            break
        bulge = vertices[i][2]
        nx, ny, _ = vertices[(i + 1) % n]
        if bulge and (x, y) != (nx, ny):
            start, end = Vec2(x, y), Vec2(nx, ny)
            center, a0, a1, radius = bulge_to_arc(start, end, bulge)
            arc = ConstructionArc(center, radius, math.degrees(a0), math.degrees(a1))
            pts = [(p.x, p.y) for p in arc.flattening(distance)]
            if bulge < 0:          # clockwise: the arc runs from end to start
                pts.reverse()
            out.extend(pts[1:-1])
    return out


def spline_points(spline, distance: float):
    """Points of a B-spline (ezdxf ``BSpline``) within ``distance`` of it.

    A clamped knot vector (what most CAD programs write) goes to ezdxf's own
    ``BSpline.flattening``. A closed spline written with an unclamped
    (periodic) knot vector is defined only between knots p and n (degree p,
    n control points; Piegl & Tiller, The NURBS Book, 2nd ed., §2.2, from
    memory): the same adaptive subdivision of each knot span as ezdxf's,
    restricted to that range.
    """
    from ezdxf.math import distance_point_line_3d

    knots = np.asarray(spline.knots(), dtype=float)
    p, n = spline.degree, spline.count
    lo, hi = knots[p], knots[n]
    if lo == knots[0] and hi == knots[-1]:
        yield from spline.flattening(distance)
        return
    evaluator = spline.evaluator
    spans = np.unique(knots[(knots >= lo) & (knots <= hi)])

    def subdivide(s, e, t0, t1, depth=0):
        m = evaluator.point(0.5 * (t0 + t1))
        gap = 0.0 if s.isclose(e) else distance_point_line_3d(m, s, e)
        if gap < distance or depth > 30:
            yield e
        else:
            yield from subdivide(s, m, t0, 0.5 * (t0 + t1), depth + 1)
            yield from subdivide(m, e, 0.5 * (t0 + t1), t1, depth + 1)

    start = evaluator.point(spans[0])
    yield start
    for t0, t1 in zip(spans[:-1], spans[1:]):
        for a, b in zip(np.linspace(t0, t1, 5)[:-1], np.linspace(t0, t1, 5)[1:]):
            end = evaluator.point(b)
            yield from subdivide(start, end, a, b)
            start = end


def hatch_rings(hatch, distance: float, source: Source, where: str) -> list:
    """Every boundary path of a hatch as a closed ring in world coordinates."""
    from ezdxf.entities.boundary_paths import EdgePath, PolylinePath

    elevation = hatch.dxf.elevation.z
    rings = []
    for k, boundary in enumerate(hatch.paths):
        if isinstance(boundary, PolylinePath):
            pts = bulge_points(boundary.vertices, True, distance)
        elif isinstance(boundary, EdgePath):
            pts = edge_path_points(boundary, distance, source, where, k)
        else:
            _unreadable(source, where, f"boundary path {k} is of a kind bridgecalc does not read")
        ring = _closed_ring(_wcs(hatch, pts, elevation))
        if len(ring) >= 3:
            rings.append(ring)
    return rings


def edge_path_points(boundary, distance: float, source: Source, where: str, index: int) -> list:
    """A hatch edge path (lines, arcs, elliptic arcs, splines) as one closed
    chain of points in the hatch's own coordinates; edges are joined end to
    end in either direction, as CAD programs write them."""
    from ezdxf.entities.boundary_paths import ArcEdge, EllipseEdge, LineEdge, SplineEdge

    chains = []
    for edge in boundary.edges:
        if isinstance(edge, LineEdge):
            pts = [edge.start, edge.end]
        elif isinstance(edge, ArcEdge):
            if not edge.radius > 0:
                continue
            pts = list(edge.construction_tool().flattening(distance))
        elif isinstance(edge, EllipseEdge):
            pts = list(edge.construction_tool().flattening(distance / 2))
        elif isinstance(edge, SplineEdge):
            try:
                if edge.control_points:
                    spline = edge.construction_tool()
                else:
                    from ezdxf.math import fit_points_to_cad_cv
                    spline = fit_points_to_cad_cv(edge.fit_points)
                pts = list(spline_points(spline, distance / 2))
            except Exception as exc:
                _unreadable(source, where, f"a spline edge of boundary path {index} cannot "
                                           f"be evaluated ({exc})")
        else:
            _unreadable(source, where, f"boundary path {index} has an edge of a kind "
                                       f"bridgecalc does not read")
        chains.append([(float(p[0]), float(p[1])) for p in pts])
    return join_chains(chains)


def join_chains(chains: list) -> list:
    """Chains of points joined end to end (reversing a chain where its end, not
    its start, meets the previous one), as one list without repeated joints."""
    if not chains:
        return []
    out = list(chains[0])
    for k, chain in enumerate(chains[1:]):
        if not chain:
            continue
        if k == 0:       # the first chain may run backwards: turn it to meet the second
            near_end = min(_dist(out[-1], chain[0]), _dist(out[-1], chain[-1]))
            near_start = min(_dist(out[0], chain[0]), _dist(out[0], chain[-1]))
            if near_start < near_end:
                out.reverse()
        if _dist(out[-1], chain[-1]) < _dist(out[-1], chain[0]):
            chain = chain[::-1]
        out.extend(chain[1:] if _dist(chain[0], out[-1]) == 0 else chain)
    return out


def _dist(a, b) -> float:
    return math.hypot(a[0] - b[0], a[1] - b[1])
