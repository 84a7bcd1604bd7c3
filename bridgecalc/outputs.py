"""Writing a run's outputs whole or not at all.

Everything is written into a temporary folder beside the destination and
moved into place at the end, so a failed run leaves nothing half-written.

Files of one run (:func:`write_outputs`)::

    results.json            the results, format 1 (docs/model-format.md)
    results.csv             one row of headline numbers
    field.vtu               temperatures, materials and heat flux for ParaView
    report.html             the review report, self-contained
    report.pdf              the same report as PDF
    materials.{png,svg,pdf} and mesh, temperature, heat_flux, surface_temperature

Figures are drawn in two worker processes where the platform can fork, since
drawing fifteen files dominates the time of the outputs.
"""

from __future__ import annotations

import contextlib
import json
import math
import multiprocessing
import os
import shutil
import sys
import tempfile
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

from . import __version__
from .errors import BridgecalcError

RESULTS_FILE = "results.json"
REPORT_FILE = "report.html"
REPORT_PDF_FILE = "report.pdf"


def results_json(result) -> str:
    """results.json text: deterministic (fixed key order and float repr)."""
    return json.dumps(result.to_dict(), indent=2, ensure_ascii=False) + "\n"


def check_options(f_rsi_min=None, isotherm_step=None) -> None:
    """Reject options that cannot be honoured, before anything is computed or written.

    Raises
    ------
    BridgecalcError
        Naming the option and the value.
    """
    if f_rsi_min is not None:
        if not (isinstance(f_rsi_min, (int, float)) and math.isfinite(f_rsi_min)
                and 0 < f_rsi_min < 1):
            raise BridgecalcError(f"--f-rsi-min must be a number between 0 and 1 "
                                  f"(a temperature factor), got {f_rsi_min!r}")
    if isotherm_step is not None:
        if not (isinstance(isotherm_step, (int, float)) and math.isfinite(isotherm_step)
                and isotherm_step > 0):
            raise BridgecalcError(f"--isotherm-step must be a positive number of kelvin, "
                                  f"got {isotherm_step!r}")


# -- figures, possibly in worker processes ------------------------------------------

_JOB = None   # (result, folder, options) inherited by forked workers


def _draw(name):
    from . import figures
    result, folder, options = _JOB
    fig = figures.build_figure(name, result, **options)
    try:
        return name, [str(p) for p in figures.save(fig, Path(folder) / name)]
    finally:
        figures.plt.close(fig)


def _can_fork() -> bool:
    return sys.platform.startswith("linux") and "fork" in multiprocessing.get_all_start_methods()


def draw_figures(result, folder, isotherm_step=None, f_rsi_min=None, workers=None,
                 meanwhile=None) -> dict:
    """Every figure as PNG, SVG and PDF in ``folder``.

    Parameters
    ----------
    workers : int, optional
        Processes to draw in; default 2 where forking is available (and more
        than one core), else drawing happens in this process.
    meanwhile : callable, optional
        Called in this process while the workers draw (other outputs).

    Returns
    -------
    dict of str to list of Path
        Files per figure name, in :data:`bridgecalc.figures.FIGURES` order.
    """
    global _JOB
    from . import figures
    options = {"isotherm_step": isotherm_step, "f_rsi_min": f_rsi_min}
    if workers is None:
        workers = 2 if (_can_fork() and (os.cpu_count() or 1) > 1) else 1
    # heaviest first, so two workers finish together
    order = ["temperature", "heat_flux", "mesh", "materials", "surface_temperature"]
    order = [n for n in order if n in figures.FIGURES]
    _JOB = (result, str(folder), options)
    try:
        if workers > 1 and _can_fork():
            context = multiprocessing.get_context("fork")
            with ProcessPoolExecutor(max_workers=workers, mp_context=context) as pool:
                futures = [pool.submit(_draw, n) for n in order]
                if meanwhile is not None:
                    meanwhile()
                done = dict(f.result() for f in futures)
        else:
            if meanwhile is not None:
                meanwhile()
            done = dict(_draw(n) for n in order)
    finally:
        _JOB = None
    return {n: [Path(p) for p in done[n]] for n in figures.FIGURES}


