"""Running calculations in parallel: one per process on local workers, or on
a Dask distributed cluster, with a progress line; results come back in the
order given (:func:`run_calls`, used by sweeps and schedules alike)."""

from __future__ import annotations

import math
import os
import sys
import threading
import time
from concurrent.futures import ProcessPoolExecutor, as_completed
from pathlib import Path

from ..errors import BridgecalcError
from ..outputs import end_with_parent
from ..readers import script as scripts
from .variants import VariantResult, script_parameter, variants

#: Environment variables that keep numerical libraries to one thread per worker,
#: so that N workers use N cores and not N × cores (oversubscription).
SINGLE_THREAD_ENV = {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1",
                     "MKL_NUM_THREADS": "1", "VECLIB_MAXIMUM_THREADS": "1",
                     "NUMEXPR_NUM_THREADS": "1"}

#: Seconds to wait for a Dask scheduler before giving up.
CONNECT_TIMEOUT_S = 5.0


# gmsh is process-global: a Dask worker running several threads must not mesh
# two variants at once in one process.
_GMSH_LOCK = threading.Lock()


def mesher_lock() -> threading.Lock:
    """The lock a calculation holds while it meshes and solves, so that the
    threads of one Dask worker process take turns with gmsh."""
    return _GMSH_LOCK


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
        Keyword arguments for :func:`bridgecalc.api.run`.
    """
    from ..api import load, run
    full = dict(params)
    try:
        with mesher_lock():
            result = run(load(script, **params), **(run_options or {}))
    except BridgecalcError as exc:
        return VariantResult(index, full, f"failed: {exc}")
    except Exception as exc:        # a bug or a library failure: report it, go on
        return VariantResult(index, full, f"failed: {type(exc).__name__}: {exc}")
    pairs = result.coupling_coefficients
    return VariantResult(
        index, full, "ok", psi=result.psi,
        coupling_coefficient=result.coupling_coefficient,
        theta_si_min=result.theta_si_min, f_rsi=result.f_rsi,
        convergence=_convergence_status(result), mesh_nodes=result.mesh.node_count,
        couplings=tuple((c.between, c.value, c.psi) for c in pairs) if len(pairs) > 1 else (),
        weighting_factors=(tuple(result.weighting_factors.items())
                           if result.f_rsi is None else ()),
        dimension_system=result.model.dimension_system, moisture=_moisture(result))


def _moisture(result) -> tuple | None:
    """(verdict, critical month, required fRsi) of the ISO 13788 check, or None."""
    moisture = getattr(result.assessment, "moisture", None)
    if moisture is None:
        return None
    return moisture.verdict, moisture.critical_month, moisture.f_rsi_required


def _single_threaded_worker(parent: int):
    """Process-pool initializer: one thread for gmsh and BLAS in this worker,
    which ends when process ``parent`` does (:func:`outputs.end_with_parent`)."""
    end_with_parent(parent)
    os.environ.update(SINGLE_THREAD_ENV)


class Progress:
    """A progress bar on ``stream`` (stderr by default).

    On a terminal the bar is redrawn in place; elsewhere (CI logs, files) a
    plain line is written at every tenth of the work, so logs stay readable.
    """

    WIDTH = 30

    def __init__(self, total: int, stream=None, label: str = "sweep", noun: str = "variants"):
        self.total, self.done, self.failed = total, 0, 0
        self.stream = stream if stream is not None else sys.stderr
        self.label, self.noun = label, noun
        self.tty = bool(getattr(self.stream, "isatty", lambda: False)())
        self.start = time.perf_counter()
        self._next_line = 0
        self._draw()

    def __call__(self, row) -> None:
        """One more item done; ``row.ok`` false counts it as failed."""
        self.done += 1
        self.failed += 0 if getattr(row, "ok", True) else 1
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
            self.stream.write(f"{self.label}: {self.done}/{self.total} {self.noun} done"
                              f"{failed} ({elapsed:.1f} s)\n")
            self._next_line = self.done + max(1, math.ceil(self.total / 10))
            if self.done < self.total:
                self._next_line = min(self._next_line, self.total)
        self.stream.flush()


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
        Keyword arguments passed to :func:`bridgecalc.api.run` for every
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
        script_parameter(module, name, "--vary" if name in vary else "--set", script)
    overlap = sorted(set(vary) & set(base))
    if overlap:
        raise BridgecalcError(f"{script}: {', '.join(overlap)}: both varied and fixed")
    if not vary or any(len(v) == 0 for v in vary.values()):
        raise BridgecalcError(f"{script}: nothing to vary: give each varied parameter "
                              f"at least one value")
    # every parameter spelled out: each row is reproducible on its own
    combos = variants(vary, {**module.PARAMETERS, **base})
    rows = run_calls(run_variant, [(script, i, params, run_options)
                                   for i, params in enumerate(combos)],
                     workers=workers, scheduler=scheduler, progress=progress,
                     timeout=timeout,
                     lost=lambda i, message: VariantResult(i, combos[i], f"failed: {message}"))
    return rows


def _reporter(progress, total, label="sweep", noun="variants"):
    """The per-item callback for ``progress`` (see :func:`sweep`), or None."""
    if progress is True:
        return Progress(total, label=label, noun=noun)
    return progress or None


def run_calls(call, jobs: list[tuple], *, workers: int | None = None,
              scheduler: str | None = None, progress=False, timeout: float | None = None,
              lost=None, label: str = "sweep", noun: str = "variants") -> list:
    """``call(*job)`` for every job, on local processes or a Dask cluster.

    The one way bridgecalc spreads independent calculations over processes:
    the variants of a sweep and the junctions of a schedule both go through
    it. Local workers are started with ``spawn``, one thread each for BLAS
    and OpenMP (:data:`SINGLE_THREAD_ENV`), and end with this process.

    Parameters
    ----------
    call : callable
        A module-level function (it is pickled by reference); it should
        return a result for a failure rather than raise.
    jobs : list of tuple
        The arguments of each call.
    workers : int, optional
        Local worker processes (default: the cores available, at most one
        per job). Ignored with ``scheduler``.
    scheduler : str, optional
        Address of a Dask distributed scheduler (``tcp://host:port``).
    progress : bool or callable
        True: a progress bar on stderr (:class:`Progress`); a callable is
        called with each result as it completes.
    timeout : float, optional
        Limit for all the calls together [s].
    lost : callable, optional
        ``lost(index, message)`` gives the result of a job whose worker died
        or was lost; default: the exception is raised.
    label, noun : str
        Words of the progress bar and the messages ("sweep", "variants").

    Returns
    -------
    list
        The results, in job order.

    Raises
    ------
    BridgecalcError
        ``workers`` < 1, the scheduler cannot be reached, or the calls did not
        finish within ``timeout``.
    """
    if not jobs:
        return []
    if scheduler is not None:
        done = _run_dask(call, jobs, scheduler, progress, timeout, lost, label, noun)
    else:
        if workers is None:
            workers = default_workers()
        if workers < 1:
            raise BridgecalcError(f"--workers must be at least 1, got {workers}")
        done = _run_local(call, jobs, min(workers, len(jobs)), progress, timeout, lost,
                          label, noun)
    return [done[i] for i in range(len(jobs))]


def _timed_out(timeout, label) -> BridgecalcError:
    return BridgecalcError(f"the {label} did not finish within {timeout:g} s; "
                           f"nothing written")


def _take(future, futures, done, report, lost, where: str) -> None:
    """Keep a finished job's result; a worker that died or was lost (``where``
    says where) gives ``lost(index, message)``."""
    i = futures[future]
    try:
        result = future.result()
    except Exception as exc:
        if lost is None:
            raise
        result = lost(i, f"{where}: {type(exc).__name__}: {exc}")
    done[i] = result
    if report:
        report(result)


def _run_local(call, jobs, workers, progress, timeout, lost, label, noun) -> dict:
    import multiprocessing
    context = multiprocessing.get_context("spawn")
    done: dict = {}
    # Workers inherit the environment at start: one thread each for BLAS/OpenMP
    # from the first import on (the initializer alone would come too late for
    # libraries that read it when loaded).
    saved = {k: os.environ.get(k) for k in SINGLE_THREAD_ENV}
    os.environ.update(SINGLE_THREAD_ENV)
    try:
        with ProcessPoolExecutor(max_workers=workers, mp_context=context,
                                 initializer=_single_threaded_worker,
                                 initargs=(os.getpid(),)) as pool:
            futures = {pool.submit(call, *job): i for i, job in enumerate(jobs)}
            report = _reporter(progress, len(jobs), label, noun)
            try:
                for future in as_completed(futures, timeout=timeout):
                    _take(future, futures, done, report, lost, "worker process")
            except TimeoutError:
                pool.shutdown(wait=False, cancel_futures=True)
                raise _timed_out(timeout, label) from None
    finally:
        for key, value in saved.items():
            if value is None:
                os.environ.pop(key, None)
            else:
                os.environ[key] = value
    return done


def _run_dask(call, jobs, scheduler, progress, timeout, lost, label, noun) -> dict:
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
    done: dict = {}
    try:
        futures = {}
        for i, job in enumerate(jobs):
            future = client.submit(call, *job, pure=False,
                                   key=f"bridgecalc-{label}-{i}-{os.getpid()}-"
                                       f"{time.time_ns()}")
            futures[future] = i
        report = _reporter(progress, len(jobs), label, noun)
        try:
            for future in distributed.as_completed(list(futures), loop=client.loop,
                                                   timeout=timeout):
                _take(future, futures, done, report, lost, "cluster")
        except TimeoutError:
            client.cancel(list(futures))
            raise _timed_out(timeout, label) from None
    finally:
        client.close()
    return done
