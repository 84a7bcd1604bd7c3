"""The surface-temperature figure: θ along every run of interior surface against
distance along it, with the user's fRsi criterion as a line when one is given."""

from __future__ import annotations

import numpy as np

from ...model.rules import two_temperature_sides
from ...results import interior_surface_profiles
from .catalogue import MARGIN_LEFT, MARGIN_TOP, PAGE_WIDTH, PROFILE_BOTTOM, PROFILE_HEIGHT
from .layout import header
from .style import ADIABATIC, INK, INTERIOR, MUTED, PAPER, STYLE, VOID, plt


def surface_temperature_figure(result, f_rsi_min=None):
    """θ along the interior surface against distance along it, with the fRsi criterion.

    Parameters
    ----------
    result : bridgecalc.results.Result
    f_rsi_min : float, optional
        The user's criterion fRsi,min [-]; drawn as θe + fRsi,min (θi − θe)
        when the environments hold two temperatures. With more, fRsi gives
        way to the weighting factors, named at θsi,min.

    Returns
    -------
    matplotlib.figure.Figure
    """
    model = result.model
    case = result.surface_temperature_case
    sides = two_temperature_sides(model)
    profiles = interior_surface_profiles(model, case.field)
    unit = model.length_unit
    offsets, gap = profile_offsets(profiles)
    with plt.rc_context({**STYLE, "axes.facecolor": PAPER}):
        fig_h = PROFILE_HEIGHT
        fig = plt.figure(figsize=(PAGE_WIDTH, fig_h))
        ax = fig.add_axes([MARGIN_LEFT / PAGE_WIDTH, PROFILE_BOTTOM / fig_h,
                           (PAGE_WIDTH - MARGIN_LEFT - 0.75) / PAGE_WIDTH,
                           (fig_h - PROFILE_BOTTOM - MARGIN_TOP - 0.15) / fig_h])
        header(fig, model.name or "junction",
               "Interior surface temperature along the interior surface, surface-temperature "
               "case; gaps where it meets a cut-off plane")
        offset = 0.0
        lowest = case.theta_si_min
        for k, p in enumerate(profiles):
            s = p.arc_length + offset
            ax.plot(s, p.temperature, color=INTERIOR, lw=1.4, solid_capstyle="butt",
                    label="θsi along the interior surface" if k == 0 else None,
                    gid=f"profile-{k}")
            # surface names along the top
            for j in dict.fromkeys(p.surface.tolist()):
                sel = np.flatnonzero(p.surface == j)
                a, b = s[sel[0]], s[sel[-1] + 1]
                ax.axvspan(a, b, color=VOID if j % 2 else PAPER, zorder=0, lw=0)
                ax.text(0.5 * (a + b), 1.0, f"S{j + 1}", transform=ax.get_xaxis_transform(),
                        ha="center", va="bottom", fontsize=6.5, color=MUTED)
            if k < len(profiles) - 1:
                ax.axvline(s[-1] + gap / 2, color=ADIABATIC, lw=1.0, ls=(0, (1, 1.5)))
            lowest = min(lowest, float(p.temperature.min()))
            offset = s[-1] + gap
        # θsi,min where the result says it is
        s_min = _arc_position(profiles, case.theta_si_min_at, gap)
        if s_min is not None:
            factor = (f"fRsi = {case.f_rsi:.3f}" if case.f_rsi is not None else
                      "g: " + ", ".join(f"{name} {g:.3f}"
                                        for name, g in case.weighting_factors.items()))
            ax.plot([s_min], [case.theta_si_min], marker="o", ms=7, mfc="white", mec=INK,
                    mew=1.4, ls="none", zorder=5, gid="theta-si-min-marker",
                    label=f"θsi,min = {case.theta_si_min:.2f} °C, {factor}")
        if sides is not None:
            theta_i, theta_e = sides
            span_theta = theta_i - theta_e
        if f_rsi_min is not None and sides is not None:
            theta_crit = theta_e + f_rsi_min * span_theta
            ax.axhline(theta_crit, color=INK, lw=1.0, ls=(0, (6, 2, 1, 2)),
                       gid="f-rsi-criterion",
                       label=f"criterion fRsi = {f_rsi_min:g} (θ = {theta_crit:.2f} °C), "
                             f"as set by the user")
            lowest = min(lowest, theta_crit)
        ax.set_xlim(-0.01 * max(offset, 1e-12), max(offset - gap, 1e-12) * 1.01)
        top = max(float(max(p.temperature.max() for p in profiles)), lowest + 1e-6)
        pad = 0.12 * (top - lowest) + 0.02
        ax.set_ylim(lowest - pad, top + pad)
        ax.set_xlabel(f"distance along the interior surface [{unit}]")
        ax.set_ylabel("θsi [°C]")
        if sides is not None:
            right = ax.secondary_yaxis("right", functions=(
                lambda t: (t - theta_e) / span_theta, lambda f: theta_e + f * span_theta))
            right.set_ylabel("temperature factor fRsi [-]")
            right.tick_params(labelsize=7, length=3, width=0.5)
            ax.spines["right"].set_visible(True)
        ax.grid(axis="y", color=VOID, lw=0.6)
        ax.tick_params(length=3, width=0.5)
        # the legend right under the axis title
        leg = fig.legend(loc="upper left", bbox_to_anchor=(MARGIN_LEFT / PAGE_WIDTH,
                                                            (PROFILE_BOTTOM - 0.5) / fig_h),
                         ncols=1, borderaxespad=0.0)
        leg.set_gid("legend")
    return fig


def profile_offsets(profiles):
    """Where each run of interior surface starts on the profile's distance axis
    [length_unit], and the gap left between runs (4 % of their total length,
    where the surface meets a cut-off plane)."""
    total = sum(float(p.arc_length[-1]) for p in profiles)
    gap = 0.04 * total if len(profiles) > 1 else 0.0
    offsets, at = [], 0.0
    for p in profiles:
        offsets.append(at)
        at += float(p.arc_length[-1]) + gap
    return offsets, gap


def _arc_position(profiles, at, gap):
    """Distance along the concatenated profiles of the point ``at`` [length_unit]."""
    at = np.asarray(at, float)
    best, where = None, None
    offset = 0.0
    for p in profiles:
        a, b = p.points[:-1], p.points[1:]
        d = b - a
        t = np.clip(np.einsum("ij,ij->i", at - a, d) / np.maximum(
            np.einsum("ij,ij->i", d, d), 1e-300), 0.0, 1.0)
        foot = a + t[:, None] * d
        dist = np.linalg.norm(foot - at, axis=1)
        k = int(np.argmin(dist))
        if best is None or dist[k] < best:
            best = float(dist[k])
            where = offset + p.arc_length[k] + t[k] * (p.arc_length[k + 1] - p.arc_length[k])
        offset += float(p.arc_length[-1]) + gap
    return where
