"""Model -> one conforming triangular mesh. The only module that imports gmsh.

Steps (gmsh's OpenCASCADE kernel):

1. every region becomes a plane surface, with the ends of all surface paths
   inserted as vertices so no boundary element straddles the end of a path;
2. boolean fragments make all interfaces conformal; each fragment belongs to
   the last region that covers it (painter's order);
3. a size field refines each fragment by its own thickness (thin, highly
   conducting parts get several elements across), grades towards every
   geometric corner, and refines along interior surfaces, where θsi,min is
   sought;
3a. with ``MeshOptions.thin_aspect`` finite (the first mesh of a refinement
   study), a fragment that is a straight strip many times longer than thick
   (a liner, foil, membrane or sheet) and much thinner than the parts along
   it is meshed anisotropically instead: one element across, and along it
   the element size of its neighbours, shrinking to about its thickness at
   its own vertices (where it ends inside the model or another part meets
   it), where the field is two-dimensional on that scale. The vertices of
   each long side are projected onto the other, and each piece of one side
   is meshed as a copy of the piece facing it (gmsh periodic curves), so the
   nodes on the two sides face each other and the strip is a ladder of
   right-angled needles. Staggered nodes would not do: with one element
   across a highly conducting sheet, every node of one side is tied to the
   linear interpolation of the other side's, and a sheet whose two sides are
   interpolated on different nodes can only carry a linear temperature
   along its length (the discrete field "locks"). Any other fragment, and
   any fragment whose strip meshing gmsh refuses, is meshed as in step 3;
4. the triangles, their materials and the surface tag of every outline edge
   go straight from gmsh's arrays into a :class:`Mesh`; no file on disk.

Coordinates are converted to metres here, once.
"""


from __future__ import annotations

import contextlib
import math
import signal
import threading

import numpy as np

from ..model import Model, geometry
from .strips import (StripMeshingFailed, align_strips, fragment_thickness, thin_strips)
from .types import Mesh, MeshOptions

#: Gmsh 2D algorithm: 6 = Frontal-Delaunay (good element quality).
GMSH_ALGORITHM = 6


@contextlib.contextmanager
def _gmsh_session():
    """A clean gmsh model, quiet and single-threaded (deterministic).

    gmsh's initialisation installs signal handlers of its own (SIGTERM among
    them: a terminated run then died without removing its staging folder);
    Python's are put back.
    """
    import gmsh
    owner = not gmsh.isInitialized()
    if owner:
        handlers = {sig: signal.getsignal(sig) for sig in (signal.SIGINT, signal.SIGTERM)}
        gmsh.initialize(readConfigFiles=False, interruptible=False)
        if threading.current_thread() is threading.main_thread():
            for sig, handler in handlers.items():
                if handler is not None:
                    signal.signal(sig, handler)
    gmsh.option.setNumber("General.Terminal", 0)
    gmsh.option.setNumber("General.Verbosity", 1)
    gmsh.option.setNumber("General.NumThreads", 1)
    gmsh.model.add("bridgecalc")
    try:
        yield gmsh
    finally:
        gmsh.model.remove()
        if owner:
            gmsh.finalize()


def region_polygons(model: Model):
    """Region outlines and holes in metres, with surface-path ends inserted as vertices.

    Returns
    -------
    list of list of ndarray, shape (n_i, 2)
        Per region, in file order, its outline and then its holes [m].
    float
        On-path tolerance [m].
    """
    scale = model.metres_per_unit
    rings = [[np.asarray(ring, dtype=float) * scale for ring in r.rings] for r in model.regions]
    tol = geometry.on_path_tolerance([r[0] for r in rings])
    if model.surfaces:
        breakpoints = np.concatenate([np.asarray(s.path, dtype=float) * scale
                                      for s in model.surfaces])
    else:
        breakpoints = np.zeros((0, 2))
    return ([[np.asarray(geometry.insert_breakpoints(ring, breakpoints, tol)) for ring in r]
             for r in rings], tol)


