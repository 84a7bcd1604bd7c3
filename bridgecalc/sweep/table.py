"""What a sweep writes: sweep.csv (one row per variant), sweep.png (Ψ and
fRsi against each varied parameter) and sweep.txt (what was swept, the
columns, the cautions), whole or not at all."""

from __future__ import annotations

import csv
import io
import math
import textwrap
from pathlib import Path
from types import MappingProxyType

from ..outputs import staged_folder
from .variants import CAUTION, CSV_FILE, FIGURE_FILE, NOTES_FILE, RESULT_COLUMNS, VariantResult


#: The ISO 13788 check's columns, when a variant has one.
MOISTURE_COLUMNS = ("moisture_verdict", "critical_month", "f_rsi_required [-]")


def csv_cell(value) -> str:
    """One CSV cell: empty for None, true/false, floats by repr (round-trips exactly)."""
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
    then :data:`RESULT_COLUMNS`; with more than one pair of environments,
    ``L[i|j]`` and ``psi[i|j]`` per pair, and with more than two temperatures
    ``g[j]`` at θsi,min per environment; with an ISO 13788 check, its verdict,
    critical month and required fRsi. Empty cells for values not computed.
    Floats are written in full (``repr``), so the file is the same for the
    same input.
    """
    names = list(dict.fromkeys(n for r in rows for n in r.params))
    pairs = list(dict.fromkeys(pair for r in rows for pair, _, _ in r.couplings))
    environments = list(dict.fromkeys(name for r in rows for name, _ in r.weighting_factors))
    checked = any(r.moisture for r in rows)
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(["variant", *names, *RESULT_COLUMNS,
                     *(f"{what}[{a}|{b}] [W/(m·K)]" for a, b in pairs for what in ("L", "psi")),
                     *(f"g[{name}] at theta_si_min [-]" for name in environments),
                     *(MOISTURE_COLUMNS if checked else ())])
    for r in rows:
        couplings = {pair: (value, psi) for pair, value, psi in r.couplings}
        weights = dict(r.weighting_factors)
        writer.writerow([r.index, *(csv_cell(r.params.get(n)) for n in names),
                         csv_cell(r.psi), csv_cell(r.coupling_coefficient),
                         csv_cell(r.theta_si_min), csv_cell(r.f_rsi), r.status,
                         r.convergence, csv_cell(r.mesh_nodes),
                         *(csv_cell(v) for p in pairs for v in couplings.get(p, (None, None))),
                         *(csv_cell(weights.get(name)) for name in environments),
                         *((csv_cell(v) for v in (r.moisture or (None, None, None)))
                           if checked else ())])
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
    labels = [csv_cell(v) for v in distinct]
    return {v: float(k) for k, v in enumerate(distinct)}, labels


def sweep_figure(rows: list[VariantResult], varied: list[str], title: str = ""):
    """Ψ and fRsi against each varied parameter, as a Figure.

    One column of panels per varied parameter (Ψ above, fRsi below); each
    combination of the other varied parameters is one line. Without flanking
    elements L2D is plotted instead of Ψ. With more than two temperatures,
    one row per pair of environments (Ψ_ij, or L_ij) and θsi,min below.
    Failed variants leave gaps.
    """
    from ..outputs import figures           # the house style; Agg backend
    plt = figures.plt
    ok = [r for r in rows if r.ok]
    quantities = _plotted(ok)
    with plt.rc_context(figures.STYLE):
        width = max(figures.PAGE_WIDTH, 2.6 * len(varied))
        fig, axes = plt.subplots(len(quantities), len(varied),
                                 figsize=(width, 2.8 * len(quantities)), squeeze=False,
                                 layout="constrained")
        if title:
            fig.suptitle(title, x=0.01, ha="left", fontsize=9.5, fontweight="bold")
        for col, name in enumerate(varied):
            x_of, labels = _positions([r.params[name] for r in rows])
            others = [n for n in varied if n != name]
            groups: dict[tuple, list[VariantResult]] = {}
            for r in rows:
                groups.setdefault(tuple(r.params[n] for n in others), []).append(r)
            for row_ax, (value_of, axis_label, least) in enumerate(quantities):
                ax = axes[row_ax][col]
                for k, (key, members) in enumerate(groups.items()):
                    members = sorted(members, key=lambda m: x_of[m.params[name]])
                    values = [value_of(m) for m in members]
                    # line styles and markers as well as colours: readable in grey
                    ax.plot([x_of[m.params[name]] for m in members],
                            [math.nan if v is None else v for v in values],
                            linestyle=LINE_STYLES[k % len(LINE_STYLES)],
                            marker=MARKERS[k // len(LINE_STYLES) % len(MARKERS)],
                            markersize=3, linewidth=1.0,
                            label=", ".join(csv_cell(v) for v in key))
                ax.set_ylabel(axis_label)
                ax.set_xlabel(name)
                _plain_axis(ax, [value_of(m) for m in ok], least)
                if labels is not None:
                    ax.set_xticks(range(len(labels)), labels)
                if not ok:
                    ax.text(0.5, 0.5, "no variant computed", transform=ax.transAxes,
                            ha="center", va="center")
            if 1 < len(groups) <= MAX_LEGEND_LINES:
                axes[-1][col].legend(title=", ".join(others), fontsize=6, title_fontsize=6,
                                     loc="upper center", bbox_to_anchor=(0.5, -0.3),
                                     ncols=2 if len(groups) > 4 else 1)
            elif len(groups) > MAX_LEGEND_LINES:
                axes[0][col].set_title(f"{len(groups)} lines, one per combination of "
                                       f"{', '.join(others)}", fontsize=6.5, loc="left")
    return fig


#: The least span of a panel's value axis: changes smaller than these are
#: below what a result is read to (Ψ and L to 0.001 W/(m·K), fRsi to 0.001,
#: θsi,min to 0.01 K; common practice) and are drawn as the near-flat line they are,
#: not stretched over the whole panel.
LEAST_SPAN = MappingProxyType({"W/(m·K)": 0.002, "fRsi": 0.005, "°C": 0.1})


def _plain_axis(ax, values, least: float) -> None:
    """Plain tick labels on the value axis (no offset such as "1e−5 + 9.521e−1"),
    spanning at least ``least`` about the values' middle."""
    ax.ticklabel_format(axis="y", useOffset=False, style="plain")
    finite = [v for v in values if v is not None and math.isfinite(v)]
    if not finite:
        return
    lo, hi = min(finite), max(finite)
    if hi - lo < least:
        middle = (lo + hi) / 2
        ax.set_ylim(middle - 0.55 * least, middle + 0.55 * least)


