"""Running a schedule: the project read, each junction's model built, results
reused where nothing changed, the rest computed in parallel, and everything
written whole or not at all.

The output folder::

    schedule.json, schedule.csv      the rows and H_TB (model format 1, addition E)
    schedule.html, schedule.pdf      the schedule's report
    schedule_shares.{png,pdf}        the chart of each junction's share of H_TB
    01-first-junction/ ...           each junction's complete outputs (bridgecalc run's)

A schedule's folder is replaced as a whole by the next run into it; the
junctions that did not change are carried over from it (:mod:`.reuse`).
"""

from __future__ import annotations

import dataclasses
import json
import textwrap
from pathlib import Path

from ..errors import BridgecalcError, ModelError
from ..outputs import staged_folder
from ..sweep.runner import run_calls
from .junction import JunctionOutcome, build_model, check_pair, compute_junction, no_psi_reason
from .project import read_project
from .report import CHART_STEM, HTML_FILE, PDF_FILE, schedule_report, share_chart
from .reuse import (SCHEDULE_FILE, copy_file, copy_folder, previous_entries, reuse_key,
                    tool_identity)
from .rows import CSV_FILE, JunctionRow, ScheduleResult, csv_text, row_of_failure

#: Files of the schedule itself (the junctions' folders come besides).
SCHEDULE_FILES = (SCHEDULE_FILE, CSV_FILE, HTML_FILE, PDF_FILE, f"{CHART_STEM}.png",
                  f"{CHART_STEM}.pdf")


def check_schedule_folder(out_dir: Path) -> None:
    """Refuse, before any work, an output folder that is a file, or a folder
    that holds something other than a schedule (it is replaced as a whole)."""
    if not out_dir.exists():
        return
    if not out_dir.is_dir():
        raise BridgecalcError(f"--out {out_dir}: exists and is not a folder")
    if any(out_dir.iterdir()) and not (out_dir / SCHEDULE_FILE).is_file():
        raise BridgecalcError(f"--out {out_dir}: the folder holds files but no "
                              f"{SCHEDULE_FILE}; a schedule replaces its folder as a whole, "
                              f"so choose a new or empty folder, or a schedule's own")


def run_schedule(project_path, out_dir, *, workers: int | None = None,
                 scheduler: str | None = None, progress=False, timeout: float | None = None,
                 stop=None, tolerance: float | None = None) -> ScheduleResult:
    """Compute a project's junctions and write the schedule into ``out_dir``.

    Parameters
    ----------
    project_path : str or Path
        The project file (addition E).
    out_dir : str or Path
        The schedule's folder; replaced as a whole, after the junctions that
        did not change have been carried over from it.
    workers : int, optional
        Local worker processes (default: the cores available).
    scheduler : str, optional
        A Dask distributed scheduler's address; its workers need bridgecalc
        and see this file system at the same paths (they write the junctions'
        folders).
    progress : bool or callable
        True: a progress bar on stderr.
    timeout : float, optional
        Limit for the calculations [s].
    stop : bridgecalc.outputs.StopRequest, optional
    tolerance : float, optional
        Overrides the project's ``tolerance``.

    Returns
    -------
    ScheduleResult

    Raises
    ------
    BridgecalcError
        Bad input (the project file, the folder, the options): nothing is
        computed or written. A junction whose model is bad fails in its row.
    """
    project = read_project(project_path)
    if tolerance is not None:
        project = dataclasses.replace(project, tolerance=tolerance)
    out_dir = Path(out_dir)
    check_schedule_folder(out_dir)
    if workers is not None and workers < 1:
        raise BridgecalcError(f"--workers must be at least 1, got {workers}")
    options = {"tolerance": project.tolerance, "max_nodes": project.max_nodes,
               "f_rsi_min": project.f_rsi_min}
    warnings = list(project.warnings)
    tool = tool_identity()
    previous = previous_entries(out_dir)

    rows: list = [None] * len(project.junctions)
    jobs, todo = [], []
    for spec in project.junctions:
        try:
            model = build_model(project, spec)
        except ModelError as exc:
            rows[spec.index] = row_of_failure(spec, str(exc))
            continue
        check_pair(project, spec, model)            # a project's mistake: exit 2
        if (project.dimension_system and model.dimension_system
                and model.dimension_system != project.dimension_system):
            warnings.append(
                f"{project.origin}: {spec.where}.model: {spec.model_text} states "
                f"{model.dimension_system} dimensions, the project {project.dimension_system}: "
                f"its Ψ does not add up with lengths measured in the project's system; "
                f"use a model in {project.dimension_system} dimensions")
        reason = no_psi_reason(model, spec.between)
        if reason is not None:
            rows[spec.index] = row_of_failure(spec, reason)
            continue
        key = reuse_key(model, options, spec.between, tool)
        if key in previous:
            entry, _ = previous[key]
            rows[spec.index] = JunctionRow(spec, JunctionOutcome.from_dict(entry), True, key)
        else:
            rows[spec.index] = JunctionRow(spec, JunctionOutcome("pending"), False, key)
            todo.append(spec)
            jobs.append((model, spec.between, options))

    if jobs:
        from ..validation.stamp import current_stamp
        current_stamp()     # the validation stamp, checked once here, not in every worker

    with staged_folder(out_dir, stop, whole=True) as staging:
        for spec, row in zip(project.junctions, rows):
            if row.reused:
                copy_folder(previous[row.reuse_key][1], staging / spec.folder)
        outcomes = run_calls(
            compute_junction, [job + (str(staging / spec.folder),)
                               for job, spec in zip(jobs, todo)],
            workers=workers, scheduler=scheduler, progress=progress, timeout=timeout,
            lost=lambda i, message: JunctionOutcome(f"failed: {message}"),
            label="schedule", noun="junctions")
        for spec, outcome in zip(todo, outcomes):
            rows[spec.index] = JunctionRow(spec, outcome, False, rows[spec.index].reuse_key)
        result = ScheduleResult(project, rows, warnings, out_dir)
        write_schedule_files(result, staging, out_dir if out_dir.is_dir() else None)
    return result


