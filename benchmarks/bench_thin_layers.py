"""Thin layers: time and nodes to a converged Ψ, against in-run baselines.

Models (fictional, demo data): the README's wall (200 mm concrete, 160 mm
insulation, a 10 mm steel plate through the insulation at mid-height, 2000 mm
tall, cut-off planes top and bottom) with a thin layer over its full height:

- ``liner 1 mm`` / ``liner 0.2 mm``: a steel liner between the concrete and
  the insulation (x = 199–200 mm or 199.8–200 mm);
- ``foil 0.01 mm``: an aluminium foil (λ = 160) in the same place;
- ``membrane 0.2 mm``: a membrane of λ = 0.2 in the same place;
- ``cladding 0.7 mm``: a steel sheet on the exterior face, which the plate
  reaches;
- ``sloped sheet 0.5 mm``: no liner; a 0.5 mm steel sheet crossing the
  insulation on a slope (polygon) instead of the plate.

Per model, measured in one run:

(a) reference L2D: an independent code path on a tensor-product grid
    (:func:`tensor_reference`), three or four levels halving every spacing,
    Richardson-extrapolated with the observed order; its uncertainty is
    Roache's grid-convergence index (safety factor 1.25, from memory). Only
    for models of axis-aligned rectangles (not the sloped sheet);
(b) baseline: ``bridgecalc.run`` with the first mesh the study used before
    thin layers were meshed as such (``FIRST_MESH`` with
    ``thin_aspect=inf``: every part meshed by its own thickness), one run in
    a child process, stopped after ``--baseline-timeout`` seconds (default
    300);
(c) bridgecalc: ``bridgecalc.run`` at default settings (median of three),
    its nodes, Ψ, estimated and true error; and the same run with a direct
    linear solver forced (``BRIDGECALC_SOLVER=superlu``), to show how much
    of the time the multigrid solver takes on needle meshes;
(d) the shipped junctions in ``geometries/`` and ISO 10211 case 2, first
    mesh as before vs as now: median time of three runs, nodes and Ψ (L2D
    for case 2).

Ratios (baseline / bridgecalc) are of times and nodes measured in the same
process. Times are wall-clock; the load average is printed at the start and
the end.

Usage: python benchmarks/bench_thin_layers.py [--levels 3|4] [--skip-junctions]
       [--models NAME,NAME] [--baseline-timeout SECONDS]
"""

from __future__ import annotations

import argparse
import dataclasses
import datetime
import math
import multiprocessing
import os
import platform
import statistics
import time
from pathlib import Path

import numpy as np
import scipy.sparse.linalg as spla
from skfem import Basis, BilinearForm, ElementTriP1, FacetBasis, LinearForm, MeshTri, asm
from skfem.helpers import dot, grad

from bridgecalc.validation import cases as validation
from bridgecalc.solve import linsolve
from bridgecalc.study.convergence import FIRST_MESH
from bridgecalc.readers.modelfile import loads
from bridgecalc.api import load, run

ROOT = Path(__file__).resolve().parent.parent
JUNCTIONS = ["balcony", "eaves", "ground_floor", "parapet", "slab_edge", "steel_beam",
             "timber_stud", "wall_corner", "window_jamb"]
#: The study's first mesh before thin layers had their own meshing.
ISOTROPIC_FIRST_MESH = dataclasses.replace(FIRST_MESH, thin_aspect=math.inf)

MATERIALS = {"concrete": 2.3, "insulation": 0.035, "steel": 50.0, "aluminium": 160.0,
             "membrane": 0.2}


