"""The schedule's report (schedule.html, schedule.pdf): the building, one row
per junction, H_TB with its error bound, each junction's share of it, links
to each junction's own report, and the cautions.

Built from the blocks of :mod:`bridgecalc.outputs.report` and rendered by the
same HTML and PDF writers as a junction's report.
"""

from __future__ import annotations

from pathlib import Path

from .. import __version__
from ..outputs.report.blocks import Figure, Heading, KeyFigures, Para, Report, Table
from ..outputs.report.numbers import g_text as _g, n_text as _n
from ..outputs.report.title_block import report_date, title_block_table
from ..results import CAUTION
from .rows import ScheduleResult, parameters_text

HTML_FILE = "schedule.html"
PDF_FILE = "schedule.pdf"
CHART_STEM = "schedule_shares"

SCHEDULE_CAUTIONS = (
    "H_TB adds the linear thermal bridges only: point thermal bridges (Σ χ: fixings, "
    "brackets, column heads) and the areas' Σ U·A are added separately in the heat-loss "
    "calculation (ISO 13789, from memory). Lengths, areas and Ψ must all be measured in the "
    "same dimension system (ISO 14683); a Ψ computed in another system does not add up "
    "with these lengths.",
    "Each Ψ is that of the modelled two-dimensional section with its flanking U-values and "
    "lengths; check that the section, its materials and its surface resistances represent "
    "the junction as built over the whole length counted here.",
    "Default or catalogue values of Ψ (ISO 14683 tables, from memory) are meant for when no "
    "calculation is made and are deliberately on the high side; a large difference from a "
    "reference value is a reason to check the model, not by itself an error.",
    "A temperature factor that meets a criterion does not by itself rule out mould or "
    "condensation; the criterion that applies, and the interior conditions it assumes, are "
    "set by the codes in force where the building stands.",
)


def _verdict_text(verdict) -> str:
    return {"passes": "passes", "fails": "FAILS", "not assessed": "not assessed",
            None: "no criterion"}.get(verdict, str(verdict))


def _moisture_text(moisture) -> str:
    if not moisture:
        return "–"
    passes = moisture.get("passes")
    required = moisture.get("f_rsi_required")
    word = {True: "passes", False: "FAILS", None: "–"}[passes]
    return (f"{word} ({moisture.get('criterion')}, fRsi ≥ {_n(required, 3)})"
            if required is not None else word)


def share_chart(result: ScheduleResult):
    """Each computed junction's Ψ·l [W/K] as a bar, labelled with its share of H_TB."""
    from ..outputs import figures
    plt = figures.plt
    rows = [r for r in result.rows if r.ok]
    height = 1.0 + 0.32 * max(len(rows), 1)
    fig, ax = plt.subplots(figsize=(7.0, height), layout="constrained")
    labels = [r.spec.name if len(r.spec.name) <= 40 else r.spec.name[:39] + "…" for r in rows]
    values = [r.psi_length for r in rows]
    positions = list(range(len(rows)))[::-1]
    colours = ["#9c3d1f" if v >= 0 else "#245a7a" for v in values]
    hatches = ["" if v >= 0 else "////" for v in values]
    bars = ax.barh(positions, values, color=colours, edgecolor="#1d2731", linewidth=0.4)
    for bar, hatch in zip(bars, hatches):
        bar.set_hatch(hatch)
    ax.set_yticks(positions, labels, fontsize=7.5)
    ax.axvline(0.0, color="#1d2731", linewidth=0.8)
    ax.set_xlabel("Ψ·l [W/K]", fontsize=8)
    ax.tick_params(axis="x", labelsize=7.5)
    span = max((abs(v) for v in values), default=1.0) or 1.0
    for pos, r, v in zip(positions, rows, values):
        share = result.share(r)
        # as the table prints it; a negative bar's label goes right of the zero
        # line, where its row is free, not left of the bar over the row's name
        text = (f"{_n(v, 3)} W/K"
                + (f" ({_n(100 * share, 1)} %)" if share is not None else ""))
        ax.text(max(v, 0.0) + 0.02 * span, pos, text, va="center", ha="left", fontsize=7)
    low = min(min(values, default=0.0), 0.0)
    high = max(max(values, default=0.0), 0.0)
    ax.set_xlim(low - 0.05 * span, high + 0.45 * span)
    total = result.heat_transfer_coefficient
    ax.set_title("Share of H_TB = Σ Ψ·l" + (f" = {total:.3g} W/K" if total is not None
                                             else " (no total: a junction failed)"),
                 fontsize=9, loc="left")
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    return fig


