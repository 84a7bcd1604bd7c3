"""A whole `bridgecalc run`, every default output included, against a plain solve.

(a) Reference Ψ of a held-out-like balcony (a concrete slab through 180 mm of
    insulation, no thermal break: ``geometries/balcony.py`` with
    ``thermal_break=false insulation_thickness_mm=180``): this tool's study at
    tolerance 1e-5, printed with its error estimate.
(b) Baseline: uniform gmsh meshes (one element size everywhere) + scikit-fem's
    generic P1 assembly + SciPy ``spsolve``, heat-flow case only
    (``bench_convergence.baseline_psi``), refined r = 1, 1.5, 2, 3, ... until
    its Ψ is within 0.1 % of the reference; then bisected on r between the
    last mesh short of 0.1 % and the first that reached it (the steps double
    the nodes or more), so that the baseline is the smallest uniform mesh
    found to reach it. Reported: that one run, and the whole sequence (how a
    user without the reference would get there).
(c) ``bridgecalc run MODEL --set ... --out DIR`` as a user types it: a fresh
    process, default tolerance, every default output (results.json, the
    exports, the PNG figures, report.html, report.pdf), wall time from start
    to exit, median of ``--repeats``, with the CPU time of all its processes.
    The split inside such a process (imports, solve, outputs, wall and CPU)
    is printed too, and the ceiling: a fresh process that imports the package
    and solves the same model, writing nothing, against the baseline (no
    outputs, however cheap, can make the run faster than that).
(d) The demo (``bridgecalc demo``'s junction): its solve alone and its solve
    then every default output, each in fresh processes
    (``bench_outputs.py``); the overhead of the outputs is the difference of
    the medians.

Ratios: baseline time / `bridgecalc run` time (target ≥ 10), and the demo's
outputs beyond its solve (target < 1 s). Wall-clock seconds; other jobs on the
machine inflate every figure (load average printed). Nothing is asserted.

    python benchmarks/bench_run_speed.py [--repeats N] [--skip-reference PSI]
"""

from __future__ import annotations

import argparse
import datetime
import importlib.util
import json
import platform
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
SETTINGS = {"thermal_break": False, "insulation_thickness_mm": 180.0}
TARGET = 1e-3
#: Bisection steps between the last uniform mesh short of the target and the first
#: that reaches it.
BISECTIONS = 3

CHILD = r"""
import json, resource, sys, tempfile, time
def cpu():
    s, c = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
    return s.ru_utime + s.ru_stime + c.ru_utime + c.ru_stime
w0, c0 = time.perf_counter(), cpu()
from pathlib import Path
from bridgecalc import api
w1, c1 = time.perf_counter(), cpu()
model = api.load(sys.argv[1], [f"{k}={v}" for k, v in json.loads(sys.argv[2]).items()])
result = api.run(model)
w2, c2 = time.perf_counter(), cpu()
with tempfile.TemporaryDirectory() as tmp:
    api.write_outputs(result, Path(tmp) / "out")
w3, c3 = time.perf_counter(), cpu()
print(json.dumps({"imports": w1 - w0, "solve": w2 - w1, "outputs": w3 - w2,
                  "imports_cpu": c1 - c0, "solve_cpu": c2 - c1, "outputs_cpu": c3 - c2}))
"""

SOLVE_ONLY = r"""
import json, sys
from bridgecalc import api
api.run(api.load(sys.argv[1], [f"{k}={v}" for k, v in json.loads(sys.argv[2]).items()]))
import os
os._exit(0)                 # as the command ends (bridgecalc.cli.console)
"""


