"""The interval-driven study against today's default (adaptive) study.

For each shipped junction (two temperatures): ``bridgecalc.run`` with
``refinement="adaptive"`` (the default) and with ``refinement="interval"``
(refine where the triangles' shares of the bound gap are largest; stop when the
guaranteed interval of every L and Ψ is narrower than the tolerance), both at
the default tolerance, best of ``--repeat`` runs each: wall time, final nodes,
the extrapolated L2D, its error estimate, and the guaranteed interval.

Truth: a guaranteed interval [lo, hi] of L2D from an interval study at
tolerance --tight (default 2e-5; its width printed). The true error of an extrapolated value x
is then known to within that width: |x − (lo + hi)/2| ± (hi − lo)/2. Printed
ratios: time and nodes interval/adaptive, and the default-tolerance interval's
width over the true error of the extrapolated value (the issue's target: at
most 3). Times are wall-clock; other jobs may share the machine (load average
printed); ratios are measured in the same run.

With ``--cost``: instead, what the bounds add to a default run. Each junction
is run by default (``bridgecalc.run``, adaptive, default tolerance) with the
bounds of the finest mesh and with them switched off (the study's hook that
attaches them replaced by one that does nothing), best of ``--repeat`` each,
alternating; printed: both times, their ratio, the bounds' own time on the
finest mesh and the nodes of that mesh.

Usage: python benchmarks/bench_bounds.py [--junctions a,b] [--repeat 2] [--cost]
"""

from __future__ import annotations

import argparse
import os
import time
from pathlib import Path

from bridgecalc.api import load, run
from bridgecalc.study import convergence

ROOT = Path(__file__).resolve().parents[1]
JUNCTIONS = ("balcony", "eaves", "ground_floor", "parapet", "slab_edge", "steel_beam",
             "timber_stud", "wall_corner", "window_jamb")


def timed(model, repeat, **kwargs):
    best, result = float("inf"), None
    for _ in range(repeat):
        start = time.perf_counter()
        result = run(model, **kwargs)
        best = min(best, time.perf_counter() - start)
    return best, result


def cost(names, repeat):
    """A default run with and without the finest mesh's bounds, in the same run."""
    attach = convergence._attach_bounds
    spent = []

    def timed_attach(*args, **kwargs):
        start = time.perf_counter()
        attach(*args, **kwargs)
        spent.append(time.perf_counter() - start)

    print(f"{'junction':14s} {'nodes':>8s} {'t with':>8s} {'t without':>9s} {'ratio':>6s} "
          f"{'bounds':>8s}")
    for name in names:
        model = load(ROOT / "geometries" / f"{name}.py")
        with_, without, own = float("inf"), float("inf"), float("inf")
        for _ in range(repeat):
            convergence._attach_bounds = lambda *a, **k: None
            try:
                t, _ = timed(model, 1)
            finally:
                convergence._attach_bounds = attach
            without = min(without, t)
            spent.clear()
            convergence._attach_bounds = timed_attach
            try:
                t, result = timed(model, 1)
            finally:
                convergence._attach_bounds = attach
            with_ = min(with_, t)
            own = min(own, sum(spent))
        nodes = result.convergence.levels[-1].nodes
        print(f"{name:14s} {nodes:8d} {with_:8.2f} {without:9.2f} {with_ / without:6.2f} "
              f"{own:8.3f}")


def main(argv=None):
    parser = argparse.ArgumentParser()
    parser.add_argument("--junctions", default=",".join(JUNCTIONS))
    parser.add_argument("--repeat", type=int, default=2)
    parser.add_argument("--tight", type=float, default=2e-5,
                        help="tolerance of the interval study that gives the truth")
    parser.add_argument("--cost", action="store_true",
                        help="time a default run with and without the bounds")
    args = parser.parse_args(argv)
    print(f"load average {os.getloadavg()[0]:.2f}")
    if args.cost:
        cost(args.junctions.split(","), args.repeat)
        return
    print(f"{'junction':14s} {'t adapt':>8s} {'t intv':>8s} {'ratio':>6s} {'N adapt':>8s} "
          f"{'N intv':>8s} {'ratio':>6s} {'width':>9s} {'err extr':>9s} {'±':>8s} "
          f"{'w/err':>6s} {'est/err':>7s}")
    for name in args.junctions.split(","):
        model = load(ROOT / "geometries" / f"{name}.py")
        t_a, adaptive = timed(model, args.repeat)
        t_i, interval = timed(model, args.repeat, refinement="interval")
        _, tight = timed(model, 1, refinement="interval", tolerance=args.tight, max_nodes=1_000_000)
        conv_t = tight.convergence
        if conv_t.coupling_coefficient_bounds is None:
            print(f"{name:14s} no bounds: {conv_t.bounds_note}")
            continue
        lo, hi = conv_t.coupling_coefficient_bounds.lower, conv_t.coupling_coefficient_bounds.upper
        truth, spread = 0.5 * (lo + hi), 0.5 * (hi - lo)
        ext = adaptive.convergence.coupling_coefficient
        err = abs(ext.value - truth)
        width = interval.convergence.coupling_coefficient_bounds.width
        n_a, n_i = adaptive.convergence.levels[-1].nodes, interval.convergence.levels[-1].nodes
        print(f"{name:14s} {t_a:8.2f} {t_i:8.2f} {t_i / t_a:6.2f} {n_a:8d} {n_i:8d} "
              f"{n_i / n_a:6.2f} {width:9.2e} {err:9.2e} {spread:8.1e} "
              f"{width / max(err, spread):6.1f} {ext.error_estimate / max(err, spread):7.1f}"
              f"{'' if interval.convergence.criterion_met else '  (interval: not converged)'}")


if __name__ == "__main__":
    main()