def _chart_key(result: ScheduleResult) -> str:
    """What the chart shows (names, Ψ·l, H_TB), as a digest: an unchanged
    chart is carried over from the previous run instead of drawn again."""
    import hashlib
    shown = [(r.spec.name, r.psi_length) for r in result.rows if r.ok]
    text = json.dumps([shown, result.heat_transfer_coefficient, CHART_STEM])
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _previous_chart(previous_dir, key: str):
    """The previous run's chart files and size when they show the same, else None."""
    if previous_dir is None:
        return None
    previous_dir = Path(previous_dir)
    try:
        data = json.loads((previous_dir / SCHEDULE_FILE).read_text(encoding="utf-8"))
        chart = data["chart"]
        size = (float(chart["size"][0]), float(chart["size"][1]))
        same = chart["key"] == key
    except (OSError, ValueError, KeyError, TypeError, IndexError):
        return None
    files = [previous_dir / f"{CHART_STEM}.{fmt}" for fmt in ("png", "pdf")]
    return (files, size) if same and all(f.is_file() for f in files) else None


def write_schedule_files(result: ScheduleResult, folder: Path, previous_dir=None) -> None:
    """schedule.json, schedule.csv, the chart, schedule.html and schedule.pdf into ``folder``.

    ``previous_dir``: the schedule's folder before this run, whose chart is
    carried over when it shows the same numbers.
    """
    from ..outputs.report import pdf as report_pdf
    from ..outputs.report.html import render_html
    data = result.to_dict()
    chart, size = None, None
    if any(r.ok for r in result.rows):
        key = _chart_key(result)
        previous = _previous_chart(previous_dir, key)
        if previous is not None:
            files, size = previous
            for source in files:
                copy_file(source, folder / source.name)
        else:
            from ..outputs import figures
            fig = share_chart(result)
            try:
                size = tuple(float(v) for v in fig.get_size_inches())
                figures.save(fig, folder / CHART_STEM, formats=("png", "pdf"), dpi=150)
            finally:
                figures.plt.close(fig)
        chart = folder / f"{CHART_STEM}.png"
        data["chart"] = {"key": key, "size": list(size)}
    (folder / SCHEDULE_FILE).write_text(json.dumps(data, indent=1, ensure_ascii=False) + "\n",
                                        encoding="utf-8")
    (folder / CSV_FILE).write_text(csv_text(result), encoding="utf-8")
    report = schedule_report(result, chart, size)
    (folder / HTML_FILE).write_text(render_html(report), encoding="utf-8")
    report_pdf.write_pdf(report, folder / PDF_FILE)


def summary(result: ScheduleResult) -> str:
    """The lines printed after a schedule."""
    from ..results import CAUTION
    project = result.project
    system = project.dimension_system
    lines = [f"schedule: {project.name or project.origin} "
             f"({f'{system} dimensions' if system else 'dimension system not stated'}), "
             f"{len(result.rows)} junctions: {len(result.computed)} computed, "
             f"{len(result.reused)} reused, {sum(not r.ok for r in result.rows)} failed"]
    width = max(len(r.spec.name) for r in result.rows)
    for r in result.rows:
        o = r.outcome
        if r.ok:
            error = "" if o.psi_error_estimate is None else f" ± {o.psi_error_estimate:.1g}"
            lines.append(f"  {r.spec.name:<{width}}  Ψ {o.psi:8.4f}{error} W/(m·K) × "
                         f"{r.spec.length:g} m = {r.psi_length:8.3f} W/K"
                         + ("  (reused)" if r.reused else ""))
        else:
            lines.append(f"  {r.spec.name:<{width}}  failed: {r.error}")
    total = result.heat_transfer_coefficient
    if total is not None:
        bound = result.error_bound
        lines.append(f"  H_TB = Σ Ψ·l = {total:.3f} W/K"
                     + (f" ± {bound:.2g} W/K (from the junctions' error estimates)"
                        if bound is not None else ""))
    else:
        lines.append("  no total: a junction failed (see its row)")
    if result.out_dir is not None:
        lines.append(f"  written to {result.out_dir}; report: "
                     f"{Path(result.out_dir) / HTML_FILE}")
    lines += textwrap.wrap(CAUTION, 86, initial_indent="  ", subsequent_indent="  ")
    return "\n".join(lines)
