"""Three environments against two on the same meshes.

Target (issue 11): a three-environment model costs at most 1.6× the time of
a two-environment model of the same mesh. The three-environment model is the
fictional room over a garage of the test suite (tests/reference_grid.py); its
two-environment twin is the same section with the garage's surfaces facing
the outside air (one environment fewer, the same surfaces and so the same
mesh). Timed on a fixed chain of nested meshes (the study's first mesh and
uniform refinements of it, so the multigrid solver has its hierarchy):
assembly and the unit cases of both resistance sets on every mesh (nested
iteration from the coarser one), the error indicators the study would use,
and the results of the finest mesh. Also shown, for information: the whole
adaptive study (`run`) of each, which refines each model as far as its own
couplings need.

Usage::

    python benchmarks/bench_environments.py [--levels 4] [--repeat 3]
"""

from __future__ import annotations

import argparse
import dataclasses
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "tests"))

import reference_grid  # noqa: E402

from bridgecalc.api import run  # noqa: E402
from bridgecalc.mesh import build_mesh, refine  # noqa: E402
from bridgecalc.readers.modelfile import loads  # noqa: E402
from bridgecalc.results import build_result  # noqa: E402
from bridgecalc.solve.cases import solve_cases  # noqa: E402
from bridgecalc.solve.linsolve import one_blas_thread  # noqa: E402
from bridgecalc.study import convergence, indicators  # noqa: E402


def models():
    """(three-environment model, its two-environment twin)."""
    three = loads(reference_grid.three_environment_case(), "three environments")
    surfaces = [dataclasses.replace(s, environment="outside") if s.environment == "garage"
                else s for s in three.surfaces]
    flanking = [dataclasses.replace(f, between=None) for f in three.flanking
                if "garage" not in f.between or "room" in f.between]
    two = dataclasses.replace(three, environments=[e for e in three.environments
                                                   if e.name != "garage"],
                              surfaces=surfaces, flanking=flanking, origin="two environments")
    return three, two


def chain(model, levels: int):
    meshes = [build_mesh(model, convergence.FIRST_MESH)]
    for _ in range(levels):
        meshes.append(refine(meshes[-1]))
    return meshes


def per_mesh_work(model, meshes) -> float:
    """Seconds for the unit cases, indicators and results on every mesh."""
    side = convergence.interior_side(model)
    t0 = time.perf_counter()
    cases = None
    for mesh in meshes:
        cases = solve_cases(model, mesh, "P1", cases)
        level, _ = convergence.level_of(cases, side, {})
        field = cases.heat.field(cases.temperatures)
        from bridgecalc.solve.cases import conditions
        indicators.energy_error_indicators(cases.problem, field, conditions(model))
    build_result(cases, None, "P1")
    return time.perf_counter() - t0


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--levels", type=int, default=4)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args(argv)
    three, two = models()
    meshes = chain(three, args.levels)
    print(f"meshes: {', '.join(str(m.node_count) for m in meshes)} nodes")
    with one_blas_thread():
        per_mesh_work(three, meshes[:2])             # warm-up (imports, caches)
        times = {"two": [], "three": []}
        for _ in range(args.repeat):
            for name, model in (("two", two), ("three", three)):
                times[name].append(per_mesh_work(model, meshes))
    t2, t3 = statistics.median(times["two"]), statistics.median(times["three"])
    print(f"same meshes, median of {args.repeat}: two environments {t2:.3f} s, "
          f"three {t3:.3f} s, ratio {t3 / t2:.2f} (target ≤ 1.6)")
    for name, model in (("two", two), ("three", three)):
        t0 = time.perf_counter()
        result = run(model)
        seconds = time.perf_counter() - t0
        print(f"whole study, {name} environments: {seconds:.2f} s, "
              f"{result.mesh.node_count} nodes, {len(result.convergence.levels)} meshes, "
              f"converged {result.convergence.criterion_met}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
