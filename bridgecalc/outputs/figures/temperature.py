"""The temperature figure: the surface-temperature case's field with labelled
isotherms at a chosen step and the θsi,min point marked."""

from __future__ import annotations

import matplotlib.colors as mcolors
import matplotlib.tri as mtri
import numpy as np
from matplotlib.text import Text

from ...model.rules import temperature_levels, two_temperature_sides
from ...results import printed_position
from .catalogue import detail_window, legend_rows, view
from .edges import material_boundaries, segments_path
from .isotherms import (MAX_ISOTHERMS, bar_ticks, default_isotherm_step, isotherm_levels,
                        label_isotherms)
from .moisture import draw_critical_isotherm
from .layout import colour_bar, frame, legend, new_figure, outline_detail, views
from .raster import field_image, linear_in_cells, pixel_grid
from .style import INK, STYLE, TEMPERATURE_CMAP, plt


def temperature_figure(result, isotherm_step=None, detail=False):
    """Temperature field of the surface-temperature case with labelled isotherms.

    Parameters
    ----------
    result : bridgecalc.results.Result
    isotherm_step : float, optional
        Temperature step between isotherms [K]; default 1, 2 or 5 × 10ⁿ near
        (θi − θe)/10.
    detail : bool
        Draw the :func:`detail_window` only (there must be one).

    Returns
    -------
    matplotlib.figure.Figure
    """
    model, mesh = result.model, result.mesh
    case = result.surface_temperature_case
    xy = mesh.nodes / model.metres_per_unit
    theta = case.field.nodal
    triangulation = mtri.Triangulation(xy[:, 0], xy[:, 1], mesh.triangles)
    levels = temperature_levels(model)
    lo, hi = float(theta.min()), float(theta.max())
    asked = isotherm_step or default_isotherm_step(model)
    lines, step = isotherm_levels(lo, hi, asked)
    extent = view(result, detail)
    close = None if detail else detail_window(result)
    with plt.rc_context(STYLE):
        fig, ax, aspect = new_figure(
            result, model.name or "junction",
            ("Temperature at the junction (detail)" if detail else "Temperature")
            + f", surface-temperature case ({environments_text(model)}); "
            f"isotherms every {step:g} K"
            + (f" (not {asked:g} K: at most {MAX_ISOTHERMS} lines)" if step != asked else ""),
            extent, legend_rows("temperature_detail" if detail else "temperature", result),
            panel_at_edge=True, close=close)
        vmin = min(levels[0], lo)
        vmax = max(levels[-1], hi)
        norm = mcolors.Normalize(vmin=vmin, vmax=vmax)
        inner = material_boundaries(result)
        for axes, shown, is_close in views(fig, ax, extent, detail):
            frame(axes, result, shown)
            # Linear interpolation in each triangle: for P1 it is the computed
            # field itself, sampled at the image's pixels.
            gx, gy, px, py, cells = pixel_grid(fig, axes, shown, triangulation, result)
            values = np.full(px.shape, np.nan)
            inside = cells >= 0
            values[inside] = linear_in_cells(xy, mesh.triangles, theta, cells[inside],
                                             px[inside], py[inside])
            filled = field_image(axes, gx, gy, values, cmap=TEMPERATURE_CMAP, norm=norm,
                                 interpolation="bilinear")
            filled.set_gid("temperature-fill")
            axes.add_artist(segments_path(inner, edgecolor="white", linewidth=0.6, alpha=0.7))
            marker = _mark_minimum(axes, result, shown, (gx, gy, cells))
            if len(lines):
                iso = axes.tricontour(triangulation, theta, levels=lines, colors=INK,
                                      linewidths=0.55)
                label_isotherms(axes, iso, filled, avoid=[] if marker is None else [marker],
                                outline=xy[mesh.boundary_edges])
            critical = draw_critical_isotherm(axes, triangulation, theta, result)
            renderer = fig.canvas.get_renderer()
            labels = [t.get_window_extent(renderer) for c in axes.collections
                      for t in getattr(c, "labelTexts", [])]
            bars = [a.get_window_extent(renderer) for a in axes.artists
                    if a.get_gid() == "scale-bar"]
            _mark_distances(axes, result, shown,
                            avoid=labels + bars + ([] if marker is None else [marker]))
            if not is_close:
                outline_detail(axes, result)
        # beside a tall section the bar leaves room under it for the entry
        bar = colour_bar(fig, ax, filled, aspect, "temperature θ [°C]",
                         ticks=bar_ticks(vmin, vmax, step),
                         length=1.0 if critical is None else 0.6)
        if critical is not None:
            legend(fig, ax, [critical], aspect, below=bar).set_gid("critical-isotherm-legend")
    return fig


