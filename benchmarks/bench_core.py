"""Issue-2 speed target: ISO 10211 case 2 at default settings, meshing included.

Prints wall times of the whole `run` (validate, first mesh, the default
refinement study with both cases solved per level, post-processing), best and median of several repeats in this process,
with a machine yardstick measured in the same run: SciPy's sparse direct
solve of a 5-point Laplacian with as many unknowns as the case-2 mesh has
nodes. The ratio run/yardstick lets figures from different machines be
compared; the target itself is absolute (under 2 s).

Usage: python benchmarks/bench_core.py [--repeats N]
"""

from __future__ import annotations

import argparse
import platform
import statistics
import time

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

import bridgecalc
from bridgecalc.validation import cases as validation
from bridgecalc.study.convergence import FIRST_MESH
from bridgecalc.mesh import build_mesh

TARGET_SECONDS = 2.0


def timed(fn, repeats):
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        value = fn()
        times.append(time.perf_counter() - t0)
    return min(times), statistics.median(times), value


def yardstick(unknowns: int) -> float:
    """Seconds for spsolve on an n×n-grid 5-point Laplacian, n² ≈ unknowns."""
    n = max(2, int(round(unknowns ** 0.5)))
    one = sp.diags([-1.0, 2.0, -1.0], [-1, 0, 1], shape=(n, n))
    matrix = (sp.kron(sp.identity(n), one) + sp.kron(one, sp.identity(n))).tocsc()
    rhs = np.ones(n * n)
    t0 = time.perf_counter()
    spla.spsolve(matrix, rhs)
    return time.perf_counter() - t0


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=5)
    args = parser.parse_args()
    model = validation.case2_model()
    bridgecalc.run(model)                       # warm imports and caches
    best, median, result = timed(lambda: bridgecalc.run(model), args.repeats)
    mesh_best, mesh_median, mesh = timed(lambda: build_mesh(model, FIRST_MESH), args.repeats)
    print(f"machine: {platform.machine()} {platform.processor() or ''}, "
          f"python {platform.python_version()}, bridgecalc {bridgecalc.__version__}")
    print(f"ISO 10211 case 2, default settings: {result.mesh.node_count} nodes, "
          f"heat flow {result.heat_flow_case.heat_flow['inside']:.3f} W/m (ref 9.5)")
    print(f"  run (study: mesh, refine, solve): best {best:.3f} s, median {median:.3f} s")
    print(f"  of which the first gmsh mesh:  best {mesh_best:.3f} s, median {mesh_median:.3f} s")
    base = min(yardstick(result.mesh.node_count) for _ in range(args.repeats))
    print(f"  yardstick (spsolve, {result.mesh.node_count} unknowns): {base:.3f} s; "
          f"run/yardstick = {best / base:.1f}")
    print(f"  target {TARGET_SECONDS:.1f} s: ratio target/best = {TARGET_SECONDS / best:.2f} "
          f"({'met' if best < TARGET_SECONDS else 'NOT met'})")


if __name__ == "__main__":
    main()
