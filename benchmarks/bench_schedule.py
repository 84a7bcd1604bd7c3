"""Schedule speed targets, on the shipped example project (fictional Tarnwick
Yard, geometries/tarnwick_yard.toml: nine junctions of the library, each
computed and written in full).

Targets (on the project's 2-core machine):

- 2 local worker processes at least 1.7 × faster than 1 (a fresh output
  folder each time, so nothing is reused);
- an unchanged re-run into the 2-worker folder under 2 s (every junction
  reused: only the models are built and hashed, the folders carried over and
  the schedule's own files written).

All three runs are made here, one after the other, so the ratios compare like
with like; the 1-worker run is the baseline of the speed-up, the 2-worker run
that of the re-run. Each time is the whole ``run_schedule`` call (worker
start-up, the validation stamp, every output), measured in wall-clock
seconds. The load average is printed before and after, because other work on
the machine changes the figures; so is the CPU time of the worker processes.
The rows of the runs must be identical (same input, same results).

Usage: python benchmarks/bench_schedule.py [--tolerance REL]
"""

from __future__ import annotations

import argparse
import os
import platform
import resource
import tempfile
import time
from pathlib import Path

from bridgecalc.schedule import run_schedule
from bridgecalc.sweep import default_workers

PROJECT = Path(__file__).resolve().parent.parent / "geometries" / "tarnwick_yard.toml"
TARGET_RATIO = 1.7
TARGET_RERUN_S = 2.0


def children_cpu() -> float:
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def timed(out_dir, workers, tolerance):
    """Wall time [s], CPU time of the workers [s], the schedule."""
    cpu = children_cpu()
    start = time.perf_counter()
    result = run_schedule(PROJECT, out_dir, workers=workers, tolerance=tolerance)
    return time.perf_counter() - start, children_cpu() - cpu, result


def numbers(result):
    return [(r.spec.name, r.outcome) for r in result.rows]


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--tolerance", type=float, default=None,
                        help="each junction's convergence target (default: the project's)")
    args = parser.parse_args()
    print(f"machine: {platform.processor() or platform.machine()}, {default_workers()} cores "
          f"available, Python {platform.python_version()}")
    print(f"load average before: {' '.join(f'{x:.2f}' for x in os.getloadavg())}")
    with tempfile.TemporaryDirectory(prefix="bench-schedule-") as folder:
        folder = Path(folder)
        run_schedule(PROJECT, folder / "warm", workers=1, tolerance=args.tolerance)
        print(f"schedule: {PROJECT.name} (after one run to warm the validation stamp and "
              f"the file cache)")
        t1, cpu1, one = timed(folder / "one", 1, args.tolerance)
        print(f"  1 worker:  {t1:6.1f} s wall, workers' CPU {cpu1:.1f} s  baseline")
        t2, cpu2, two = timed(folder / "two", 2, args.tolerance)
        print(f"  2 workers: {t2:6.1f} s wall, workers' CPU {cpu2:.1f} s")
        t0, _, again = timed(folder / "two", 2, args.tolerance)
        print(f"  unchanged re-run: {t0:6.2f} s wall, {len(again.reused)} of "
              f"{len(again.rows)} junctions reused")
    ratio = t1 / t2
    same = numbers(one) == numbers(two) == numbers(again)
    print(f"  speed-up 2 vs 1 workers: {ratio:.2f} x")
    print(f"  re-run against the 2-worker run: {t0 / t2:.3f} of its time")
    print(f"  H_TB = {two.heat_transfer_coefficient:.4f} W/K; rows identical: {same}")
    print(f"load average after:  {' '.join(f'{x:.2f}' for x in os.getloadavg())}")
    print(f"target: speed-up at least {TARGET_RATIO} x: "
          f"{'met' if ratio >= TARGET_RATIO else 'NOT met'} ({ratio:.2f} x)")
    print(f"target: unchanged re-run under {TARGET_RERUN_S:g} s: "
          f"{'met' if t0 < TARGET_RERUN_S else 'NOT met'} ({t0:.2f} s)")
    return 0 if same and one.ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
