"""Guaranteed bounds in the study: how tight, what they cost, what they save.

For each shipped junction (two temperatures), all at the default tolerance:

* **before**: the study as it was before the bounds (adaptive refinement,
  stopping on the Richardson estimate alone; the bounds switched off by
  making :func:`bridgecalc.study.bounds.unavailable_reason` give a reason);
* **default**: ``bridgecalc.run`` as shipped (adaptive refinement; from the
  third mesh on, the quadratic intervals give every value a guaranteed error
  and the study stops when those are below the tolerance);
* **interval**: ``refinement="interval"`` (refine where the triangles' shares
  of the bound gap are largest, stop when the intervals are narrower than the
  tolerance).

Best of ``--repeat`` runs each, alternating, in one process: wall time and
final nodes. Truth: the default run's final mesh refined ``--refinements``
times (default 6) where the triangles' shares of the bound gap are largest,
some 30 times the nodes, where the quadratic bounds give an interval [lo, hi]
of L2D a thousand times narrower (its half width printed as "±": a true error
is known to within it) and the quadratic θsi,min, far closer to the exact
one than the linear θsi,min of the run.
Printed per junction:

* time and nodes of default and interval runs over before (target of the
  issue: the default no slower than before, ratio ≤ 1);
* the default run's interval width over the true error of the Richardson
  extrapolated L2D of the same run (target: at most 3), and, for the run
  before, its Richardson estimate over its true error (what the error bar
  was);
* the guaranteed error reported beside L2D over its true error;
* θsi,min: the default run's estimated error [K] and that over its true
  error (≥ 1 means covered).

Times are wall-clock; other jobs may share the machine (load average
printed); ratios are measured in the same run.

Usage: python benchmarks/bench_bounds.py [--junctions a,b] [--repeat 3] [--refinements 6]
"""

from __future__ import annotations

import argparse
import os
import time
from pathlib import Path

from bridgecalc.api import load, run
from bridgecalc.mesh import refine
from bridgecalc.solve.cases import solve_cases
from bridgecalc.study import bounds, convergence, indicators
from bridgecalc.study.levels import interior_side, interior_surfaces

ROOT = Path(__file__).resolve().parents[1]
JUNCTIONS = ("balcony", "eaves", "ground_floor", "parapet", "slab_edge", "steel_beam",
             "timber_stud", "wall_corner", "window_jamb")


def timed(model, **kwargs):
    start = time.perf_counter()
    result = run(model, **kwargs)
    return time.perf_counter() - start, result


def before(model):
    """A default run with the bounds switched off: the study as it was."""
    keep = bounds.unavailable_reason
    bounds.unavailable_reason = lambda cases: "switched off by the benchmark"
    try:
        return timed(model)
    finally:
        bounds.unavailable_reason = keep


def truth(result, times):
    """L2D's interval and the quadratic θsi,min on the final mesh refined
    ``times`` times where the triangles' shares of the bound gap are largest
    (Dörfler marking, as the interval study does)."""
    model, mesh = result.model, result.mesh
    side = interior_side(model)
    for k in range(times + 1):
        cases = solve_cases(model, mesh)
        found = bounds.coupling_bounds(cases, side, gaps=k < times)
        if k < times:
            mesh = refine(mesh, indicators.mark(found.indicators([tuple(sorted(side[2]))])))
    theta_1 = cases.surface.field(cases.temperatures).minimum_on(
        interior_surfaces(model))[0]
    theta, _ = convergence._theta_check(cases, found.quadratic, theta_1)
    return found.coupling_coefficient, theta, mesh.node_count


def main(argv=None):
    parser = argparse.ArgumentParser()
    parser.add_argument("--junctions", default=",".join(JUNCTIONS))
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--refinements", type=int, default=6,
                        help="gap-driven refinements of the final mesh for the truth")
    args = parser.parse_args(argv)
    print(f"load average {os.getloadavg()[0]:.2f}")
    print(f"{'junction':13s} {'t before':>8s} {'t dflt':>7s} {'t intv':>7s} {'dflt/bef':>8s} "
          f"{'intv/bef':>8s} {'N before':>8s} {'N dflt':>7s} {'N intv':>7s} {'width':>9s} "
          f"{'err extr':>9s} {'±':>8s} {'w/err':>6s} {'Rich/err':>8s} {'bound/err':>9s} "
          f"{'θ est K':>8s} {'θ est/err':>8s}")
    for name in args.junctions.split(","):
        model = load(ROOT / "geometries" / f"{name}.py")
        times = {"before": [], "default": [], "interval": []}
        for _ in range(args.repeat):
            t, old = before(model)
            times["before"].append(t)
            t, new = timed(model)
            times["default"].append(t)
            t, intv = timed(model, refinement="interval")
            times["interval"].append(t)
        t_b, t_d, t_i = (min(times[k]) for k in ("before", "default", "interval"))
        interval, theta_truth, _ = truth(new, args.refinements)
        lo, hi = interval.lower, interval.upper
        truth_l, spread = 0.5 * (lo + hi), 0.5 * (hi - lo)
        conv = new.convergence
        richardson = conv.richardson.get("coupling_coefficient", conv.coupling_coefficient)
        err = max(abs(richardson.value - truth_l), spread)
        width = conv.coupling_coefficient_bounds.width
        reported = conv.coupling_coefficient
        err_reported = max(abs(reported.value - truth_l), spread)
        old_cc = old.convergence.coupling_coefficient
        err_old = max(abs(old_cc.value - truth_l), spread)
        theta_err = abs(new.theta_si_min - theta_truth)
        theta_est = conv.theta_si_min_check[1]
        theta_ratio = theta_est / theta_err if theta_err > 0 else float("inf")
        nodes = [r.convergence.levels[-1].nodes for r in (old, new, intv)]
        print(f"{name:13s} {t_b:8.2f} {t_d:7.2f} {t_i:7.2f} {t_d / t_b:8.2f} {t_i / t_b:8.2f} "
              f"{nodes[0]:8d} {nodes[1]:7d} {nodes[2]:7d} {width:9.2e} {err:9.2e} "
              f"{spread:8.1e} {width / err:6.2f} {old_cc.error_estimate / err_old:8.1f} "
              f"{reported.error_estimate / err_reported:9.2f} {theta_est:8.1e} "
              f"{theta_ratio:8.2f}{'' if conv.criterion_met else '  (default: not converged)'}")


if __name__ == "__main__":
    main()
