"""The Galerkin system's pieces on one mesh: conduction, surface and source terms.

Weak form of −∇·(λ∇θ) = q on the section Ω, with, on each surface Γj facing
an environment at θj through a surface resistance Rj, the flux condition
−λ∂θ/∂n = hj(θ − θj), hj = 1/Rj (ISO 10211:2017, 7.2 and Annex A); θ = θj
held where Rj = 0; adiabatic elsewhere (cut-off and symmetry planes). Find θ
with, for every test function v,

    ∫Ω λ ∇θ·∇v dΩ + Σj hj ∫Γj θ v dΓ = ∫Ω q v dΩ + Σj hj θj ∫Γj v dΓ.

This module assembles the three kinds of term once per mesh: the conduction
matrix ∫λ∇u·∇v, per surface the boundary mass ∫Γj u v and load ∫Γj v, and the
source load ∫q v. Linear (P1) triangles are assembled directly with NumPy from
the closed-form element matrices (constant gradients: K_e = λ (b bᵀ + c cᵀ)/(4A);
edge mass L/6 [[2, 1], [1, 2]]; Zienkiewicz & Taylor, *The Finite Element
Method*, vol. 1, ch. 4 and 6, any edition), an order of magnitude faster than
the generic quadrature path; quadratic (P2) triangles use scikit-fem. Both
give the same matrices to round-off (a test compares them).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from skfem import (Basis, BilinearForm, ElementTriP1, ElementTriP2, FacetBasis,
                   LinearForm)
from skfem.helpers import dot, grad

from ..errors import ModelError
from ..mesh import Mesh

ELEMENTS = {"P1": ElementTriP1, "P2": ElementTriP2}


@BilinearForm
def conduction(u, v, w):
    """λ ∇u·∇v [W/(m·K) per m²]."""
    return w.conductivity * dot(grad(u), grad(v))


@BilinearForm
def surface_mass(u, v, _):
    """u v on a boundary: multiplied by h it is the surface exchange term."""
    return u * v


@LinearForm
def surface_load(v, _):
    """v on a boundary: multiplied by h θj it is the environment's load."""
    return v


@LinearForm
def source_load(v, w):
    """q v [W/m³]."""
    return w.source * v


def p1_stiffness_matrix(nodes, triangles, conductivity) -> sp.csr_matrix:
    """Assembled conduction matrix of linear triangles [W/(m·K)].

    Element matrices K_e = λ (b bᵀ + c cᵀ) / (4A), with b_i = y_j − y_k,
    c_i = x_k − x_j over the cyclic vertex triples (i, j, k) and A the
    triangle's area (Zienkiewicz & Taylor, vol. 1, linear triangle for the
    Laplace equation). Only the three distinct off-diagonal entries and the
    diagonal of each symmetric K_e are formed; the diagonals are summed per
    node before the sparse matrix is built, so it receives 6 T + N entries
    instead of 9 T.

    Parameters
    ----------
    nodes : ndarray, shape (N, 2)
        [m]
    triangles : ndarray of int, shape (T, 3)
        Counter-clockwise.
    conductivity : ndarray, shape (T,)
        λ [W/(m·K)].

    Returns
    -------
    csr_matrix, shape (N, N)
        Canonical (sorted indices, no duplicates); every mesh edge is stored,
        also where its entry is zero.
    """
    n, m = len(nodes), len(triangles)
    index = np.int32 if 6 * m + n < 2 ** 31 - 1 else np.int64
    t = np.ascontiguousarray(np.transpose(triangles), dtype=index)   # (3, T): contiguous rows
    x, y = nodes[:, 0][t], nodes[:, 1][t]
    b = (y[1] - y[2], y[2] - y[0], y[0] - y[1])
    c = (x[2] - x[1], x[0] - x[2], x[1] - x[0])
    twice_area = (x[1] - x[0]) * (y[2] - y[0]) - (x[2] - x[0]) * (y[1] - y[0])
    scale = np.asarray(conductivity, dtype=float) / (2.0 * twice_area)
    values = np.empty(6 * m + n)
    rows = np.empty(6 * m + n, dtype=index)
    cols = np.empty(6 * m + n, dtype=index)
    for k, (i, j) in enumerate(((0, 1), (1, 2), (2, 0))):        # K_ij = K_ji
        upper, lower = slice(k * m, (k + 1) * m), slice((k + 3) * m, (k + 4) * m)
        values[upper] = values[lower] = scale * (b[i] * b[j] + c[i] * c[j])
        rows[upper], cols[upper] = t[i], t[j]
        rows[lower], cols[lower] = t[j], t[i]
    diagonal = np.empty((3, m))
    for i in range(3):
        diagonal[i] = scale * (b[i] * b[i] + c[i] * c[i])
    values[6 * m:] = np.bincount(t.ravel(), diagonal.ravel(), minlength=n)
    rows[6 * m:] = cols[6 * m:] = np.arange(n, dtype=index)
    return sp.coo_matrix((values, (rows, cols)), shape=(n, n)).tocsr()   # sums duplicates


