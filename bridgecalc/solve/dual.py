"""The complementary problem in a stream function: lower bounds of the
environments' heat flows from quadratic elements.

Why a stream function
---------------------
The lower bound of a coupling coefficient needs a heat flux σ that is exactly
divergence-free in the section, has no normal component on the adiabatic
outline, and is free on the surfaces (Prager–Synge; the inequality is in
:mod:`bridgecalc.study.bounds`). In the plane every divergence-free field is
the rotation of a scalar, σ = rot s = (∂s/∂y, −∂s/∂x), and σ is continuous in
its normal component across every edge exactly when s is continuous. So any
continuous piecewise polynomial s gives an admissible flux, and the best one
in a finite element space is found by one symmetric positive definite solve:
the complementary (dual) energy principle written for s, the form in which
it is usually stated for plane problems (Fraeijs de Veubeke, "Displacement
and equilibrium models in the finite element method", in *Stress Analysis*,
Wiley 1965; Debongnie, Zhong & Beckers, *Comput. Methods Appl. Mech. Engrg.*
122, 1995, 183–192, for the bounds in potential problems; from memory).

Along the outline, traversed with the section on its left (counter-clockwise
outside, clockwise around holes), σ·n = ∂s/∂t with n the outward normal:

* on an adiabatic piece σ·n = 0, i.e. s is constant along it: all its
  degrees of freedom are tied to one unknown (one per connected adiabatic
  piece; the constant itself is free);
* on a surface j, σ·n is the heat flow into the model per metre [W/m²], and
  its integral over the surface is the jump of s between the surface's ends.

With environments c at 1 °C and the others at 0 °C (g_j = 1 on the surfaces
of c), the complementary functional of :mod:`bridgecalc.study.bounds`,

    2 F(σ) − Q(σ) = 2 Σ_j g_j ∫_Γj ∂s/∂t dΓ − ∫ λ⁻¹|∇s|² dΩ − Σ_R R_j ∫_Γj (∂s/∂t)² dΓ,

is a lower bound of the cut energy E_c for every admissible s; it is a
concave quadratic in s, maximised by A s = w with A = ∫ λ⁻¹ ∇s·∇v +
Σ R_j ∫ ∂s/∂t ∂v/∂t (the surface-resistance term is a 1D stiffness along the
surface) and w_v = Σ g_j ∫_Γj ∂v/∂t. The bound is evaluated from the computed
s itself, 2 wᵀs − sᵀA s, so it holds whatever the solver's accuracy (an
inexact s only gives a lower lower bound). A held surface (R = 0) has no
quadratic term.

With quadratic s (P2) on the same mesh as the quadratic Galerkin field of the
upper bound, the gap between the two bounds falls like h⁴ where the field is
smooth (the squared energy error of P2), much faster than the error of the
linear (P1) fields the study refines: measured on the shipped junctions, the
interval at the default tolerance is 0.12 to 2.3 times the true error of the
study's Richardson-extrapolated L2D (docs/performance.md).

A hole of the section whose boundary is (partly) a surface may pass a net
heat flow, around which s would not be single-valued; :func:`holes_with_surfaces`
says so and the study then uses the vertex-patch equilibration
(:mod:`bridgecalc.solve.equilibration`) instead.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from ..mesh import Mesh
from ..model.types import holds_temperature
from .assembly import conduction
from .linsolve import solve_spd

#: 1D stiffness of a quadratic element on an edge of unit length, dofs in the
#: order (start, end, midpoint): ∫ φ_a' φ_b' dt × L.
EDGE_STIFFNESS = np.array([[7.0, 1.0, -8.0], [1.0, 7.0, -8.0], [-8.0, -8.0, 16.0]]) / 3.0


def outline_triangles(mesh: Mesh) -> tuple[np.ndarray, np.ndarray]:
    """The triangle of each outline edge (in ``mesh.boundary_edges`` order) and
    that triangle's third node [-]."""
    tri = mesh.triangles
    n = np.int64(mesh.node_count)
    a = tri.ravel().astype(np.int64)
    b = np.roll(tri, -1, axis=1).ravel().astype(np.int64)
    third = np.roll(tri, -2, axis=1).ravel()
    keys = np.minimum(a, b) * n + np.maximum(a, b)
    order = np.argsort(keys, kind="stable")
    edges = mesh.boundary_edges.astype(np.int64)
    wanted = edges.min(axis=1) * n + edges.max(axis=1)
    pos = order[np.minimum(np.searchsorted(keys[order], wanted), len(order) - 1)]
    return pos // 3, third[pos]


def oriented_outline(mesh: Mesh, third=None) -> np.ndarray:
    """Every outline edge (in ``mesh.boundary_edges`` order) as (start, end)
    with the section on its left [-]: the third node of the edge's triangle
    lies to the left of start → end (whichever way the triangle is listed).
    ``third``: those nodes, when :func:`outline_triangles` gave them already."""
    if third is None:
        _, third = outline_triangles(mesh)
    edges = mesh.boundary_edges
    p, q, r = (mesh.nodes[x] for x in (edges[:, 0], edges[:, 1], third))
    left = (q[:, 0] - p[:, 0]) * (r[:, 1] - p[:, 1]) - (q[:, 1] - p[:, 1]) * (r[:, 0] - p[:, 0])
    return np.where((left > 0)[:, None], edges, edges[:, ::-1])


