"""The model audit's share of a run, measured in one process.

The audit (:func:`bridgecalc.audit.audit`) runs once before every solve. This
times it alone and the default run of the demo junction (``api.run`` with its
default tolerance, which includes the audit), each as the median of several
repeats, and prints the audit's share of the run: the target is under 10 %
(issue 13). The same share is printed for every shipped geometry script, a
run of each at the default tolerance. Wall-clock seconds; nothing is
asserted.

    python benchmarks/bench_audit.py [--repeats N]
"""

from __future__ import annotations

import argparse
import statistics
import time


def median_time(call, repeats: int) -> float:
    """Median wall-clock time of ``call()`` over ``repeats`` calls [s]."""
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        call()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--repeats", type=int, default=3, help="runs per model (default 3)")
    parser.add_argument("--demo-only", action="store_true", help="only the demo junction")
    args = parser.parse_args(argv)

    from bridgecalc import api
    from bridgecalc.audit import audit

    models = [("demo (" + api.DEMO_SCRIPT + ")", api.demo_model())]
    if not args.demo_only:
        models += [(p.name, api.load(p)) for p in sorted(api.geometries_folder().glob("*.py"))
                   if p.name not in ("__init__.py", api.DEMO_SCRIPT)]
    api.run(models[0][1])                                    # imports and caches warm
    print(f"{'model':<24}{'audit [s]':>11}{'run [s]':>10}{'share':>9}")
    for name, model in models:
        audit_s = median_time(lambda: audit(model), 5 * args.repeats)
        run_s = median_time(lambda: api.run(model), args.repeats)
        print(f"{name:<24}{audit_s:11.4f}{run_s:10.3f}{audit_s / run_s:9.2%}")
    print("target: the audit under 10 % of a default run of the demo (first line)")


if __name__ == "__main__":
    main()