def _mark_minimum(ax, result, extent, grid):
    """Ring at θsi,min, and its label where it covers the least of the solid.

    The label is tried in the four diagonal directions at two distances; a
    place fully inside the plot is preferred; failing that, one on the page
    and off the figure's other plot; then the one over the least solid. Nothing is drawn when θsi,min lies outside the view.

    Parameters
    ----------
    grid : (ndarray, ndarray, ndarray)
        Pixel centres gx, gy [length_unit] over the view and the triangle
        under each (:func:`pixel_grid`), for how much solid a place covers.

    Returns
    -------
    matplotlib.transforms.Bbox or None
        The label's box [display units], for other labels to keep off.
    """
    from matplotlib.transforms import Bbox
    model = result.model
    case = result.surface_temperature_case
    x, y = case.theta_si_min_at
    lo, hi = extent
    if not (lo[0] <= x <= hi[0] and lo[1] <= y <= hi[1]):
        return None
    ax.plot([x], [y], marker="o", ms=9, mfc="white", mec=INK, mew=1.6, zorder=5,
            gid="theta-si-min-marker", clip_on=False)
    ax.plot([x], [y], marker="+", ms=9, color=INK, mew=1.0, zorder=6, clip_on=False)
    value = f"{case.theta_si_min:.2f} °C"
    where = f"at {printed_position(model, case.theta_si_min_at)} {model.length_unit}"
    label = ax.annotate(
        "", (x, y), xytext=(16, 16), textcoords="offset points", fontsize=7, ha="left",
        va="bottom", zorder=7, gid="theta-si-min-label",
        bbox=dict(boxstyle="square,pad=0.3", fc="white", ec=INK, lw=0.6),
        arrowprops=dict(arrowstyle="-", color=INK, lw=0.7))
    fig = ax.get_figure()
    renderer = fig.canvas.get_renderer()
    px, py = ax.transData.transform((x, y))
    # the plot, and the free room right of it up to the side panel
    plot = ax.get_window_extent()
    panel_left = fig._bridgecalc_panel[0] * fig.bbox.width - 0.1 * fig.dpi
    plot = Bbox.from_extents(plot.x0, plot.y0, max(plot.x1, panel_left), plot.y1)
    to_data = ax.transData.inverted()
    gx, gy, cells = grid
    page = fig.bbox
    others = [a.get_window_extent() for a in fig.axes if a is not ax]
    best = None
    # shorter wordings for a narrow plot; the report gives the position anyway
    for wording in (f"θsi,min = {value}\n{where}", f"θsi,min = {value}", f"θsi,min\n{value}"):
        label.set_text(wording)
        # the text's box, its padding, and 6 % for the finer hinting at 300 dpi
        text = Text.get_window_extent(label, renderer)
        pad = 2 * 0.3 * 7 * fig.dpi / 72
        w, h = 1.06 * text.width + pad, text.height + pad
        for distance in (16, 40):
            for dx, dy in ((1, 1), (-1, 1), (1, -1), (-1, -1)):
                off = distance * fig.dpi / 72
                x0 = px + dx * off - (w if dx < 0 else 0)
                y0 = py + dy * off - (h if dy < 0 else 0)
                box = Bbox.from_bounds(x0, y0, w, h)
                inside = (box.x0 >= plot.x0 and box.x1 <= plot.x1
                          and box.y0 >= plot.y0 and box.y1 <= plot.y1)
                # the share of the box's pixels over the solid (outside the view: none)
                (ax0, ay0), (ax1, ay1) = to_data.transform([(box.x0, box.y0),
                                                            (box.x1, box.y1)])
                under = cells[slice(*np.searchsorted(gy, (ay0, ay1))),
                              slice(*np.searchsorted(gx, (ax0, ax1)))]
                covered = float((under >= 0).sum()) / max(
                    1.0, (ax1 - ax0) / (gx[1] - gx[0]) * (ay1 - ay0) / (gy[1] - gy[0]))
                # failing the plot: on the page, then off the figure's other plots
                on_page = (box.x0 >= page.x0 and box.x1 <= page.x1
                           and box.y0 >= page.y0 and box.y1 <= page.y1)
                over_other = any(box.overlaps(other) for other in others)
                score = (not inside, not on_page, over_other, round(covered, 6), distance,
                         -dy, -dx)
                if best is None or score < best[0]:
                    best = (score, dx, dy, distance, box, wording)
        if not best[0][0]:          # a place inside the plot: this wording fits
            break
    label.set_text(best[5])
    _, dx, dy, distance, box, _ = best
    label.xyann = (dx * distance, dy * distance)
    label.set_horizontalalignment("left" if dx > 0 else "right")
    label.set_verticalalignment("bottom" if dy > 0 else "top")
    return box


