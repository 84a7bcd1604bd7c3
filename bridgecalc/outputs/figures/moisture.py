"""The moisture figure: the temperature factor each month of the climate asks for
(ISO 13788) against the junction's own, and the isotherm of the critical month
on the temperature figure.

Both read the result's assessment (:mod:`bridgecalc.assessments`); nothing is
computed here but where a factor falls in the figure's own field.
"""

from __future__ import annotations

import numpy as np

from ..verdicts import MONTH_NAMES, moisture_of, short_humidity
from .catalogue import (MARGIN_LEFT, MARGIN_TOP, PAGE_WIDTH, PROFILE_BOTTOM, PROFILE_HEIGHT,
                        shown_critical_isotherm)
from .layout import header
from .style import ADIABATIC, INTERIOR, MUTED, PAPER, STYLE, VOID, plt

#: Colour of what the climate asks for: the requirement bars and the isotherm.
REQUIRED = "#b8860b"


def moisture_figure(result):
    """fRsi,min of every month (bars; none where θe ≥ θi) against the junction's
    fRsi (a line; with more than two environments, its equivalent per month),
    the critical month marked.

    Parameters
    ----------
    result : bridgecalc.results.Result
        Assessed, with a moisture check.

    Returns
    -------
    matplotlib.figure.Figure
    """
    moisture = moisture_of(result)
    model = result.model
    months = np.arange(1, 13)
    by_month = {m.month: m for m in moisture.months}
    required = np.array([np.nan if by_month[k].f_rsi_required is None
                         else by_month[k].f_rsi_required for k in months])
    junction = np.array([np.nan if by_month[k].f_rsi is None else by_month[k].f_rsi
                         for k in months])
    with plt.rc_context({**STYLE, "axes.facecolor": PAPER}):
        fig_h = PROFILE_HEIGHT
        fig = plt.figure(figsize=(PAGE_WIDTH, fig_h))
        ax = fig.add_axes([MARGIN_LEFT / PAGE_WIDTH, PROFILE_BOTTOM / fig_h,
                           (PAGE_WIDTH - MARGIN_LEFT - 0.3) / PAGE_WIDTH,
                           (fig_h - PROFILE_BOTTOM - MARGIN_TOP - 0.15) / fig_h])
        header(fig, model.name or "junction",
               f"ISO 13788 monthly check, {moisture.criterion} (surface relative humidity "
               f"{moisture.critical_surface_relative_humidity:g}), "
               f"{short_humidity(moisture.humidity)}; climate {moisture.climate_source}")
        bars = ax.bar(months, np.nan_to_num(required, nan=0.0), width=0.62, color=REQUIRED,
                      alpha=0.55, edgecolor=REQUIRED, lw=0.6, gid="f-rsi-required",
                      label="fRsi,min the month asks for (ISO 13788)")
        for k in months[np.isnan(required)]:
            ax.text(k, 0.02, "none", ha="center", va="bottom", fontsize=6, color=MUTED,
                    rotation=90)
        if moisture.critical_month is not None:
            bar = bars[moisture.critical_month - 1]
            bar.set_alpha(1.0)
            bar.set_gid("critical-month")
            bar.set_label(f"the critical month, {MONTH_NAMES[moisture.critical_month - 1]}: "
                          f"fRsi,min = {moisture.f_rsi_required:.3f}")
        word = {"passes": "passes", "fails": "FAILS"}.get(moisture.verdict, "not assessed")
        if result.surface_temperature_case.f_rsi is not None and moisture.f_rsi is not None:
            ax.axhline(moisture.f_rsi, color=INTERIOR, lw=1.4, gid="f-rsi-junction",
                       label=f"the junction's fRsi = {moisture.f_rsi:.3f}: {word}")
        else:
            ax.plot(months, junction, color=INTERIOR, lw=1.4, marker="o", ms=3.5,
                    gid="f-rsi-junction",
                    label=f"the junction's equivalent fRsi in each month's conditions: {word}")
        ax.set_xticks(months, [name[:3] for name in MONTH_NAMES])
        ax.set_xlim(0.4, 12.6)
        top = np.nanmax(np.concatenate([required, junction, [0.0]]))
        ax.set_ylim(0.0, min(1.0, top + 0.18) if top < 1.0 else top + 0.18)
        ax.set_ylabel("temperature factor [-]")
        ax.grid(axis="y", color=VOID, lw=0.6)
        ax.tick_params(length=3, width=0.5)
        ax.spines["top"].set_color(ADIABATIC)
        leg = fig.legend(loc="upper left", bbox_to_anchor=(MARGIN_LEFT / PAGE_WIDTH,
                                                            (PROFILE_BOTTOM - 0.35) / fig_h),
                         ncols=1, borderaxespad=0.0)
        leg.set_gid("legend")
    return fig


def draw_critical_isotherm(ax, triangulation, theta, result):
    """On the temperature figure: the isotherm of the critical month's θsi,min
    (:func:`.catalogue.shown_critical_isotherm`), dashed, so a reviewer sees where the
    surface falls below it. Returns its legend entry (a line with its label),
    or None when the level is not in the field; the figure shows the entry
    once, in its panel under the colour bar, not over each view."""
    from matplotlib.lines import Line2D
    level = shown_critical_isotherm(result)
    if level is None:
        return None
    moisture = moisture_of(result)
    critical = moisture.critical
    ax.tricontour(triangulation, theta, levels=[level], colors=REQUIRED, linewidths=1.3,
                  linestyles=[(0, (4, 2))], zorder=4).set_gid("critical-isotherm")
    return Line2D([], [], color=REQUIRED, lw=1.3, ls=(0, (4, 2)),
                  label=f"fRsi,min = {moisture.f_rsi_required:.3f} of "
                        f"{MONTH_NAMES[moisture.critical_month - 1]} (θsi,min "
                        f"{critical.minimum_surface_temperature:.1f} °C then)")
