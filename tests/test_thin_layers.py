"""Thin layers (liners, foils, membranes, sheets) meshed one element across.

References, all outside this package's meshing, assembly, solvers and
refinement:

- ISO 6946:2017, 6.7.1 (plane layers): a wall of layers that all run over the
  full height between adiabatic cut-off planes carries a one-dimensional
  heat flow, L2D = U·l with U = 1/(Rsi + Σ d/λ + Rse), however thin a layer
  is; P1 elements reproduce the piecewise-linear exact field on any mesh, so
  the match is to round-off;
- a tensor-product grid solved by scikit-fem's generic P1 assembly and
  SciPy's spsolve, three grids halving every spacing, Richardson-
  extrapolated with the observed order, with Roache's grid-convergence index
  as its uncertainty (``benchmarks/bench_thin_layers.py``,
  :func:`tensor_reference`; Roache, J. Fluids Eng. 116, 1994, 405–413, safety
  factor 1.25 from memory).

The models are the README's wall (a 10 mm steel plate through the insulation)
with a steel liner or sheet over the full 2000 mm height: demo data.
"""

import math

import pytest

from bridgecalc.physics.iso6946 import u_value_plane_layers
from bridgecalc.readers.modelfile import loads
from bridgecalc.api import run

from conftest import thin_layer_models


BENCH = thin_layer_models()


@pytest.mark.parametrize("layer", [("steel", 1.0), ("membrane", 0.2), ("aluminium", 0.01)])
def test_full_height_thin_layer_is_one_dimensional_iso6946(layer):
    """No plate: a liner over the whole face between adiabatic cut-offs adds
    only its own resistance d/λ; L2D = U·l (ISO 6946:2017, 6.7.1) to
    round-off, and Ψ = 0 alike, from a first mesh of a few hundred nodes; the
    study says it converged and its error estimate covers the deviation.

    Round-off is measured by the heat-flow imbalance |Σ Φ| / max |Φ| (zero in
    exact arithmetic): near 1e-11 for the steel liner, near 1e-7 for the foil,
    whose needles are 10⁴ times longer than thick. The match is asked to 1e-9
    or ten times the imbalance, whichever is larger."""
    material, d = layer
    layers = [("concrete", 200.0 - d), (material, d), ("insulation", 160.0)]
    model = loads(BENCH.wall_text("plane layers", layers, plate=None))
    result = run(model)
    resistances = [t * 1e-3 / BENCH.MATERIALS[m] for m, t in layers]
    ul = u_value_plane_layers(resistances, 0.13, 0.04) * 2.0
    study = result.convergence
    round_off = max(1e-9, 10 * result.heat_flow_case.balance)
    assert result.heat_flow_case.balance < 1e-6
    assert result.coupling_coefficient == pytest.approx(ul, rel=round_off)
    assert abs(result.psi) <= round_off * result.coupling_coefficient
    assert study.criterion_met, study.stop_reason
    assert abs(result.coupling_coefficient - ul) <= study.coupling_coefficient.error_estimate
    assert study.levels[0].nodes < 500


@pytest.fixture(scope="module", params=["liner 1 mm", "liner 0.2 mm", "cladding 0.7 mm"])
def thin_case(request):
    model = loads(BENCH.models()[request.param], request.param)
    return request.param, model, BENCH.tensor_reference(model, levels=3)


def test_thin_layer_converges_to_the_independent_reference(thin_case):
    """The default study converges within the default node budget (which the
    isotropic first mesh did not for either liner), and its L2D lies within
    its own error estimate plus the reference's uncertainty of the
    tensor-grid reference; Ψ differs from L2D by the same constant Σ U·l in
    both, so the same holds for Ψ."""
    name, model, ref = thin_case
    result = run(model)
    study = result.convergence
    assert study.criterion_met, study.stop_reason
    assert study.relative_errors()["psi"] <= 1e-3
    error = abs(result.coupling_coefficient - ref["value"])
    assert error <= study.coupling_coefficient.error_estimate + ref["uncertainty"], (name, ref)
    assert result.mesh.node_count < 150_000
    assert result.heat_flow_case.balance < 1e-9


def test_reference_grids_converge_regularly(thin_case):
    """The reference itself: monotone (P1 on nested grids over-estimates the
    conductance) with an observed order between 1 and 2.5 (a P1 L2D converges
    with h² where the field is smooth, slower at corners), and an uncertainty
    below 0.1 % of L2D."""
    _, _, ref = thin_case
    values = ref["values"]
    assert values[0] > values[1] > values[2] > ref["value"]
    assert 1.0 < ref["order"] < 2.5
    assert ref["uncertainty"] < 1e-3 * ref["value"]
    assert math.isfinite(ref["value"])


def _angle(thickness: float, as_rectangles: bool):
    """A steel angle [mm] in a wall of 200 mm concrete and 160 mm insulation:
    one leg down the exterior face from y = 2000 to 1000, the other across the
    insulation at y = 1000; drawn as one polygon or as two overlapping
    rectangles (demo data)."""
    t = thickness
    if as_rectangles:
        legs = [[(360 - t, 1000), (360, 1000), (360, 2000), (360 - t, 2000)],
                [(200, 1000), (360, 1000), (360, 1000 + t), (200, 1000 + t)]]
    else:
        legs = [[(200, 1000), (360, 1000), (360, 2000), (360 - t, 2000),
                 (360 - t, 1000 + t), (200, 1000 + t)]]
    return loads(BENCH.wall_text("angle", [("concrete", 200), ("insulation", 160)],
                                 plate=None, extra_regions=[("steel", leg) for leg in legs]))


def test_bent_sheet_drawn_leg_by_leg_converges_to_the_reference():
    """README's advice for bent sheets: a 0.5 mm steel angle drawn as two
    rectangles is meshed as two strips; the study converges to the
    independent tensor-grid reference (scikit-fem and SciPy on grids through
    every edge) within its estimate, from a small mesh. The same angle drawn
    as one polygon (1 mm, to keep the test short) gives the same Ψ within
    both estimates, from a mesh many times larger."""
    legs = _angle(0.5, as_rectangles=True)
    ref = BENCH.tensor_reference(legs, levels=3)
    result = run(legs)
    study = result.convergence
    assert study.criterion_met, study.stop_reason
    error = abs(result.coupling_coefficient - ref["value"])
    assert error <= study.coupling_coefficient.error_estimate + ref["uncertainty"], ref
    assert result.mesh.node_count < 40_000

    by_legs, polygon = run(_angle(1.0, True)), run(_angle(1.0, False))
    estimates = by_legs.convergence.psi.error_estimate + polygon.convergence.psi.error_estimate
    assert abs(by_legs.psi - polygon.psi) <= estimates
    assert polygon.mesh.node_count > 3 * by_legs.mesh.node_count
