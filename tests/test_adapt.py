"""Refinement keeps the geometry and the tags exact; the residual estimator
vanishes where the P1 solution is exact; adaptivity beats uniform refinement.

References: exact areas and lengths of the model's own polygons (geometry);
the 1D plane-layer solution of ISO 6946:2017, 6.7.1, which is linear in each
layer and so reproduced exactly by P1 elements; Galerkin orthogonality
(nested conforming meshes give a monotonically decreasing energy and hence
L2D; a textbook property, e.g. Braess, *Finite Elements*, ch. II).
"""

import numpy as np
import pytest


from bridgecalc.validation import cases as validation
from bridgecalc.mesh import refinement
from bridgecalc.study import indicators
from bridgecalc.mesh import build_mesh
from bridgecalc.api import load, run
from bridgecalc.solve.cases import conditions as _conditions
from conftest import solve_level

from conftest import triangle_angles


@pytest.fixture(scope="module")
def case2():
    model = validation.case2_model()
    return model, build_mesh(model)


def areas(mesh):
    p = mesh.nodes[mesh.triangles]
    return 0.5 * ((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                  - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))


def tag_lengths(mesh):
    e = mesh.boundary_edges
    length = np.linalg.norm(mesh.nodes[e[:, 1]] - mesh.nodes[e[:, 0]], axis=1)
    return np.bincount(mesh.boundary_surface + 1, length)


def check_conforming(mesh):
    edges, t2e = refinement.edge_table(mesh.triangles)
    count = np.bincount(t2e.ravel(), minlength=len(edges))
    assert count.max() == 2                       # no hanging nodes, no overlaps
    outline = {tuple(e) for e in edges[count == 1]}
    assert outline == {tuple(sorted(e)) for e in mesh.boundary_edges}


@pytest.mark.parametrize("kind", ["uniform", "adaptive"])
def test_refinement_keeps_regions_and_surfaces_exact(case2, kind):
    model, mesh = case2
    fine = mesh
    rng = np.random.default_rng(0)
    for _ in range(3):
        marked = None if kind == "uniform" else rng.random(fine.triangle_count) < 0.1
        fine = refinement.refine(fine, marked)
    assert (areas(fine) > 0).all()                # counter-clockwise
    for r in range(len(model.regions)):
        assert areas(fine)[fine.region == r].sum() == pytest.approx(
            areas(mesh)[mesh.region == r].sum(), rel=1e-12)
    np.testing.assert_allclose(tag_lengths(fine), tag_lengths(mesh), rtol=1e-12)
    check_conforming(fine)
    if kind == "uniform":
        assert fine.triangle_count == 64 * mesh.triangle_count


def test_angles_stay_bounded(case2):
    """Longest-edge bisection keeps the smallest angle away from zero."""
    model, mesh = case2

    def min_angle(m):
        return triangle_angles(m.nodes, m.triangles).min()

    fine = mesh
    conditions = _conditions(model, False)
    for _ in range(5):
        _, problem, field, _ = solve_level(model, fine)
        fine = refinement.refine(fine, indicators.mark(indicators.energy_error_indicators(problem, field,
                                                                           conditions)))
    assert min_angle(fine) >= 0.4 * min_angle(mesh)


def test_estimator_vanishes_for_exact_layer_solution():
    """Plane layers: the P1 field is the exact 1D solution, so every residual
    (flux jumps at layer interfaces, surface conditions) is round-off."""
    model = validation.layers_model()
    mesh = build_mesh(model)
    conditions = _conditions(model, False)
    heat, problem, field, _ = solve_level(model, mesh)
    eta = indicators.energy_error_indicators(problem, field, conditions)
    scale = heat.coupling_coefficient * 25.0 ** 2          # L2D·ΔT², ΔT = 25 K
    assert eta.sum() <= 1e-16 * scale


def test_l2d_decreases_on_nested_meshes(case2):
    model, mesh = case2
    conditions = _conditions(model, False)
    values = []
    for _ in range(4):
        heat, problem, field, _ = solve_level(model, mesh)
        values.append(heat.coupling_coefficient)
        mesh = refinement.refine(mesh, indicators.mark(indicators.energy_error_indicators(problem, field,
                                                                           conditions)))
    assert all(b < a for a, b in zip(values, values[1:]))


def test_marking_takes_the_bulk_and_ties_alike():
    eta = np.array([4.0, 1.0, 1.0, 1.0, 1.0, 0.0, 0.0, 0.0, 0.0, 0.0])
    marked = indicators.mark(eta, bulk=0.5, least=0.0)
    assert marked.tolist() == [True] + [False] * 9
    marked = indicators.mark(eta, bulk=0.6, least=0.0)         # needs one of four equal ones: all
    assert marked.sum() == 5


def test_adaptive_needs_far_fewer_nodes_than_uniform(geometries):
    """Window jamb (frame next to insulation), from the study's default first
    mesh: the adaptive study reaches the default tolerance; uniform refinement
    from the same mesh needs more than twice the nodes, or does not reach it
    within the node budget at all."""
    model = load(geometries / "window_jamb.py")
    adaptive = run(model)
    uniform = run(model, refinement="uniform")
    assert adaptive.convergence.criterion_met
    assert (not uniform.convergence.criterion_met
            or uniform.mesh.node_count > 2 * adaptive.mesh.node_count)
    if uniform.convergence.criterion_met:
        # both within their own error estimates of each other
        gap = abs(adaptive.psi - uniform.psi)
        assert gap <= (adaptive.convergence.psi_error_estimate
                       + uniform.convergence.psi_error_estimate)