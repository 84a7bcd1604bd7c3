"""Parameter sweeps: one geometry script, many variants, one table.

A sweep runs every combination of the values given for some of a geometry
script's parameters through the one path (:func:`bridgecalc.pipeline.load`,
:func:`bridgecalc.pipeline.run`) and collects Ψ, L2D, θsi,min and fRsi per
variant::

    from bridgecalc.sweep import sweep, write_sweep
    rows = sweep("geometries/balcony.py",
                 {"insulation_thickness_mm": [100.0, 160.0, 220.0],
                  "thermal_break": [False, True]})
    write_sweep(rows, "balcony-sweep", script="geometries/balcony.py")

Variants run in parallel on local processes (one gmsh per process: gmsh is a
process-global library) or, with ``scheduler=ADDRESS``, on a Dask distributed
cluster. A variant that fails (the script refuses a value, the mesh or the
solve fails) is reported in its row; the others complete. Rows come back in
variant order whatever order the variants finish in, so the same input gives
the same table.

Code that calls :func:`sweep` with local processes must be importable without
side effects (``if __name__ == "__main__":`` in a script), because workers are
started with the ``spawn`` method and import the caller's main module.
"""

from __future__ import annotations

import csv
import io
import itertools
import math
import os
import sys
import textwrap
import threading
import time
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass
from pathlib import Path

from .readers import script as scripts
from .outputs import end_with_parent, staged_folder
from .errors import BridgecalcError

CSV_FILE = "sweep.csv"
FIGURE_FILE = "sweep.png"
NOTES_FILE = "sweep.txt"

#: Environment variables that keep numerical libraries to one thread per worker,
#: so that N workers use N cores and not N × cores (oversubscription).
SINGLE_THREAD_ENV = {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1",
                     "MKL_NUM_THREADS": "1", "VECLIB_MAXIMUM_THREADS": "1",
                     "NUMEXPR_NUM_THREADS": "1"}

#: Seconds to wait for a Dask scheduler before giving up.
CONNECT_TIMEOUT_S = 5.0

RESULT_COLUMNS = ("psi [W/(m·K)]", "coupling_coefficient [W/(m·K)]",
                  "theta_si_min [°C]", "f_rsi [-]", "status", "convergence",
                  "mesh_nodes")

CAUTION = ("Results support, and do not replace, a qualified practitioner's "
           "judgement; inputs and criteria must follow the codes in force where "
           "the building stands. A sweep shows trends of one modelled junction: "
           "check the variant you build on with its own full calculation and report.")


@dataclass(frozen=True)
class VariantResult:
    """One row of a sweep.

    Attributes
    ----------
    index : int
        Position in the sweep, from 0, in the order the combinations are formed
        (the first varied parameter changes slowest).
    params : dict
        Every parameter of the script for this variant (defaults filled in).
    status : str
        ``"ok"`` or ``"failed: <message>"``.
    psi : float or None
        Ψ [W/(m·K)]; None when the model has no flanking elements or the
        variant failed.
    coupling_coefficient : float or None
        L2D [W/(m·K)].
    theta_si_min : float or None
        θsi,min [°C].
    f_rsi : float or None
        fRsi [-].
    convergence : str
        ``"single mesh"`` when no mesh-refinement study was run, else
        ``"criterion met"`` or ``"criterion not met"``; empty for a failure.
    mesh_nodes : int or None
        Nodes of the (final) mesh.
    """

    index: int
    params: dict
    status: str
    psi: float | None = None
    coupling_coefficient: float | None = None
    theta_si_min: float | None = None
    f_rsi: float | None = None
    convergence: str = ""
    mesh_nodes: int | None = None

    @property
    def ok(self) -> bool:
        """The variant was computed."""
        return self.status == "ok"


# ----------------------------------------------------------------------------- parsing

def _script_parameter(module, name: str, option: str, origin):
    """The default of parameter ``name``; an error naming the option if unknown."""
    if name not in module.PARAMETERS:
        known = ", ".join(sorted(module.PARAMETERS))
        raise BridgecalcError(f"{origin}: {option} {name}: no such parameter "
                              f"(parameters: {known})")
    return module.PARAMETERS[name]