def schedule_report(result: ScheduleResult, chart_png: Path | None,
                    chart_size: tuple[float, float] | None = None) -> Report:
    """The schedule's report as blocks."""
    project = result.project
    system = project.dimension_system
    date = report_date(project.report)
    title = project.name or "Thermal bridges of the building"
    subtitle = (f"Schedule of linear thermal bridges, H_TB = Σ Ψ·l (ISO 14683, ISO 13789), "
                f"each Ψ from a two-dimensional calculation to ISO 10211 · bridgecalc "
                f"{__version__} · project {project.origin}")
    blocks: list = [title_block_table(project.report, date)]
    blocks.append(Heading(2, "Result", "result"))
    total, bound = result.heat_transfer_coefficient, result.error_bound
    failed = [r for r in result.rows if not r.ok]
    key = KeyFigures()
    key.items.append(("H_TB", _n(total, 3), "W/K",
                      (f"± {_g(float(f'{bound:.2g}'))} W/K from the junctions' error estimates"
                       if bound is not None else "error bound not available")
                      if total is not None else "no total: a junction failed"))
    key.items.append(("junctions", str(len(result.rows)), "",
                      f"{len(result.computed)} computed now, "
                      f"{len(result.reused)} reused, {len(failed)} failed"))
    key.items.append(("dimension system", system or "not stated", "",
                      "of every length and Ψ (ISO 14683)"))
    blocks.append(key)
    if total is not None:
        blocks.append(Para(
            f"H_TB = Σ Ψk·lk = {_n(total, 3)} W/K over {len(result.rows)} junctions, the "
            f"linear thermal bridges' part of the transmission heat transfer coefficient "
            f"(ISO 13789). Its error bound, {_g(float(f'{bound:.2g}')) if bound is not None else '–'} "
            f"W/K, adds each junction's estimated discretisation error of Ψ (from its mesh "
            f"refinement study) times its length, so errors are not assumed to cancel.",
            "normal"))
    else:
        blocks.append(Para(
            "No total is given: " + "; ".join(f"{r.spec.name} failed ({r.error})"
                                               for r in failed)
            + ". Correct these junctions and run the schedule again; the others are reused.",
            "fail"))
    if system is None:
        blocks.append(Para("The project does not state its dimension system: Ψ·l adds up only "
                           "when lengths and Ψ are measured in one system (ISO 14683).", "warn"))
    for warning in result.warnings:
        blocks.append(Para(f"Warning: {warning}.", "warn"))
    if result.reused:
        blocks.append(Para(
            f"Reused from the previous run in this folder (same model as built, same "
            f"options, same tool build): {', '.join(result.reused)}.", "note"))
    blocks.append(Para(CAUTION, "caution"))

    # -- the junctions
    blocks.append(Heading(2, "Junctions", "junctions"))
    rows, links = [], {}
    for k, r in enumerate(result.rows):
        o, spec = r.outcome, r.spec
        error = o.psi_error_estimate
        psi = (_n(o.psi) + (f" ± {_g(float(f'{error:.2g}'))}" if error is not None else "")
               if o.psi is not None else "–")
        share = result.share(r)
        model = spec.model_text + (f" ({parameters_text(spec.params)})" if spec.params else "")
        if spec.between is not None:
            model += f", Ψ between {spec.between[0]} and {spec.between[1]}"
        rows.append([str(k + 1), spec.name, model, psi, _g(spec.length), _n(r.psi_length, 3),
                     "–" if share is None else f"{100 * share:.1f} %",
                     "–" if spec.psi_reference is None else _n(spec.psi_reference),
                     "–" if r.psi_difference is None else _n(r.psi_difference)])
        if r.ok:
            links[k, 1] = f"{spec.folder}/report.html"
    blocks.append(Table(
        ["#", "junction", "model and parameters", "Ψ ± error [W/(m·K)]", "l [m]", "Ψ·l [W/K]",
         "share", "Ψ reference [W/(m·K)]", "Ψ − reference [W/(m·K)]"], rows,
        f"Ψ with the estimated error of its mesh refinement study; lengths in the building, "
        f"{system or 'dimension system not stated'} dimensions. Each name links to the "
        f"junction's own report.", (0, 3, 4, 5, 6, 7, 8),
        (0.4, 2.0, 2.8, 1.5, 0.8, 1.0, 0.8, 1.0, 1.0), links))
    rows = []
    for k, r in enumerate(result.rows):
        o = r.outcome
        status = ("reused" if r.reused else "computed") if r.ok else f"FAILED: {r.error}"
        if o.warnings:
            status += " (with warnings, see its report)"
        rows.append([str(k + 1), r.spec.name, _n(o.theta_si_min, 2), _n(o.f_rsi, 3),
                     _verdict_text(o.f_rsi_verdict) if r.ok else "–",
                     _moisture_text(o.moisture), status,
                     "report.pdf" if r.ok else "–"])
    criterion = project.f_rsi_min
    blocks.append(Table(
        ["#", "junction", "θsi,min [°C]", "fRsi [-]",
         f"fRsi ≥ {_g(criterion)}" if criterion is not None else "fRsi criterion",
         "moisture (ISO 13788)", "status", "report"], rows,
        ("Surface temperatures: fRsi against the project's criterion f_rsi_min"
         if criterion is not None else
         "Surface temperatures: no fRsi criterion was given (f_rsi_min in the project "
         "file), so no verdict is stated")
        + "; the moisture verdict where the junction's model asks for the ISO 13788 check.",
        (0, 2, 3), (0.4, 2.4, 1.0, 0.9, 1.1, 1.9, 1.7, 1.9),
        {(k, 7): f"{r.spec.folder}/report.pdf" for k, r in enumerate(result.rows) if r.ok}))
    if chart_png is not None:
        blocks.append(Heading(2, "Shares of H_TB", "shares"))
        blocks.append(Figure(CHART_STEM, chart_png,
                             "Each junction's Ψ·l and its share of H_TB. Negative values "
                             "(hatched) are junctions that lose less heat than their "
                             "flanking elements as measured in this dimension system.",
                             chart_size))
    blocks.append(Heading(2, "Cautions", "cautions"))
    blocks.append(Para(CAUTION, "caution"))
    for text in SCHEDULE_CAUTIONS:
        blocks.append(Para(text, "normal"))
    return Report(title, subtitle, blocks, date)
