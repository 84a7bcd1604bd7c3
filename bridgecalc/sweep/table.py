"""What a sweep writes: sweep.csv (one row per variant), sweep.png (Ψ and
fRsi against each varied parameter) and sweep.txt (what was swept, the
columns, the cautions), whole or not at all."""

from __future__ import annotations

import csv
import io
import math
import textwrap
from pathlib import Path

from ..outputs import staged_folder
from ..readers import script as scripts
from .variants import CAUTION, CSV_FILE, FIGURE_FILE, NOTES_FILE, RESULT_COLUMNS, VariantResult


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
    from ..outputs import figures           # the house style; Agg backend
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
    from ..outputs import figures
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