def parse_vary(module, items, origin) -> dict[str, list]:
    """``--vary`` options -> ``{name: [values, ...]}``, in the order given.

    Each item is ``NAME=START:STOP:COUNT`` (COUNT values evenly spaced from
    START to STOP, both included; numeric parameters only) or
    ``NAME=A,B,C`` (explicit values, e.g. ``thermal_break=false,true``).
    Values are read as the type of the script's default
    (:func:`bridgecalc.readers.script.parse_value`).

    Parameters
    ----------
    module : module
        The geometry script (:func:`bridgecalc.readers.script.load_module`).
    items : list of str
    origin : str or Path
        Named in messages (the script path).

    Raises
    ------
    BridgecalcError
        Malformed item, unknown or repeated parameter, COUNT < 1, a range
        for a boolean or text parameter, a value of the wrong type.
    """
    vary: dict[str, list] = {}
    for item in items or ():
        name, sep, text = item.partition("=")
        name, text = name.strip(), text.strip()
        if not sep or not name or not text:
            raise BridgecalcError(f"{origin}: --vary {item!r}: expected "
                                  f"NAME=START:STOP:COUNT or NAME=A,B,C")
        default = _script_parameter(module, name, "--vary", origin)
        if name in vary:
            raise BridgecalcError(f"{origin}: --vary {name}: given more than once")
        if ":" in text:
            vary[name] = _parse_range(name, text, default, origin)
        else:
            vary[name] = [_parse_one(name, piece, default, origin)
                          for piece in text.split(",")]
    return vary


def _parse_one(name, text, default, origin):
    text = text.strip()
    if not text:
        raise BridgecalcError(f"{origin}: --vary {name}: empty value in the list")
    try:
        return scripts.parse_value(text, default)
    except ValueError as exc:
        raise BridgecalcError(f"{origin}: --vary {name}={text}: {exc}") from None


def _parse_range(name, text, default, origin) -> list:
    where = f"{origin}: --vary {name}={text}"
    if isinstance(default, bool) or not isinstance(default, (int, float)):
        kind = "true/false" if isinstance(default, bool) else "text"
        raise BridgecalcError(f"{where}: START:STOP:COUNT needs a numeric parameter; "
                              f"{name} is {kind}, list the values instead (A,B,...)")
    parts = text.split(":")
    if len(parts) != 3:
        raise BridgecalcError(f"{where}: expected START:STOP:COUNT")
    try:
        start, stop = (float(scripts.parse_value(part, default)) for part in parts[:2])
    except ValueError:
        raise BridgecalcError(f"{where}: START and STOP must be numbers") from None
    try:
        count = int(parts[2])
    except ValueError:
        raise BridgecalcError(f"{where}: COUNT must be a whole number") from None
    if not (math.isfinite(start) and math.isfinite(stop)):
        raise BridgecalcError(f"{where}: START and STOP must be finite")
    if count < 1:
        raise BridgecalcError(f"{where}: COUNT must be at least 1, got {count}")
    if count == 1 and start != stop:
        raise BridgecalcError(f"{where}: COUNT 1 gives one value; "
                              f"START and STOP must then be equal")
    step = (stop - start) / (count - 1) if count > 1 else 0.0
    values = [start + k * step for k in range(count - 1)] + [stop]
    if isinstance(default, int) and all(v == int(v) for v in values):
        return [int(v) for v in values]
    return values


def variants(vary: dict, base_params: dict | None = None) -> list[dict]:
    """Every combination of the varied values over ``base_params``.

    The first varied parameter changes slowest (like nested loops written in
    the order given).
    """
    names = list(vary)
    base = dict(base_params or {})
    return [{**base, **dict(zip(names, combo))}
            for combo in itertools.product(*(vary[n] for n in names))]


# ----------------------------------------------------------------------------- one variant

# gmsh is process-global: a Dask worker running several threads must not mesh
# two variants at once in one process.
_GMSH_LOCK = threading.Lock()


def _convergence_status(result) -> str:
    study = getattr(result, "convergence", None)
    if study is None:
        return "single mesh"
    met = getattr(study, "criterion_met", None)
    if met is None:
        return "refinement study"
    return "criterion met" if met else "criterion not met"


