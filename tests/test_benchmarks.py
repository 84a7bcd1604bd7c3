"""The benchmark scripts still run against the package they measure.

Their baseline is an independent code path (gmsh's uniform meshes, scikit-fem's
generic assembly, SciPy's LU); on a coarse uniform mesh its Ψ must already lie
within a few per cent of the converged Ψ of ``run`` (a P1 error of a few per cent
at 25 elements across the model is common practice for such meshes).
"""

import importlib.util

import pytest

from bridgecalc.api import load, run

from conftest import GEOMETRIES, ROOT


def _bench(name):
    spec = importlib.util.spec_from_file_location(name, ROOT / "benchmarks" / f"{name}.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_convergence_baseline_agrees_with_run():
    bench = _bench("bench_convergence")
    model = load(GEOMETRIES / "balcony.py")
    psi, nodes, seconds = bench.baseline_psi(model, 1)
    reference = run(model).psi
    assert 100 < nodes < 5_000 and seconds > 0
    assert psi == pytest.approx(reference, rel=0.05)
    assert psi > reference          # P1 over-estimates the conductance (upper bound)