def edge_resistances(mesh: Mesh, resistances) -> np.ndarray:
    """R of each outline edge (``mesh.boundary_edges`` order) [m²·K/W]: ∞ where
    adiabatic (no surface, or R None or ∞), 0 where held (R ≤ 1e-9)."""
    r = np.array([np.inf if x is None else 0.0 if holds_temperature(float(x)) else float(x)
                  for x in resistances] + [np.inf])
    return r[mesh.boundary_surface]          # index -1 (no surface) takes the last: ∞


def holes_with_surfaces(mesh: Mesh, adiabatic_edge: np.ndarray) -> int:
    """How many holes of the section have a non-adiabatic edge on their
    boundary, or -1 when the outline's loops cannot be told apart [-].

    The number of holes is components − (V − E + T) (Euler's formula for a
    triangulated plane region); each hole is a loop of outline edges whose
    signed area, traversed with the section on its left, is negative.
    """
    tri = mesh.triangles
    n = mesh.node_count
    pairs = np.sort(np.concatenate([tri[:, [0, 1]], tri[:, [1, 2]], tri[:, [2, 0]]]), axis=1)
    n_edges = len(np.unique(pairs[:, 0].astype(np.int64) * n + pairs[:, 1]))
    graph = sp.coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])), shape=(n, n))
    n_parts, _ = connected_components(graph, directed=False)
    holes = n_parts - (n - n_edges + len(tri))
    if holes <= 0:
        return 0
    edges = oriented_outline(mesh)
    outline = sp.coo_matrix((np.ones(len(edges)), (edges[:, 0], edges[:, 1])), shape=(n, n))
    n_loops, loop_of_node = connected_components(outline, directed=False)
    loop = loop_of_node[edges[:, 0]]
    p, q = mesh.nodes[edges[:, 0]], mesh.nodes[edges[:, 1]]
    area = np.bincount(loop, 0.5 * (p[:, 0] * q[:, 1] - q[:, 0] * p[:, 1]), minlength=n_loops)
    negative = area < 0
    if int(negative.sum()) != holes:
        return -1
    live = np.bincount(loop, ~adiabatic_edge, minlength=n_loops) > 0
    return int((negative & live).sum())