def run_variant(script: str, index: int, params: dict,
                run_options: dict | None = None) -> VariantResult:
    """Build and compute one variant; failures become a ``failed:`` row.

    Parameters
    ----------
    script : str
        Path of the geometry script, as seen by the process running this.
    index : int
        The variant's position in the sweep.
    params : dict
        Parameters overriding the script's defaults.
    run_options : dict, optional
        Keyword arguments for :func:`bridgecalc.pipeline.run`.
    """
    from .pipeline import load, run
    full = dict(params)
    try:
        with _GMSH_LOCK:
            result = run(load(script, **params), **(run_options or {}))
    except BridgecalcError as exc:
        return VariantResult(index, full, f"failed: {exc}")
    except Exception as exc:        # a bug or a library failure: report it, go on
        return VariantResult(index, full, f"failed: {type(exc).__name__}: {exc}")
    return VariantResult(
        index, full, "ok", psi=result.psi,
        coupling_coefficient=result.coupling_coefficient,
        theta_si_min=result.theta_si_min, f_rsi=result.f_rsi,
        convergence=_convergence_status(result), mesh_nodes=result.mesh.node_count)


def _single_threaded_worker(parent: int):
    """Process-pool initializer: one thread for gmsh and BLAS in this worker,
    which ends when process ``parent`` does (:func:`outputs.end_with_parent`)."""
    end_with_parent(parent)
    os.environ.update(SINGLE_THREAD_ENV)


# ----------------------------------------------------------------------------- progress

class Progress:
    """A progress bar on ``stream`` (stderr by default).

    On a terminal the bar is redrawn in place; elsewhere (CI logs, files) a
    plain line is written at every tenth of the work, so logs stay readable.
    """

    WIDTH = 30

    def __init__(self, total: int, stream=None, label: str = "sweep"):
        self.total, self.done, self.failed = total, 0, 0
        self.stream = stream if stream is not None else sys.stderr
        self.label = label
        self.tty = bool(getattr(self.stream, "isatty", lambda: False)())
        self.start = time.perf_counter()
        self._next_line = 0
        self._draw()

    def __call__(self, row: VariantResult) -> None:
        self.done += 1
        self.failed += 0 if row.ok else 1
        self._draw()

    def _draw(self) -> None:
        failed = f", {self.failed} failed" if self.failed else ""
        elapsed = time.perf_counter() - self.start
        if self.tty:
            filled = self.WIDTH * self.done // max(self.total, 1)
            bar = "#" * filled + "." * (self.WIDTH - filled)
            end = "\n" if self.done == self.total else ""
            self.stream.write(f"\r{self.label} [{bar}] {self.done}/{self.total}"
                              f"{failed} {elapsed:5.1f} s{end}")
        elif self.done >= self._next_line:
            self.stream.write(f"{self.label}: {self.done}/{self.total} variants done"
                              f"{failed} ({elapsed:.1f} s)\n")
            self._next_line = self.done + max(1, math.ceil(self.total / 10))
            if self.done < self.total:
                self._next_line = min(self._next_line, self.total)
        self.stream.flush()


# ----------------------------------------------------------------------------- sweep

def default_workers() -> int:
    """Cores this process may use."""
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:                       # not on Linux
        return os.cpu_count() or 1


def sweep(script, vary: dict, workers: int | None = None, scheduler: str | None = None,
          base_params: dict | None = None, progress=False,
          timeout: float | None = None, run_options: dict | None = None
          ) -> list[VariantResult]:
    """Run every combination of ``vary`` over a geometry script.

    Parameters
    ----------
    script : str or Path
        Geometry script (``.py``).
    vary : dict of str to sequence
        Values per varied parameter, already of the parameter's type.
    workers : int, optional
        Local worker processes (default: the cores available, at most one per
        variant). Ignored with ``scheduler``.
    scheduler : str, optional
        Address of a Dask distributed scheduler (``tcp://host:port``) to run
        the variants on instead. Its workers need bridgecalc installed and the
        script at the same path; one thread per worker process gives the
        parallelism (gmsh runs one mesh per process at a time).
    base_params : dict, optional
        Fixed parameters for every variant.
    progress : bool or callable
        True: a progress bar on stderr (:class:`Progress`); a callable is
        called with each :class:`VariantResult` as it completes.
    timeout : float, optional
        Limit for the whole sweep [s]; default none.
    run_options : dict, optional
        Keyword arguments passed to :func:`bridgecalc.pipeline.run` for every
        variant (mesh options, element, convergence-study settings); default:
        the same calculation as ``bridgecalc run``.

    Returns
    -------
    list of VariantResult
        In variant order.

    Raises
    ------
    BridgecalcError
        The script does not load, a parameter name is unknown, nothing to
        vary, ``workers`` < 1, the scheduler cannot be reached, or the
        sweep did not finish within ``timeout``.
    """
    script = str(Path(script).resolve())
    module = scripts.load_module(script)
    base = dict(base_params or {})
    for name in list(vary) + list(base):
        _script_parameter(module, name, "--vary" if name in vary else "--set", script)
    overlap = sorted(set(vary) & set(base))
    if overlap:
        raise BridgecalcError(f"{script}: {', '.join(overlap)}: both varied and fixed")
    if not vary or any(len(v) == 0 for v in vary.values()):
        raise BridgecalcError(f"{script}: nothing to vary: give each varied parameter "
                              f"at least one value")
    # every parameter spelled out: each row is reproducible on its own
    combos = variants(vary, {**module.PARAMETERS, **base})
    if scheduler is not None:
        rows = _sweep_dask(script, combos, scheduler, progress, timeout, run_options)
    else:
        if workers is None:
            workers = default_workers()
        if workers < 1:
            raise BridgecalcError(f"--workers must be at least 1, got {workers}")
        rows = _sweep_local(script, combos, min(workers, len(combos)), progress, timeout,
                            run_options)
    return sorted(rows, key=lambda r: r.index)


