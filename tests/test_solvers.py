"""Linear solvers and the vectorised P1 assembly.

References outside this package: SciPy's general sparse LU (``spsolve``) for
the solutions, and scikit-fem's generic quadrature assembly (a
general-purpose finite element library from PyPI) for the matrices. The
optional fast paths (PARDISO, CHOLMOD, AMG, geometric multigrid) are tested
only where installed; the package must work without them (tested by
switching them off).
"""

import numpy as np
import pytest
import scipy.sparse.linalg as spla
from skfem import Basis, ElementTriP1, FacetBasis

from bridgecalc.validation import cases as validation
from bridgecalc.mesh import refinement
from bridgecalc.solve import linsolve
from bridgecalc.errors import ModelError
from bridgecalc.mesh import Mesh, build_mesh
from bridgecalc.api import run
from bridgecalc.solve.cases import conditions as _conditions, material_arrays
from bridgecalc.solve import ConductionProblem
from bridgecalc.solve.assembly import conduction, outline_facets, surface_load, surface_mass
from bridgecalc.solve.boundaries import floating_part

from conftest import thin_layer_models


@pytest.fixture(scope="module")
def case2_system():
    model = validation.case2_model()
    mesh = build_mesh(model)
    lam, q = material_arrays(model, mesh)
    problem = ConductionProblem(mesh, lam, len(model.surfaces), q)
    matrix, rhs, _, _ = problem.system(_conditions(model, False))
    return model, mesh, problem, matrix, rhs


def test_p1_assembly_matches_scikit_fem(case2_system):
    """Closed-form element matrices equal scikit-fem's quadrature assembly."""
    model, mesh, problem, _, _ = case2_system
    basis = Basis(mesh.skfem, ElementTriP1())
    lam = material_arrays(model, mesh)[0]
    reference = conduction.assemble(
        basis, conductivity=np.repeat(lam[:, None], basis.X.shape[1], axis=1))
    diff = abs(problem.stiffness - reference).max()
    assert diff <= 1e-12 * abs(reference).max()
    facets = outline_facets(mesh)
    for j in range(len(model.surfaces)):
        fb = FacetBasis(mesh.skfem, basis.elem, facets=facets[mesh.boundary_surface == j])
        m_ref = surface_mass.assemble(fb)
        assert abs(problem.surface_mass[j] - m_ref).max() <= 1e-12 * abs(m_ref).max()
        np.testing.assert_allclose(problem.surface_load[j], surface_load.assemble(fb),
                                   rtol=0, atol=1e-15)


@pytest.mark.parametrize("backend", ["superlu", "pardiso", "cholmod", "amg"])
def test_backends_agree_with_scipy_spsolve(case2_system, backend):
    if not linsolve.available(backend):
        pytest.skip(f"optional backend {backend} not installed")
    _, _, _, matrix, rhs = case2_system
    reference = spla.spsolve(matrix.tocsc(), rhs)
    x = linsolve.solve_spd(matrix, rhs, backend)
    assert np.abs(x - reference).max() <= 1e-9 * np.abs(reference).max()


def test_choice_by_size(monkeypatch):
    monkeypatch.delenv("BRIDGECALC_SOLVER", raising=False)
    assert linsolve.choose(100) == "superlu"
    if linsolve.available("amg"):
        assert linsolve.choose(linsolve.AMG_FROM) == "amg"
    if linsolve.available("multigrid"):
        assert linsolve.choose(linsolve.MULTIGRID_FROM, chain=True) == "multigrid"
        assert linsolve.choose(linsolve.MULTIGRID_FROM) != "multigrid"
        assert linsolve.choose(100, "multigrid") != "multigrid"      # needs a chain
    with pytest.raises(ValueError, match="unknown linear solver"):
        linsolve.choose(100, "magic")


def test_unconverged_cg_never_returned(case2_system, monkeypatch):
    """An AMG-CG solve cut short falls back to a direct factor: the answer is
    still the true solution, never an unconverged one."""
    if not linsolve.available("amg"):
        pytest.skip("pyamg not installed")
    _, _, _, matrix, rhs = case2_system
    monkeypatch.setattr(linsolve, "CG_MAX_ITERATIONS", 1)
    solver = linsolve.SPDSolver("amg")
    x = solver.solve(matrix, rhs)
    assert "superlu" in solver.used
    reference = spla.spsolve(matrix.tocsc(), rhs)
    assert np.abs(x - reference).max() <= 1e-9 * np.abs(reference).max()


