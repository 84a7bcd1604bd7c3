"""Time to a mesh-converged Ψ, against a plain baseline measured in the same run.

(a) baseline: uniform gmsh meshes (MeshOptions.refinement 1, 1.5, 2, 3, 4, 6,
    8, ...) + scikit-fem's generic P1 assembly + SciPy ``spsolve``, heat-flow
    case only, refined until Ψ is within 0.1 % of the reference value;
(b) ``bridgecalc.run`` at the default tolerance (adaptive study, both cases);
(c) scale: one junction refined uniformly to about 1 million nodes: meshing,
    assembly, solve (both cases) and peak resident memory, with scikit-fem's
    generic assembly of the same mesh as the in-run baseline;
(d) ISO 10211 case 2 at default settings: wall time and the published checks.

Reference Ψ per junction: this tool's adaptive study at tolerance 1e-5
(about 100 × tighter than the target); it is printed with its own error
estimate. Times are wall-clock on this machine, which other jobs may share;
ratios are measured in the same run.

Usage: python benchmarks/bench_convergence.py [--skip-scale]
"""

from __future__ import annotations

import argparse
import datetime
import platform
import resource
import time
from pathlib import Path

import numpy as np
import scipy.sparse.linalg as spla
from skfem import Basis, ElementTriP1

from bridgecalc import adapt, validation
from bridgecalc.mesh import MeshOptions, build_mesh
from bridgecalc.pipeline import _conditions, load, material_arrays, run
from bridgecalc.results import heat_flow_case
from bridgecalc.solve import ConductionProblem, conduction

ROOT = Path(__file__).resolve().parent.parent
JUNCTIONS = ["balcony", "steel_beam", "window_jamb"]
TARGET = 1e-3
REFINEMENTS = [1, 1.5, 2, 3, 4, 6, 8, 12, 16]


def baseline_psi(model, refinement):
    """Uniform gmsh mesh, scikit-fem generic P1 assembly, SciPy spsolve."""
    t0 = time.perf_counter()
    mesh = build_mesh(model, MeshOptions(refinement=refinement))
    lam, _ = material_arrays(model, mesh)
    basis = Basis(mesh.skfem, ElementTriP1())
    k = conduction.assemble(basis, conductivity=np.repeat(lam[:, None], basis.X.shape[1], 1))
    # boundary terms through the same skfem path (ConductionProblem's P2 route uses it)
    problem = ConductionProblem.__new__(ConductionProblem)
    problem.mesh, problem.element, problem.n_surfaces = mesh, "P1", len(model.surfaces)
    problem._basis = basis
    problem.conductivity, problem.source = lam, np.zeros(len(lam))
    problem._assemble_skfem(problem.source)
    problem.stiffness = k.tocsr()
    problem.generated = 0.0
    problem._point_cache = {}

    class Direct:
        used = "spsolve"

        @staticmethod
        def solve(a, b):
            return spla.spsolve(a.tocsc(), b)

    problem.linear_solver = Direct()
    field = problem.solve(_conditions(model, False))
    model_np = model if not model.probes else __import__("dataclasses").replace(model, probes=[])
    psi = heat_flow_case(model_np, field).psi
    return psi, mesh.node_count, time.perf_counter() - t0


def junction_rows():
    rows = []
    for name in JUNCTIONS:
        model = load(ROOT / "geometries" / f"{name}.py")
        ref = run(model, tolerance=1e-5, max_nodes=2_000_000)
        psi_ref = ref.psi
        cumulative, base = 0.0, None
        for r in REFINEMENTS:
            psi, nodes, dt = baseline_psi(model, r)
            cumulative += dt
            if abs(psi - psi_ref) <= TARGET * abs(psi_ref):
                base = (r, nodes, dt, cumulative, psi)
                break
        t0 = time.perf_counter()
        ours = run(model)
        t_ours = time.perf_counter() - t0
        err = abs(ours.psi - psi_ref) / abs(psi_ref)
        rows.append((name, psi_ref, ref.convergence.psi_error_estimate, base, ours, t_ours, err))
        b = base
        print(f"{name:12s} ref Ψ {psi_ref:.6f} (±{ref.convergence.psi_error_estimate:.1e}) | "
              + (f"baseline r={b[0]} {b[1]} nodes {b[2]:.2f} s (sequence {b[3]:.2f} s)"
                 if b else "baseline did not reach 0.1 % within r ≤ 16")
              + f" | bridgecalc {ours.mesh.node_count} nodes {t_ours:.2f} s, "
              f"Ψ error {err:.1e}, est {ours.convergence.relative_errors()['psi']:.1e} | "
              + (f"speed-up {b[2] / t_ours:.1f}× (single run), {b[3] / t_ours:.1f}× (sequence)"
                 if b else ""), flush=True)
    return rows


def peak_rss_gb():
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024 ** 2


def scale_row(target_nodes=1_000_000):
    model = load(ROOT / "geometries" / "balcony.py")
    t0 = time.perf_counter()
    mesh = build_mesh(model)
    while mesh.node_count * 4 <= target_nodes * 1.3:
        mesh = adapt.refine(mesh)
    t_mesh = time.perf_counter() - t0
    lam, q = material_arrays(model, mesh)
    t0 = time.perf_counter()
    problem = ConductionProblem(mesh, lam, len(model.surfaces), q)
    t_asm = time.perf_counter() - t0
    t0 = time.perf_counter()
    heat = problem.solve(_conditions(model, False))
    surface = problem.solve(_conditions(model, True))
    t_solve = time.perf_counter() - t0
    balance = abs(heat.heat_flow.sum()) / np.abs(heat.heat_flow).max()
    t0 = time.perf_counter()
    basis = Basis(mesh.skfem, ElementTriP1())
    conduction.assemble(basis, conductivity=np.repeat(lam[:, None], basis.X.shape[1], 1))
    t_skfem = time.perf_counter() - t0
    print(f"scale: {mesh.node_count} nodes; mesh {t_mesh:.2f} s, assembly {t_asm:.2f} s "
          f"(scikit-fem generic {t_skfem:.2f} s, ratio {t_skfem / t_asm:.1f}×), solve both cases "
          f"{t_solve:.2f} s with {problem.linear_solver.used}, assembly+solve "
          f"{t_asm + t_solve:.2f} s, balance {balance:.1e}, peak RSS {peak_rss_gb():.2f} GB",
          flush=True)
    del surface


def case2_row():
    times = []
    for _ in range(3):
        t0 = time.perf_counter()
        result = run(validation.case2_model())
        times.append(time.perf_counter() - t0)
    rows = validation.check_case2(lambda m: result)
    print(f"case 2 default: best {min(times):.2f} s, median {sorted(times)[1]:.2f} s, "
          f"{result.mesh.node_count} nodes, all checks pass: {all(r.passed for r in rows)}, "
          f"heat flow {result.heat_flow_case.heat_flow['inside']:.4f} W/m, "
          f"criterion met {result.convergence.criterion_met}", flush=True)


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--skip-scale", action="store_true")
    args = parser.parse_args()
    print(f"{datetime.date.today()} {platform.processor() or platform.machine()} "
          f"{platform.python_version()}, load average {Path('/proc/loadavg').read_text().split()[:3]}")
    case2_row()
    junction_rows()
    if not args.skip_scale:
        scale_row()


if __name__ == "__main__":
    main()