def wall_text(name: str, layers, plate=(200, 360, 995, 1005), height=2000.0,
              extra_regions=()) -> str:
    """A model file (TOML) of the README's wall with the given layers.

    Parameters
    ----------
    layers : sequence of (material, thickness [mm])
        From the interior (x = 0) outwards, each over the full height.
    plate : (x0, x1, y0, y1) or None
        A steel plate [mm], drawn over the layers.
    extra_regions : sequence of (material, polygon)
        Drawn last [mm].
    """
    used = {m for m, _ in layers} | {"steel"}
    lines = [f'format = 1\nname = "{name}"\nlength_unit = "mm"\n']
    for m in sorted(used):
        lines.append(f"[materials.{m}]\nconductivity = {MATERIALS[m]}\n")
    x = 0.0
    for m, d in layers:
        lines.append(f'[[regions]]\nmaterial = "{m}"\nrectangle = [{x:g}, 0, {x + d:g}, '
                     f'{height:g}]\n')
        x += d
    if plate is not None:
        lines.append('[[regions]]\nmaterial = "steel"\nrectangle = [{:g}, {:g}, {:g}, {:g}]\n'
                     .format(plate[0], plate[2], plate[1], plate[3]))
    for m, polygon in extra_regions:
        points = ", ".join(f"[{px:g}, {py:g}]" for px, py in polygon)
        lines.append(f'[[regions]]\nmaterial = "{m}"\npolygon = [{points}]\n')
    lines.append('[[environments]]\nname = "inside"\ntemperature = 20.0\nkind = "interior"\n')
    lines.append('[[environments]]\nname = "outside"\ntemperature = 0.0\nkind = "exterior"\n')
    lines.append(f'[[surfaces]]\nenvironment = "inside"\nresistance = 0.13\n'
                 f'resistance_surface_temperature = 0.25\npath = [[0, 0], [0, {height:g}]]\n')
    lines.append(f'[[surfaces]]\nenvironment = "outside"\nresistance = 0.04\n'
                 f'path = [[{x:g}, 0], [{x:g}, {height:g}]]\n')
    layer_list = ", ".join(f'{{ material = "{m}", thickness = {d:g} }}' for m, d in layers)
    lines.append(f'[[flanking]]\nname = "wall"\nlength = {height:g}\nlayers = [{layer_list}]\n'
                 f'surface_resistances = [0.13, 0.04]\n')
    return "\n".join(lines)


def models() -> dict:
    """The benchmark's models by name."""
    return {
        "liner 1 mm": wall_text("liner 1 mm", [("concrete", 199), ("steel", 1),
                                               ("insulation", 160)]),
        "liner 0.2 mm": wall_text("liner 0.2 mm", [("concrete", 199.8), ("steel", 0.2),
                                                   ("insulation", 160)]),
        "foil 0.01 mm": wall_text("foil 0.01 mm", [("concrete", 199.99), ("aluminium", 0.01),
                                                   ("insulation", 160)]),
        "membrane 0.2 mm": wall_text("membrane 0.2 mm", [("concrete", 199.8),
                                                         ("membrane", 0.2),
                                                         ("insulation", 160)]),
        "cladding 0.7 mm": wall_text("cladding 0.7 mm", [("concrete", 200), ("insulation", 160),
                                                         ("steel", 0.7)]),
        "sloped sheet 0.5 mm": wall_text(
            "sloped sheet 0.5 mm", [("concrete", 200), ("insulation", 160)], plate=None,
            extra_regions=[("steel", [(200, 900), (360, 950), (360, 950.5), (200, 900.5)])]),
    }


# -- independent reference: tensor-product grid, scikit-fem, SciPy -------------

@BilinearForm
def _conduction(u, v, w):
    return w.lam * dot(grad(u), grad(v))


@BilinearForm
def _mass(u, v, _):
    return u * v


@LinearForm
def _load(v, _):
    return v


def graded_axis(breaks, first: float, ratio: float, largest: float) -> np.ndarray:
    """Grid lines through every break, cells of ``first`` at each break growing
    by ``ratio`` up to ``largest`` towards the middle of each interval [mm]."""
    breaks = sorted(set(float(b) for b in breaks))
    lines = [breaks[0]]
    for a, b in zip(breaks[:-1], breaks[1:]):
        span = b - a
        half, size, covered = [], min(first, span / 2), 0.0
        while covered + size < span / 2:
            half.append(size)
            covered += size
            size = min(size * ratio, largest)
        rest = span - 2 * covered
        count = max(1, math.ceil(rest / size))
        sizes = half + [rest / count] * count + half[::-1]
        x = a + np.cumsum(sizes)
        x[-1] = b
        lines.extend(x.tolist())
    return np.array(lines)