def test_works_without_optional_solvers(monkeypatch):
    """With every optional backend switched off, ISO 10211 case 2 still meets
    its published heat flow (9.5 W/m within 0.1, ISO 10211:2017 Annex C)."""
    monkeypatch.setattr(linsolve, "available", lambda name: name == "superlu")
    result = run(validation.case2_model(), refinement=None)
    assert result.heat_flow_case.heat_flow["inside"] == pytest.approx(9.5, abs=0.1)
    assert result.heat_flow_case.balance < 1e-9
    assert result.heat_flow_case.field.problem.linear_solver.used == "superlu"


def test_prolongation_interpolates_linear_fields_exactly(case2_system):
    """Nested P1 spaces: a linear field on the coarse mesh is the same linear
    field on the refined one, node by node (the refinement adds midpoints)."""
    _, mesh, _, _, _ = case2_system
    fine = refinement.refine(mesh, np.arange(0, mesh.triangle_count, 4))
    finer = refinement.refine(fine)

    def linear(xy):
        return 1.5 + 2.0 * xy[:, 0] - 3.0 * xy[:, 1]

    for coarse, refined in ((mesh, fine), (fine, finer)):
        assert refined.coarser is coarse
        assert refined.prolongation.shape == (refined.node_count, coarse.node_count)
        np.testing.assert_allclose(refined.prolongation @ linear(coarse.nodes),
                                   linear(refined.nodes), rtol=0, atol=1e-12)
        np.testing.assert_allclose(refined.prolongation @ coarse.nodes, refined.nodes,
                                   rtol=0, atol=1e-15)


@pytest.mark.parametrize("case", ["case1", "case2"])
def test_multigrid_agrees_with_scipy_spsolve(case):
    """CG with the V-cycle on the refinement chain reaches SciPy's direct
    answer, also with held temperatures (ISO 10211 case 1: R = 0 sides)."""
    if not linsolve.available("multigrid"):
        pytest.skip("pyamg not installed")
    model = getattr(validation, f"{case}_model")()
    mesh = build_mesh(model)
    mesh = refinement.refine(refinement.refine(mesh), np.arange(0, 4 * mesh.triangle_count, 3))
    lam, q = material_arrays(model, mesh)
    problem = ConductionProblem(mesh, lam, len(model.surfaces), q, solver="multigrid")
    conditions = _conditions(model, False)
    field = problem.solve(conditions)
    assert problem.linear_solver.used == "multigrid"
    assert 0 < problem.linear_solver.iterations < 40
    matrix, rhs, held_surface, held = problem.system(conditions)
    free = held_surface < 0
    theta = np.where(free, 0.0, held)
    a = matrix[free][:, free].tocsc()
    theta[free] = spla.spsolve(a, rhs[free] - matrix[free][:, ~free] @ theta[~free])
    assert np.abs(field.temperature - theta).max() <= 1e-8 * np.abs(theta).max()


def _two_squares(tags_b):
    """Two unit squares 1 m apart, two triangles each; square A's outline is
    surface 0, square B's outline edges get ``tags_b``."""
    nodes = np.array([[0, 0], [1, 0], [1, 1], [0, 1], [2, 0], [3, 0], [3, 1], [2, 1]], float)
    triangles = np.array([[0, 1, 2], [0, 2, 3], [4, 5, 6], [4, 6, 7]])
    edges = np.array([[0, 1], [1, 2], [2, 3], [3, 0], [4, 5], [5, 6], [6, 7], [7, 4]])
    surface = np.array([0, 0, 0, 0, *tags_b])
    return Mesh(nodes=nodes, triangles=triangles, region=np.array([0, 0, 1, 1]),
                boundary_edges=edges, boundary_surface=surface, metres_per_unit=1.0)


def test_a_part_touching_no_surface_is_found():
    """A part without any exchanging or held surface makes the system singular:
    its temperature level is undefined. Found also through the refinement
    chain, and reported as a clear error instead of a solve."""
    floating = _two_squares([-1, -1, -1, -1])
    assert floating_part(floating, set(), {0})
    assert floating_part(refinement.refine(refinement.refine(floating)), set(), {0})
    assert not floating_part(_two_squares([-1, 1, -1, -1]), set(), {0, 1})
    assert not floating_part(_two_squares([-1, 1, -1, -1]), {1}, {0})   # held side
    assert not floating_part(_two_squares([1, 1, 1, 1]), {1}, {0})      # all held
    problem = ConductionProblem(floating, np.ones(4), 2)
    from bridgecalc.solve import Condition
    with pytest.raises(ModelError, match="singular"):
        problem.solve([Condition(20.0, 0.13), None])


