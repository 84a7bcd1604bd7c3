"""Shared fixtures: paths and small models."""

import functools
import importlib.util
from pathlib import Path

import numpy as np
import pytest

ROOT = Path(__file__).resolve().parent.parent

GEOMETRIES = ROOT / "geometries"


@pytest.fixture(scope="session")
def root() -> Path:
    return ROOT


@pytest.fixture(scope="session")
def geometries() -> Path:
    return GEOMETRIES


@functools.cache
def thin_layer_models():
    """benchmarks/bench_thin_layers.py as a module: its wall models (liners,
    foils, membranes, sheets) and tensor-grid reference serve the tests too."""
    spec = importlib.util.spec_from_file_location("bench_thin_layers",
                                                  ROOT / "benchmarks" / "bench_thin_layers.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def triangle_angles(nodes, triangles) -> np.ndarray:
    """The three interior angles of every triangle [°], shape (T, 3)."""
    p = nodes[triangles]
    angles = []
    for i in range(3):
        a = p[:, (i + 1) % 3] - p[:, i]
        b = p[:, (i + 2) % 3] - p[:, i]
        cos = (a * b).sum(1) / np.linalg.norm(a, axis=1) / np.linalg.norm(b, axis=1)
        angles.append(np.degrees(np.arccos(np.clip(cos, -1, 1))))
    return np.array(angles).T


def solve_level(model, mesh, element="P1"):
    """One mesh's heat-flow case as the study sees it: (HeatFlowCase, problem,
    field at the model's temperatures, its boundary conditions)."""
    from bridgecalc.results import heat_flow_case
    from bridgecalc.solve.cases import conditions, solve_cases
    cases = solve_cases(model, mesh, element)
    return (heat_flow_case(cases), cases.problem, cases.heat.field(cases.temperatures),
            conditions(model))


@pytest.fixture(scope="module")
def demo():
    """The shipped demo junction's result (a balcony slab without a thermal
    break, ``api.demo_model``), computed once per test module."""
    from bridgecalc.api import demo_model, run
    return run(demo_model())
