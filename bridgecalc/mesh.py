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
from dataclasses import dataclass, field

import numpy as np

from .model import geometry
from .errors import ModelError
from .model import Model

#: Gmsh 2D algorithm: 6 = Frontal-Delaunay (good element quality).
GMSH_ALGORITHM = 6


@dataclass(frozen=True)
class MeshOptions:
    """How fine to mesh.

    Attributes
    ----------
    refinement : float
        Divides every target element size; 2 halves them all (about four times
        the elements). ISO 10211's doubling check uses 2.
    cells_across_model : float
        Coarsest size is the model's largest dimension divided by this [-].
    cells_across_part : float
        Elements across the thickness of each part (fragment) [-].
    corner_ratio : float
        Element size at a geometric corner relative to the size of the parts
        meeting there [-].
    surface_ratio : float
        Element size along interior surfaces relative to the coarsest size [-].
    growth : float
        Rate at which the size grows away from corners and surfaces
        [m of size per m of distance].
    thin_aspect : float
        A fragment that is a straight strip at least this many times longer
        than thick, and at most a quarter as thick as the elements of the
        parts along it (:data:`STRIP_NEIGHBOUR_RATIO`), is meshed with one
        element across and its neighbours' size along (see the module
        docstring, step 3a) [-]; ``inf`` (the default) meshes every fragment
        by its own thickness.
    """

    refinement: float = 1.0
    cells_across_model: float = 25.0
    cells_across_part: float = 3.0
    corner_ratio: float = 0.2
    surface_ratio: float = 0.25
    growth: float = 0.35
    thin_aspect: float = math.inf

    def __post_init__(self):
        if not (isinstance(self.refinement, (int, float)) and math.isfinite(self.refinement)
                and self.refinement > 0):
            raise ModelError(f"mesh refinement must be a positive number, got {self.refinement!r}")
        aspect = self.thin_aspect
        if isinstance(aspect, bool) or not isinstance(aspect, (int, float)) or not aspect >= 1:
            raise ModelError(f"thin_aspect must be a number of at least 1 (inf: never), got "
                             f"{self.thin_aspect!r}")


@dataclass
class Mesh:
    """A conforming triangular mesh of a model.

    Attributes
    ----------
    nodes : ndarray, shape (N, 2)
        Node coordinates [m].
    triangles : ndarray of int, shape (T, 3)
        Node indices, counter-clockwise.
    region : ndarray of int, shape (T,)
        Index into ``model.regions`` of the region each triangle belongs to.
    boundary_edges : ndarray of int, shape (F, 2)
        Node indices of every outline edge.
    boundary_surface : ndarray of int, shape (F,)
        Index into ``model.surfaces`` per outline edge; -1 where adiabatic.
    metres_per_unit : float
        Scale of the model's length unit [m per length_unit].
    """

    nodes: np.ndarray = field(repr=False)
    triangles: np.ndarray = field(repr=False)
    region: np.ndarray = field(repr=False)
    boundary_edges: np.ndarray = field(repr=False)
    boundary_surface: np.ndarray = field(repr=False)
    metres_per_unit: float

    def __repr__(self) -> str:
        return f"Mesh({self.node_count} nodes, {self.triangle_count} triangles)"
    _skfem: object = field(default=None, repr=False, compare=False)
    #: The mesh this one was refined from (:func:`bridgecalc.adapt.refine`), or None.
    coarser: "Mesh | None" = field(default=None, repr=False, compare=False)
    #: Sparse (N, N_coarser) interpolation of P1 node values from ``coarser``
    #: to this mesh (the coarse space is a subspace: meshes are nested), or None.
    prolongation: object = field(default=None, repr=False, compare=False)

    @property
    def skfem(self):
        """The same mesh as a :class:`skfem.MeshTri` (built once)."""
        if self._skfem is None:
            from skfem import MeshTri
            self._skfem = MeshTri(np.ascontiguousarray(self.nodes.T),
                                  np.ascontiguousarray(self.triangles.T),
                                  sort_t=False)
        return self._skfem

    @property
    def node_count(self) -> int:
        return len(self.nodes)

    @property
    def triangle_count(self) -> int:
        return len(self.triangles)


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
    """Region outlines in metres, with surface-path ends inserted as vertices.

    Returns
    -------
    list of ndarray, shape (n_i, 2)
        One polygon per region [m], in file order.
    float
        On-path tolerance [m].
    """
    scale = model.metres_per_unit
    polygons = [np.asarray(r.vertices, dtype=float) * scale for r in model.regions]
    tol = geometry.on_path_tolerance(polygons)
    if model.surfaces:
        breakpoints = np.concatenate([np.asarray(s.path, dtype=float) * scale
                                      for s in model.surfaces])
    else:
        breakpoints = np.zeros((0, 2))
    return ([np.asarray(geometry.insert_breakpoints(p, breakpoints, tol)) for p in polygons],
            tol)


def _add_surface(occ, poly: np.ndarray) -> int:
    """One plane surface through the polygon's vertices; returns its tag."""
    points = [occ.addPoint(float(x), float(y), 0.0) for x, y in poly]
    lines = [occ.addLine(points[i], points[(i + 1) % len(points)]) for i in range(len(points))]
    loop = occ.addCurveLoop(lines)
    return occ.addPlaneSurface([loop])


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
        except _StripMeshingFailed:
            pass                          # mesh every part by its own thickness instead
    return _build(model, options, polygons, tol, thin=False)


class _StripMeshingFailed(Exception):
    """gmsh could not mesh the model with its thin strips as ladders."""


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
            owner, strips = _thin_strips(gmsh, owner, options, _coarsest_size(options, polygons),
                                         tol)
            mesh = _mesh_fragments(gmsh, model, options, polygons, owner, tol, strips)
            if not strips:
                return mesh               # no strip: the geometry is untouched
        except _StripMeshingFailed:
            raise
        except Exception as exc:          # gmsh raises plain Exceptions
            raise _StripMeshingFailed(str(exc)) from exc
        area = sum(occ.getMass(2, s) for s in owner)
        p = mesh.nodes[mesh.triangles]
        meshed = 0.5 * float(np.sum((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                                    - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1])))
        if not abs(meshed - area) <= 1e-9 * area:
            raise _StripMeshingFailed(f"meshed area {meshed} m² of {area} m²")
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


def _thin_strips(gmsh, owner: dict, options: MeshOptions, h_max: float, tol: float):
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

    sizes = {s: own_size(_fragment_thickness(gmsh, s)) for s in owner}
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
        raise _StripMeshingFailed("no strip could be paired")
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


def _align_strips(gmsh, strips, part_size: dict) -> None:
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


def _fragment_thickness(gmsh, tag: int) -> float:
    """Thickness of a part, 2·area/perimeter [m] (exact for a long thin strip)."""
    area = gmsh.model.occ.getMass(2, tag)
    perimeter = sum(gmsh.model.occ.getMass(1, abs(c))
                    for _, c in gmsh.model.getBoundary([(2, tag)], oriented=False))
    return 2.0 * area / perimeter


def _coarsest_size(options: MeshOptions, polygons) -> float:
    """Largest element size [m]: the model's largest dimension / cells_across_model."""
    return geometry.largest_dimension(polygons) / options.cells_across_model / options.refinement


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
        h = _fragment_thickness(gmsh, s) / options.cells_across_part / options.refinement
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
        _align_strips(gmsh, strips, part_size)
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
