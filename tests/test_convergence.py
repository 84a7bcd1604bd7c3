"""Mesh-convergence study: extrapolation, honesty of the error estimate on
models with known answers, the contract keys, and plain-words failure.

Known answers used (all outside this package):

- Richardson extrapolation recovers Q∞ exactly for Q = Q∞ + C·N^(−r)
  (Richardson, Phil. Trans. R. Soc. A 210, 1911): algebra, checked on a
  sequence built from that law.
- ISO 10211 case 1 set-up (rectangle, one side held at 20 °C, three at 0 °C):
  the heat flow through the side opposite the hot one is, from the Fourier
  series solution (Carslaw & Jaeger, *Conduction of Heat in Solids*, §5.3),
  Φ = Σ_{n odd} 8 λ θh / (π n sinh(nπ b/a)).
  The heat flow into the hot side is infinite (the held temperature jumps at
  two corners), so a study of it must never claim convergence.
- ISO 10211:2017 Annex C case 2: total heat flow 9.5 W/m, published to
  0.1 W/m.
- ISO 6946:2017, 6.7.1: plane layers, exact with P1 elements.
"""

import dataclasses
import json
import math

import numpy as np
import pytest

from bridgecalc.validation import cases as validation
from bridgecalc.mesh import refinement
from bridgecalc.study import indicators
from bridgecalc.study import convergence
from bridgecalc.cli import main
from bridgecalc.errors import ModelError
from bridgecalc.mesh import build_mesh
from bridgecalc.model import Environment, Surface
from bridgecalc.api import load, run
from conftest import solve_level


def test_extrapolation_recovers_the_limit_of_a_power_law():
    nodes = [1000, 1800, 3300]
    values = [2.0 + 5.0 * n ** -0.8 for n in nodes]
    ex = convergence.extrapolate(nodes, values)
    assert ex.fitted
    assert ex.value == pytest.approx(2.0, abs=1e-12)
    assert ex.order == pytest.approx(1.6, rel=1e-9)          # per h: p = 2r
    assert ex.error_estimate >= abs(values[-1] - 2.0)         # covers the finest level's error


def test_extrapolation_refuses_oscillating_sequences():
    ex = convergence.extrapolate([100, 200, 400], [1.0, 1.1, 1.05])
    assert not ex.fitted
    assert ex.value == 1.05 and ex.error_estimate == pytest.approx(0.3)


def test_changes_within_the_solution_round_off_are_mesh_independence():
    """Changes between levels below ten times the heat-flow imbalance (the
    round-off of the solution) are round-off: the finest value is taken, its
    estimate at least that round-off. Without such noise the same changes are
    an oscillating sequence, with no fit (algebra, no external reference needed)."""
    nodes, values = [100, 200, 400], [1.0 + 3e-8, 1.0 - 1e-8, 1.0 + 2e-8]
    quiet = convergence.extrapolate(nodes, values, 1.0, noise=1e-6)
    assert quiet.fitted and quiet.value == values[-1]
    assert quiet.error_estimate >= 1e-6
    assert not convergence.extrapolate(nodes, values, 1.0).fitted       # oscillating
    exact = convergence.extrapolate(nodes, [2.0, 2.0, 2.0], 1.0)
    assert exact.fitted and exact.error_estimate == 0.0


def case1_split_model():
    """Case 1 with the cold sides as three environments, so the flow through
    the bottom side (opposite the hot one) is reported on its own."""
    base = validation.case1_model()
    a, b = validation.CASE1_WIDTH, validation.CASE1_HEIGHT
    envs = [Environment("hot", validation.CASE1_HOT, "interior"),
            Environment("left", 0.0, "exterior"), Environment("bottom", 0.0, "exterior"),
            Environment("right", 0.0, "exterior")]
    surfaces = [Surface("hot", 0.0, ((0, b), (a, b))), Surface("left", 0.0, ((0, b), (0, 0))),
                Surface("bottom", 0.0, ((0, 0), (a, 0))),
                Surface("right", 0.0, ((a, 0), (a, b)))]
    return dataclasses.replace(base, environments=envs, surfaces=surfaces, probes=[])


def bottom_flow_exact():
    a, b, hot = validation.CASE1_WIDTH, validation.CASE1_HEIGHT, validation.CASE1_HOT
    n = 2 * np.arange(20) + 1.0
    return float(np.sum(8 * 1.0 * hot / (np.pi * n * np.sinh(n * np.pi * b / a))))


@pytest.mark.parametrize("method", ["uniform", "adaptive"])
def test_error_estimate_covers_true_error_fourier_reference(method):
    """On nested sequences, the extrapolated bottom heat flow lies within its
    own error estimate of the Fourier-series value, at every level from the
    third on (with the P1 rate cap the study uses)."""
    model = case1_split_model()
    mesh = build_mesh(model)
    exact = bottom_flow_exact()
    nodes, values = [], []
    for level in range(5):
        heat, problem, field, conditions = solve_level(model, mesh)
        nodes.append(mesh.node_count)
        values.append(-heat.heat_flow["bottom"])
        if level >= 2:
            ex = convergence.extrapolate(nodes, values, convergence.ELEMENT_RATE["P1"])
            assert abs(ex.value - exact) <= ex.error_estimate, (level, ex, exact)
        if method == "uniform":
            mesh = refinement.refine(mesh)
        else:
            eta = indicators.energy_error_indicators(problem, field, conditions)
            mesh = refinement.refine(mesh, indicators.mark(eta))
    assert abs(values[-1] - exact) < 0.01 * exact                 # and it does converge


