"""Writing a run's outputs: what is written, by which process, in what order.

Files of one run (:func:`write_outputs`)::

    results.json            the results, format 1 (docs/model-format.md)
    results.csv             one row of headline numbers
    field.vtu               temperatures, materials and heat flux for ParaView
    report.html             the review report, self-contained
    report.pdf              the same report as PDF
    materials.png           and mesh, temperature, heat_flux, surface_temperature
                            (with ``vector_figures``, each as .svg and .pdf too)

All of them are written into a staging folder that is moved into place at
the end (:func:`bridgecalc.outputs.folder.staged_folder`). Each figure is
drawn once, as its PNG; report.html embeds those bytes and report.pdf places
the same compressed pixels (:func:`.report.pdf.place_figures`), so neither
report draws or encodes a figure again. Where the platform can fork, the
figures (most of the time of the outputs) are drawn in two worker processes,
and a helper process writes the other files meanwhile: it is forked first,
so it writes field.vtu, loads the PDF libraries and lays out report.pdf (from
the figures' sizes, known without matplotlib) while matplotlib is imported
here; the figures go into it at the end.
"""

from __future__ import annotations

import math
from pathlib import Path

from .. import __version__
from ..errors import BridgecalcError
from .folder import staged_folder
from .report import pdf as report_pdf
from .report.content import report_content, stated_dimension_system
from .report.html import REPORT_FILE, render_html
from .report.pdf import REPORT_PDF_FILE
from .results_file import RESULTS_FILE, results_json
from .workers import Worker, can_fork, default_workers, map_forked


