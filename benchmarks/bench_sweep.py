"""Issue-4 speed targets: a 100-variant sweep of the balcony family.

Targets (on the project's 2-core machine):

- the 100-variant sweep on the default workers finishes in under 60 s;
- 2 worker processes are at least 1.8 × faster than 1.

Both runs are made here, one after the other, so the ratio compares like with
like; the 1-worker run is the baseline. Each time is the whole ``sweep`` call
(worker start-up included), not the writing of the outputs. The load average
is printed before and after, because other work on the machine changes the
figures; so is the CPU time the worker processes used (getrusage of the
reaped children): when CPU time is about the same for 1 and 2 workers but the
2-worker wall time is not about half, the cores were busy with other work.
The rows of both runs must be identical (same input, same results).

The 100 variants: insulation_thickness_mm 100, 120, ..., 280 (10 values) ×
thermal_break false, true × slab_thickness_mm 180, 200, ..., 260 (5 values),
on the fictional Tarnwick Yard balcony (docs/scenario.md).

Usage: python benchmarks/bench_sweep.py [--small]
"""

from __future__ import annotations

import argparse
import os
import platform
import resource
import time
from pathlib import Path

from bridgecalc.sweep import default_workers, sweep

BALCONY = Path(__file__).resolve().parent.parent / "geometries" / "balcony.py"
TARGET_SECONDS = 60.0
TARGET_RATIO = 1.8


def family(small: bool) -> dict:
    if small:           # 12 variants, for a quick look
        return {"insulation_thickness_mm": [100.0, 190.0, 280.0],
                "thermal_break": [False, True],
                "slab_thickness_mm": [180.0, 260.0]}
    return {"insulation_thickness_mm": [100.0 + 20.0 * k for k in range(10)],
            "thermal_break": [False, True],
            "slab_thickness_mm": [180.0 + 20.0 * k for k in range(5)]}


def children_cpu() -> float:
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def timed_sweep(vary, workers):
    """Wall time [s], CPU time of the workers [s], rows."""
    cpu = children_cpu()
    start = time.perf_counter()
    rows = sweep(BALCONY, vary, workers=workers)
    return time.perf_counter() - start, children_cpu() - cpu, rows


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--small", action="store_true", help="12 variants instead of 100")
    args = parser.parse_args()
    vary = family(args.small)
    count = 1
    for values in vary.values():
        count *= len(values)
    cores = default_workers()
    print(f"machine: {platform.processor() or platform.machine()}, {cores} cores "
          f"available, Python {platform.python_version()}")
    print(f"load average before: {' '.join(f'{x:.2f}' for x in os.getloadavg())}")
    print(f"sweep: {count} variants of {BALCONY.name}")

    t2, cpu2, rows2 = timed_sweep(vary, 2)
    print(f"  2 workers: {t2:7.1f} s wall ({t2 / count:.2f} s per variant), "
          f"workers' CPU {cpu2:.1f} s")
    t1, cpu1, rows1 = timed_sweep(vary, 1)
    print(f"  1 worker:  {t1:7.1f} s wall ({t1 / count:.2f} s per variant), "
          f"workers' CPU {cpu1:.1f} s  baseline")
    ratio = t1 / t2
    failed = sum(not r.ok for r in rows2)
    same = rows1 == rows2
    if not same:            # e.g. the code changed under a long run
        differ = [a.index for a, b in zip(rows1, rows2) if a != b]
        print(f"  rows that differ: {len(differ)}, first {differ[:5]}")
    print(f"  speed-up 2 vs 1 workers: {ratio:.2f} x")
    print(f"  failed variants: {failed}; 1- and 2-worker rows identical: {same}")
    print(f"load average after:  {' '.join(f'{x:.2f}' for x in os.getloadavg())}")
    if not args.small:
        print(f"target: 100 variants under {TARGET_SECONDS:.0f} s on 2 workers: "
              f"{'met' if t2 < TARGET_SECONDS else 'NOT met'} ({t2:.1f} s)")
        print(f"target: speed-up at least {TARGET_RATIO} x: "
              f"{'met' if ratio >= TARGET_RATIO else 'NOT met'} ({ratio:.2f} x)")
    return 0 if same and not failed else 1


if __name__ == "__main__":
    raise SystemExit(main())