def _add_surface(occ, rings) -> int:
    """One plane surface bounded by the first ring, less the others (holes);
    returns its tag."""
    loops = []
    for ring in rings:
        points = [occ.addPoint(float(x), float(y), 0.0) for x, y in ring]
        lines = [occ.addLine(points[i], points[(i + 1) % len(points)])
                 for i in range(len(points))]
        loops.append(occ.addCurveLoop(lines))
    return occ.addPlaneSurface(loops)


def build_mesh(model: Model, options: MeshOptions | None = None) -> Mesh:
    """Mesh a validated model.

    Parameters
    ----------
    model : Model
        Validated with :func:`bridgecalc.model.validate`.
    options : MeshOptions, optional

    Returns
    -------
    Mesh
    """
    options = options or MeshOptions()
    polygons, tol = region_polygons(model)
    if math.isfinite(options.thin_aspect):
        try:
            return _build(model, options, polygons, tol, thin=True)
        except StripMeshingFailed:
            pass                          # mesh every part by its own thickness instead
    return _build(model, options, polygons, tol, thin=False)


def _build(model: Model, options: MeshOptions, polygons, tol: float, thin: bool) -> Mesh:
    with _gmsh_session() as gmsh:
        occ = gmsh.model.occ
        gmsh.option.setNumber("Geometry.Tolerance", tol)
        gmsh.option.setNumber("Geometry.ToleranceBoolean", tol)
        inputs = [(2, _add_surface(occ, p)) for p in polygons]
        if len(inputs) > 1:
            _, mapping = occ.fragment(inputs[:1], inputs[1:])
        else:
            mapping = [inputs]
        occ.synchronize()
        owner: dict[int, int] = {}
        for region_index, pieces in enumerate(mapping):
            for dim, tag in pieces:
                if dim == 2:
                    owner[tag] = region_index      # later regions overwrite: painter's order
        if not thin:
            return _mesh_fragments(gmsh, model, options, polygons, owner, tol, [])
        try:
            owner, strips = thin_strips(gmsh, owner, options, _coarsest_size(options, polygons),
                                         tol)
            mesh = _mesh_fragments(gmsh, model, options, polygons, owner, tol, strips)
            if not strips:
                return mesh               # no strip: the geometry is untouched
        except StripMeshingFailed:
            raise
        except Exception as exc:          # gmsh raises plain Exceptions
            raise StripMeshingFailed(str(exc)) from exc
        area = sum(occ.getMass(2, s) for s in owner)
        p = mesh.nodes[mesh.triangles]
        meshed = 0.5 * float(np.sum((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                                    - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1])))
        if not abs(meshed - area) <= 1e-9 * area:
            raise StripMeshingFailed(f"meshed area {meshed} m² of {area} m²")
        return mesh


def _mesh_fragments(gmsh, model, options, polygons, owner, tol, strips) -> Mesh:
    """Size field, gmsh's 2D mesh of the fragments, and the Mesh."""
    surface_tags = sorted(owner)
    curve_surface = _classify_outline_curves(gmsh, model, surface_tags, tol)
    _set_size_field(gmsh, model, options, polygons, surface_tags, owner, curve_surface, strips)
    gmsh.option.setNumber("Mesh.Algorithm", GMSH_ALGORITHM)
    gmsh.option.setNumber("Mesh.ElementOrder", 1)
    gmsh.model.mesh.generate(2)
    return _collect(gmsh, model, surface_tags, owner, curve_surface)