def p1_gradients(nodes, triangles, values) -> np.ndarray:
    """Constant gradient of a P1 field on each triangle [unit of values per m].

    Returns
    -------
    ndarray, shape (T, 2)
    """
    p = nodes[triangles]
    x, y = p[:, :, 0], p[:, :, 1]
    b = np.stack([y[:, 1] - y[:, 2], y[:, 2] - y[:, 0], y[:, 0] - y[:, 1]], axis=1)
    c = np.stack([x[:, 2] - x[:, 1], x[:, 0] - x[:, 2], x[:, 1] - x[:, 0]], axis=1)
    twice_area = (x[:, 1] - x[:, 0]) * (y[:, 2] - y[:, 0]) - (x[:, 2] - x[:, 0]) * (y[:, 1] - y[:, 0])
    u = values[triangles]
    return np.stack([(b * u).sum(axis=1), (c * u).sum(axis=1)], axis=1) / twice_area[:, None]


@dataclass
class Operators:
    """The assembled terms of one mesh, shared by every calculation case.

    Attributes
    ----------
    n_dofs : int
        Degrees of freedom.
    stiffness : csr_matrix, shape (n, n)
        ∫λ∇u·∇v [W/(m·K)], canonical (sorted indices, no duplicates).
    source : ndarray, shape (n,)
        ∫q v [W/m].
    surface_mass : list of csr_matrix
        ∫Γj u v per surface j [m].
    surface_load : list of ndarray
        ∫Γj v per surface j [m].
    surface_dofs : list of ndarray of int
        Degrees of freedom on each surface.
    edge_midpoint_dofs : ndarray of int or None
        P2: the midpoint degree of freedom of each outline edge.
    basis : skfem Basis or None
        Built for P2 (and for the generic P1 path).
    """

    n_dofs: int
    stiffness: sp.csr_matrix
    source: np.ndarray
    surface_mass: list
    surface_load: list
    surface_dofs: list
    edge_midpoint_dofs: np.ndarray | None = None
    basis: object = None


def assemble(mesh: Mesh, conductivity, source, n_surfaces: int, element: str = "P1",
             generic: bool = False) -> Operators:
    """Assemble every term of the weak form on ``mesh``.

    Parameters
    ----------
    mesh : Mesh
    conductivity, source : ndarray, shape (T,)
        λ [W/(m·K)] and q [W/m³] per triangle.
    n_surfaces : int
        Number of surfaces the boundary tags refer to.
    element : str
        ``"P1"`` or ``"P2"``.
    generic : bool
        Assemble P1 through scikit-fem's quadrature too (the P2 path): the
        same matrices, slower; for comparisons and benchmarks.
    """
    if element not in ELEMENTS:
        raise ModelError(f"element must be one of {', '.join(ELEMENTS)}, got {element!r}")
    if element == "P1" and not generic:
        ops = _assemble_p1(mesh, conductivity, source, n_surfaces)
    else:
        ops = _assemble_skfem(mesh, conductivity, source, n_surfaces, element)
    ops.stiffness.sum_duplicates()
    return ops