def test_infinite_heat_flow_is_never_called_converged():
    """Case 1's hot-side heat flow is infinite: the study must say so."""
    result = run(validation.case1_model())
    study = result.convergence
    assert not study.criterion_met
    assert "does not settle" in study.stop_reason
    # the temperatures are still right (Fourier series at 28 points, 0.1 K)
    for row in validation.check_case1(lambda m: result):
        assert row.passed, row


def test_case2_default_study_within_published_heat_flow():
    """No flanking: the study converges on L2D; the extrapolated heat flow and
    its error estimate are consistent with the published 9.5 ± 0.1 W/m."""
    result = run(validation.case2_model())
    study = result.convergence
    assert study.criterion_met
    assert study.psi is None and result.psi is None
    q = study.coupling_coefficient.value * 20.0
    e = study.coupling_coefficient.error_estimate * 20.0
    assert abs(q - validation.CASE2_HEAT_FLOW) <= validation.CASE2_HEAT_FLOW_TOLERANCE + e
    assert study.iso_doubling_change < 0.01
    assert result.heat_flow_case.balance < 1e-9


def test_exact_layers_need_no_extrapolation():
    result = run(validation.layers_model())
    assert result.convergence.criterion_met
    assert result.convergence.coupling_coefficient.error_estimate <= 1e-9 * result.coupling_coefficient


def test_results_json_convergence_block(geometries):
    result = run(load(geometries / "steel_beam.py"))
    data = json.loads(json.dumps(result.to_dict()))
    c = data["convergence"]
    assert set(c) >= {"levels", "psi_extrapolated", "psi_error_estimate",
                      "iso_doubling_change", "criterion_met"}
    assert len(c["levels"]) >= 3
    for level in c["levels"]:
        assert set(level) == {"nodes", "triangles", "heat_flow", "coupling_coefficient",
                              "psi", "theta_si_min", "coupling_coefficients"}
        # addition A: the one pair's L per level is the two-temperature L2D
        (pair,) = level["coupling_coefficients"]
        assert pair["value"] == pytest.approx(level["coupling_coefficient"], rel=1e-9)
    nodes = [lv["nodes"] for lv in c["levels"]]
    assert nodes == sorted(nodes) and nodes[-1] == data["mesh"]["nodes"]
    assert data["heat_flow_case"]["psi"] == c["psi_extrapolated"]
    assert c["criterion_met"] is True
    assert c["psi_relative_error_estimate"] <= 1e-3
    # nested meshes: L2D decreases level by level (Galerkin orthogonality)
    l2d = [lv["coupling_coefficient"] for lv in c["levels"]]
    assert all(b < a for a, b in zip(l2d, l2d[1:]))


def test_node_budget_reached_is_said_in_plain_words(tmp_path, capsys, geometries):
    out = tmp_path / "o"
    code = main(["run", str(geometries / "window_jamb.py"), "--out", str(out),
                 "--tolerance", "1e-7", "--max-nodes", "4000"])
    assert code == 0
    data = json.loads((out / "results.json").read_text())
    assert data["convergence"]["criterion_met"] is False
    assert "node budget" in data["convergence"]["stop_reason"]
    assert data["mesh"]["nodes"] <= 4000
    assert "NOT CONVERGED" in capsys.readouterr().out


@pytest.mark.parametrize("value", ["0", "-0.01", "nan", "abc", "1.5"])
def test_bad_tolerance_exit_2_nothing_written(tmp_path, capsys, value, geometries):
    out = tmp_path / "o"
    with pytest.raises(SystemExit) if value == "abc" else _nothing():
        code = main(["run", str(geometries / "window_jamb.py"), "--out", str(out),
                     "--tolerance", value])
        assert code == 2
    err = capsys.readouterr().err
    assert "--tolerance" in err
    assert not out.exists()


class _nothing:
    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return False


def test_bad_settings_from_python():
    model = validation.layers_model()
    for kwargs in ({"tolerance": 0.0}, {"tolerance": math.inf}, {"max_nodes": 0},
                   {"refinement": "sideways"}):
        with pytest.raises(ModelError):
            run(model, **kwargs)


def test_error_estimate_covers_true_error_thin_liner():
    """A 0.2 mm steel liner over a 2 m wall meshed as needles (one element
    across, :mod:`bridgecalc.mesh`): on the adaptive sequence from the
    study's first mesh, the extrapolated L2D lies within its own error
    estimate of an independent reference at every level from the third,
    the study's rule for claiming convergence. Reference: tensor-product
    grids, scikit-fem's generic assembly and SciPy's spsolve, Richardson over
    three grids with Roache's grid-convergence index as its uncertainty
    (benchmarks/bench_thin_layers.py)."""
    import importlib.util
    from conftest import ROOT
    from bridgecalc.readers.modelfile import loads
    spec = importlib.util.spec_from_file_location("bench_thin_layers",
                                                  ROOT / "benchmarks" / "bench_thin_layers.py")
    bench = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(bench)
    model = loads(bench.models()["liner 0.2 mm"])
    ref = bench.tensor_reference(model, levels=3)
    mesh = build_mesh(model, convergence.FIRST_MESH)
    nodes, values = [], []
    for level in range(6):
        heat, problem, field, conditions = solve_level(model, mesh)
        nodes.append(mesh.node_count)
        values.append(heat.coupling_coefficient)
        if level >= 2:
            ex = convergence.extrapolate(nodes, values, convergence.ELEMENT_RATE["P1"])
            assert abs(ex.value - ref["value"]) <= ex.error_estimate + ref["uncertainty"], \
                (level, ex, ref["value"])
        eta = indicators.energy_error_indicators(problem, field, conditions)
        mesh = refinement.refine(mesh, indicators.mark(eta))
    # nested meshes: L2D falls level by level towards the reference (Galerkin orthogonality)
    assert all(b < a for a, b in zip(values, values[1:]))
    assert values[-1] > ref["value"] - ref["uncertainty"]