def check_options(f_rsi_min=None, isotherm_step=None, model=None) -> None:
    """Reject options that cannot be honoured, before anything is computed or written.

    Parameters
    ----------
    f_rsi_min : float, optional
        [-]
    isotherm_step : float, optional
        [K]; with ``model``, it must give at most
        :data:`bridgecalc.outputs.figures.MAX_ISOTHERMS` isotherms between the lowest
        and the highest environment temperature (θe and θi with two).
    model : Model, optional

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
        if model is not None:
            from ..model.rules import temperature_levels
            from .figures import MAX_ISOTHERMS
            levels = temperature_levels(model)
            span = levels[-1] - levels[0]
            between = ("θe and θi" if len(levels) == 2
                       else "the lowest and the highest environment temperature")
            if span / isotherm_step > MAX_ISOTHERMS:
                raise BridgecalcError(
                    f"--isotherm-step {isotherm_step:g} K would draw "
                    f"{span / isotherm_step:.3g} isotherms between {between}; give a step of "
                    f"at least {span / MAX_ISOTHERMS:.3g} K (at most {MAX_ISOTHERMS} isotherms)")


def assessed(result, f_rsi_min=None):
    """The result assessed against ``f_rsi_min`` [-] (default: the criterion it
    was assessed against), and that criterion: every output shows the same
    verdicts, decided once (:mod:`bridgecalc.assessments`)."""
    from ..assessments import assess, criterion_of
    if f_rsi_min is None:
        f_rsi_min = criterion_of(result)
    if getattr(result, "assessment", None) is None or criterion_of(result) != f_rsi_min:
        result = assess(result, f_rsi_min)
    return result, f_rsi_min


# -- figures, possibly in worker processes ------------------------------------------

class FigureJob:
    """Drawing the figures of one result into one folder.

    A worker process gets this job when it is forked and is then asked for
    one figure (and which of its files) at a time.
    """

    def __init__(self, result, folder, isotherm_step=None, f_rsi_min=None):
        self.result = result
        self.folder = Path(folder)
        self.options = {"isotherm_step": isotherm_step, "f_rsi_min": f_rsi_min}

    def draw(self, name: str, formats) -> tuple[str, list[str]]:
        """Figure ``name`` written as ``formats``; returns the name and the files."""
        from . import figures
        fig = figures.build_figure(name, self.result, **self.options)
        try:
            return name, [str(p) for p in figures.save(fig, self.folder / name, formats)]
        finally:
            figures.plt.close(fig)


#: The figures from the most work to the least, so that two workers taking
#: them in turn finish close together; names not listed come last.
DRAWING_ORDER = ("temperature", "heat_flux", "mesh", "materials", "surface_temperature")


def drawing_tasks(names, formats) -> list[tuple[str, tuple[str, ...]]]:
    """(figure, formats) for worker processes, heaviest first (:data:`DRAWING_ORDER`).

    With vector files, the lightest figure's PNG and its vector files are
    two tasks: that costs little and fills the end evenly.
    """
    rank = {n: k for k, n in enumerate(DRAWING_ORDER)}
    ordered = sorted(names, key=lambda n: (rank.get(n, len(rank)), n))
    tasks = [(n, tuple(formats)) for n in ordered]
    if len(formats) > 1 and tasks:
        last, _ = tasks.pop()
        tasks += [(last, tuple(formats[:1])), (last, tuple(formats[1:]))]
    return tasks


def draw_figures(result, folder, isotherm_step=None, f_rsi_min=None, workers=None,
                 formats=None) -> dict:
    """Every figure in ``folder``, as ``formats`` (default :data:`.figures.DEFAULT_FORMATS`).

    Parameters
    ----------
    workers : int, optional
        Processes to draw in (:func:`drawing_tasks`); default
        :func:`.workers.default_workers`; 1 draws each figure in this process.
    formats : tuple of str, optional
        Some of :data:`.figures.FORMATS`.

    Returns
    -------
    dict of str to list of Path
        Files per figure name, in :func:`.figures.figure_names` order, each in
        :data:`.figures.FORMATS` order.
    """
    from . import figures
    formats = tuple(formats or figures.DEFAULT_FORMATS)
    job = FigureJob(result, folder, isotherm_step, f_rsi_min)
    if workers is None:
        workers = default_workers()
    names = figures.figure_names(result)
    written: dict = {n: [] for n in names}
    if workers > 1 and can_fork():
        figures.prepare(vector=len(formats) > 1)        # once here, not once per worker
        figures.share_ahead(result)
        for name, paths in map_forked(job, "draw", drawing_tasks(names, formats), workers):
            written[name] += paths
    else:
        for name in names:
            written[name] += job.draw(name, formats)[1]
    rank = {fmt: k for k, fmt in enumerate(figures.FORMATS)}
    return {n: sorted((Path(p) for p in paths), key=lambda p: rank[p.suffix[1:]])
            for n, paths in written.items()}


# -- the other files, possibly in a helper process ---------------------------------

class OtherFilesJob:
    """field.vtu, results.csv and report.pdf of one run, in three calls made in order.

    A helper process gets this job when it is forked, before matplotlib is
    imported: it writes field.vtu and results.csv and loads the PDF libraries
    while the parent imports matplotlib (:meth:`write_exports`), lays out
    report.pdf from the figures' sizes (:meth:`lay_out_report`), and puts the
    figures' PDF pages in it at the end (:meth:`place_report_figures`).
    The calls run in order on the same job, so the stamp the first finds is
    there for the second.
    """

    def __init__(self, result, staging, *, f_rsi_min=None, stamp=None, data=None,
                 dimension_system=None, vector=False):
        self.result = result
        self.vector = vector
        self.pages = None
        self.staging = Path(staging)
        self.f_rsi_min = f_rsi_min
        self.stamp = stamp
        self.data = data
        self.dimension_system = dimension_system

    def write_exports(self):
        """field.vtu, results.csv (and couplings.csv with more than one pair of
        environments); the stamp; the PDF libraries loaded. Returns the stamp."""
        from ..validation import stamp as stamps
        from . import exports
        result, staging = self.result, self.staging
        exports.write_vtu(result, staging / exports.VTU_FILE)
        system, _ = stated_dimension_system(result.model, self.dimension_system)
        (staging / exports.CSV_FILE).write_text(
            exports.csv_text(exports.headline_row(result, self.f_rsi_min, system,
                                                  __version__)), encoding="utf-8")
        if exports.several_pairs(self.data):
            (staging / exports.COUPLINGS_FILE).write_text(
                exports.csv_text(exports.coupling_rows(self.data, system),
                                 exports.COUPLING_COLUMNS), encoding="utf-8")
        if self.stamp is None:
            self.stamp = stamps.current_stamp()
        report_pdf.prepare(self.vector)
        return self.stamp

    def lay_out_report(self, figure_pngs, figure_sizes, files):
        """The report's content, returned; report.pdf laid out with room for
        the figures, kept here for :meth:`place_report_figures`."""
        content = report_content(
            self.result, figure_pngs, self.f_rsi_min, self.stamp or None,
            self.dimension_system, files, self.data, figure_sizes)
        self.pages = report_pdf.lay_out(content, self.staging / REPORT_PDF_FILE, self.vector)
        return content

    def place_report_figures(self) -> None:
        """The figures put into report.pdf where it left room, and the file
        written whole: their PNG pixels as they are, or with vector figures
        their own PDF pages (:func:`.report.pdf.place_figures`)."""
        report_pdf.place_figures(self.pages)


# -- the whole set ------------------------------------------------------------------

def write_outputs(result, out_dir, *, f_rsi_min=None, isotherm_step=None,
                  dimension_system=None, stamp=None, workers=None, stop=None,
                  vector_figures=False) -> Path:
    """Write results, figures, exports and the report, whole or not at all.

    Parameters
    ----------
    result : bridgecalc.results.Result
    out_dir : str or Path
        Destination folder; created if missing; files in it with the same
        names are replaced.
    f_rsi_min : float, optional
        The user's fRsi criterion [-], in (0, 1).
    isotherm_step : float, optional
        Step between isotherms [K].
    dimension_system : str, optional
        As stated by a geometry script (``DIMENSION_SYSTEM``).
    stamp : bridgecalc.validation.stamp.Stamp or False, optional
        The validation stamp; default the cached one of this build (running
        the checks once if there is none); False leaves it out.
    workers : int, optional
        Processes for drawing figures (see :func:`draw_figures`); with more
        than one, a further process writes the other files meanwhile.
    stop : bridgecalc.outputs.folder.StopRequest, optional
        A stop asked for by a signal: once it is set, nothing is put in place
        (:func:`.folder.staged_folder`).
    vector_figures : bool
        Write each figure as SVG and PDF too (the command line's
        ``--vector-figures``); report.pdf then carries the vector figures.

    Returns
    -------
    Path
        The destination folder.
    """
    check_options(f_rsi_min, isotherm_step)
    result, f_rsi_min = assessed(result, f_rsi_min)
    out_dir = Path(out_dir)
    if workers is None:
        workers = default_workers()
    with staged_folder(out_dir, stop) as staging:
        data = result.to_dict()
        (staging / RESULTS_FILE).write_text(results_json(result, data), encoding="utf-8")
        job = OtherFilesJob(result, staging, f_rsi_min=f_rsi_min, stamp=stamp, data=data,
                            dimension_system=dimension_system, vector=vector_figures)
        with Worker(job, forked=workers > 1 and can_fork()) as helper:
            exports_written = helper.submit("write_exports")
            # the figures' names and sizes need no matplotlib: the helper lays out
            # report.pdf while matplotlib loads here for the figures themselves
            from . import exports
            from .figures import figure_formats, figure_names, figure_size
            formats = figure_formats(vector_figures)
            names = list(figure_names(result))
            pngs = {n: staging / f"{n}.png" for n in names}
            sizes = {n: figure_size(n, result) for n in names}
            files = [RESULTS_FILE, exports.CSV_FILE, exports.VTU_FILE, REPORT_FILE,
                     REPORT_PDF_FILE] + [f"{n}.{fmt}" for n in names for fmt in formats]
            if exports.several_pairs(data):
                files.insert(2, exports.COUPLINGS_FILE)
            pages = helper.submit("lay_out_report", pngs, sizes, files)
            draw_figures(result, staging, isotherm_step, f_rsi_min, workers, formats)
            exports_written.result()
            content = pages.result()
            figures_in = helper.submit("place_report_figures")
            (staging / REPORT_FILE).write_text(render_html(content), encoding="utf-8")
            figures_in.result()
    return out_dir