def halve(x: np.ndarray, times: int) -> np.ndarray:
    """Every spacing halved ``times`` times."""
    for _ in range(times):
        x = np.sort(np.concatenate([x, 0.5 * (x[1:] + x[:-1])]))
    return x


def tensor_l2d(model, x: np.ndarray, y: np.ndarray) -> float:
    """L2D [W/(m·K)] of a model of axis-aligned rectangles on the grid x × y [mm].

    Each grid cell is split into two right triangles (``MeshTri.init_tensor``);
    conductivities by cell centre in painter's order; P1 by scikit-fem's
    generic assembly with the surface-resistance terms h∫θv and h θj∫v on the
    boundary facets of each surface path (ISO 10211:2017, 7.2); SciPy's
    ``spsolve``; L2D = Φi / (θi − θe), Φi = Σ h ∫(θi − θ) over the interior
    surfaces (ISO 10211:2017, 10.4.2, from memory of the clause numbering).
    """
    scale = model.metres_per_unit
    mesh = MeshTri.init_tensor(x * scale, y * scale)
    basis = Basis(mesh, ElementTriP1())
    centre = mesh.p[:, mesh.t].mean(axis=1) / scale
    lam = np.full(mesh.t.shape[1], np.nan)
    for region in model.regions:
        v = np.asarray(region.vertices, dtype=float)
        (x0, y0), (x1, y1) = v.min(axis=0), v.max(axis=0)
        inside = (centre[0] > x0) & (centre[0] < x1) & (centre[1] > y0) & (centre[1] < y1)
        lam[inside] = model.materials[region.material].conductivity
    if not np.isfinite(lam).all():
        raise ValueError("the tensor reference needs a model of axis-aligned rectangles")
    matrix = asm(_conduction, basis, lam=np.repeat(lam[:, None], basis.X.shape[1], axis=1))
    rhs = np.zeros(basis.N)
    temperature = {e.name: e.temperature for e in model.environments}
    kind = {e.name: e.kind for e in model.environments}
    middle = mesh.p[:, mesh.facets].mean(axis=1) / scale
    outline = np.zeros(mesh.facets.shape[1], dtype=bool)
    outline[mesh.boundary_facets()] = True
    interior_loads = []
    for surface in model.surfaces:
        path = np.asarray(surface.path, dtype=float)
        on = np.zeros(mesh.facets.shape[1], dtype=bool)
        for p, q in zip(path[:-1], path[1:]):
            lo, hi = np.minimum(p, q) - 1e-9, np.maximum(p, q) + 1e-9
            on |= ((middle[0] >= lo[0]) & (middle[0] <= hi[0])
                   & (middle[1] >= lo[1]) & (middle[1] <= hi[1]))
        facets = FacetBasis(mesh, ElementTriP1(), facets=np.flatnonzero(on & outline))
        h = 1.0 / surface.resistance
        load = asm(_load, facets)
        matrix = matrix + h * asm(_mass, facets)
        rhs = rhs + h * temperature[surface.environment] * load
        if kind[surface.environment] == "interior":
            interior_loads.append((h, temperature[surface.environment], load))
    theta = spla.spsolve(matrix.tocsc(), rhs)
    theta_i = next(e.temperature for e in model.environments if e.kind == "interior")
    theta_e = next(e.temperature for e in model.environments if e.kind == "exterior")
    flow = sum(h * (t * load.sum() - load @ theta) for h, t, load in interior_loads)
    return float(flow / (theta_i - theta_e))