def _sibling(name):
    spec = importlib.util.spec_from_file_location(name, ROOT / "benchmarks" / f"{name}.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def load_average() -> str:
    return " ".join(Path("/proc/loadavg").read_text().split()[:3])


def _children_cpu() -> float:
    import resource
    used = resource.getrusage(resource.RUSAGE_CHILDREN)
    return used.ru_utime + used.ru_stime


def command_time(script: Path, out: Path) -> tuple[float, float]:
    """Wall time and CPU time [s] (every process of it) of ``bridgecalc run``
    as a user types it. On a loaded machine the CPU time is the steadier figure."""
    sets = [a for k, v in SETTINGS.items() for a in ("--set", f"{k}={str(v).lower()}")]
    start, cpu = time.perf_counter(), _children_cpu()
    subprocess.run([sys.executable, "-m", "bridgecalc", "run", str(script), *sets,
                    "--out", str(out)], check=True, capture_output=True)
    return time.perf_counter() - start, _children_cpu() - cpu


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--skip-reference", type=float, metavar="PSI",
                        help="use this reference Ψ instead of computing it (about 20 s)")
    args = parser.parse_args()
    from bridgecalc.api import load, run
    from bridgecalc.solve import linsolve
    print(f"{datetime.datetime.now():%Y-%m-%d %H:%M} {platform.machine()} Python "
          f"{platform.python_version()}, solvers {', '.join(linsolve.backends())}, "
          f"load average {load_average()}", flush=True)
    script = ROOT / "geometries" / "balcony.py"
    model = load(script, **SETTINGS)

    # (a) the reference
    if args.skip_reference is None:
        start = time.perf_counter()
        reference = run(model, tolerance=1e-5, max_nodes=3_000_000)
        psi_ref = reference.psi
        print(f"reference Ψ {psi_ref:.7f} W/(m·K) ± "
              f"{reference.convergence.psi_error_estimate:.1e} "
              f"({reference.mesh.node_count} nodes, {time.perf_counter() - start:.1f} s)",
              flush=True)
    else:
        psi_ref = args.skip_reference
        print(f"reference Ψ {psi_ref:.7f} W/(m·K) (given)")

    # (b) the baseline's uniform sequence
    convergence = _sibling("bench_convergence")
    sequence, single, nodes, short = 0.0, None, None, None
    for r in convergence.REFINEMENTS:
        psi, nodes, seconds = convergence.baseline_psi(model, r)
        sequence += seconds
        error = abs(psi - psi_ref) / abs(psi_ref)
        print(f"  baseline r = {r:<4} {nodes:>8} nodes {seconds:6.2f} s  Ψ {psi:.6f}  "
              f"error {error:.1e}", flush=True)
        if error <= TARGET:
            single, reached = seconds, r
            break
        short = r
        if nodes > convergence.BASELINE_MAX_NODES / 2:
            break
    # the steps above double the nodes or more: the smallest uniform mesh that
    # reaches 0.1 % lies between the last two, found by bisection on r
    if single is not None and short is not None:
        for _ in range(BISECTIONS):
            r = round((short + reached) / 2, 2)
            psi, nodes, seconds = convergence.baseline_psi(model, r)
            error = abs(psi - psi_ref) / abs(psi_ref)
            print(f"  baseline r = {r:<5} {nodes:>8} nodes {seconds:6.2f} s  Ψ {psi:.6f}  "
                  f"error {error:.1e} (bisection)", flush=True)
            if error <= TARGET:
                single, reached = seconds, r
            else:
                short = r
    if single is not None:
        # its time, like the run's, is a median: one timing of a few seconds
        # varies by a third on a shared machine
        times = [single] + [convergence.baseline_psi(model, reached)[2]
                            for _ in range(max(args.repeats, 1) - 1)]
        single = statistics.median(times)
        print(f"  the smallest uniform mesh found to reach 0.1 %: r = {reached}, median "
              f"{single:.2f} s of {', '.join(f'{t:.2f}' for t in times)}", flush=True)

    # (c) the whole command, then its split
    with tempfile.TemporaryDirectory() as tmp:
        timed = [command_time(script, Path(tmp) / f"run{k}") for k in range(args.repeats)]
    walls = [w for w, _ in timed]
    wall = statistics.median(walls)
    cpu = statistics.median(c for _, c in timed)
    splits = []
    for _ in range(args.repeats):
        out = subprocess.run([sys.executable, "-c", CHILD, str(script), json.dumps(SETTINGS)],
                             check=True, capture_output=True, text=True).stdout
        splits.append(json.loads(out.strip().splitlines()[-1]))
    split = {k: statistics.median(s[k] for s in splits) for k in splits[0]}
    # the floor: a fresh process that imports the package and solves, writing nothing
    floors = []
    for _ in range(args.repeats):
        start = time.perf_counter()
        subprocess.run([sys.executable, "-c", SOLVE_ONLY, str(script), json.dumps(SETTINGS)],
                       check=True, capture_output=True)
        floors.append(time.perf_counter() - start)
    floor = statistics.median(floors)
    result = run(model)
    error = abs(result.psi - psi_ref) / abs(psi_ref)
    print(f"bridgecalc run (whole command, every default output): median {wall:.2f} s of "
          f"{', '.join(f'{w:.2f}' for w in walls)} (CPU {cpu:.2f} s, all processes); "
          f"Ψ {result.psi:.6f} (error {error:.1e}), {result.mesh.node_count} nodes")
    print("  inside the process, medians: " + ", ".join(
        f"{k} {split[k]:.2f} s (CPU {split[k + '_cpu']:.2f} s)"
        for k in ("imports", "solve", "outputs")))
    if single is not None:
        print(f"  speed-up against the baseline's run that reached 0.1 %: {single / wall:.1f}× "
              f"(its whole sequence: {sequence / wall:.1f}×); target ≥ 10×")
        inner = split["solve"] + split["outputs"]
        print(f"  the same, counting solve and outputs only (no Python start-up, as the "
              f"baseline): {single / inner:.1f}× ({sequence / inner:.1f}×)")
        print(f"  ceiling: a fresh process that only imports and solves, writing nothing, "
              f"takes {floor:.2f} s (median of {', '.join(f'{w:.2f}' for w in floors)}): "
              f"{single / floor:.1f}× the baseline's run, the most any outputs could leave")
    else:
        print(f"  the baseline did not reach 0.1 % (sequence {sequence:.1f} s): speed-up more "
              f"than {sequence / wall:.1f}×")

    # (d) the demo's outputs beyond its solve
    outputs = _sibling("bench_outputs")
    overhead = outputs.measure(args.repeats)
    print(f"demo: outputs beyond its solve {overhead:.2f} s (target < 1 s)")
    print(f"load average at the end {load_average()}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