def triangle_areas(nodes, triangles) -> np.ndarray:
    """Area of each triangle [m²]."""
    p = nodes[triangles]
    return 0.5 * np.abs((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                        - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))


def _assemble_p1(mesh: Mesh, conductivity, source, n_surfaces: int) -> Operators:
    n = mesh.node_count
    stiffness = p1_stiffness_matrix(mesh.nodes, mesh.triangles, conductivity)
    if np.any(source != 0):
        # ∫ q φ_i dA = q A / 3 on a linear triangle
        area = triangle_areas(mesh.nodes, mesh.triangles)
        source_vector = np.bincount(mesh.triangles.ravel(), np.repeat(source * area / 3.0, 3),
                                    minlength=n)
    else:
        source_vector = np.zeros(n)
    edges = mesh.boundary_edges
    length = np.linalg.norm(mesh.nodes[edges[:, 1]] - mesh.nodes[edges[:, 0]], axis=1)
    masses, loads, dofs = [], [], []
    for j in range(n_surfaces):
        mask = mesh.boundary_surface == j
        e, L = edges[mask], length[mask]
        local = (L / 6.0)[:, None, None] * np.array([[2.0, 1.0], [1.0, 2.0]])
        rows = np.repeat(e, 2, axis=1).ravel()
        cols = np.tile(e, (1, 2)).ravel()
        masses.append(sp.csr_matrix((local.ravel(), (rows, cols)), shape=(n, n)))
        loads.append(np.bincount(e.ravel(), np.repeat(L / 2.0, 2), minlength=n))
        dofs.append(np.unique(e))
    return Operators(n, stiffness, source_vector, masses, loads, dofs)


def _assemble_skfem(mesh: Mesh, conductivity, source, n_surfaces: int,
                    element: str) -> Operators:
    skmesh = mesh.skfem
    basis = Basis(skmesh, ELEMENTS[element]())
    nqp = basis.X.shape[1]
    stiffness = conduction.assemble(
        basis, conductivity=np.repeat(np.asarray(conductivity, float)[:, None], nqp,
                                      axis=1)).tocsr()
    if np.any(source != 0):
        source_vector = source_load.assemble(basis, source=np.repeat(source[:, None], nqp,
                                                                     axis=1))
    else:
        source_vector = np.zeros(basis.N)
    facet_index = outline_facets(mesh)
    midpoints = basis.facet_dofs[0, facet_index] if element == "P2" else None
    masses, loads, dofs = [], [], []
    for j in range(n_surfaces):
        facets = facet_index[mesh.boundary_surface == j]
        if len(facets) == 0:
            masses.append(sp.csr_matrix((basis.N, basis.N)))
            loads.append(np.zeros(basis.N))
            dofs.append(np.zeros(0, dtype=np.int64))
            continue
        fb = FacetBasis(skmesh, basis.elem, facets=facets)
        masses.append(surface_mass.assemble(fb).tocsr())
        loads.append(surface_load.assemble(fb))
        dofs.append(np.unique(basis.get_dofs(facets=facets).flatten()))
    return Operators(basis.N, stiffness, source_vector, masses, loads, dofs, midpoints, basis)


def outline_facets(mesh: Mesh) -> np.ndarray:
    """scikit-fem facet index of every outline edge of the mesh."""
    skmesh = mesh.skfem
    n = skmesh.p.shape[1]
    facets = np.sort(skmesh.facets, axis=0)
    keys = facets[0].astype(np.int64) * n + facets[1]
    order = np.argsort(keys)
    edges = np.sort(mesh.boundary_edges, axis=1)
    wanted = edges[:, 0].astype(np.int64) * n + edges[:, 1]
    pos = np.searchsorted(keys[order], wanted)
    found = order[np.minimum(pos, len(order) - 1)]
    if len(wanted) and not np.array_equal(keys[found], wanted):
        raise RuntimeError("outline edge not found among mesh facets")
    return found
