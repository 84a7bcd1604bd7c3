"""Time to a mesh-converged Ψ, against a plain baseline measured in the same run.

(a) baseline: uniform gmsh meshes (one element size h = L / (25 r) everywhere,
    r = 1, 1.5, 2, 3, 4, ...) + scikit-fem's generic P1 assembly + SciPy
    ``spsolve``, heat-flow case only, refined until Ψ is within 0.1 % of the
    reference value. Reported: the time of that one run (the baseline that
    knew in advance which mesh suffices) and of the whole sequence;
(b) ``bridgecalc.run`` at the default tolerance (adaptive study, both cases,
    best and median of three runs), its node count, its true Ψ error against
    the reference and its own error estimate;
(c) scale: the balcony meshed and refined uniformly to about 1 million nodes;
    assembly and the solves of both cases (best and median of three), with
    in-run baselines for each step: scikit-fem's generic assembly of the same
    mesh, and CG with smoothed-aggregation AMG (pyamg's generic hierarchy)
    for the heat-flow case; peak resident memory of the process, which has
    done nothing larger before;
(d) ISO 10211 case 2 at default settings: wall time and the published checks.

Reference Ψ per junction: this tool's adaptive study at tolerance 1e-5
(100 × tighter than the target), printed with its error estimate; the
baseline's uniform sequence, a different code path (gmsh's uniform meshes,
scikit-fem's assembly, SciPy's LU), converging to it within 0.1 % is the
independent check of that reference. Times are wall-clock; other jobs may
share the machine (load average printed); ratios are measured in the same run.

Usage: python benchmarks/bench_convergence.py [--skip-scale] [--junctions a,b,c]
"""

from __future__ import annotations

import argparse
import datetime
import math
import platform
import resource
import statistics
import time
from pathlib import Path

import numpy as np
import scipy.sparse.linalg as spla
from skfem import Basis, ElementTriP1

from bridgecalc.validation import cases as validation
from bridgecalc.api import load, run
from bridgecalc.mesh import MeshOptions, build_mesh, refine
from bridgecalc.results import flanking_results
from bridgecalc.solve import ConductionProblem, linsolve
from bridgecalc.solve.assembly import conduction
from bridgecalc.solve.cases import conditions as _conditions, material_arrays

ROOT = Path(__file__).resolve().parent.parent
JUNCTIONS = ["balcony", "steel_beam", "window_jamb"]
TARGET = 1e-3
REFINEMENTS = [1, 1.5, 2, 3, 4, 6, 8, 12, 16, 24, 32, 48, 64, 96]
#: The baseline stops when its next mesh would pass this many nodes.
BASELINE_MAX_NODES = 700_000
#: One element size everywhere: no part, corner or surface refinement.
UNIFORM = dict(cells_across_model=25.0, cells_across_part=1e-9, corner_ratio=1.0,
               surface_ratio=1.0)


def baseline_psi(model, refinement):
    """Uniform gmsh mesh, scikit-fem generic P1 assembly, SciPy spsolve.

    Returns (Ψ [W/(m·K)], nodes, seconds).
    """
    t0 = time.perf_counter()
    mesh = build_mesh(model, MeshOptions(refinement=refinement, **UNIFORM))
    lam, _ = material_arrays(model, mesh)
    problem = ConductionProblem(mesh, lam, len(model.surfaces), generic=True)

    class Direct:
        used = "spsolve"

        @staticmethod
        def solve(a, b, prolongations=(), initial=None):
            return spla.spsolve(a.tocsc(), b)

    problem.linear_solver = Direct()
    field = problem.solve(_conditions(model, False))
    theta = {e.name: e.temperature for e in model.environments}
    inside = [e.name for e in model.environments if e.kind == "interior"]
    outside = [e.name for e in model.environments if e.kind != "interior"]
    flow = sum(q for s, q in zip(model.surfaces, field.heat_flow) if s.environment in inside)
    l2d = flow / (theta[inside[0]] - theta[outside[0]])
    psi = l2d - sum(f.ul for f in flanking_results(model))
    return psi, mesh.node_count, time.perf_counter() - t0


def junction_rows(names):
    rows = []
    for name in names:
        model = load(ROOT / "geometries" / f"{name}.py")
        t0 = time.perf_counter()
        ref = run(model, tolerance=1e-5, max_nodes=3_000_000)
        t_ref = time.perf_counter() - t0
        psi_ref = ref.psi
        print(f"{name}: reference Ψ {psi_ref:.7f} W/(m·K) ± {ref.convergence.psi_error_estimate:.1e} "
              f"({ref.mesh.node_count} nodes, {t_ref:.1f} s)", flush=True)
        cumulative, base, last_nodes, prev_r = 0.0, None, 0, None
        for r in REFINEMENTS:
            if last_nodes and last_nodes * (r / prev_r) ** 2 > BASELINE_MAX_NODES:
                break
            psi, nodes, dt = baseline_psi(model, r)
            cumulative += dt
            err = abs(psi - psi_ref) / abs(psi_ref)
            print(f"  baseline r={r:<4} {nodes:>8} nodes {dt:7.2f} s  Ψ {psi:.6f}  "
                  f"error {err:.1e}", flush=True)
            last_nodes, prev_r = nodes, r
            if err <= TARGET:
                base = (r, nodes, dt, cumulative, psi)
                break
        times = []
        for _ in range(3):
            t0 = time.perf_counter()
            ours = run(model)
            times.append(time.perf_counter() - t0)
        best, median = min(times), statistics.median(times)
        err = abs(ours.psi - psi_ref) / abs(psi_ref)
        est = ours.convergence.relative_errors()["psi"]
        line = (f"  bridgecalc run: {ours.mesh.node_count} nodes, best {best:.2f} s, median "
                f"{median:.2f} s, Ψ {ours.psi:.6f}, error {err:.1e} (estimated {est:.1e}), "
                f"criterion met {ours.convergence.criterion_met}")
        if base:
            line += (f"\n  speed-up against the baseline's single run: {base[2] / median:.1f}×"
                     f" (sequence: {base[3] / median:.1f}×)")
        else:
            line += (f"\n  the baseline did not reach 0.1 % below {BASELINE_MAX_NODES} nodes "
                     f"(sequence so far {cumulative:.1f} s: speed-up more than "
                     f"{cumulative / median:.1f}×)")
        print(line, flush=True)
        rows.append((name, psi_ref, base, ours, median, err))
    return rows