#: Where a distance's text goes from its tick [points], and how it is aligned:
#: up and left first, then the other corners, the first that keeps clear of
#: the θsi,min and isotherm labels and the scale bar.
DISTANCE_PLACES = (((-3, 3), "right", "bottom"), ((3, 3), "left", "bottom"),
                   ((-3, -3), "right", "top"), ((3, -3), "left", "top"))


def _mark_distances(ax, result, extent, avoid=()) -> None:
    """The surface-temperature figure's distance axis, marked along the interior
    surface: a tick and its distance [length_unit] at round steps (about six
    across the view), "s = 0" where each run starts. A run ends at a cut-off
    plane; the next starts after the profile's gap, as on its axis. A text that
    would lie under one of the ``avoid`` boxes [display units] (the θsi,min
    label, the isotherm labels, the scale bar) goes to another corner of its tick
    (:data:`DISTANCE_PLACES`)."""
    from ...results import interior_surface_profiles
    from .layout import nice_step
    from .profile import profile_offsets
    profiles = interior_surface_profiles(result.model, result.surface_temperature_case.field)
    offsets, _ = profile_offsets(profiles)
    (x0, y0), (x1, y1) = extent
    step = nice_step(max(x1 - x0, y1 - y0) / 6)
    for p, offset in zip(profiles, offsets):
        s = p.arc_length + offset
        first = np.ceil(s[0] / step - 1e-9) * step
        marks = [s[0]] + [v for v in np.arange(first, s[-1] + 1e-9 * step, step)
                          if v - s[0] > 0.3 * step]
        for value in marks:
            x = float(np.interp(value, s, p.points[:, 0]))
            y = float(np.interp(value, s, p.points[:, 1]))
            if not (x0 <= x <= x1 and y0 <= y <= y1):
                continue
            ax.plot([x], [y], marker="|" if abs(p.points[-1, 1] - p.points[0, 1]) <
                    abs(p.points[-1, 0] - p.points[0, 0]) else "_", ms=5, mew=0.9,
                    color=INK, zorder=6, gid="profile-distance-tick")
            text = ax.annotate(("s = " if value == s[0] else "") + f"{value:g}", (x, y),
                               xytext=(-3, 3), textcoords="offset points", ha="right",
                               va="bottom", fontsize=5.5, color=INK, zorder=6,
                               gid="profile-distance",
                               bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none",
                                         alpha=0.8))
            if avoid:
                _clear_of(text, avoid)


def _clear_of(text, avoid) -> None:
    """Put ``text`` at the first of :data:`DISTANCE_PLACES` where its box
    overlaps none of ``avoid`` (the first place when none is clear)."""
    renderer = text.get_figure().canvas.get_renderer()

    def put(offset, ha, va):
        text.xyann = offset
        text.set_horizontalalignment(ha)
        text.set_verticalalignment(va)
    for place in DISTANCE_PLACES:
        put(*place)
        if not any(text.get_window_extent(renderer).overlaps(other) for other in avoid):
            return
    put(*DISTANCE_PLACES[0])


def environments_text(model) -> str:
    """The temperatures a figure shows, in words: θi and θe with two, each
    environment's otherwise."""
    sides = two_temperature_sides(model)
    if sides is not None:
        return f"θi = {sides[0]:g} °C, θe = {sides[1]:g} °C"
    return ", ".join(f"{e.name} {e.temperature:g} °C" for e in model.environments)
