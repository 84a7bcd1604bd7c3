"""Time the outputs of a run against the solve of the same run.

Each repeat is a fresh Python process that solves the demo junction
(``api.demo_model``) and then writes every default output (results.json, the
PNG figures, field.vtu, results.csv, report.html, report.pdf), so import costs of matplotlib, ReportLab and meshio
count as part of the outputs. The validation stamp is taken from the cache
(it is filled once before the repeats; its one-time cost is printed apart).

Two kinds of process per repeat: the solve alone, and the solve then every
output. The overhead of the outputs is the whole second process's time minus
the median time of the solve alone; the split measured inside the second
process is printed too. Wall-clock seconds; the CPU seconds include
the worker processes. The target is outputs in under 1 s beyond the solve on
the demo (issue 16; 3 s before), read from the "overhead" lines. Nothing is
asserted.

    python benchmarks/bench_outputs.py [--repeats N] [--workers N]
"""

from __future__ import annotations

import argparse
import json
import statistics
import subprocess
import sys
import time

CHILD = r"""
import json, os, resource, sys, tempfile, time
from pathlib import Path
def cpu():
    s, c = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
    return s.ru_utime + s.ru_stime + c.ru_utime + c.ru_stime
workers = None if sys.argv[2] == "auto" else int(sys.argv[2])
mode = sys.argv[3]
w0, c0 = time.perf_counter(), cpu()
from bridgecalc.api import demo_model, run
result = run(demo_model())
w1, c1 = time.perf_counter(), cpu()
if mode == "solve":
    print(json.dumps({"solve": w1 - w0, "solve_cpu": c1 - c0}))
    sys.exit(0)
from bridgecalc.outputs import write_outputs
with tempfile.TemporaryDirectory() as tmp:
    write_outputs(result, Path(tmp) / "out", f_rsi_min=0.75, dimension_system="external",
                  workers=workers)
w2, c2 = time.perf_counter(), cpu()
print(json.dumps({"solve": w1 - w0, "outputs": w2 - w1, "total": w2 - w0,
                  "solve_cpu": c1 - c0, "outputs_cpu": c2 - c1}))
"""


def measure(repeats: int = 3, workers: str = "auto") -> float:
    """Print the repeats and medians; return the overhead of the outputs beyond
    the solve alone [s, wall]."""
    from pathlib import Path
    root = Path(__file__).resolve().parent.parent

    start = time.perf_counter()
    from bridgecalc.validation import stamp
    cached = stamp.load_cached() is not None
    stamp.current_stamp()
    print(f"validation stamp: {'cached' if cached else 'computed now'} "
          f"({time.perf_counter() - start:.2f} s, paid once per build)")

    def child(mode):
        out = subprocess.run([sys.executable, "-c", CHILD, str(root), workers, mode],
                             check=True, capture_output=True, text=True).stdout
        return json.loads(out.strip().splitlines()[-1])

    rows = {"solve": [], "all": []}
    for k in range(repeats):
        for mode in rows:
            row = child(mode)
            rows[mode].append(row)
            print(f"repeat {k + 1} {mode:5s}: " + ", ".join(f"{key} {v:.2f} s"
                                                        for key, v in row.items()))
    solve = statistics.median(r["solve"] for r in rows["solve"])
    print(f"median solve alone (its own process): {solve:.2f} s")
    total = statistics.median(r["total"] for r in rows["all"])
    inner = statistics.median(r["outputs"] for r in rows["all"])
    cpu = statistics.median(r["outputs_cpu"] for r in rows["all"])
    print(f"solve and outputs: total {total:.2f} s, of which after the solve {inner:.2f} s "
          f"(CPU {cpu:.2f} s with the worker processes)")
    print(f"overhead (outputs beyond the solve alone, wall): {total - solve:.2f} s "
          f"(target < 1 s); in-process split: {inner:.2f} s")
    return total - solve


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--workers", default="auto", help="figure processes, or 'auto'")
    args = parser.parse_args()
    measure(args.repeats, args.workers)
    return 0


if __name__ == "__main__":
    sys.exit(main())