def _classify_outline_curves(gmsh, model: Model, surface_tags, tol) -> dict[int, int]:
    """Surface index (or -1) for every outline curve (bounding one fragment)."""
    scale = model.metres_per_unit
    paths = [np.asarray(s.path, dtype=float) * scale for s in model.surfaces]
    counts: dict[int, int] = {}
    for s in surface_tags:
        for _, c in gmsh.model.getBoundary([(2, s)], oriented=False, combined=False):
            counts[abs(c)] = counts.get(abs(c), 0) + 1
    outline = sorted(c for c, n in counts.items() if n == 1)
    if not outline:
        return {}
    starts, ends = [], []
    for c in outline:
        _, pts = gmsh.model.getAdjacencies(1, c)
        a = gmsh.model.getValue(0, int(pts[0]), [])[:2]
        b = gmsh.model.getValue(0, int(pts[-1]), [])[:2]
        starts.append(a)
        ends.append(b)
    starts, ends = np.array(starts), np.array(ends)
    result = {c: -1 for c in outline}
    for index, path in enumerate(paths):
        on = geometry.edges_on_path(starts, ends, path, tol)
        for c, flag in zip(outline, on):
            if flag and result[c] == -1:
                result[c] = index
    return result


def _coarsest_size(options: MeshOptions, polygons) -> float:
    """Largest element size [m]: the model's largest dimension / cells_across_model."""
    outlines = [rings[0] for rings in polygons]
    return geometry.largest_dimension(outlines) / options.cells_across_model / options.refinement


def _set_size_field(gmsh, model, options, polygons, surface_tags, owner, curve_surface,
                    strips=()):
    field = gmsh.model.mesh.field
    h_max = _coarsest_size(options, polygons)
    fields = []
    thin = {strip.surface for strip in strips}

    # Each part: elements no larger than its thickness / cells_across_part.
    # A thin strip has no size of its own: its long sides take their
    # neighbours' sizes, and one element spans its thickness.
    part_size = {}
    for s in surface_tags:
        if s in thin:
            continue
        h = fragment_thickness(gmsh, s) / options.cells_across_part / options.refinement
        # half-octave bins, rounded down (never coarser), so that few fields serve
        part_size[s] = h_max if h >= h_max else 2.0 ** (math.floor(2 * math.log2(h)) / 2)
    by_size: dict[float, list[int]] = {}
    for s, h in part_size.items():
        by_size.setdefault(h, []).append(s)
    for h, tags in sorted(by_size.items()):
        f = field.add("Constant")
        field.setNumbers(f, "SurfacesList", tags)
        field.setNumber(f, "IncludeBoundary", 1)
        field.setNumber(f, "VIn", h)
        field.setNumber(f, "VOut", 1e22)
        fields.append(f)
        if h < h_max:
            # Grade away from a fine part as from a corner: a step from its
            # size to its neighbour's would leave slivers along its edges.
            curves = sorted({abs(c) for _, c in gmsh.model.getBoundary(
                [(2, t) for t in tags], combined=False, oriented=False)})
            fields.append(_graded(field, "CurvesList", curves, h, h_max, options.growth))

    # Every geometric corner: graded refinement, binned by size (few fields).
    point_size: dict[int, float] = {}
    for s in part_size:
        for _, p in gmsh.model.getBoundary([(2, s)], combined=False, oriented=False,
                                           recursive=True):
            point_size[p] = min(point_size.get(p, math.inf), part_size[s] * options.corner_ratio)
    # A strip's own vertices (where it ends, bends into another part or meets
    # one): the field is two-dimensional there on the scale of the strip's
    # thickness, so the needles shorten to about that size at each. Not at an
    # end on a cut-off plane, where ISO 10211 puts the cut-off because the
    # field is one-dimensional there.
    for strip in strips:
        h = strip.thickness / options.cells_across_part / options.refinement
        cut = set()
        for c in strip.ends:
            if curve_surface.get(c) == -1:
                cut.update(int(q) for q in gmsh.model.getAdjacencies(1, c)[1])
        for p in strip.vertices - cut:
            point_size[p] = min(point_size.get(p, math.inf), h * options.corner_ratio)
    bins: dict[int, list[int]] = {}
    for p, h in point_size.items():
        bins.setdefault(math.floor(2 * math.log2(h)), []).append(p)
    for key, points in sorted(bins.items()):
        h = 2.0 ** (key / 2.0)
        fields.append(_graded(field, "PointsList", points, h, h_max, options.growth))

    # Interior surfaces, where θsi,min is sought.
    interior = {i for i, s in enumerate(model.surfaces)
                if model.environment(s.environment).kind == "interior"}
    curves = [c for c, i in curve_surface.items() if i in interior]
    if curves:
        h_surface = h_max * options.surface_ratio
        fields.append(_graded(field, "CurvesList", curves, h_surface, h_max, options.growth))

    background = field.add("Min")
    field.setNumbers(background, "FieldsList", fields)
    field.setAsBackgroundMesh(background)
    if strips:
        align_strips(gmsh, strips, part_size)
    gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
    gmsh.option.setNumber("Mesh.MeshSizeFromPoints", 0)
    gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 0)
    gmsh.option.setNumber("Mesh.MeshSizeMax", h_max)