def tensor_reference(model, levels: int = 3, ratio: float = 1.25):
    """Reference L2D of a model of axis-aligned rectangles, independent of
    bridgecalc's meshing, assembly, solvers and refinement.

    A tensor-product grid through every region and surface-path coordinate,
    graded geometrically (``ratio``) from cells of half the thinnest part at
    every such line up to 1/40 of the model's size, is solved by
    :func:`tensor_l2d`, then with every spacing halved, ``levels`` grids in
    all. Over the last three, Richardson extrapolation with the observed
    order p (Richardson 1911; Roache, J. Fluids Eng. 116, 1994, 405–413):
    L∞ = L3 + (L3 − L2)/(2^p − 1), uncertainty GCI = 1.25·|L3 − L2|/(2^p − 1)
    (Roache's safety factor for three grids, from memory).

    Returns
    -------
    dict
        ``value`` L∞ and ``uncertainty`` [W/(m·K)], ``order`` p [-],
        ``values`` per grid, ``nodes`` per grid, ``seconds``.
    """
    t0 = time.perf_counter()
    xs, ys = set(), set()
    thinnest = math.inf
    for region in model.regions:
        v = np.asarray(region.vertices, dtype=float)
        xs.update(v[:, 0])
        ys.update(v[:, 1])
        thinnest = min(thinnest, float(np.ptp(v, axis=0).min()))
    for surface in model.surfaces:
        v = np.asarray(surface.path, dtype=float)
        xs.update(v[:, 0])
        ys.update(v[:, 1])
    size = max(max(xs) - min(xs), max(ys) - min(ys))
    x0 = graded_axis(xs, thinnest / 2, ratio, size / 40)
    y0 = graded_axis(ys, thinnest / 2, ratio, size / 40)
    values, nodes = [], []
    for k in range(levels):
        x, y = halve(x0, k), halve(y0, k)
        values.append(tensor_l2d(model, x, y))
        nodes.append(len(x) * len(y))
    q1, q2, q3 = values[-3:]
    order = math.log((q1 - q2) / (q2 - q3)) / math.log(2.0)
    correction = (q3 - q2) / (2.0 ** order - 1.0)
    return {"value": q3 + correction, "uncertainty": 1.25 * abs(correction), "order": order,
            "values": values, "nodes": nodes, "seconds": time.perf_counter() - t0}


# -- the benchmark ---------------------------------------------------------------

def timed_run(model, options=None, repeats=1, solver=None):
    """(median seconds, last result) of ``repeats`` runs, optionally with a
    linear solver forced through BRIDGECALC_SOLVER."""
    previous = os.environ.get("BRIDGECALC_SOLVER")
    if solver:
        os.environ["BRIDGECALC_SOLVER"] = solver
    try:
        times = []
        for _ in range(repeats):
            t0 = time.perf_counter()
            result = run(model, options)
            times.append(time.perf_counter() - t0)
    finally:
        if solver:
            if previous is None:
                os.environ.pop("BRIDGECALC_SOLVER", None)
            else:
                os.environ["BRIDGECALC_SOLVER"] = previous
    return statistics.median(times), result


def _summary(seconds, result) -> dict:
    study = result.convergence
    return {"seconds": seconds, "first": study.levels[0].nodes, "nodes": result.mesh.node_count,
            "meshes": len(study.levels), "psi": result.psi,
            "estimate": study.psi_error_estimate, "relative": study.relative_errors()["psi"],
            "converged": study.criterion_met}


def _child(text, name, options, queue):
    seconds, result = timed_run(loads(text, name), options)
    queue.put(_summary(seconds, result))


def run_in_child(text, name, options, timeout):
    """:func:`_summary` of one run in a child process, or None after ``timeout`` [s]
    (the child is then terminated)."""
    queue = multiprocessing.get_context("fork").Queue()
    child = multiprocessing.get_context("fork").Process(
        target=_child, args=(text, name, options, queue))
    child.start()
    try:
        return queue.get(timeout=timeout)
    except Exception:                      # queue.Empty: no result in time
        return None
    finally:
        if child.is_alive():
            child.terminate()
        child.join()