# -- the whole set ------------------------------------------------------------------

def write_outputs(result, out_dir, *, f_rsi_min=None, isotherm_step=None,
                  dimension_system=None, stamp=None, workers=None) -> Path:
    """Write results, figures, exports and the report, whole or not at all.

    Parameters
    ----------
    result : bridgecalc.pipeline.Result
    out_dir : str or Path
        Destination folder; created if missing; files in it with the same
        names are replaced.
    f_rsi_min : float, optional
        The user's fRsi criterion [-], in (0, 1).
    isotherm_step : float, optional
        Step between isotherms [K].
    dimension_system : str, optional
        As stated by a geometry script (``DIMENSION_SYSTEM``).
    stamp : bridgecalc.stamp.Stamp or False, optional
        The validation stamp; default the cached one of this build (running
        the checks once if there is none); False leaves it out.
    workers : int, optional
        Processes for drawing figures (see :func:`draw_figures`).

    Returns
    -------
    Path
        The destination folder.
    """
    check_options(f_rsi_min, isotherm_step)
    from . import exports, pdfreport, report
    from . import stamp as stamps
    out_dir = Path(out_dir)
    with staged_folder(out_dir) as staging:
        data = result.to_dict()
        (staging / RESULTS_FILE).write_text(
            json.dumps(data, indent=2, ensure_ascii=False) + "\n", encoding="utf-8")

        def other_outputs():
            nonlocal stamp
            exports.write_vtu(result, staging / exports.VTU_FILE)
            system, _ = report.stated_dimension_system(result.model, dimension_system)
            (staging / exports.CSV_FILE).write_text(
                exports.csv_text(exports.headline_row(result, f_rsi_min, system, __version__)),
                encoding="utf-8")
            if stamp is None:
                stamp = stamps.current_stamp()
            pdfreport.prepare()               # imports and fonts, while figures are drawn

        figure_files = draw_figures(result, staging, isotherm_step, f_rsi_min, workers,
                                    meanwhile=other_outputs)
        files = [RESULTS_FILE, exports.CSV_FILE, exports.VTU_FILE, REPORT_FILE,
                 REPORT_PDF_FILE] + [p.name for n in figure_files for p in figure_files[n]]
        content = report.report_content(
            result, {n: paths[0] for n, paths in figure_files.items()}, f_rsi_min,
            stamp or None, dimension_system, files, data)
        (staging / REPORT_FILE).write_text(report.render_html(content), encoding="utf-8")
        pdfreport.write_pdf(content, staging / REPORT_PDF_FILE)
    return out_dir


@contextlib.contextmanager
def staged_folder(out_dir):
    """A staging folder whose files land in ``out_dir`` only if the block succeeds.

    The staging folder is made beside ``out_dir`` (same file system, so the
    move is a rename). On success it becomes ``out_dir``, or, when that exists,
    its files replace those of the same names there; on any failure it is
    removed and nothing of the run remains. The folder gets the permissions
    the user's umask gives a new folder (a temporary folder starts as 0700).

    Parameters
    ----------
    out_dir : str or Path
    """
    out_dir = Path(out_dir)
    out_dir.parent.mkdir(parents=True, exist_ok=True)
    staging = Path(tempfile.mkdtemp(prefix=f".{out_dir.name}.", dir=out_dir.parent))
    try:
        yield staging
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(staging, 0o777 & ~umask)
        if not out_dir.exists():
            os.replace(staging, out_dir)
        else:
            for item in staging.iterdir():
                os.replace(item, out_dir / item.name)
            staging.rmdir()
    except BaseException:
        shutil.rmtree(staging, ignore_errors=True)
        raise


def fresh_folder(base: Path) -> Path:
    """``base`` if it does not exist yet, else ``base-2``, ``base-3``, ..."""
    if not base.exists():
        return base
    k = 2
    while (candidate := base.with_name(f"{base.name}-{k}")).exists():
        k += 1
    return candidate