def peak_rss_gb():
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024 ** 2


def scale_row(target_nodes=1_000_000):
    model = load(ROOT / "geometries" / "balcony.py")
    t0 = time.perf_counter()
    first = build_mesh(model).node_count
    steps = max(0, int(math.log(target_nodes / first, 4)))
    refinement = math.sqrt(target_nodes / (first * 4 ** steps))
    for _ in range(3):                  # gmsh's node count grows about as refinement²
        mesh = build_mesh(model, MeshOptions(refinement=refinement))
        if abs(mesh.node_count * 4 ** steps / target_nodes - 1) < 0.05:
            break
        refinement *= math.sqrt(target_nodes / (mesh.node_count * 4 ** steps))
    for _ in range(steps):
        mesh = refine(mesh)
    t_mesh = time.perf_counter() - t0
    lam, q = material_arrays(model, mesh)
    heat_conditions, surface_conditions = _conditions(model, False), _conditions(model, True)
    rows = []
    for _ in range(3):
        t0 = time.perf_counter()
        problem = ConductionProblem(mesh, lam, len(model.surfaces), q)
        t1 = time.perf_counter()
        heat = problem.solve(heat_conditions)
        t2 = time.perf_counter()
        problem.solve(surface_conditions)
        t3 = time.perf_counter()
        rows.append((t1 - t0, t2 - t1, t3 - t2, t3 - t0, t2 - t0))
        used, iterations = problem.linear_solver.used, problem.linear_solver.iterations
        del problem
    balance = abs(heat.heat_flow.sum()) / np.abs(heat.heat_flow).max()
    rss = peak_rss_gb()

    # in-run baselines: scikit-fem's generic assembly, pyamg's generic AMG-CG
    t0 = time.perf_counter()
    basis = Basis(mesh.skfem, ElementTriP1())
    conduction.assemble(basis, conductivity=np.repeat(lam[:, None], basis.X.shape[1], 1))
    t_skfem = time.perf_counter() - t0
    problem = ConductionProblem(mesh, lam, len(model.surfaces), q, solver="amg")
    t0 = time.perf_counter()
    problem.solve(heat_conditions)
    t_amg = time.perf_counter() - t0

    def stat(k):
        values = [r[k] for r in rows]
        return min(values), statistics.median(values)

    (a_b, a_m), (h_b, h_m), (s_b, s_m), (t_b, t_m), (o_b, o_m) = (stat(k) for k in range(5))
    print(f"scale: {mesh.node_count} nodes, {mesh.triangle_count} triangles (gmsh then "
          f"{steps} uniform refinements, {t_mesh:.1f} s); best / median of 3:\n"
          f"  assembly {a_b:.2f} / {a_m:.2f} s (scikit-fem generic {t_skfem:.2f} s, "
          f"{t_skfem / a_m:.1f}× slower)\n"
          f"  heat-flow solve {h_b:.2f} / {h_m:.2f} s with {used} ({iterations} CG iterations "
          f"on the last); smoothed-aggregation AMG-CG {t_amg:.2f} s ({t_amg / h_m:.1f}× slower)\n"
          f"  surface-temperature solve {s_b:.2f} / {s_m:.2f} s (hierarchy reused)\n"
          f"  assembly + heat-flow solve {o_b:.2f} / {o_m:.2f} s; assembly + both solves "
          f"{t_b:.2f} / {t_m:.2f} s (target < 6 s)\n"
          f"  balance {balance:.1e}; peak resident memory {rss:.2f} GB (target < 3 GB)",
          flush=True)


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
    parser.add_argument("--junctions", default=",".join(JUNCTIONS))
    args = parser.parse_args()
    print(f"{datetime.date.today()} {platform.processor() or platform.machine()} "
          f"Python {platform.python_version()}, solvers here: {', '.join(linsolve.backends())}, "
          f"load average {' '.join(Path('/proc/loadavg').read_text().split()[:3])}", flush=True)
    if not args.skip_scale:
        scale_row()                     # first: the peak memory is its own
    case2_row()
    junction_rows([n for n in args.junctions.split(",") if n])
    print(f"load average at the end {' '.join(Path('/proc/loadavg').read_text().split()[:3])}")


if __name__ == "__main__":
    main()