def _graded(field, kind, entities, h_min, h_max, growth):
    """Size h_min on the entities, growing linearly with distance to h_max."""
    distance = field.add("Distance")
    field.setNumbers(distance, kind, entities)
    if kind == "CurvesList":
        field.setNumber(distance, "Sampling", 100)
    threshold = field.add("Threshold")
    field.setNumber(threshold, "InField", distance)
    field.setNumber(threshold, "SizeMin", h_min)
    field.setNumber(threshold, "SizeMax", h_max)
    field.setNumber(threshold, "DistMin", 0.0)
    field.setNumber(threshold, "DistMax", max(h_max - h_min, 0.0) / growth)
    return threshold


def _collect(gmsh, model, surface_tags, owner, curve_surface) -> Mesh:
    """Gmsh's arrays -> Mesh, with unused nodes dropped and indices compacted."""
    node_tags, coords, _ = gmsh.model.mesh.getNodes()
    xy = coords.reshape(-1, 3)[:, :2]
    index_of = np.full(int(node_tags.max()) + 1, -1, dtype=np.int64)
    index_of[node_tags.astype(np.int64)] = np.arange(len(node_tags))

    triangles, regions = [], []
    for s in surface_tags:
        types, _, elem_nodes = gmsh.model.mesh.getElements(2, s)
        for etype, enodes in zip(types, elem_nodes):
            if etype != 2:                                  # 3-node triangles only
                raise RuntimeError(f"gmsh returned element type {etype}")
            tri = index_of[enodes.astype(np.int64)].reshape(-1, 3)
            triangles.append(tri)
            regions.append(np.full(len(tri), owner[s], dtype=np.int64))
    triangles = np.concatenate(triangles)
    regions = np.concatenate(regions)

    edges, edge_surface = [], []
    for c, surface_index in sorted(curve_surface.items()):
        types, _, elem_nodes = gmsh.model.mesh.getElements(1, c)
        for etype, enodes in zip(types, elem_nodes):
            seg = index_of[enodes.astype(np.int64)].reshape(-1, 2)
            edges.append(seg)
            edge_surface.append(np.full(len(seg), surface_index, dtype=np.int64))
    edges = np.concatenate(edges) if edges else np.zeros((0, 2), dtype=np.int64)
    edge_surface = (np.concatenate(edge_surface) if edge_surface
                    else np.zeros(0, dtype=np.int64))

    # Compact: keep nodes used by triangles, in their first-use order.
    used = np.zeros(len(xy), dtype=bool)
    used[triangles.ravel()] = True
    renumber = np.cumsum(used) - 1
    nodes = xy[used]
    triangles = renumber[triangles]
    edges = renumber[edges]

    # Counter-clockwise orientation.
    p = nodes[triangles]
    cross = ((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
             - (p[:, 1, 1] - p[:, 0, 1]) * (p[:, 2, 0] - p[:, 0, 0]))
    flip = cross < 0
    triangles[flip] = triangles[flip][:, [0, 2, 1]]
    return Mesh(nodes=np.ascontiguousarray(nodes), triangles=triangles, region=regions,
                boundary_edges=edges, boundary_surface=edge_surface,
                metres_per_unit=model.metres_per_unit)
