"""A heat flux in equilibrium on every triangle, rebuilt from a P1 solution.

For the complementary energy (Prager–Synge) a flux field σ is needed that is
exactly divergence-free in the section (no heat sources), has zero normal
component on the adiabatic outline, and is free on the surfaces that face an
environment. It is built here in the lowest-order Raviart–Thomas space RT0
(one normal flux per edge, constant divergence per triangle) from the
Galerkin solution u_h, by the vertex-patch equilibration of Braess and
Schöberl (Braess & Schöberl, *Math. Comp.* 77, 2008, 651–672; Ern &
Vohralík, *SIAM J. Numer. Anal.* 53, 2015, 1058–1081; from memory of the
details): for every vertex a with hat function φ_a, a flux σ_a on the triangles
around a with zero normal flux on the patch's outer edges (those opposite a),

    min Σ_K ∫_K λ⁻¹ |σ_a − φ_a λ∇u_h|² + Σ_{E ⊂ Γ_R} R ∫_E (σ_a·n − φ_a h(θ_j − u_h))²
    subject to ∫_K ∇·σ_a = ∫_K λ∇u_h·∇φ_a on every triangle K around a,

and σ = Σ_a σ_a. Since Σ_a ∇φ_a = 0, σ is divergence-free on every triangle;
the patch problems are solvable because u_h satisfies the discrete equation
at every vertex that is not held (Galerkin orthogonality: the element terms
of a patch sum to the surface terms, and where the patch touches no surface
to zero). Here σ ≈ λ∇u, so σ·n on the outline, n outward, is the heat flow
*into* the model per metre of outline [W/m²].

All patch problems form one block-diagonal saddle-point system whose matrix
depends only on the mesh, λ and the kinds of surface, so it is factorised once
and every unit case is one more right-hand side. What the iterative solvers
leave of the discrete equations (their residual, ~1e-10 of the loads) would
leave a divergence of that size; a last pass removes it exactly by routing
each triangle's imbalance along a spanning tree of the triangles to the
non-adiabatic outline, so the lower bound holds to round-off whatever the
solver's tolerance.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import breadth_first_order, connected_components
from scipy.sparse.linalg import splu

from ..mesh import Mesh
from ..mesh.refinement import edge_table
from ..model.types import holds_temperature
from .assembly import p1_gradients, triangle_areas


@dataclass
class FluxSpace:
    """The RT0 edge fluxes of one P1 mesh and what the energies need.

    Attributes
    ----------
    edges : ndarray of int, shape (E, 2)
        Sorted node pairs.
    opposite : ndarray of int, shape (T, 3)
        Edge opposite each local vertex of each triangle.
    sign : ndarray, shape (T, 3)
        +1 where the edge's reference normal points out of the triangle.
    length : ndarray, shape (E,)
        [m]
    surface : ndarray of int, shape (E,)
        Surface index of an outline edge, -1 inside or adiabatic.
    mass : ndarray, shape (T, 3, 3)
        ∫_K ψ_m·ψ_n of the unit-flux RT0 functions ψ_m = (x − p_m)/(2|K|) [1/m²·m²].
    midpoints : ndarray, shape (T, 3, 2)
        Midpoint of the edge opposite each vertex [m].
    normal : ndarray, shape (E, 2)
        Each edge's reference unit normal (outward on the outline).
    """

    mesh: Mesh
    edges: np.ndarray
    opposite: np.ndarray
    sign: np.ndarray
    length: np.ndarray
    surface: np.ndarray
    area: np.ndarray
    mass: np.ndarray
    midpoints: np.ndarray
    normal: np.ndarray


def flux_space(mesh: Mesh) -> FluxSpace:
    """Edges, orientations and RT0 mass matrices of ``mesh``."""
    nodes, tri = mesh.nodes, mesh.triangles
    edges, t2e = edge_table(tri)
    opposite = t2e[:, [1, 2, 0]]          # local edges (0,1),(1,2),(0,2) face vertex 2,0,1
    d = nodes[edges[:, 1]] - nodes[edges[:, 0]]
    length = np.hypot(d[:, 0], d[:, 1])
    normal = np.stack([d[:, 1], -d[:, 0]], axis=1) / length[:, None]
    p = nodes[tri]                                              # (T, 3, 2)
    centroid = p.mean(axis=1)
    mid_edge = 0.5 * (nodes[edges[opposite, 0]] + nodes[edges[opposite, 1]])   # (T, 3, 2)
    sign = np.sign(np.einsum("tkd,tkd->tk", mid_edge - centroid[:, None, :], normal[opposite]))
    count = np.bincount(opposite.ravel(), minlength=len(edges))
    # outline edges take the outward normal of their one triangle as reference
    flip = np.zeros(len(edges))
    on_outline = count[opposite] == 1
    flip[opposite[on_outline]] = sign[on_outline]
    ref = np.where(count == 1, flip, 1.0)
    sign = sign * ref[opposite]
    surface = np.full(len(edges), -1, dtype=np.int64)
    b = np.sort(mesh.boundary_edges, axis=1)
    n = len(nodes)
    keys = edges[:, 0].astype(np.int64) * n + edges[:, 1]
    at = np.searchsorted(keys, b[:, 0].astype(np.int64) * n + b[:, 1])
    surface[at] = mesh.boundary_surface
    area = triangle_areas(nodes, tri)
    # edge-midpoint rule, exact for quadratics: ∫_K f = |K|/3 Σ_q f(q)
    mids = 0.5 * (p[:, [1, 2, 0]] + p[:, [2, 0, 1]])            # (T, 3 points, 2)
    r = mids[:, :, None, :] - p[:, None, :, :]                  # (T, q, m, 2)
    mass = np.einsum("tqmd,tqnd->tmn", r, r) / (12.0 * area[:, None, None])
    return FluxSpace(mesh, edges, opposite, sign, length, surface, area, mass, mids,
                     normal * ref[:, None])


class Equilibrator:
    """The patch problems of one mesh and resistance set, factorised once.

    Parameters
    ----------
    mesh : Mesh
    conductivity : ndarray, shape (T,)
        λ [W/(m·K)].
    resistances : sequence of float or None
        R_j per surface [m²·K/W]; 0 held, None or ∞ adiabatic.
    """

    def __init__(self, mesh: Mesh, conductivity, resistances):
        self.space = fs = flux_space(mesh)
        self.conductivity = lam = np.asarray(conductivity, float)
        self.resistances = list(resistances)
        tri = mesh.triangles
        n_tri, n_edges = len(tri), len(fs.edges)
        kind = np.zeros(n_edges, dtype=np.int8)     # 0 inside, 1 adiabatic, 2 resistance, 3 held
        count = np.bincount(fs.opposite.ravel(), minlength=n_edges)
        kind[count == 1] = 1
        self.edge_resistance = np.zeros(n_edges)
        for j, r in enumerate(self.resistances):
            on = fs.surface == j
            if r is None or not np.isfinite(r):
                continue
            held = holds_temperature(r)          # as the solve has it (boundaries.py)
            kind[on] = 3 if held else 2
            self.edge_resistance[on] = 0.0 if held else r
        self.kind = kind
        # unknowns: (vertex, edge) shares x_E^a; adiabatic outline edges carry none
        e_nodes = fs.edges
        active = kind != 1
        slot = -np.ones((n_edges, 2), dtype=np.int64)
        slot[active] = np.arange(2 * active.sum()).reshape(-1, 2)
        self.slot = slot
        n_x = 2 * int(active.sum())
        # constraints: (triangle, local vertex i); edges through vertex i are those
        # opposite the two other vertices
        rows, cols, vals = [], [], []
        hrows, hcols, hvals = [], [], []
        local_slot = np.empty((n_tri, 3, 2), dtype=np.int64)    # unknown of (K, i, m)
        local_sign = np.empty((n_tri, 3, 2))
        for i in range(3):
            vert = tri[:, i]
            for m, other in enumerate(((i + 1) % 3, (i + 2) % 3)):
                e = fs.opposite[:, other]
                which = (e_nodes[e, 1] == vert).astype(np.int64)
                local_slot[:, i, m] = slot[e, which]
                local_sign[:, i, m] = fs.sign[:, other]
        self.local_slot, self.local_sign = local_slot, local_sign
        use = local_slot >= 0
        con = np.repeat(np.arange(3 * n_tri).reshape(n_tri, 3)[:, :, None], 2, axis=2)
        rows, cols, vals = con[use], local_slot[use], local_sign[use]
        # element energy blocks: λ⁻¹ s_m s_n ∫ψ_m·ψ_n over the two edges through i
        for i in range(3):
            others = ((i + 1) % 3, (i + 2) % 3)
            for m in range(2):
                for n_ in range(2):
                    a, b = local_slot[:, i, m], local_slot[:, i, n_]
                    ok = (a >= 0) & (b >= 0)
                    v = (local_sign[:, i, m] * local_sign[:, i, n_]
                         * fs.mass[:, others[m], others[n_]] / lam)
                    hrows.append(a[ok]), hcols.append(b[ok]), hvals.append(v[ok])
        robin = np.flatnonzero(kind == 2)
        for which in range(2):
            s = slot[robin, which]
            hrows.append(s), hcols.append(s)
            hvals.append(self.edge_resistance[robin] / fs.length[robin])
        hess = sp.coo_matrix((np.concatenate(hvals), (np.concatenate(hrows),
                                                      np.concatenate(hcols))),
                             shape=(n_x, n_x)).tocsr()
        # one redundant constraint per fan of triangles around a vertex that
        # touches no resistance or held edge (its constraints sum to zero)
        link_r, link_c = [], []
        inner = np.flatnonzero(count == 2)
        pairs, _ = _owners(fs)
        k1, k2 = pairs[inner, 0], pairs[inner, 1]
        for end in range(2):
            v = e_nodes[inner, end]
            i1 = np.argmax(tri[k1] == v[:, None], axis=1)
            i2 = np.argmax(tri[k2] == v[:, None], axis=1)
            link_r.append(3 * k1 + i1), link_c.append(3 * k2 + i2)
        link = sp.coo_matrix((np.ones(sum(len(x) for x in link_r)),
                              (np.concatenate(link_r), np.concatenate(link_c))),
                             shape=(3 * n_tri, 3 * n_tri))
        n_fans, fan = connected_components(link, directed=False)
        free = np.zeros(n_fans, dtype=bool)
        loose = np.flatnonzero(kind >= 2)
        for end in range(2):
            v = e_nodes[loose, end]
            k = pairs[loose, 0]
            i = np.argmax(tri[k] == v[:, None], axis=1)
            free[fan[3 * k + i]] = True
        first_of_fan = np.full(n_fans, 3 * n_tri, dtype=np.int64)
        np.minimum.at(first_of_fan, fan, np.arange(3 * n_tri))   # smallest index of each fan
        dropped = np.zeros(3 * n_tri, dtype=bool)
        dropped[first_of_fan[~free]] = True
        keep = np.flatnonzero(~dropped)
        renumber = -np.ones(3 * n_tri, dtype=np.int64)
        renumber[keep] = np.arange(len(keep))
        live = renumber[rows] >= 0
        b_mat = sp.coo_matrix((vals[live], (renumber[rows[live]], cols[live])),
                              shape=(len(keep), n_x)).tocsr()
        self.kept = keep
        self.hessian = hess
        kkt = sp.bmat([[hess, b_mat.T], [b_mat, None]], format="csc")
        # order every unknown and multiplier by its vertex: the system is then
        # block diagonal (one block per vertex) and factorises without fill between blocks
        x_vertex = np.empty(n_x, dtype=np.int64)
        x_vertex[slot[active, 0]] = e_nodes[active, 0]
        x_vertex[slot[active, 1]] = e_nodes[active, 1]
        c_vertex = tri.ravel()[keep]
        vertex = np.concatenate([x_vertex, c_vertex])
        self.permutation = perm = np.argsort(vertex, kind="stable")
        self.n_x = n_x
        self.factor = splu(kkt[perm][:, perm].tocsc(), permc_spec="NATURAL")
        self._tree = None

    # -------------------------------------------------------------------------

    def fluxes(self, theta: np.ndarray, surface_temperatures: np.ndarray) -> np.ndarray:
        """Edge fluxes of the equilibrated σ for several cases [W/m per m of depth].

        Parameters
        ----------
        theta : ndarray, shape (N, k)
            Nodal P1 temperatures of k cases [°C].
        surface_temperatures : ndarray, shape (k, n_surfaces)
            θ_j of each surface's environment per case [°C].

        Returns
        -------
        ndarray, shape (E, k)
            ∫_E σ·n along each edge's reference normal (outward on the outline).
        """
        fs, mesh = self.space, self.space.mesh
        tri, lam = mesh.triangles, self.conductivity
        theta = np.atleast_2d(np.asarray(theta, float).T).T
        g_surf = np.atleast_2d(np.asarray(surface_temperatures, float))
        k = theta.shape[1]
        n_tri = len(tri)
        rhs_x = np.zeros((self.n_x, k))
        d = np.zeros((3 * n_tri, k))
        p = mesh.nodes[tri]
        count = np.bincount(fs.opposite.ravel(), minlength=len(fs.edges))
        robin = np.flatnonzero(self.kind == 2)
        x, y = p[:, :, 0], p[:, :, 1]
        # hat gradients ∇φ_i = (b_i, c_i) / 2|K|
        gb = np.stack([y[:, [1, 2, 0]] - y[:, [2, 0, 1]],
                       x[:, [2, 0, 1]] - x[:, [1, 2, 0]]], axis=2) / (2 * fs.area[:, None, None])
        for c in range(k):
            flow = lam[:, None] * p1_gradients(mesh.nodes, tri, theta[:, c])    # λ∇u_h (T, 2)
            d[:, c] = (fs.area[:, None] * np.einsum("tid,td->ti", gb, flow)).ravel()
            # the target of each share: x⁰_E^a = ∫_E φ_a σ⁰·n, σ⁰·n the mean of the
            # two sides' λ∂u_h/∂n (an edge's only side on the outline) and
            # h(θ_j − u_h) on a resistance edge; a field whose flux is already
            # continuous (exact P1) is returned as it is
            normal_flow = np.einsum("td,tkd->tk", flow, fs.normal[fs.opposite]) \
                * fs.length[fs.opposite]
            mean = np.bincount(fs.opposite.ravel(), normal_flow.ravel(),
                               minlength=len(fs.edges)) / np.maximum(count, 1)
            x0 = np.zeros((len(fs.edges), 2))
            x0[:] = 0.5 * mean[:, None]
            g = g_surf[c, fs.surface[robin]]
            ua, ub = theta[fs.edges[robin, 0], c], theta[fs.edges[robin, 1], c]
            h_len = fs.length[robin] / self.edge_resistance[robin]
            x0[robin, 0] = h_len * (g / 2 - (2 * ua + ub) / 6)
            x0[robin, 1] = h_len * (g / 2 - (2 * ub + ua) / 6)
            on = self.slot[:, 0] >= 0
            target = np.zeros(self.n_x)
            target[self.slot[on, 0]] = x0[on, 0]
            target[self.slot[on, 1]] = x0[on, 1]
            rhs_x[:, c] = self.hessian @ target
        rhs = np.vstack([rhs_x, d[self.kept]])
        perm = self.permutation
        solved = np.empty_like(rhs)
        solved[perm] = self.factor.solve(np.ascontiguousarray(rhs[perm]))
        x = solved[: self.n_x]
        flux = np.zeros((len(fs.edges), k))
        on = self.slot[:, 0] >= 0
        flux[on] = x[self.slot[on, 0]] + x[self.slot[on, 1]]
        return self._balance(flux)

    def _balance(self, flux: np.ndarray) -> np.ndarray:
        """Remove each triangle's net outflow (solver residual, round-off) by
        routing it along a spanning tree to the non-adiabatic outline."""
        fs = self.space
        net = np.einsum("tk,tkc->tc", fs.sign, flux[fs.opposite])       # (T, k)
        if self._tree is None:
            self._tree = self._spanning_tree()
        solve_sub, edge_of, sign_of, order = self._tree
        subtree = solve_sub(np.ascontiguousarray(net[order]))
        out = flux.copy()
        # the tree edge of triangle K takes away its subtree's net outflow
        np.add.at(out, edge_of, -(sign_of[:, None] * subtree))
        return out

    def _spanning_tree(self):
        fs = self.space
        n_tri = len(fs.opposite)
        ground = n_tri
        owner, own_sign = _owners(fs)
        inner = owner[:, 1] >= 0
        loose = (self.kind >= 2)
        a = np.concatenate([owner[inner, 0], owner[loose, 0]])
        b = np.concatenate([owner[inner, 1], np.full(loose.sum(), ground)])
        eid = np.concatenate([np.flatnonzero(inner), np.flatnonzero(loose)])
        # the first edge of each pair of nodes wins (a triangle may have two outline edges)
        key = np.minimum(a, b).astype(np.int64) * (n_tri + 1) + np.maximum(a, b)
        _, uniq = np.unique(key, return_index=True)
        a, b, eid = a[uniq], b[uniq], eid[uniq]
        graph = sp.coo_matrix((np.ones(len(a)), (a, b)), shape=(n_tri + 1, n_tri + 1)).tocsr()
        order, pred = breadth_first_order(graph, ground, directed=False,
                                          return_predecessors=True)
        lookup = sp.coo_matrix((eid + 1, (a, b)), shape=(n_tri + 1, n_tri + 1)).tocsr()
        lookup = lookup + lookup.T
        nodes_ = order[1:]
        if len(nodes_) != n_tri:
            raise RuntimeError("a part of the solid touches no surface facing an environment")
        parent = pred[nodes_]
        edge_of = np.asarray(lookup[nodes_, parent]).ravel().astype(np.int64) - 1
        # sign: +1 where the edge's reference normal points out of the triangle
        sign_of = np.where(owner[edge_of, 0] == nodes_, own_sign[edge_of, 0],
                           own_sign[edge_of, 1])
        # subtree sums: S_K − Σ_children S_C = net_K; in BFS order upper triangular
        position = np.empty(n_tri + 1, dtype=np.int64)
        position[order] = np.arange(n_tri + 1)
        pos_child, pos_parent = position[nodes_] - 1, position[parent] - 1
        has_parent = parent != ground
        m = sp.identity(n_tri, format="csr") - sp.coo_matrix(
            (np.ones(has_parent.sum()), (pos_parent[has_parent], pos_child[has_parent])),
            shape=(n_tri, n_tri)).tocsr()
        lu = splu(m.tocsc(), permc_spec="NATURAL")
        return lu.solve, edge_of, sign_of, nodes_

    # -------------------------------------------------------------------------

    def complementary(self, flux: np.ndarray, members_surfaces) -> tuple:
        """The complementary energy's parts of one flux field.

        Parameters
        ----------
        flux : ndarray, shape (E,)
            From :meth:`fluxes` (or a sum of them).
        members_surfaces : collection of int
            Surfaces whose environment is at 1 °C (the others at 0 °C).

        Returns
        -------
        inflow : float
            F = ∫ σ·n over those surfaces: heat flow into the model [W/m].
        energy : float
            Q = ∫ λ⁻¹|σ|² + Σ_R R ∫ (σ·n)² [W²/m² · m²·K/W = W·K/m].
        """
        fs = self.space
        y = fs.sign * flux[fs.opposite]                                   # (T, 3)
        inside = float(np.einsum("tm,tmn,tn->", y, fs.mass, y / self.conductivity[:, None]))
        robin = self.kind == 2
        outline = float(np.sum(self.edge_resistance[robin] * flux[robin] ** 2
                               / fs.length[robin]))
        on = np.isin(fs.surface, list(members_surfaces)) & (self.kind >= 2)
        return float(flux[on].sum()), inside + outline

    def gap(self, flux: np.ndarray, theta: np.ndarray, surface_temperatures) -> np.ndarray:
        """Per triangle, its share of 2J(u_h) − (2F − Q) [W·K/m]:
        ∫_K λ⁻¹|λ∇u_h − σ|² plus, on its resistance edges, R ∫_E (h(θ_j − u_h) − σ·n)²
        (see :mod:`bridgecalc.study.bounds`)."""
        fs, mesh = self.space, self.space.mesh
        tri, lam = mesh.triangles, self.conductivity
        grad = p1_gradients(mesh.nodes, tri, theta)
        y = fs.sign * flux[fs.opposite]
        p = mesh.nodes[tri]
        centroid = p.mean(axis=1)
        sigma_sq = np.einsum("tm,tmn,tn->t", y, fs.mass, y) / lam
        # ∫_K σ·∇u_h = Σ_m Y_m ∫_K ψ_m · ∇u_h, ∫_K ψ_m = (centroid − p_m)/2
        cross = 0.5 * np.einsum("tm,tmd,td->t", y, centroid[:, None, :] - p, grad)
        grad_sq = lam * fs.area * (grad ** 2).sum(axis=1)
        eta = np.maximum(sigma_sq - 2 * cross + grad_sq, 0.0)
        robin = np.flatnonzero(self.kind == 2)
        if len(robin):
            r = self.edge_resistance[robin]
            L = fs.length[robin]
            g = np.asarray(surface_temperatures, float)[fs.surface[robin]]
            ua, ub = theta[fs.edges[robin, 0]], theta[fs.edges[robin, 1]]
            s = flux[robin] / L
            # t(ξ) = h(g − u(ξ)), linear; ∫_E (s − t)² by Simpson (exact for quadratics)
            ta, tb = (g - ua) / r, (g - ub) / r
            tm = 0.5 * (ta + tb)
            val = r * L / 6 * ((s - ta) ** 2 + 4 * (s - tm) ** 2 + (s - tb) ** 2)
            owner = np.zeros(len(fs.edges), dtype=np.int64)
            owner[fs.opposite.ravel()] = np.repeat(np.arange(len(tri)), 3)
            eta += np.bincount(owner[robin], val, minlength=len(tri))
        return eta


def _owners(fs: FluxSpace):
    """The one or two triangles of each edge (-1 where none), and the sign of
    the edge's reference normal seen from each (+1 outward)."""
    n_edges = len(fs.edges)
    tris = np.repeat(np.arange(len(fs.opposite)), 3)
    e = fs.opposite.ravel()
    s = fs.sign.ravel()
    owner = np.full((n_edges, 2), -1, dtype=np.int64)
    own_sign = np.zeros((n_edges, 2))
    order = np.argsort(e, kind="stable")
    e_sorted = e[order]
    first = np.ones(len(e), dtype=bool)
    first[1:] = e_sorted[1:] != e_sorted[:-1]
    owner[e_sorted[first], 0] = tris[order][first]
    own_sign[e_sorted[first], 0] = s[order][first]
    owner[e_sorted[~first], 1] = tris[order][~first]
    own_sign[e_sorted[~first], 1] = s[order][~first]
    return owner, own_sign