def test_conjugate_gradients_reaches_the_direct_answer(case2_system):
    """The package's own PCG (Jacobi-preconditioned here) reaches SciPy's LU
    answer; given too few iterations it says so instead of returning."""
    _, _, _, matrix, rhs = case2_system
    inverse_diagonal = 1.0 / matrix.diagonal()
    x, iterations = linsolve.conjugate_gradients(matrix, rhs, lambda r: inverse_diagonal * r,
                                                 1e-12, 20_000)
    reference = spla.spsolve(matrix.tocsc(), rhs)
    assert iterations is not None and iterations > 10
    assert np.abs(x - reference).max() <= 1e-8 * np.abs(reference).max()
    _, none = linsolve.conjugate_gradients(matrix, rhs, lambda r: inverse_diagonal * r,
                                           1e-12, 5)
    assert none is None


def test_interpolated_start_saves_iterations():
    """Nested iteration: starting CG from the coarser mesh's field, interpolated,
    reaches SciPy's direct answer in fewer iterations than starting from zero."""
    if not linsolve.available("multigrid"):
        pytest.skip("pyamg not installed")
    model = validation.case2_model()
    coarse = refinement.refine(build_mesh(model))
    fine = refinement.refine(coarse)
    conditions = _conditions(model, False)
    lam, q = material_arrays(model, coarse)
    coarse_field = ConductionProblem(coarse, lam, len(model.surfaces), q).solve(conditions)
    lam, q = material_arrays(model, fine)
    problem = ConductionProblem(fine, lam, len(model.surfaces), q, solver="multigrid")
    cold = problem.solve(conditions)
    n_cold = problem.linear_solver.iterations
    warm = problem.solve(conditions, fine.prolongation @ coarse_field.temperature)
    n_warm = problem.linear_solver.iterations
    assert problem.linear_solver.used == "multigrid"
    assert n_warm < n_cold
    matrix, rhs, _, _ = problem.system(conditions)
    reference = spla.spsolve(matrix.tocsc(), rhs)
    for field in (cold, warm):
        assert np.abs(field.temperature - reference).max() <= 1e-8 * np.abs(reference).max()


def test_multigrid_gives_way_early_on_needle_meshes():
    """Needles one element across a 0.01 mm aluminium foil tie its nodes
    together so strongly that Gauss–Seidel smoothing stalls: the multigrid
    solve foresees from its rate that it would need more than its limit
    (linsolve.multigrid_limit), gives way to a direct factor well before, and
    the other calculation case on the same matrix goes to the factor at once. Both answers equal SciPy's direct one to the round-off of such a
    system (two direct solvers differ by 1e-7 K here, 7e-11 K on ISO 10211
    case 2)."""
    if not linsolve.available("multigrid"):
        pytest.skip("pyamg not installed")
    from bridgecalc.study.convergence import FIRST_MESH
    from bridgecalc.readers.modelfile import loads
    model = loads(thin_layer_models().models()["foil 0.01 mm"])
    mesh = refinement.refine(refinement.refine(refinement.refine(build_mesh(model, FIRST_MESH))))
    lam, q = material_arrays(model, mesh)
    problem = ConductionProblem(mesh, lam, len(model.surfaces), q, solver="multigrid")
    limit = linsolve.multigrid_limit(mesh.node_count)
    for case, spent in ((False, lambda n: 0 < n < limit),
                        (True, lambda n: n == 0)):
        conditions = _conditions(model, case)
        field = problem.solve(conditions)
        assert problem.linear_solver.used == "superlu (after multigrid did not converge)"
        assert spent(problem.linear_solver.iterations), problem.linear_solver.iterations
        matrix, rhs, _, _ = problem.system(conditions)
        reference = spla.spsolve(matrix.tocsc(), rhs)
        assert np.abs(field.temperature - reference).max() <= 1e-7 * np.abs(reference).max()


def test_conjugate_gradients_foresight_stops_a_slow_solve(case2_system):
    """Jacobi-preconditioned CG on ISO 10211 case 2 needs hundreds of
    iterations: with foresight and a limit of 50 it stops at a multiple of
    FORESIGHT below 50 and says it did not converge; without, it runs to 50."""
    _, _, _, matrix, rhs = case2_system
    inverse_diagonal = 1.0 / matrix.diagonal()
    calls = []

    def jacobi(r):
        calls.append(1)
        return inverse_diagonal * r

    _, none = linsolve.conjugate_gradients(matrix, rhs, jacobi, 1e-10, 50, foresee=True)
    assert none is None and len(calls) < 50 and len(calls) % linsolve.FORESIGHT == 0
    calls.clear()
    _, none = linsolve.conjugate_gradients(matrix, rhs, jacobi, 1e-10, 50)
    assert none is None and len(calls) == 50
