"""This tree's `run` against an earlier revision's, on the shipped junctions.

A yardstick for "no slower than before": both versions run each junction in
their own process, four times each, alternating which goes first, `--repeat`
times after one warm-up run each; the table gives the medians, their ratio, and Ψ
from both (which must agree to the study's tolerance). The earlier revision
is checked out with `git worktree` into a temporary folder and imported from
there; nothing is installed.

Usage::

    python benchmarks/bench_versions.py [--revision 70c7f25] [--repeat 5]
        [--junctions balcony,steel_beam,window_jamb,slab_edge,ground_floor]
"""

from __future__ import annotations

import argparse
import json
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
JUNCTIONS = ("balcony", "steel_beam", "window_jamb", "slab_edge", "ground_floor")

#: Run in a child process with the tree to measure first on sys.path.
CHILD = """
import json, sys, time
sys.path.insert(0, sys.argv[1])
import bridgecalc
try:
    from bridgecalc.api import load
except ImportError:                      # revisions before the api module
    from bridgecalc.pipeline import load
model = load(sys.argv[1] + "/geometries/" + sys.argv[2] + ".py")
bridgecalc.run(model)                    # warm-up: imports, caches
times = []
for _ in range(int(sys.argv[3])):
    t0 = time.perf_counter()
    result = bridgecalc.run(model)
    times.append(time.perf_counter() - t0)
print(json.dumps({"times": times, "psi": result.psi, "nodes": result.mesh.node_count,
                  "file": bridgecalc.__file__}))
"""


def measure(tree: Path, junction: str, repeat: int) -> dict:
    out = subprocess.run([sys.executable, "-c", CHILD, str(tree), junction, str(repeat)],
                         capture_output=True, text=True, check=True, cwd=tempfile.gettempdir())
    data = json.loads(out.stdout.strip().splitlines()[-1])
    assert data["file"].startswith(str(tree)), data["file"]
    return data


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--revision", default="70c7f25",
                        help="the earlier revision (default: before issue 11's changes)")
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--junctions", default=",".join(JUNCTIONS))
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        old = Path(tmp) / "old"
        subprocess.run(["git", "-C", str(ROOT), "worktree", "add", "-q", "--detach", str(old),
                        args.revision], check=True)
        try:
            print(f"{'junction':14s} {'this tree':>10s} {args.revision:>10s} {'ratio':>6s}  "
                  f"{'nodes':>13s}  Ψ this / earlier [W/(m·K)]")
            ratios = []
            for name in args.junctions.split(","):
                new_times, old_times = [], []
                for k in range(4):                   # alternate, each first in turn
                    if k % 2:
                        earlier = measure(old, name, args.repeat)
                    new = measure(ROOT, name, args.repeat)
                    if not k % 2:
                        earlier = measure(old, name, args.repeat)
                    new_times += new["times"]
                    old_times += earlier["times"]
                t_new, t_old = statistics.median(new_times), statistics.median(old_times)
                ratios.append(t_new / t_old)
                print(f"{name:14s} {t_new:9.3f}s {t_old:9.3f}s {t_new / t_old:6.2f}  "
                      f"{new['nodes']:6d}/{earlier['nodes']:<6d}  "
                      f"{new['psi']:.6f} / {earlier['psi']:.6f}", flush=True)
            print(f"median ratio {statistics.median(ratios):.2f} (this tree / {args.revision}; "
                  f"target ≤ 1)")
        finally:
            subprocess.run(["git", "-C", str(ROOT), "worktree", "remove", "--force", str(old)],
                           check=False)
    return 0


if __name__ == "__main__":
    sys.exit(main())
