"""Where the error is: residual error indicators and the marking that
drives adaptive refinement.

The residual estimator for P1 elements in the energy norm, with edge
weights robust for jumping conductivity (Verfürth 2013, §1.4 and §4.5;
Bernardi & Verfürth, Numer. Math. 85, 2000, 579–608; from memory of the
weighting): per triangle K,

    η_K² = h_K²/λ_K ‖q‖²_K + ½ Σ_{E interior} h_E/λ_E ‖[λ ∂θ/∂n]‖²_E
           + Σ_{E on a resistance or adiabatic surface} h_E/λ_K ‖h(θj − θ) − λ ∂θ/∂n‖²_E,

λ_E the larger conductivity next to the edge. Without sources, a coupling
coefficient is the energy of a unit solution (a compliance output), so the
error of its discrete value equals the squared energy-norm error: the
estimator aims straight at the boundary heat flows, and hence at L_ij and Ψ.
"""

from __future__ import annotations

import numpy as np

from ..mesh.refinement import edge_table
from ..solve.assembly import p1_gradients
from ..model.types import holds_temperature


#: Dörfler bulk parameter: mark the fewest triangles holding this share of η² [-].
BULK = 0.5
#: Least share of triangles marked per step, so the node count grows
#: geometrically (about 1.5–2× per step) and the sequence suits extrapolation [-].
MIN_MARKED = 0.2
#: Relative slack when comparing indicators, so round-off ties mark alike [-].
TIE_SLACK = 1e-9


def energy_error_indicators(problem, field, conditions) -> np.ndarray:
    """Residual error indicators η_K² per triangle [W²/m² per K·W/(m·K)... = W·K/m].

    η_K² has the units of λ|∇θ|² times area, i.e. [W·K/m]; divided by
    (θi − θe)² it estimates the error of L2D [W/(m·K)] up to a constant of
    order one. See the module docstring for the formula and sources.

    Parameters
    ----------
    problem : bridgecalc.solve.ConductionProblem
        A P1 problem.
    field : bridgecalc.solve.TemperatureField
    conditions : sequence of Condition or None
        Those the field was solved with.

    Returns
    -------
    ndarray, shape (T,)
    """
    if problem.element != "P1":
        raise ValueError("the residual estimator is implemented for P1 elements")
    mesh = problem.mesh
    nodes, tri = mesh.nodes, mesh.triangles
    theta = field.temperature
    lam = problem.conductivity
    flux = -lam[:, None] * p1_gradients(nodes, tri, theta)         # q = −λ∇θ [W/m²]
    edges, t2e = edge_table(tri)
    n_edges = len(edges)
    length = np.hypot(*(nodes[edges[:, 1]] - nodes[edges[:, 0]]).T)
    normal = np.stack([nodes[edges[:, 1], 1] - nodes[edges[:, 0], 1],
                       nodes[edges[:, 0], 0] - nodes[edges[:, 1], 0]], axis=1) / length[:, None]
    # each triangle's flux through each edge along the edge's fixed normal
    owners = np.repeat(np.arange(len(tri)), 3)
    e_of = t2e.ravel()
    through = (flux[owners] * normal[e_of]).sum(axis=1)
    count = np.bincount(e_of, minlength=n_edges)
    # sign the second neighbour negative: jump = q1·n − q2·n
    order = np.argsort(e_of, kind="stable")
    first_seen = np.zeros(len(e_of), dtype=bool)
    starts = np.searchsorted(e_of[order], np.arange(n_edges))
    first_seen[order[starts[count > 0]]] = True
    sign = np.where(first_seen, 1.0, -1.0)
    jump = np.bincount(e_of, sign * through, minlength=n_edges)
    lam_edge = np.zeros(n_edges)
    np.maximum.at(lam_edge, e_of, lam[owners])
    interior = count == 2
    eta_edge = np.where(interior, length * length * jump * jump / lam_edge, 0.0)

    # outline edges: flux condition residual (linear along the edge)
    b = np.sort(mesh.boundary_edges, axis=1)
    n = int(tri.max()) + 1
    ekey = edges[:, 0].astype(np.int64) * n + edges[:, 1]
    bpos = np.searchsorted(ekey, b[:, 0].astype(np.int64) * n + b[:, 1])
    owner_of_edge = np.zeros(n_edges, dtype=np.int64)
    owner_of_edge[e_of[first_seen]] = owners[first_seen]
    k = owner_of_edge[bpos]
    centroid = nodes[tri[k]].mean(axis=1)
    mid = 0.5 * (nodes[b[:, 0]] + nodes[b[:, 1]])
    outward = normal[bpos] * np.sign(((mid - centroid) * normal[bpos]).sum(axis=1))[:, None]
    q_out = (flux[k] * outward).sum(axis=1)                      # conducted out of the solid
    ra = -q_out.copy()
    rb = -q_out.copy()
    boundary_eta = np.zeros(len(b))
    held = np.zeros(len(b), dtype=bool)
    for j, cond in enumerate(conditions):
        on = mesh.boundary_surface == j
        if cond is None:
            continue
        if not holds_temperature(cond.resistance):
            h = 1.0 / cond.resistance
            # −λ∂θ/∂n = q·n should equal h(θ − θj): residual h(θj − θ) + q·n... signed
            ra[on] = h * (theta[b[on, 0]] - cond.temperature) - q_out[on]
            rb[on] = h * (theta[b[on, 1]] - cond.temperature) - q_out[on]
        else:
            held[on] = True
    L = length[bpos]
    boundary_eta = np.where(held, 0.0,
                            L * L / 3.0 * (ra * ra + ra * rb + rb * rb) / lam[k])
    eta = 0.5 * np.bincount(owners, eta_edge[e_of], minlength=len(tri))
    eta += np.bincount(k, boundary_eta, minlength=len(tri))
    if np.any(problem.source != 0):
        p = nodes[tri]
        area = 0.5 * np.abs((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                            - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))
        eta += 2.0 * area * problem.source ** 2 * area / lam         # h_K² ≈ 2A
    return eta


def mark(indicators: np.ndarray, bulk: float = BULK, least: float = MIN_MARKED) -> np.ndarray:
    """Dörfler marking: the fewest triangles whose indicators sum to ``bulk``
    of the total (Dörfler, SIAM J. Numer. Anal. 33, 1996, 1106–1124), and at
    least the share ``least`` of all triangles (the largest indicators).

    Indicators within :data:`TIE_SLACK` of the threshold are all marked, so
    round-off never decides between equal triangles (deterministic meshes).
    """
    eta = np.asarray(indicators, dtype=float)
    total = float(eta.sum())
    if total <= 0:
        return np.zeros(len(eta), dtype=bool)
    order = np.argsort(-eta, kind="stable")
    cumulative = np.cumsum(eta[order])
    last = max(int(np.searchsorted(cumulative, bulk * total)), int(least * len(eta)))
    threshold = eta[order[min(last, len(eta) - 1)]]
    return eta >= threshold * (1.0 - TIE_SLACK)