class ComplementaryProblem:
    """The stream-function problem of one quadratic mesh and resistance set.

    Parameters
    ----------
    problem : ConductionProblem
        Quadratic (P2); its basis, conductivities and outline are used.
    resistances : sequence of float or None
        R_j per surface [m²·K/W]; 0 held; None or ∞ adiabatic.

    Attributes
    ----------
    matrix : csr_matrix
        A on the reduced unknowns (tied and gauged) [m·K/W].

    A hole with a surface on its boundary makes s many-valued: the caller
    checks :func:`holes_with_surfaces` first.
    """

    def __init__(self, problem, resistances):
        if problem.element != "P2":
            raise ValueError("the stream-function bounds use quadratic (P2) elements")
        mesh = problem.mesh
        basis = problem.basis
        self.problem = problem
        self.n = n = basis.N
        self.r_edge = edge_resistances(mesh, resistances)
        adiabatic = ~np.isfinite(self.r_edge)
        self.edge_triangle, third = outline_triangles(mesh)
        edges = oriented_outline(mesh, third)
        self.edge_dofs = np.column_stack([edges, problem.edge_midpoint_dofs])
        self.length = np.linalg.norm(mesh.nodes[edges[:, 1]] - mesh.nodes[edges[:, 0]], axis=1)
        nq = basis.X.shape[1]
        inverse = np.repeat((1.0 / problem.conductivity)[:, None], nq, axis=1)
        full = conduction.assemble(basis, conductivity=inverse).tocsr()
        exchange = np.isfinite(self.r_edge) & (self.r_edge > 0)
        d = self.edge_dofs[exchange]
        coef = self.r_edge[exchange] / self.length[exchange]
        blocks = coef[:, None, None] * EDGE_STIFFNESS
        rows, cols = np.repeat(d, 3, axis=1).ravel(), np.tile(d, (1, 3)).ravel()
        full = (full + sp.csr_matrix((blocks.ravel(), (rows, cols)), shape=(n, n))).tocsr()
        self.full = full
        self.tie = self._tie_matrix(adiabatic)
        reduced = (self.tie.T @ full @ self.tie).tocsr()
        self.free = self._gauge(reduced)
        self.matrix = reduced[self.free][:, self.free].tocsr()

    def _tie_matrix(self, adiabatic) -> sp.csr_matrix:
        """(n, m) map from the reduced unknowns: every degree of freedom of a
        connected adiabatic piece of the outline shares one unknown."""
        n = self.n
        d = self.edge_dofs[adiabatic]
        rep = np.arange(n)
        if len(d):
            rows, cols = np.r_[d[:, 0], d[:, 0]], np.r_[d[:, 1], d[:, 2]]
            links = sp.coo_matrix((np.ones(2 * len(d)), (rows, cols)), shape=(n, n))
            _, label = connected_components(links, directed=False)
            on = np.unique(d)
            first = np.full(label.max() + 1, n, dtype=np.int64)
            np.minimum.at(first, label[on], on)
            rep[on] = first[label[on]]
        _, column = np.unique(rep, return_inverse=True)
        return sp.csr_matrix((np.ones(n), (np.arange(n), column)), shape=(n, column.max() + 1))

    @staticmethod
    def _gauge(reduced) -> np.ndarray:
        """Reduced unknowns kept: all but the first of each connected part
        (s is defined up to a constant per part)."""
        _, label = connected_components(reduced, directed=False)
        keep = np.ones(reduced.shape[0], dtype=bool)
        _, first = np.unique(label, return_index=True)
        keep[first] = False
        return np.flatnonzero(keep)

    def boundary_work(self, g) -> np.ndarray:
        """w with w·s = Σ_j g_j ∫_Γj ∂s/∂t dΓ [-], per surface temperature g_j
        (edges' end minus start; midpoints do not enter)."""
        surface = self.problem.mesh.boundary_surface
        live = (surface >= 0) & np.isfinite(self.r_edge)
        weight = np.where(live, np.asarray(g, float)[np.maximum(surface, 0)], 0.0)
        w = np.bincount(self.edge_dofs[:, 1], weight, minlength=self.n)
        return w - np.bincount(self.edge_dofs[:, 0], weight, minlength=self.n)

    def lower_bounds(self, g_rows) -> tuple[np.ndarray, np.ndarray]:
        """The lower bounds 2 wᵀs − sᵀA s of the cut energies and the fields s.

        Parameters
        ----------
        g_rows : array_like, shape (k, n_surfaces)
            Per case, 1 on the surfaces of the environments at 1 °C, 0 else.

        Returns
        -------
        ndarray, shape (k,)
            Lower bounds [W/(m·K)].
        ndarray, shape (n, k)
            The stream functions [W/m].
        """
        g_rows = np.atleast_2d(np.asarray(g_rows, float))
        w = np.column_stack([self.boundary_work(g) for g in g_rows])
        rhs = (self.tie.T @ w)[self.free]
        reduced = np.zeros((self.tie.shape[1], len(g_rows)))
        if len(self.free):
            solution = solve_spd(self.matrix, rhs)
            reduced[self.free] = solution.reshape(len(self.free), -1)
        s = self.tie @ reduced
        values = 2.0 * np.einsum("ik,ik->k", w, s) - np.einsum("ik,ik->k", s, self.full @ s)
        return values, s

    def gap_shares(self, u, s, g) -> np.ndarray:
        """Each triangle's share of 2 J(u) − (2F − Q) [W/(m·K)]: the
        hypercircle identity's ∫_K λ⁻¹|λ∇u − rot s|² plus, on its surface
        edges with R > 0, R ∫ (h (g − u) − ∂s/∂t)² (3-point Gauss).

        Parameters
        ----------
        u : ndarray, shape (n,)
            The quadratic Galerkin field of the same case [-].
        s : ndarray, shape (n,)
            Its stream function from :meth:`lower_bounds`.
        g : ndarray, shape (n_surfaces,)
        """
        problem = self.problem
        basis = problem.basis
        lam = problem.conductivity[:, None]
        du = basis.interpolate(u).grad
        ds = basis.interpolate(s).grad
        fx = lam * du[0] - ds[1]
        fy = lam * du[1] + ds[0]
        shares = ((fx * fx + fy * fy) / lam * basis.dx).sum(axis=1)
        exchange = np.flatnonzero(np.isfinite(self.r_edge) & (self.r_edge > 0))
        if len(exchange):
            d = self.edge_dofs[exchange]
            r, length = self.r_edge[exchange], self.length[exchange]
            gj = np.asarray(g, float)[problem.mesh.boundary_surface[exchange]]
            points = np.array([0.5 - np.sqrt(0.15), 0.5, 0.5 + np.sqrt(0.15)])
            weights = np.array([5.0, 8.0, 5.0]) / 18.0
            phi = np.stack([(1 - points) * (1 - 2 * points), points * (2 * points - 1),
                            4 * points * (1 - points)], axis=1)             # (3 points, 3)
            dphi = np.stack([4 * points - 3, 4 * points - 1, 4 - 8 * points], axis=1)
            u_q = u[d] @ phi.T                                          # (edges, points)
            dsdt = (s[d] @ dphi.T) / length[:, None]
            residual = (gj[:, None] - u_q) / r[:, None] - dsdt
            edge_gap = r * length * (residual ** 2 @ weights)
            shares += np.bincount(self.edge_triangle[exchange], edge_gap,
                                  minlength=len(shares))
        return shares