def _reporter(progress, total):
    """The per-variant callback for ``progress`` (see :func:`sweep`), or None."""
    if progress is True:
        return Progress(total)
    return progress or None


def _timed_out(timeout) -> BridgecalcError:
    return BridgecalcError(f"the sweep did not finish within {timeout:g} s; "
                           f"nothing written")


def _take_row(future, futures, rows, report, lost: str) -> None:
    """Append a finished variant's row; a worker that died or was lost
    (``lost`` says where) becomes that variant's failed row."""
    i, params = futures[future]
    try:
        row = future.result()
    except Exception as exc:
        row = VariantResult(i, params, f"failed: {lost}: {type(exc).__name__}: {exc}")
    rows.append(row)
    if report:
        report(row)


def _sweep_local(script, combos, workers, progress, timeout, run_options
                 ) -> list[VariantResult]:
    import multiprocessing
    context = multiprocessing.get_context("spawn")
    rows = []
    # Workers inherit the environment at start: one thread each for BLAS/OpenMP
    # from the first import on (the initializer alone would come too late for
    # libraries that read it when loaded).
    saved = {k: os.environ.get(k) for k in SINGLE_THREAD_ENV}
    os.environ.update(SINGLE_THREAD_ENV)
    try:
        with ProcessPoolExecutor(max_workers=workers, mp_context=context,
                                 initializer=_single_threaded_worker,
                                 initargs=(os.getpid(),)) as pool:
            futures = {pool.submit(run_variant, script, i, params, run_options): (i, params)
                       for i, params in enumerate(combos)}
            report = _reporter(progress, len(combos))
            try:
                for future in as_completed(futures, timeout=timeout):
                    _take_row(future, futures, rows, report, "worker process")
            except TimeoutError:
                pool.shutdown(wait=False, cancel_futures=True)
                raise _timed_out(timeout) from None
    finally:
        for key, value in saved.items():
            if value is None:
                os.environ.pop(key, None)
            else:
                os.environ[key] = value
    return rows


def _sweep_dask(script, combos, scheduler, progress, timeout, run_options
                ) -> list[VariantResult]:
    try:
        import distributed
    except ImportError:
        raise BridgecalcError("--scheduler needs Dask distributed: "
                              "pip install 'bridgecalc[cluster]'") from None
    try:
        client = distributed.Client(scheduler, timeout=CONNECT_TIMEOUT_S,
                                    set_as_default=False)
    except (OSError, TimeoutError, ValueError, TypeError) as exc:
        raise BridgecalcError(f"--scheduler {scheduler}: cannot connect within "
                              f"{CONNECT_TIMEOUT_S:g} s ({type(exc).__name__}: {exc})"
                              ) from None
    rows = []
    try:
        futures = {}
        for i, params in enumerate(combos):
            future = client.submit(run_variant, script, i, params, run_options, pure=False,
                                   key=f"bridgecalc-variant-{i}-{os.getpid()}-"
                                       f"{time.time_ns()}")
            futures[future] = (i, params)
        report = _reporter(progress, len(combos))
        try:
            for future in distributed.as_completed(list(futures), loop=client.loop,
                                                   timeout=timeout):
                _take_row(future, futures, rows, report, "cluster")
        except TimeoutError:
            client.cancel(list(futures))
            raise _timed_out(timeout) from None
    finally:
        client.close()
    return rows


