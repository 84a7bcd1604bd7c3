"""Linear solvers and the vectorised P1 assembly.

References outside this package: SciPy's general sparse LU (``spsolve``) for
the solutions, and scikit-fem's generic quadrature assembly (a
general-purpose finite element library from PyPI) for the matrices. The
optional fast paths (PARDISO, CHOLMOD, AMG) are tested only where installed;
the package must work without them (tested by switching them off).
"""

import numpy as np
import pytest
import scipy.sparse.linalg as spla
from skfem import Basis, ElementTriP1, FacetBasis

from bridgecalc import linsolve, validation
from bridgecalc.mesh import build_mesh
from bridgecalc.pipeline import _conditions, material_arrays, run
from bridgecalc.solve import ConductionProblem, conduction, surface_load, surface_mass


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
    facets = problem._facet_indices(mesh.skfem)
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
    monkeypatch.setattr(linsolve, "_AVAILABLE",
                        {"pardiso": False, "cholmod": False, "amg": False, "superlu": True})
    result = run(validation.case2_model(), refinement=None)
    assert result.heat_flow_case.heat_flow["inside"] == pytest.approx(9.5, abs=0.1)
    assert result.heat_flow_case.balance < 1e-9