def _plotted(ok: list[VariantResult]) -> list:
    """(value of a row, axis label, least span of its axis) of each row of panels."""
    if any(r.couplings for r in ok) and not any(r.coupling_coefficient is not None for r in ok):
        pairs = list(dict.fromkeys(pair for r in ok for pair, _, _ in r.couplings))
        use_psi = {pair: any(p == pair and psi is not None for r in ok
                             for p, _, psi in r.couplings) for pair in pairs}

        def getter(pair, index):
            return lambda m: next((c[index] for c in m.couplings if c[0] == pair), None)

        rows = [(getter(pair, 2 if use_psi[pair] else 1),
                 f"{'Ψ' if use_psi[pair] else 'L'} {pair[0]}–{pair[1]} [W/(m·K)]",
                 LEAST_SPAN["W/(m·K)"])
                for pair in pairs]
        return rows + [(lambda m: m.theta_si_min, "θsi,min [°C]", LEAST_SPAN["°C"])]
    if any(r.psi is not None for r in ok):
        first = (lambda m: m.psi, "Ψ [W/(m·K)]", LEAST_SPAN["W/(m·K)"])
    else:
        first = (lambda m: m.coupling_coefficient, "L2D [W/(m·K)]", LEAST_SPAN["W/(m·K)"])
    return [first, (lambda m: m.f_rsi, "fRsi at θsi,min [-]\n(θsi,min − θe)/(θi − θe)",
                    LEAST_SPAN["fRsi"])]


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
        lines.append(f"varied   {name}: {', '.join(csv_cell(v) for v in values)}")
    for name, value in (base_params or {}).items():
        lines.append(f"fixed    {name}: {csv_cell(value)}")
    lines.append("other parameters: the script's defaults (every value is in sweep.csv)")
    stated = dimension_system or next((r.dimension_system for r in rows if r.dimension_system),
                                      None)
    lines.append(f"dimension system for Ψ: {stated or 'not stated by the model'}")
    lines += ["",
              "Columns of sweep.csv:",
              "  psi                   linear thermal transmittance Ψ [W/(m·K)] = L2D − Σ U·l",
              "  coupling_coefficient  L2D [W/(m·K)]",
              "  theta_si_min          lowest interior surface temperature θsi,min [°C]",
              "  f_rsi                 temperature factor fRsi [-]",
              "  status                ok, or failed: <reason>",
              "  convergence           single mesh, or the outcome of a mesh-refinement study",
              "  mesh_nodes            nodes of the mesh used",
              *(["  L[i|j], psi[i|j]      coupling coefficient L_ij and Ψ_ij of each pair of "
                 "environments [W/(m·K)]"] if any(r.couplings for r in rows) else []),
              *(["  g[j] at theta_si_min  temperature weighting factors at θsi,min [-] "
                 "(in place of fRsi)"] if any(r.weighting_factors for r in rows) else []),
              *(["  moisture_verdict      ISO 13788 monthly check: passes, fails or not "
                 "assessed;",
                 "  critical_month        the month asking the most, and f_rsi_required "
                 "what it asks [-];",
                 "                        a pass is no proof of a mould-free detail"]
                if any(r.moisture for r in rows) else []),
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
        The swept geometry script.
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
            notes_text(rows, vary, str(script), base_params), encoding="utf-8")
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