# ----------------------------------------------------------------------------- writers

def _cell(value) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return repr(value)
    return str(value)


def csv_text(rows: list[VariantResult]) -> str:
    """sweep.csv: one row per variant, every parameter, the results.

    Columns: ``variant``, every script parameter (in the script's order),
    then :data:`RESULT_COLUMNS`. Empty cells for values not computed.
    Floats are written in full (``repr``), so the file is the same for the
    same input.
    """
    names = list(dict.fromkeys(n for r in rows for n in r.params))
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(["variant", *names, *RESULT_COLUMNS])
    for r in rows:
        writer.writerow([r.index, *(_cell(r.params.get(n)) for n in names),
                         _cell(r.psi), _cell(r.coupling_coefficient),
                         _cell(r.theta_si_min), _cell(r.f_rsi), r.status,
                         r.convergence, _cell(r.mesh_nodes)])
    return buffer.getvalue()


LINE_STYLES = ("-", "--", ":", "-.")
MARKERS = ("o", "s", "^", "D", "v")
MAX_LEGEND_LINES = 12


def _positions(values) -> tuple[dict, list | None]:
    """x position per distinct value: numbers as they are, anything else
    (booleans, text) as categories 0, 1, ... with tick labels."""
    distinct = list(dict.fromkeys(values))
    if all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in distinct):
        return {v: float(v) for v in distinct}, None
    labels = [_cell(v) for v in distinct]
    return {v: float(k) for k, v in enumerate(distinct)}, labels