def thin_rows(names, levels, timeout):
    for name, text in models().items():
        if names and name not in names:
            continue
        model = loads(text, name)
        print(f"{name}:", flush=True)
        ref = None
        if "sloped" not in name:
            ref = tensor_reference(model, levels)
            print(f"  reference (tensor grids {', '.join(str(n) for n in ref['nodes'])} nodes, "
                  f"{ref['seconds']:.1f} s): L2D {ref['value']:.7f} ± {ref['uncertainty']:.1e} "
                  f"W/(m·K), observed order {ref['order']:.2f}", flush=True)
        t0 = time.perf_counter()
        base = run_in_child(text, name, ISOTROPIC_FIRST_MESH, timeout)
        base_wall = time.perf_counter() - t0
        ours_t, ours = timed_run(model, repeats=3)
        direct_t, direct = timed_run(model, repeats=3, solver="superlu")
        ul = ours.coupling_coefficient - ours.psi
        rows = [("baseline (isotropic first mesh)", base),
                ("bridgecalc", _summary(ours_t, ours)),
                ("bridgecalc, direct solver", _summary(direct_t, direct))]
        for label, row in rows:
            if row is None:
                print(f"  {label}: no result within {timeout:.0f} s "
                      f"(stopped after {base_wall:.0f} s)", flush=True)
                continue
            line = (f"  {label}: {row['seconds']:.2f} s, first mesh {row['first']} nodes, "
                    f"final {row['nodes']} nodes, {row['meshes']} meshes, "
                    f"Ψ {row['psi']:.6f}, estimated error {row['estimate']:.1e} "
                    f"(relative {row['relative']:.1e}), "
                    f"{'converged' if row['converged'] else 'NOT CONVERGED'}")
            if ref is not None:
                error = row["psi"] - (ref["value"] - ul)
                covered = abs(error) <= row["estimate"] + ref["uncertainty"]
                line += (f", error against the reference {error:+.1e} "
                         f"({'within' if covered else 'OUTSIDE'} estimate + reference "
                         f"uncertainty)")
            print(line, flush=True)
        base_seconds = base["seconds"] if base else timeout
        more = "" if base else "more than "
        print(f"  ratios baseline / bridgecalc: time {more}{base_seconds / ours_t:.1f}×"
              + (f", nodes {base['nodes'] / ours.mesh.node_count:.1f}×" if base else "")
              + f"; with the direct solver: time {more}{base_seconds / direct_t:.1f}×; "
              f"multigrid / direct {ours_t / direct_t:.1f}×", flush=True)


def junction_rows():
    print("shipped junctions, first mesh before (thin_aspect=inf) / now, median of 3:")
    for name in JUNCTIONS + ["iso10211-case2"]:
        model = (validation.case2_model() if name == "iso10211-case2"
                 else load(ROOT / "geometries" / f"{name}.py"))
        before_t, before = timed_run(model, ISOTROPIC_FIRST_MESH, repeats=3)
        after_t, after = timed_run(model, repeats=3)

        def value(r):
            return r.psi if r.psi is not None else r.coupling_coefficient

        def estimate(r):
            c = r.convergence
            return (c.psi_error_estimate if r.psi is not None
                    else c.coupling_coefficient.error_estimate)

        print(f"  {name:15s} {before_t:.2f} / {after_t:.2f} s ({before_t / after_t:.2f}×), "
              f"nodes {before.mesh.node_count} / {after.mesh.node_count}, "
              f"{'Ψ' if before.psi is not None else 'L2D'} {value(before):.7f} ± "
              f"{estimate(before):.1e} / {value(after):.7f} ± {estimate(after):.1e}"
              f"{'' if after.convergence.criterion_met else ' NOT CONVERGED'}", flush=True)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--levels", type=int, default=3, choices=(3, 4),
                        help="tensor-grid levels of the reference (4: about 10x the time)")
    parser.add_argument("--skip-junctions", action="store_true")
    parser.add_argument("--models", default="", help="comma-separated model names")
    parser.add_argument("--baseline-timeout", type=float, default=300.0)
    args = parser.parse_args()
    print(f"{datetime.date.today()} {platform.processor() or platform.machine()} "
          f"Python {platform.python_version()}, solvers here: {', '.join(linsolve.backends())}, "
          f"load average {' '.join(Path('/proc/loadavg').read_text().split()[:3])}", flush=True)
    names = {n.strip() for n in args.models.split(",") if n.strip()}
    thin_rows(names, args.levels, args.baseline_timeout)
    if not args.skip_junctions:
        junction_rows()
    print(f"load average at the end {' '.join(Path('/proc/loadavg').read_text().split()[:3])}")


if __name__ == "__main__":
    main()