def sweep_figure(rows: list[VariantResult], varied: list[str], title: str = ""):
    """Ψ and fRsi against each varied parameter, as a Figure.

    One column of panels per varied parameter (Ψ above, fRsi below); each
    combination of the other varied parameters is one line. Without flanking
    elements L2D is plotted instead of Ψ. Failed variants leave gaps.
    """
    from .outputs import figures            # the house style; Agg backend
    plt = figures.plt
    ok = [r for r in rows if r.ok]
    use_psi = any(r.psi is not None for r in ok)
    quantities = ((("psi", "Ψ [W/(m·K)]") if use_psi
                   else ("coupling_coefficient", "L2D [W/(m·K)]")),
                  ("f_rsi", "fRsi [-]"))
    with plt.rc_context(figures.STYLE):
        width = max(figures.PAGE_WIDTH, 2.6 * len(varied))
        fig, axes = plt.subplots(2, len(varied), figsize=(width, 5.6), squeeze=False,
                                 layout="constrained")
        if title:
            fig.suptitle(title, x=0.01, ha="left", fontsize=9.5, fontweight="bold")
        for col, name in enumerate(varied):
            x_of, labels = _positions([r.params[name] for r in rows])
            others = [n for n in varied if n != name]
            groups: dict[tuple, list[VariantResult]] = {}
            for r in rows:
                groups.setdefault(tuple(r.params[n] for n in others), []).append(r)
            for row_ax, (attribute, axis_label) in enumerate(quantities):
                ax = axes[row_ax][col]
                for k, (key, members) in enumerate(groups.items()):
                    members = sorted(members, key=lambda m: x_of[m.params[name]])
                    values = [getattr(m, attribute) for m in members]
                    # line styles and markers as well as colours: readable in grey
                    ax.plot([x_of[m.params[name]] for m in members],
                            [math.nan if v is None else v for v in values],
                            linestyle=LINE_STYLES[k % len(LINE_STYLES)],
                            marker=MARKERS[k // len(LINE_STYLES) % len(MARKERS)],
                            markersize=3, linewidth=1.0,
                            label=", ".join(_cell(v) for v in key))
                ax.set_ylabel(axis_label)
                ax.set_xlabel(name)
                if labels is not None:
                    ax.set_xticks(range(len(labels)), labels)
                if not ok:
                    ax.text(0.5, 0.5, "no variant computed", transform=ax.transAxes,
                            ha="center", va="center")
            if 1 < len(groups) <= MAX_LEGEND_LINES:
                axes[1][col].legend(title=", ".join(others), fontsize=6, title_fontsize=6,
                                    loc="upper center", bbox_to_anchor=(0.5, -0.3),
                                    ncols=2 if len(groups) > 4 else 1)
            elif len(groups) > MAX_LEGEND_LINES:
                axes[0][col].set_title(f"{len(groups)} lines, one per combination of "
                                       f"{', '.join(others)}", fontsize=6.5, loc="left")
    return fig


def notes_text(rows: list[VariantResult], vary: dict, script: str,
               base_params: dict | None = None, dimension_system: str | None = None
               ) -> str:
    """sweep.txt: what was swept, the units of the columns, the cautions."""
    failed = [r for r in rows if not r.ok]
    lines = [f"Parameter sweep of {Path(script).name}",
             "",
             f"variants: {len(rows)} ({len(rows) - len(failed)} computed, "
             f"{len(failed)} failed)"]
    for name, values in vary.items():
        lines.append(f"varied   {name}: {', '.join(_cell(v) for v in values)}")
    for name, value in (base_params or {}).items():
        lines.append(f"fixed    {name}: {_cell(value)}")
    lines.append("other parameters: the script's defaults (every value is in sweep.csv)")
    lines.append(f"dimension system for Ψ: {dimension_system or 'not stated by the script'}")
    lines += ["",
              "Columns of sweep.csv:",
              "  psi                   linear thermal transmittance Ψ [W/(m·K)] = L2D − Σ U·l",
              "  coupling_coefficient  L2D [W/(m·K)]",
              "  theta_si_min          lowest interior surface temperature θsi,min [°C]",
              "  f_rsi                 temperature factor fRsi [-]",
              "  status                ok, or failed: <reason>",
              "  convergence           single mesh, or the outcome of a mesh-refinement study",
              "  mesh_nodes            nodes of the mesh used",
              "",
              "Ψ values depend on the dimension system; compare or combine only values "
              "in the same system.",
              CAUTION, ""]
    return "\n".join(lines)


def write_sweep(rows: list[VariantResult], out_dir, script, vary: dict | None = None,
                base_params: dict | None = None, stop=None) -> Path:
    """Write sweep.csv, sweep.png and sweep.txt into ``out_dir``, whole or not at all.

    Everything is written into a temporary folder beside ``out_dir`` and moved
    into place at the end; files of the same names in an existing ``out_dir``
    are replaced.

    Parameters
    ----------
    rows : list of VariantResult
    out_dir : str or Path
    script : str or Path
        The swept geometry script (its ``DIMENSION_SYSTEM`` is noted).
    vary : dict, optional
        The varied values (default: taken from ``rows``, parameters that
        take more than one value).
    base_params : dict, optional
        Fixed parameters, noted in sweep.txt.
    stop : bridgecalc.outputs.StopRequest, optional
        A stop asked for by a signal: once it is set, nothing is put in place.

    Returns
    -------
    Path
    """
    from .outputs import figures
    module = scripts.load_module(script)
    if vary is None:
        names = list(rows[0].params) if rows else []
        vary = {n: list(dict.fromkeys(r.params[n] for r in rows)) for n in names}
        vary = {n: v for n, v in vary.items() if len(v) > 1}
    out_dir = Path(out_dir)
    with staged_folder(out_dir, stop) as staging:
        (staging / CSV_FILE).write_text(csv_text(rows), encoding="utf-8")
        fig = sweep_figure(rows, list(vary), f"Parameter sweep: {Path(script).name}")
        try:
            figures.save(fig, staging / Path(FIGURE_FILE).stem, formats=("png",), dpi=150)
        finally:
            figures.plt.close(fig)
        (staging / NOTES_FILE).write_text(
            notes_text(rows, vary, str(script), base_params,
                       getattr(module, "DIMENSION_SYSTEM", None)), encoding="utf-8")
    return out_dir


def summary(rows: list[VariantResult], out_dir: Path, seconds: float | None = None) -> str:
    """The lines printed after a sweep."""
    failed = [r for r in rows if not r.ok]
    took = f" in {seconds:.1f} s" if seconds is not None else ""
    lines = [f"sweep: {len(rows)} variants{took}, {len(rows) - len(failed)} computed, "
             f"{len(failed)} failed"]
    for r in failed[:10]:
        lines.append(f"  variant {r.index}: {r.status}")
    if len(failed) > 10:
        lines.append(f"  ... and {len(failed) - 10} more (see {CSV_FILE})")
    lines.append(f"  written to {out_dir}")
    lines += textwrap.wrap(CAUTION, 86, initial_indent="  ", subsequent_indent="  ")
    return "\n".join(lines)
