"""Figures for envelope submissions; they plot results and never recompute physics.

Five figures, each a :class:`matplotlib.figure.Figure` built by one function
and written as PNG (300 dpi), SVG and PDF by :func:`write_figures`:

``materials``
    the section coloured by conductivity (lighter = more insulating, on a log
    scale) with one hatch per material; the legend names each material and λ.
``mesh``
    the triangles, and the outline drawn by boundary condition (interior,
    exterior, adiabatic), surfaces labelled S1, S2, ... as in the report.
``temperature``
    the surface-temperature case's field with isotherms at a chosen step and
    the θsi,min point marked.
``heat_flux``
    |q| of the heat-flow case per triangle on a log scale, with arrows for the
    direction of flow.
``surface_temperature``
    θ along every run of interior surface against distance along it, with the
    user's fRsi criterion as a line when one is given.

Every quantity plotted comes from :mod:`bridgecalc.results` (fields, q, the
surface profiles). Colour maps are perceptually uniform and monotonic in
lightness (cividis, magma, and a lightness ramp for materials), so figures
stay readable printed in grey; line styles, not colours alone, tell the
boundary conditions apart. Lengths are in the model's length unit.
"""

from __future__ import annotations

import io
import math
import os
import struct
import tempfile
import zlib
from pathlib import Path

# matplotlib caches fonts in MPLCONFIGDIR; a read-only home must not stop a run
if not os.access(os.path.expanduser("~"), os.W_OK) and "MPLCONFIGDIR" not in os.environ:
    os.environ["MPLCONFIGDIR"] = tempfile.mkdtemp(prefix="bridgecalc-mpl-")

import matplotlib  # noqa: E402

matplotlib.use("Agg")
import matplotlib.colors as mcolors  # noqa: E402
import matplotlib.pyplot as plt  # noqa: E402
import matplotlib.tri as mtri  # noqa: E402
from matplotlib.cm import ScalarMappable  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.lines import Line2D  # noqa: E402
from matplotlib.patches import Patch, PathPatch, Polygon  # noqa: E402
from matplotlib.path import Path as PlotPath  # noqa: E402
from matplotlib.text import Text  # noqa: E402
from matplotlib.ticker import LogFormatter  # noqa: E402
from mpl_toolkits.axes_grid1.anchored_artists import AnchoredSizeBar  # noqa: E402

from .results import (design_temperatures, heat_flux_density,  # noqa: E402
                      interior_surface_profiles, printed_position)

FIGURES = ("materials", "mesh", "temperature", "heat_flux", "surface_temperature")
FORMATS = ("png", "svg", "pdf")
PNG_DPI = 300
#: Resolution of the shaded fields inside SVG and PDF figures; lines and text
#: there stay vector.
VECTOR_RASTER_DPI = 150

#: Temperature fields: perceptually uniform, colour-blind safe, monotonic in grey.
TEMPERATURE_CMAP = "cividis"
#: Heat-flux magnitude (log scale): perceptually uniform, monotonic in grey.
HEAT_FLUX_CMAP = "magma"

# -- the house style ------------------------------------------------------------
INK = "#1d2731"          # text, outlines
MUTED = "#5f6b73"        # subtitles, secondary lines
PAPER = "#ffffff"
VOID = "#eceae4"         # background outside the solid
INTERIOR = "#9c3d1f"     # interior surfaces (solid line)
EXTERIOR = "#245a7a"     # exterior surfaces (dashed line)
ADIABATIC = "#7a7a7a"    # cut-off and symmetry planes (dotted line)
HATCHES = ("", "////", "....", "\\\\\\\\", "xxx", "---", "|||", "ooo", "+++", "**")

STYLE = {
    "font.family": "DejaVu Sans",
    "font.size": 8.0,
    "axes.titlesize": 8.0,
    "axes.labelsize": 8.0,
    "axes.edgecolor": INK,
    "axes.labelcolor": INK,
    "axes.linewidth": 0.6,
    "axes.facecolor": VOID,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "xtick.color": INK,
    "ytick.color": INK,
    "xtick.direction": "out",
    "ytick.direction": "out",
    "xtick.labelsize": 7.0,
    "ytick.labelsize": 7.0,
    "legend.fontsize": 7.0,
    "legend.frameon": False,
    "figure.facecolor": PAPER,
    "savefig.facecolor": PAPER,
    "text.color": INK,
    "hatch.linewidth": 0.5,
    "svg.hashsalt": "bridgecalc",        # stable ids: same input, same SVG
    "svg.fonttype": "none",              # text stays text: searchable, editable
    "pdf.fonttype": 3,
}

PAGE_WIDTH = 5.6         # figure width [in]: fits the text width of an A4 page


#: Layout [in]: margins around the plot, the side panel of tall sections and the
#: panel below wide ones. Fixed positions instead of a layout engine: cheaper
#: and the same every run.
MARGIN_LEFT, MARGIN_RIGHT, MARGIN_TOP, MARGIN_BOTTOM = 0.8, 0.15, 0.62, 0.5
SIDE_PANEL, BELOW_PANEL = 1.75, 1.05
MAX_PLOT_HEIGHT = 5.6


def _padded_extent(result):
    """Plot limits [length_unit]: the section's bounding box and a 3 % margin."""
    xy = result.mesh.nodes / result.model.metres_per_unit
    lo, hi = xy.min(axis=0), xy.max(axis=0)
    pad = 0.03 * float((hi - lo).max())
    return lo - pad, hi + pad


#: A detail view is drawn when the junction's box covers less than this share
#: of the whole section's box (a ground-floor model's ground block, say).
DETAIL_AREA_SHARE = 0.25


def detail_window(result):
    """Plot limits [length_unit] of a close view of the junction, or None.

    Some sections are much larger than the construction they hold: ISO 10211
    asks for a ground block of several metres around a ground-floor edge. A
    view of the whole shows the junction as a few pixels. The construction
    is where the regions' corners crowd: a corner counts when another corner
    lies within a tenth of the section's size; the window is the box of those
    corners with a margin, drawn only when it covers less than
    :data:`DETAIL_AREA_SHARE` of the whole section's box and holds less than
    that share of its solid (the tool's own rule: a sloping roof leaves its
    box mostly empty, yet a close view of its wall would show no more).
    """
    model = result.model
    corners = np.unique(np.concatenate([np.asarray(r.vertices, float)
                                        for r in model.regions]), axis=0)
    lo, hi = _padded_extent(result)
    size = float((hi - lo).max())
    if len(corners) < 3 or size <= 0:
        return None
    from scipy.spatial import cKDTree
    gap = cKDTree(corners).query(corners, k=2)[0][:, 1]      # to the nearest other corner
    crowded = corners[gap < 0.1 * size]
    if len(crowded) < 3:
        return None
    a, b = crowded.min(axis=0), crowded.max(axis=0)
    pad = max(0.15 * float((b - a).max()), 0.03 * size)
    # no further than the solid, then the same 3 % margin as a whole view
    xy = result.mesh.nodes / model.metres_per_unit
    a, b = np.maximum(a - pad, xy.min(axis=0)), np.minimum(b + pad, xy.max(axis=0))
    margin = 0.03 * float((b - a).max())
    a, b = a - margin, b + margin
    if np.prod(b - a) >= DETAIL_AREA_SHARE * np.prod(hi - lo):
        return None
    corners = xy[result.mesh.triangles]                        # (T, 3, 2)
    e1, e2 = corners[:, 1] - corners[:, 0], corners[:, 2] - corners[:, 0]
    area = 0.5 * np.abs(e1[:, 0] * e2[:, 1] - e1[:, 1] * e2[:, 0])
    centre = corners.mean(axis=1)
    within = np.all((centre >= a) & (centre <= b), axis=1)
    if area[within].sum() >= DETAIL_AREA_SHARE * area.sum():
        return None
    return a, b


def _section_layout(extent, legend_rows=0):
    """Aspect (height/width) of a view, whether panels go beside it, and the
    plot width, plot height and figure height [in] of a figure of it.

    Parameters
    ----------
    extent : (ndarray, ndarray)
        Lower-left and upper-right plot limits [length_unit].
    legend_rows : int
        Rows of two-line legend entries the panel below a wide view must hold.
    """
    lo, hi = extent
    span = hi - lo
    aspect = float(span[1] / max(span[0], 1e-12))
    side = _side_or_below(aspect)
    if side:
        plot_w = PAGE_WIDTH - MARGIN_LEFT - SIDE_PANEL - MARGIN_RIGHT
        plot_h = plot_w * aspect
        if plot_h > MAX_PLOT_HEIGHT:
            plot_h = MAX_PLOT_HEIGHT
            plot_w = plot_h / aspect
        fig_h = MARGIN_TOP + plot_h + MARGIN_BOTTOM
    else:
        plot_w = PAGE_WIDTH - MARGIN_LEFT - MARGIN_RIGHT - 0.1
        plot_h = max(plot_w * aspect, 0.25)
        fig_h = MARGIN_TOP + plot_h + MARGIN_BOTTOM + _below_panel(legend_rows)
    return aspect, side, plot_w, plot_h, fig_h


def _below_panel(legend_rows: int) -> float:
    """Height [in] of the panel under a wide view: a colour bar, or a legend
    (title, then rows of two-line entries)."""
    return max(BELOW_PANEL, 0.45 + LEGEND_ROW * legend_rows)


#: Height of a row of two-line legend entries [in].
LEGEND_ROW = 0.3


def _legend_rows(name: str, result) -> int:
    """Rows of the legend of figure ``name`` when it sits in two columns below the view."""
    if name in ("materials", "materials_detail"):
        return math.ceil(len(_material_codes(result)[0]) / 2)
    if name == "mesh":
        return 2
    return 0


#: Height of the surface-temperature figure, and of the room under its plot
#: for the axis and the legend [in].
PROFILE_HEIGHT, PROFILE_BOTTOM = 3.6, 1.2

#: Figures of the junction's detail window, when there is one; each follows
#: its view of the whole section.
DETAIL_FIGURES = ("materials_detail", "temperature_detail")


def figure_names(result) -> tuple[str, ...]:
    """The figures of a run: :data:`FIGURES`, and the detail views when the
    section has a :func:`detail_window`."""
    if detail_window(result) is None:
        return FIGURES
    names = []
    for name in FIGURES:
        names += [name] + [d for d in DETAIL_FIGURES if d == f"{name}_detail"]
    return tuple(names)


def _extent(name: str, result):
    return detail_window(result) if name in DETAIL_FIGURES else _padded_extent(result)


def figure_size(name: str, result) -> tuple[float, float]:
    """Width and height [in] that figure ``name`` will have, without drawing it."""
    if name == "surface_temperature":
        return PAGE_WIDTH, PROFILE_HEIGHT
    return PAGE_WIDTH, _section_layout(_extent(name, result), _legend_rows(name, result))[4]


#: Header [in from the top]: the top of the title line, of the subtitle line, and
#: the rule under them.
TITLE_AT, SUBTITLE_AT, RULE_AT = 0.12, 0.33, 0.5


def _header(fig, title: str, subtitle: str) -> None:
    """The house header: bold title, muted subtitle, a thin rule under them.

    Each line is set smaller when it would not fit the figure's width, and
    shortened with an ellipsis when even 6 pt would not.
    """
    fig_h = fig.get_figheight()
    left = 0.12 / PAGE_WIDTH
    for text, at, size, style in ((title, TITLE_AT, 9.5, dict(fontweight="bold", color=INK)),
                                  (subtitle, SUBTITLE_AT, 7.5, dict(color=MUTED))):
        artist = fig.text(left, 1 - at / fig_h, text, ha="left", va="top", fontsize=size,
                          parse_math=False, **style)
        fit_text(artist, PAGE_WIDTH - 0.24)
    fig.add_artist(Line2D([left, 1 - left], [1 - RULE_AT / fig_h] * 2, color=INTERIOR,
                          lw=0.8))


def text_width(artist) -> float:
    """Width of a one-line text artist [in], from the font's own outlines.

    Measured without hinting, as the vector formats draw it; Agg at 300 dpi
    comes within a fraction of a percent of it (at screen resolution the
    hinted width is some 5 % less, which is why it is not measured there).
    """
    from matplotlib.textpath import text_to_path
    width, _, _ = text_to_path.get_text_width_height_descent(
        artist.get_text(), artist.get_fontproperties(), ismath=False)
    return width / 72.0


def fit_text(artist, width: float, smallest: float = 6.0) -> None:
    """Shrink a one-line text to ``width`` [in], down to ``smallest`` [pt], then
    shorten it with an ellipsis until it fits."""
    have = text_width(artist)
    if have <= width:
        return
    artist.set_fontsize(max(smallest, artist.get_fontsize() * width / have * 0.98))
    if text_width(artist) <= width:
        return
    # the longest start of the text that fits with an ellipsis, by bisection
    text = artist.get_text()
    fits, too_long = 0, len(text)
    while too_long - fits > 1:
        middle = (fits + too_long) // 2
        artist.set_text(text[:middle].rstrip() + "…")
        if text_width(artist) <= width:
            fits = middle
        else:
            too_long = middle
    artist.set_text(text[:fits].rstrip() + "…")


def _new_figure(result, title: str, subtitle: str, extent, legend_rows=0,
                panel_at_edge=False):
    """A figure sized to the view's aspect, with the house header.

    Returns the figure, the plot axes and the aspect; the panel box (left,
    bottom, width, height) [figure fraction] for the legend or colour bar is
    kept on the figure. ``panel_at_edge`` puts a side panel at the page's
    right edge instead of beside the plot: beside a narrow plot, the room
    between is then free for the θsi,min label.
    """
    aspect, side, plot_w, plot_h, fig_h = _section_layout(extent, legend_rows)
    fig = plt.figure(figsize=(PAGE_WIDTH, fig_h))
    below = _below_panel(legend_rows)
    bottom = MARGIN_BOTTOM + (0.0 if side else below)
    ax = fig.add_axes([MARGIN_LEFT / PAGE_WIDTH, bottom / fig_h,
                       plot_w / PAGE_WIDTH, plot_h / fig_h])
    _header(fig, title, subtitle)
    if side:
        left = ((PAGE_WIDTH - MARGIN_RIGHT - SIDE_PANEL if panel_at_edge
                 else MARGIN_LEFT + plot_w) + 0.2) / PAGE_WIDTH
        panel = (left, bottom / fig_h, 1 - left - MARGIN_RIGHT / PAGE_WIDTH, plot_h / fig_h)
    else:
        panel = (MARGIN_LEFT / PAGE_WIDTH, 0.1 / fig_h, plot_w / PAGE_WIDTH,
                 (below - 0.25) / fig_h)
    fig._bridgecalc_panel = panel
    return fig, ax, aspect


def _frame(ax, result, extent):
    """Equal scaling, axes in the model's length unit, limits of the view."""
    model = result.model
    lo, hi = extent
    ax.set_xlim(lo[0], hi[0])
    ax.set_ylim(lo[1], hi[1])
    ax.set_aspect("equal", adjustable="box", anchor="SW")
    ax.apply_aspect()          # the axes' final box, for placing labels in it
    ax.set_xlabel(f"x [{model.length_unit}]")
    ax.set_ylabel(f"y [{model.length_unit}]")
    ax.tick_params(length=3, width=0.5)
    _scale_bar(ax, result, extent)


def nice_length(raw: float) -> float:
    """1, 2 or 5 times a power of ten, not more than ``raw`` (``raw`` > 0)."""
    exponent = math.floor(math.log10(raw))
    best = 10.0 ** exponent
    for m in (1, 2, 5):
        if m * 10.0 ** exponent <= raw * (1 + 1e-12):
            best = m * 10.0 ** exponent
    return best


def nice_step(raw: float) -> float:
    """1, 2 or 5 times a power of ten, at least ``raw`` (``raw`` > 0)."""
    exponent = math.floor(math.log10(raw))
    for m in (1, 2, 5, 10):
        if m * 10.0 ** exponent >= raw * (1 - 1e-12):
            return float(m * 10.0 ** exponent)
    return float(10.0 ** (exponent + 1))


def _emptiest_corner(result, extent) -> str:
    """The corner of the view with the fewest triangle centroids, for the scale bar."""
    xy = result.mesh.nodes / result.model.metres_per_unit
    centroids = xy[result.mesh.triangles].mean(axis=1)
    lo, hi = extent
    span = np.maximum(hi - lo, 1e-12)
    rel = (centroids - lo) / span
    corners = {"lower left": (rel[:, 0] < 0.35) & (rel[:, 1] < 0.15),
               "lower right": (rel[:, 0] > 0.65) & (rel[:, 1] < 0.15),
               "upper left": (rel[:, 0] < 0.35) & (rel[:, 1] > 0.85),
               "upper right": (rel[:, 0] > 0.65) & (rel[:, 1] > 0.85)}
    inside = (rel >= 0).all(axis=1) & (rel <= 1).all(axis=1)
    return min(corners, key=lambda k: (int((corners[k] & inside).sum()), k))


def _scale_bar(ax, result, extent):
    model = result.model
    lo, hi = extent
    length = nice_length(float(hi[0] - lo[0]) / 4)
    bar = AnchoredSizeBar(ax.transData, length, f"{length:g} {model.length_unit}",
                          _emptiest_corner(result, extent), pad=0.4, borderpad=0.6, sep=3,
                          color=INK, frameon=True, size_vertical=0,
                          fontproperties={"size": 7})
    bar.patch.set(facecolor="white", alpha=0.85, edgecolor="none")
    bar.set_gid("scale-bar")
    ax.add_artist(bar)


def _side_or_below(aspect: float) -> bool:
    """True when legends and colour bars go to the right of a tall section."""
    return aspect >= 0.8


# -- shared geometry --------------------------------------------------------------

def material_edges(mesh, label) -> np.ndarray:
    """Mesh edges between triangles of different labels, and the outline.

    Parameters
    ----------
    mesh : bridgecalc.mesh.Mesh
    label : ndarray, shape (T,)
        Any per-triangle label; edges where it changes are returned.

    Returns
    -------
    ndarray of int, shape (E, 2)
        Node index pairs.
    """
    tri = mesh.triangles
    edges = np.concatenate([tri[:, [0, 1]], tri[:, [1, 2]], tri[:, [2, 0]]])
    owner = np.tile(np.arange(len(tri)), 3)
    key = np.sort(edges, axis=1)
    order = np.lexsort((key[:, 1], key[:, 0]))
    key, owner = key[order], owner[order]
    same_as_next = np.all(key[1:] == key[:-1], axis=1)
    keep = np.ones(len(key), dtype=bool)
    pair = np.flatnonzero(same_as_next)
    keep[pair] = label[owner[pair]] != label[owner[pair + 1]]
    keep[pair + 1] = False
    return key[keep]


def segments_path(segments, **style) -> PathPatch:
    """Many line segments as one compound path: one element in SVG and PDF.

    Add it with ``ax.add_artist``: the plot limits are set explicitly, and
    ``add_patch`` would walk every segment to update them.

    Parameters
    ----------
    segments : ndarray, shape (S, 2, 2)
        Segment end points [length_unit].
    """
    segments = np.asarray(segments, dtype=float).reshape(-1, 2, 2)
    codes = np.tile(np.array([PlotPath.MOVETO, PlotPath.LINETO], dtype=PlotPath.code_type),
                    len(segments))
    path = PlotPath(segments.reshape(-1, 2), codes) if len(segments) else PlotPath(
        np.zeros((1, 2)), [PlotPath.MOVETO])
    return PathPatch(path, fill=False, **style)


def chained_path(segments, **style) -> PathPatch:
    """Segments joined end to end into polylines, so dash patterns run on along them.

    Parameters
    ----------
    segments : ndarray, shape (S, 2, 2)
        Segment end points [length_unit]; shared end points must be equal.
    """
    segments = np.asarray(segments, dtype=float).reshape(-1, 2, 2)
    keys = [tuple(np.round(p, 9)) for p in segments.reshape(-1, 2)]
    touching: dict = {}
    for k in range(len(segments)):
        for end in (0, 1):
            touching.setdefault(keys[2 * k + end], []).append((k, end))
    used = np.zeros(len(segments), dtype=bool)
    # start at free ends first, then whatever is left (closed loops)
    starts = [k for k in range(len(segments))
              if len(touching[keys[2 * k]]) == 1 or len(touching[keys[2 * k + 1]]) == 1]
    verts, codes = [], []
    for seed in starts + list(range(len(segments))):
        if used[seed]:
            continue
        end = 0 if len(touching[keys[2 * seed]]) == 1 or seed not in starts else 1
        line = [segments[seed, end], segments[seed, 1 - end]]
        used[seed] = True
        point = keys[2 * seed + 1 - end]
        while True:
            nxt = [(k, e) for k, e in touching[point] if not used[k]]
            if not nxt:
                break
            k, e = nxt[0]
            used[k] = True
            line.append(segments[k, 1 - e])
            point = keys[2 * k + 1 - e]
        verts += line
        codes += [PlotPath.MOVETO] + [PlotPath.LINETO] * (len(line) - 1)
    if not verts:
        return segments_path(segments, **style)
    return PathPatch(PlotPath(np.asarray(verts), codes), fill=False, **style)


def _material_codes(result):
    """Material names in first-use order, and each triangle's index into them."""
    names = list(dict.fromkeys(r.material for r in result.model.regions))
    code_of_region = np.array([names.index(r.material) for r in result.model.regions])
    return names, code_of_region[result.mesh.region]


def material_colours(model) -> dict:
    """Fill colour and hatch per material: lightness by log λ, hatch by order.

    Lighter means more insulating, so the map reads the same in grey; materials
    of equal λ are told apart by their hatch.
    """
    names = list(dict.fromkeys(r.material for r in model.regions))
    logs = {n: math.log10(model.materials[n].conductivity) for n in names}
    lo, hi = min(logs.values()), max(logs.values())
    ramp = plt.get_cmap("YlGnBu")
    out = {}
    for k, n in enumerate(names):
        t = 0.5 if hi == lo else (logs[n] - lo) / (hi - lo)
        fill = ramp(0.08 + 0.84 * t)
        lightness = 0.2126 * fill[0] + 0.7152 * fill[1] + 0.0722 * fill[2]
        out[n] = {"fill": fill, "hatch": HATCHES[k % len(HATCHES)],
                  "line": INK if lightness > 0.5 else "white"}
    return out


def _outline_segments(result):
    """Outline edges [length_unit] grouped as interior, exterior, adiabatic."""
    model, mesh = result.model, result.mesh
    xy = mesh.nodes / model.metres_per_unit
    kinds = np.array([model.environment(s.environment).kind for s in model.surfaces] + [""])
    kind = np.where(mesh.boundary_surface >= 0, kinds[mesh.boundary_surface], "adiabatic")
    seg = xy[mesh.boundary_edges]
    return {k: seg[kind == k] for k in ("interior", "exterior", "adiabatic")}


OUTLINE_STYLE = {
    "interior": dict(colors=INTERIOR, linewidths=2.2, linestyles="solid"),
    "exterior": dict(colors=EXTERIOR, linewidths=2.2, linestyles=(0, (4, 2))),
    "adiabatic": dict(colors=ADIABATIC, linewidths=1.4, linestyles=(0, (1, 1.5))),
}
OUTLINE_LABEL = {
    "interior": "interior surface",
    "exterior": "exterior surface",
    "adiabatic": "adiabatic\n(cut-off or symmetry plane)",
}


def _surface_label_points(result):
    """One point per surface on its own outline edges [length_unit]: S1, S2, ..."""
    model, mesh = result.model, result.mesh
    xy = mesh.nodes / model.metres_per_unit
    mids = xy[mesh.boundary_edges].mean(axis=1)
    out = []
    for j in range(len(model.surfaces)):
        own = mids[mesh.boundary_surface == j]
        if len(own) == 0:
            continue
        centre = own.mean(axis=0)
        out.append((j, own[int(np.argmin(np.linalg.norm(own - centre, axis=1)))]))
    return out


# -- the five figures -------------------------------------------------------------

def materials_figure(result, detail=False):
    """Material map: regions in painter's order, legend with names and λ.

    Parameters
    ----------
    result : bridgecalc.results.Result
    detail : bool
        Draw the :func:`detail_window` only (there must be one).

    Returns
    -------
    matplotlib.figure.Figure
    """
    model = result.model
    extent = _view(result, detail)
    with plt.rc_context(STYLE):
        fig, ax, aspect = _new_figure(
            result, model.name or "junction",
            ("Materials at the junction (detail); " if detail else "Materials; ")
            + "lighter fill = lower conductivity λ", extent,
            _legend_rows("materials", result))
        style = material_colours(model)
        for region in model.regions:
            s = style[region.material]
            ax.add_artist(Polygon(np.asarray(region.vertices, float), closed=True,
                                 facecolor=s["fill"], edgecolor=s["line"], hatch=s["hatch"],
                                 linewidth=0.0))
        names, codes = _material_codes(result)
        xy = result.mesh.nodes / model.metres_per_unit
        ax.add_artist(segments_path(xy[material_edges(result.mesh, codes)], edgecolor=INK,
                                   linewidth=0.7, gid="material-edges"))
        handles = [Patch(facecolor=style[n]["fill"], edgecolor=style[n]["line"],
                         hatch=style[n]["hatch"], linewidth=0.4,
                         label=f"{n}\nλ = {model.materials[n].conductivity:g} W/(m·K)")
                   for n in names]
        _frame(ax, result, extent)
        if not detail:
            _outline_detail(ax, result)
        _legend(fig, ax, handles, aspect, title="material")
    return fig


def _view(result, detail: bool):
    """Plot limits [length_unit]: the detail window, or the whole section."""
    if not detail:
        return _padded_extent(result)
    window = detail_window(result)
    if window is None:
        raise ValueError("this section has no detail window (figures.detail_window)")
    return window


def _outline_detail(ax, result):
    """The detail window as a dashed box on a view of the whole section."""
    window = detail_window(result)
    if window is None:
        return
    (x0, y0), (x1, y1) = window
    ax.add_artist(Polygon([(x0, y0), (x1, y0), (x1, y1), (x0, y1)], closed=True, fill=False,
                          edgecolor=INK, linewidth=0.8, linestyle=(0, (3, 2)), zorder=6,
                          gid="detail-window"))
    ax.annotate("detail", (x1, y1), xytext=(2, 2), textcoords="offset points",
                ha="left", va="bottom", fontsize=6.5, color=INK, zorder=6,
                annotation_clip=False,
                bbox=dict(boxstyle="square,pad=0.15", fc="white", ec="none", alpha=0.85))


def _legend(fig, ax, handles, aspect, title=None):
    """Legend in the figure's panel: right of a tall section, below a wide one."""
    left, bottom, width, height = fig._bridgecalc_panel
    side = _side_or_below(aspect)
    leg = fig.legend(handles=handles, loc="upper left",
                     bbox_to_anchor=(left, bottom + height), borderaxespad=0.0,
                     title=title, alignment="left", handlelength=2.4, handleheight=1.8,
                     ncols=1 if side else 2, labelspacing=0.6)
    leg.get_title().set_fontweight("bold")
    for text in leg.get_texts():
        text.set_parse_math(False)        # material names are the user's, "$" included
    leg.set_gid("legend")
    return leg


def mesh_figure(result):
    """Mesh view with boundary conditions along the outline.

    Parameters
    ----------
    result : bridgecalc.results.Result

    Returns
    -------
    matplotlib.figure.Figure
    """
    model, mesh = result.model, result.mesh
    xy = mesh.nodes / model.metres_per_unit
    extent = _padded_extent(result)
    with plt.rc_context(STYLE):
        fig, ax, aspect = _new_figure(
            result, model.name or "junction",
            f"Mesh: {mesh.node_count} nodes, {mesh.triangle_count} triangles, "
            f"{result.element} elements; outline by boundary condition", extent,
            _legend_rows("mesh", result))
        style = material_colours(model)
        for region in model.regions:
            ax.add_artist(Polygon(np.asarray(region.vertices, float), closed=True,
                                 facecolor=mcolors.to_rgba(style[region.material]["fill"], 0.4),
                                 edgecolor="none"))
        every = material_edges(mesh, np.arange(mesh.triangle_count))
        fine = mesh.triangle_count > 8000          # thinner lines where the mesh is dense
        ax.add_artist(segments_path(xy[every], edgecolor=INK, linewidth=0.07 if fine else 0.15,
                                    alpha=0.85, gid="mesh-edges"))
        handles = []
        for kind, seg in _outline_segments(result).items():
            if len(seg):
                st = OUTLINE_STYLE[kind]
                ax.add_artist(chained_path(seg, edgecolor=st["colors"], linewidth=st["linewidths"],
                                           linestyle=st["linestyles"], capstyle="butt",
                                           gid=f"outline-{kind}"))
                handles.append(Line2D([], [], color=st["colors"], lw=st["linewidths"],
                                      ls=st["linestyles"], label=OUTLINE_LABEL[kind]))
        for j, p in _surface_label_points(result):
            ax.annotate(f"S{j + 1}", p, fontsize=6.5, ha="center", va="center",
                        color=INK, gid=f"surface-label-S{j + 1}",
                        bbox=dict(boxstyle="round,pad=0.2", fc="white", ec=MUTED, lw=0.4))
        _frame(ax, result, extent)
        _legend(fig, ax, handles, aspect, title="outline")
    return fig


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
    theta_i, theta_e = design_temperatures(model)
    lo, hi = float(theta.min()), float(theta.max())
    asked = isotherm_step or default_isotherm_step(model)
    lines, step = isotherm_levels(lo, hi, asked)
    extent = _view(result, detail)
    with plt.rc_context(STYLE):
        fig, ax, aspect = _new_figure(
            result, model.name or "junction",
            ("Temperature at the junction (detail)" if detail else "Temperature")
            + f", surface-temperature case (θi = {theta_i:g} °C, θe = {theta_e:g} °C); "
            f"isotherms every {step:g} K"
            + (f" (not {asked:g} K: at most {MAX_ISOTHERMS} lines)" if step != asked else ""),
            extent, panel_at_edge=True)
        _frame(ax, result, extent)
        vmin = min(theta_i, theta_e, lo)
        vmax = max(theta_i, theta_e, hi)
        # Linear interpolation in each triangle: for P1 it is the computed
        # field itself, sampled at the image's pixels.
        gx, gy, px, py, cells = _pixel_grid(fig, ax, extent, triangulation)
        values = np.full(px.shape, np.nan)
        inside = cells >= 0
        values[inside] = _linear_in_cells(xy, mesh.triangles, theta, cells[inside],
                                          px[inside], py[inside])
        filled = _field_image(ax, gx, gy, values, cmap=TEMPERATURE_CMAP,
                              norm=mcolors.Normalize(vmin=vmin, vmax=vmax),
                              interpolation="bilinear")
        filled.set_gid("temperature-fill")
        names, codes = _material_codes(result)
        ax.add_artist(segments_path(xy[material_edges(mesh, codes)], edgecolor="white",
                                   linewidth=0.6, alpha=0.7))
        marker = _mark_minimum(ax, result, extent, (gx, gy, cells))
        if len(lines):
            iso = ax.tricontour(triangulation, theta, levels=lines, colors=INK,
                                linewidths=0.55)
            label_isotherms(ax, iso, filled, avoid=[] if marker is None else [marker])
        if not detail:
            _outline_detail(ax, result)
        _colour_bar(fig, ax, filled, aspect, "temperature θ [°C]",
                    ticks=_bar_ticks(vmin, vmax, step))
    return fig


#: Isotherm labels [pt]: font size, and the clear space kept around each.
ISOTHERM_LABEL_SIZE, ISOTHERM_LABEL_CLEARANCE = 6.5, 3.0


def label_isotherms(ax, contours, field, avoid=()):
    """Label each isotherm once, clear of the others where the plot allows.

    A label follows its line (matplotlib turns it along it), so across the
    line it needs half its height clear of other isotherms. Candidate places
    are taken along the middle of every line inside the plot; each label is
    taken as a disc of its width, whatever its turn, and must stay inside
    the plot, off labels already placed and off the boxes in ``avoid``.

    First every level that has a place with that much room gets the one
    with the most room (up to four times the least; then the one nearest the
    middle of its line). Where isotherms crowd, as in insulation, there is
    no such place; those levels get the least crowded place left, on a box
    of the field's own colour at that temperature, which hides the
    neighbouring lines under the label only. A level that finds no place at
    all stays unlabelled; the colour bar's ticks are the isotherm levels.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        With its limits and aspect final.
    contours : matplotlib.contour.ContourSet
    field : matplotlib.cm.ScalarMappable
        Colour map and norm of the field under the isotherms.
    avoid : list of matplotlib.transforms.Bbox
        Display boxes to keep labels off (the θsi,min label, say).

    Returns
    -------
    list of float
        The levels that got a label.
    """
    from scipy.spatial import cKDTree
    fig = ax.get_figure()
    box = ax.get_window_extent()
    per_pt = fig.dpi / 72.0
    clear = ISOTHERM_LABEL_CLEARANCE * per_pt
    across = ISOTHERM_LABEL_SIZE * per_pt / 2 + clear
    text = lambda v: f"{v:g}"                      # noqa: E731
    lines = []               # per level: points a pixel apart along each piece [display]
    for level, path in zip(contours.levels, contours.get_paths()):
        pieces = path.to_polygons(closed_only=False) if len(path.vertices) else []
        lines.append((float(level), [_densify(ax.transData.transform(np.asarray(q, float)),
                                              fig.dpi / 100)
                                     for q in pieces if len(q) >= 2]))
    trees = [cKDTree(np.concatenate(pts)) if pts else None for _, pts in lines]
    candidates = {}
    for k, (level, pieces) in enumerate(lines):
        if not pieces:
            continue
        # up to 41 points along the middle 80 % of each piece; centrality is
        # 1 at a piece's middle and 0.2 at the ends of that stretch
        cand, central = [], []
        for q in pieces:
            pick = np.unique((np.linspace(0.1, 0.9, 41) * (len(q) - 1)).round().astype(int))
            cand.append(q[pick])
            central.append(1 - np.abs(2 * pick / max(len(q) - 1, 1) - 1))
        cand = np.concatenate(cand)
        room = np.full(len(cand), np.inf)
        for j, tree in enumerate(trees):
            if j != k and tree is not None:
                room = np.minimum(room, tree.query(cand)[0])
        radius = 0.62 * len(text(level)) * ISOTHERM_LABEL_SIZE * per_pt / 2 + clear
        candidates[k] = (cand, np.concatenate(central), room, radius)
    discs = []                                    # (x, y, radius) of placed labels
    boxes = [(b.x0, b.y0, b.x1, b.y1) for b in avoid]
    places = {}
    for crowded in (False, True):
        for k, (cand, central, room, radius) in candidates.items():
            if k in places:
                continue
            ok = ((cand[:, 0] >= box.x0 + radius) & (cand[:, 0] <= box.x1 - radius)
                  & (cand[:, 1] >= box.y0 + radius) & (cand[:, 1] <= box.y1 - radius))
            if not crowded:
                ok &= room >= across
            for x, y, r in discs:
                ok &= np.hypot(cand[:, 0] - x, cand[:, 1] - y) >= r + radius
            for x0, y0, x1, y1 in boxes:
                nx = np.clip(cand[:, 0], x0, x1)
                ny = np.clip(cand[:, 1], y0, y1)
                ok &= np.hypot(cand[:, 0] - nx, cand[:, 1] - ny) >= radius
            if not ok.any():
                continue
            score = np.minimum(room, 4 * across) + 1e-3 * across * central
            x, y = cand[int(np.flatnonzero(ok)[np.argmax(score[ok])])]
            discs.append((x, y, radius))
            places[k] = ax.transData.inverted().transform((x, y))
    if not places:
        return []
    order = sorted(places)
    labelled = [lines[k][0] for k in order]
    contours.clabel(levels=labelled, manual=[places[k] for k in order], fmt=text,
                    fontsize=ISOTHERM_LABEL_SIZE, inline=True, inline_spacing=2)
    for label, level in zip(contours.labelTexts, labelled):     # added in this order
        fill = field.cmap(field.norm(level))
        light = 0.2126 * fill[0] + 0.7152 * fill[1] + 0.0722 * fill[2] > 0.45
        label.set_color(INK if light else "white")
        label.set_bbox(dict(boxstyle="square,pad=0.12", fc=fill, ec="none"))
    return labelled


def _densify(points, spacing):
    """A polyline with points inserted so that none lies more than ``spacing`` apart."""
    step = np.diff(points, axis=0)
    count = np.maximum(1, np.ceil(np.hypot(step[:, 0], step[:, 1]) / spacing)).astype(int)
    segment = np.repeat(np.arange(len(step)), count)
    t = (np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)) / count[segment]
    return np.concatenate([points[segment] + step[segment] * t[:, None], points[-1:]])


#: Pixels per inch of plot for the sampled field images (shown at 300 dpi in PNG).
FIELD_PPI = 200


def cells_on_grid(xy, triangles, gx, gy) -> np.ndarray:
    """Triangle under each point of a regular grid, -1 where there is none.

    Each triangle visits only the grid points inside its bounding box, so the
    cost follows the number of points plus triangles (a tree-based finder
    would first spend seconds building itself on a fine mesh).

    Parameters
    ----------
    xy : ndarray, shape (N, 2)
        Node positions [length_unit].
    triangles : ndarray of int, shape (T, 3)
    gx, gy : ndarray
        Evenly spaced grid coordinates [length_unit], increasing.

    Returns
    -------
    ndarray of int, shape (len(gy), len(gx))
    """
    gx, gy = np.asarray(gx, float), np.asarray(gy, float)
    nx, ny = len(gx), len(gy)
    cells = np.full((ny, nx), -1, dtype=np.int64)
    dx = gx[1] - gx[0] if nx > 1 else 1.0
    dy = gy[1] - gy[0] if ny > 1 else 1.0
    p = xy[triangles]                                            # (T, 3, 2)
    slack = 1e-9 * float(np.ptp(xy, axis=0).max())
    ix0 = np.clip(np.ceil((p[:, :, 0].min(1) - slack - gx[0]) / dx), 0, nx).astype(np.int64)
    ix1 = np.clip(np.floor((p[:, :, 0].max(1) + slack - gx[0]) / dx), -1, nx - 1).astype(np.int64)
    iy0 = np.clip(np.ceil((p[:, :, 1].min(1) - slack - gy[0]) / dy), 0, ny).astype(np.int64)
    iy1 = np.clip(np.floor((p[:, :, 1].max(1) + slack - gy[0]) / dy), -1, ny - 1).astype(np.int64)
    cx = np.maximum(ix1 - ix0 + 1, 0)
    cy = np.maximum(iy1 - iy0 + 1, 0)
    count = cx * cy
    if count.sum() == 0:
        return cells
    hit = np.flatnonzero(count)                   # triangles over at least one point
    count = count[hit]
    tri = np.repeat(np.arange(len(hit)), count)
    offset = np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)
    width = cx[hit][tri]
    i = ix0[hit][tri] + offset % width
    j = iy0[hit][tri] + offset // width
    x, y = gx[i], gy[j]
    maps = barycentric_maps(xy, triangles[hit])[tri]           # (S, 2, 3)
    l1 = maps[:, 0, 0] * x + maps[:, 0, 1] * y + maps[:, 0, 2]
    l2 = maps[:, 1, 0] * x + maps[:, 1, 1] * y + maps[:, 1, 2]
    tol = 1e-9
    inside = (l1 >= -tol) & (l2 >= -tol) & (l1 + l2 <= 1 + tol)
    cells[j[inside], i[inside]] = hit[tri[inside]]
    return cells


def barycentric_maps(xy, triangles) -> np.ndarray:
    """Per triangle, the affine maps from (x, y) to its barycentric coordinates λ1, λ2.

    λk = m[k, 0] x + m[k, 1] y + m[k, 2], with λ1 = 1 at the second corner and
    λ2 = 1 at the third (λ0 = 1 − λ1 − λ2 at the first).

    Parameters
    ----------
    xy : ndarray, shape (N, 2)
        Node positions [length_unit].
    triangles : ndarray of int, shape (T, 3)

    Returns
    -------
    ndarray, shape (T, 2, 3)
        Coefficients [1/length_unit, 1/length_unit, -].
    """
    p = xy[triangles]
    a, b, c = p[:, 0], p[:, 1], p[:, 2]
    e1, e2 = b - a, c - a
    det = e1[:, 0] * e2[:, 1] - e1[:, 1] * e2[:, 0]
    maps = np.empty((len(triangles), 2, 3))
    maps[:, 0, 0], maps[:, 0, 1] = e2[:, 1] / det, -e2[:, 0] / det
    maps[:, 1, 0], maps[:, 1, 1] = -e1[:, 1] / det, e1[:, 0] / det
    maps[:, :, 2] = -(maps[:, :, 0] * a[:, None, 0] + maps[:, :, 1] * a[:, None, 1])
    return maps


def _linear_in_cells(xy, triangles, nodal, cells, x, y) -> np.ndarray:
    """Nodal values interpolated linearly inside the given triangles at (x, y).

    The interpolant of each triangle is an affine map v = g0 x + g1 y + g2,
    formed once per triangle and then evaluated at each point.
    """
    maps = barycentric_maps(xy, triangles)                       # (T, 2, 3)
    v = nodal[triangles]
    slope = (v[:, 1:2] - v[:, 0:1]) * maps[:, 0] + (v[:, 2:3] - v[:, 0:1]) * maps[:, 1]
    slope[:, 2] += v[:, 0]
    g = slope[cells]
    return g[:, 0] * x + g[:, 1] * y + g[:, 2]


def _pixel_grid(fig, ax, extent, triangulation):
    """Pixel centres over the plot [length_unit] and the triangle under each (-1: none)."""
    lo, hi = extent
    box = ax.get_position()
    width_in = box.width * fig.get_figwidth()
    nx = max(int(width_in * FIELD_PPI), 50)
    ny = max(int(nx * (hi[1] - lo[1]) / (hi[0] - lo[0])), 20)
    gx = lo[0] + (np.arange(nx) + 0.5) * (hi[0] - lo[0]) / nx
    gy = lo[1] + (np.arange(ny) + 0.5) * (hi[1] - lo[1]) / ny
    px, py = np.meshgrid(gx, gy)
    cells = cells_on_grid(np.column_stack([triangulation.x, triangulation.y]),
                          triangulation.triangles, gx, gy)
    return gx, gy, px, py, cells


def _field_image(ax, gx, gy, values, cmap, norm, interpolation):
    """A sampled field as one image over the plot; NaN (outside the solid) shows
    the plot's background colour.

    The colours are looked up here, once, as RGBA bytes: matplotlib would
    otherwise map the values again in each of the three formats. (Scaled by
    less than 3 on the page, it maps before resampling anyway, so the pixels
    come out the same.) The image is opaque, in the background colour where
    there is no solid: it covers the whole plot, so this looks the same as a
    transparent image over the background, without matplotlib blending an
    alpha channel in every format. The image keeps ``cmap`` and ``norm`` for
    its colour bar.
    """
    lo, hi = _padded_extent_from_grid(gx, gy)
    cmap = matplotlib.colormaps[cmap].with_extremes(bad=ax.get_facecolor())
    rgba = cmap(norm(np.ma.masked_invalid(values)), bytes=True)
    image = ax.imshow(rgba, origin="lower", extent=(lo[0], hi[0], lo[1], hi[1]),
                      aspect="equal", zorder=1, interpolation=interpolation,
                      interpolation_stage="rgba")
    image.set_cmap(cmap)
    image.set_norm(norm)
    return image


def _padded_extent_from_grid(gx, gy):
    dx, dy = gx[1] - gx[0] if len(gx) > 1 else 1.0, gy[1] - gy[0] if len(gy) > 1 else 1.0
    return (gx[0] - dx / 2, gy[0] - dy / 2), (gx[-1] + dx / 2, gy[-1] + dy / 2)


#: Isotherms drawn at most in one figure; a finer step is coarsened (and says so).
MAX_ISOTHERMS = 200


def isotherm_levels(lo: float, hi: float, step: float):
    """Isotherm temperatures strictly between ``lo`` and ``hi`` [°C], multiples of ``step``
    [K], and the step used: ``step``, or past :data:`MAX_ISOTHERMS` lines, the
    1-2-5 step that keeps within it."""
    if (hi - lo) / step > MAX_ISOTHERMS:
        step = nice_step((hi - lo) / MAX_ISOTHERMS)
    levels = _multiples(lo, hi, step)
    return levels[(levels > lo) & (levels < hi)], step


def _multiples(lo: float, hi: float, step: float) -> np.ndarray:
    """Multiples of ``step`` from ``lo`` to ``hi``, both included to round-off."""
    return np.arange(math.ceil(lo / step - 1e-9) * step, hi + 1e-9 * step, step)


def default_isotherm_step(model) -> float:
    """1, 2 or 5 × 10ⁿ K near a tenth of θi − θe [K]."""
    theta_i, theta_e = design_temperatures(model)
    return nice_step(abs(theta_i - theta_e) / 10)


def _bar_ticks(lo, hi, step):
    """Colour-bar ticks [°C]: multiples of the isotherm step, doubled until at most 12."""
    count = (hi - lo) / step
    if count > 12:
        step *= 2.0 ** math.ceil(math.log2(count / 12))
    return _multiples(lo, hi, step)


def _mark_minimum(ax, result, extent, grid):
    """Ring at θsi,min, and its label where it covers the least of the solid.

    The label is tried in the four diagonal directions at two distances; a
    place fully inside the plot is preferred, then the one over the least
    solid. Nothing is drawn when θsi,min lies outside the view.

    Parameters
    ----------
    grid : (ndarray, ndarray, ndarray)
        Pixel centres gx, gy [length_unit] over the view and the triangle
        under each (:func:`_pixel_grid`), for how much solid a place covers.

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
                score = (not inside, round(covered, 6), distance, -dy, -dx)
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


def _colour_bar(fig, ax, mappable, aspect, label, ticks=None):
    """Colour bar in the figure's panel: upright beside a tall section, flat below a wide one.

    It is drawn from ``mappable``'s colour map and norm only (a field image
    holds colours, not values).
    """
    left, bottom, width, height = fig._bridgecalc_panel
    mappable = ScalarMappable(norm=mappable.norm, cmap=mappable.cmap)
    if _side_or_below(aspect):
        bar_h = min(height, 4.5 / fig.get_figheight())
        cax = fig.add_axes([left, bottom + height - bar_h, 0.16 / PAGE_WIDTH, bar_h])
        bar = fig.colorbar(mappable, cax=cax)
    else:
        cax = fig.add_axes([left, bottom + height - 0.16 / fig.get_figheight(),
                            min(width, 4.0 / PAGE_WIDTH), 0.16 / fig.get_figheight()])
        bar = fig.colorbar(mappable, cax=cax, orientation="horizontal")
    bar.set_label(label)
    if ticks is not None:
        bar.set_ticks(ticks)
    bar.outline.set_linewidth(0.5)
    cax.tick_params(labelsize=7, length=2.5, width=0.5)
    cax.set_gid("colour-bar")
    return bar


def heat_flux_figure(result):
    """|q| of the heat-flow case per triangle (log scale) with flow-direction arrows.

    Parameters
    ----------
    result : bridgecalc.results.Result

    Returns
    -------
    matplotlib.figure.Figure
    """
    model, mesh = result.model, result.mesh
    xy = mesh.nodes / model.metres_per_unit
    q = heat_flux_density(model, result.heat_flow_case.field)
    magnitude = np.hypot(q[:, 0], q[:, 1])
    top = float(magnitude.max())
    floor = max(top * 1e-3, float(magnitude[magnitude > 0].min()) if np.any(magnitude > 0)
                else 1e-12)
    floor = min(floor, top * 0.5) if top > 0 else 1e-12
    top = max(top, floor * 10)
    triangulation = mtri.Triangulation(xy[:, 0], xy[:, 1], mesh.triangles)
    extent = _padded_extent(result)
    with plt.rc_context(STYLE):
        fig, ax, aspect = _new_figure(
            result, model.name or "junction",
            "Heat-flux density |q| = |−λ∇θ|, heat-flow case; arrows show direction only",
            extent)
        # |q| is constant in each triangle: each pixel shows its triangle's value
        gx, gy, px, py, cells = _pixel_grid(fig, ax, extent, triangulation)
        values = np.full(px.shape, np.nan)
        values[cells >= 0] = np.clip(magnitude[cells[cells >= 0]], floor, top)
        shade = _field_image(ax, gx, gy, values, cmap=HEAT_FLUX_CMAP,
                             norm=mcolors.LogNorm(vmin=floor, vmax=top), interpolation="nearest")
        shade.set_gid("heat-flux-fill")
        names, codes = _material_codes(result)
        ax.add_artist(segments_path(xy[material_edges(mesh, codes)], edgecolor="white",
                                   linewidth=0.5, alpha=0.6))
        _flow_arrows(ax, triangulation, xy, q, magnitude)
        _frame(ax, result, extent)
        bar = _colour_bar(fig, ax, shade, aspect, "heat-flux density |q| [W/m²], log scale")
        # plain numbers (0.1, 1, 10; 3, 6 between them when the range is
        # short), not powers of ten in mathtext
        axis = bar.ax.yaxis if _side_or_below(aspect) else bar.ax.xaxis
        axis.set_major_formatter(PlainLogFormatter())
        axis.set_minor_formatter(PlainLogFormatter(labelOnlyBase=False))
    return fig


class PlainLogFormatter(LogFormatter):
    """Log-axis tick labels as plain numbers (0.1, 2, 40), not mathtext powers;
    which ticks get a label is matplotlib's own choice."""

    def _num_to_string(self, x, vmin, vmax):
        return f"{x:g}"


def _flow_arrows(ax, triangulation, xy, q, magnitude):
    """Unit arrows along q on a regular grid, one per cell inside the solid."""
    lo, hi = xy.min(axis=0), xy.max(axis=0)
    span = hi - lo
    spacing = float(span.max()) / 26
    nx = max(int(span[0] / spacing), 1)
    ny = max(int(span[1] / spacing), 1)
    gx = lo[0] + (np.arange(nx) + 0.5) * span[0] / nx
    gy = lo[1] + (np.arange(ny) + 0.5) * span[1] / ny
    px, py = np.meshgrid(gx, gy)
    px, py = px.ravel(), py.ravel()
    cell = cells_on_grid(xy, triangulation.triangles, gx, gy).ravel()
    inside = cell >= 0
    cell = cell[inside]
    strong = magnitude[cell] > 1e-9 * max(float(magnitude.max()), 1e-300)
    cell = cell[strong]
    u = q[cell, 0] / magnitude[cell]
    v = q[cell, 1] / magnitude[cell]
    length = 0.6 * min(span[0] / nx, span[1] / ny)
    ax.quiver(px[inside][strong], py[inside][strong], u * length, v * length,
              angles="xy", scale_units="xy", scale=1.0, pivot="middle", color="white",
              edgecolor=INK, linewidth=0.35, width=0.0035, headwidth=4, headlength=4.5,
              headaxislength=4, gid="flow-arrows", zorder=4)


def surface_temperature_figure(result, f_rsi_min=None):
    """θ along the interior surface against distance along it, with the fRsi criterion.

    Parameters
    ----------
    result : bridgecalc.results.Result
    f_rsi_min : float, optional
        The user's criterion fRsi,min [-]; drawn as θe + fRsi,min (θi − θe).

    Returns
    -------
    matplotlib.figure.Figure
    """
    model = result.model
    case = result.surface_temperature_case
    theta_i, theta_e = design_temperatures(model)
    profiles = interior_surface_profiles(model, case.field)
    unit = model.length_unit
    total = sum(float(p.arc_length[-1]) for p in profiles)
    gap = 0.04 * total if len(profiles) > 1 else 0.0
    with plt.rc_context({**STYLE, "axes.facecolor": PAPER}):
        fig_h = PROFILE_HEIGHT
        fig = plt.figure(figsize=(PAGE_WIDTH, fig_h))
        ax = fig.add_axes([MARGIN_LEFT / PAGE_WIDTH, PROFILE_BOTTOM / fig_h,
                           (PAGE_WIDTH - MARGIN_LEFT - 0.75) / PAGE_WIDTH,
                           (fig_h - PROFILE_BOTTOM - MARGIN_TOP - 0.15) / fig_h])
        _header(fig, model.name or "junction",
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
            ax.plot([s_min], [case.theta_si_min], marker="o", ms=7, mfc="white", mec=INK,
                    mew=1.4, ls="none", zorder=5, gid="theta-si-min-marker",
                    label=f"θsi,min = {case.theta_si_min:.2f} °C, fRsi = {case.f_rsi:.3f}")
        span_theta = theta_i - theta_e
        if f_rsi_min is not None:
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


BUILDERS = {
    "materials": lambda r, o: materials_figure(r),
    "mesh": lambda r, o: mesh_figure(r),
    "temperature": lambda r, o: temperature_figure(r, o.get("isotherm_step")),
    "materials_detail": lambda r, o: materials_figure(r, detail=True),
    "temperature_detail": lambda r, o: temperature_figure(r, o.get("isotherm_step"),
                                                          detail=True),
    "heat_flux": lambda r, o: heat_flux_figure(r),
    "surface_temperature": lambda r, o: surface_temperature_figure(r, o.get("f_rsi_min")),
}


def build_figure(name: str, result, **options):
    """One of :func:`figure_names` as a Figure (``isotherm_step``, ``f_rsi_min`` apply)."""
    return BUILDERS[name](result, options)


def _defer_import(name: str) -> None:
    """Let module ``name`` load when first used rather than when first imported.

    matplotlib's PDF writer imports fontTools' subsetter (about 0.2 s) at
    import, but uses it only for Type 42 fonts; the figures embed Type 3
    (``pdf.fonttype`` in :data:`STYLE`). With a lazy module in its place it is
    loaded only if some code does use it.
    """
    import importlib.util
    import sys
    if name in sys.modules:
        return
    spec = importlib.util.find_spec(name)
    if spec is None or spec.loader is None:
        return
    spec.loader = importlib.util.LazyLoader(spec.loader)
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module
    spec.loader.exec_module(module)
    # bound on its package too, so ``from package import module`` takes it as
    # it is (looking it up through the import system would load it at once)
    package, _, short = name.rpartition(".")
    if package:
        setattr(importlib.import_module(package), short, module)


def prepare() -> None:
    """Import the SVG and PDF writers and load the fonts, ahead of drawing.

    Done once before figure workers are forked, they share it instead of
    each doing it again.
    """
    _defer_import("fontTools.subset")
    import matplotlib.backends.backend_pdf  # noqa: F401
    import matplotlib.backends.backend_svg  # noqa: F401
    from matplotlib import font_manager
    for weight in ("normal", "bold"):
        font_manager.get_font(font_manager.findfont(
            font_manager.FontProperties(family=STYLE["font.family"], weight=weight)))


def png_bytes(pixels, dpi: float) -> bytes:
    """A PNG file of 8-bit RGB or RGBA ``pixels``, shape (rows, columns, 3 or 4).

    Every row uses the "Up" filter (PNG specification, filter type 2: the
    difference to the row above, modulo 256) and zlib at level 1. Figures are
    mostly flat colour and smooth fields, so this compresses as well as
    choosing a filter per row, at a quarter of the time. The pHYs chunk states
    ``dpi`` [1/in]; no text chunks, so the same pixels give the same bytes.
    """
    pixels = np.ascontiguousarray(pixels, dtype=np.uint8)
    rows, columns, channels = pixels.shape
    flat = pixels.reshape(rows, columns * channels)
    filtered = np.empty((rows, columns * channels + 1), dtype=np.uint8)
    filtered[:, 0] = 2
    filtered[0, 1:] = flat[0]
    np.subtract(flat[1:], flat[:-1], out=filtered[1:, 1:])

    def chunk(kind: bytes, data: bytes) -> bytes:
        return (struct.pack(">I", len(data)) + kind + data
                + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF))

    per_metre = int(round(dpi / 0.0254))
    return (b"\x89PNG\r\n\x1a\n"
            + chunk(b"IHDR", struct.pack(">IIBBBBB", columns, rows, 8,
                                         {3: 2, 4: 6}[channels], 0, 0, 0))
            + chunk(b"pHYs", struct.pack(">IIB", per_metre, per_metre, 1))
            + chunk(b"IDAT", zlib.compress(memoryview(filtered), 1))
            + chunk(b"IEND", b""))


def _render_png(fig, dpi: float) -> bytes:
    """``fig`` drawn by Agg at ``dpi`` [1/in], as PNG bytes (RGB when it is opaque)."""
    raw = io.BytesIO()
    fig.savefig(raw, format="raw", dpi=dpi)
    renderer = fig.canvas.renderer            # the one that just drew, at ``dpi``
    width, height = int(renderer.width), int(renderer.height)
    pixels = np.frombuffer(raw.getbuffer(), dtype=np.uint8).reshape(height, width, 4)
    if pixels[..., 3].min() == 255:
        pixels = pixels[..., :3]
    return png_bytes(pixels, dpi)


def save(fig, stem: Path, formats=FORMATS, dpi=PNG_DPI) -> list[Path]:
    """Write ``fig`` as ``stem.png`` (``dpi`` [1/in]), ``stem.svg`` and ``stem.pdf``.

    Metadata that would change from run to run (dates, versions) is left
    out, so the same input gives the same files.
    """
    metadata = {"svg": {"Date": None, "Creator": None},
                "pdf": {"CreationDate": None, "ModDate": None, "Producer": None,
                        "Creator": None}}
    written = []
    with plt.rc_context(STYLE):
        for fmt in formats:
            path = stem.with_suffix(f".{fmt}")
            if fmt == "png":
                path.write_bytes(_render_png(fig, dpi))
            else:
                fig.savefig(path, format=fmt, dpi=VECTOR_RASTER_DPI, metadata=metadata[fmt])
            written.append(path)
    return written


def write_figures(result, folder, isotherm_step=None, f_rsi_min=None,
                  formats=FORMATS, dpi=PNG_DPI) -> dict:
    """Build and write every figure into ``folder``.

    Parameters
    ----------
    result : bridgecalc.results.Result
    folder : Path
    isotherm_step : float, optional
        [K]
    f_rsi_min : float, optional
        The user's fRsi criterion [-].

    Returns
    -------
    dict of str to list of Path
        Files written per figure name.
    """
    folder = Path(folder)
    out = {}
    for name in figure_names(result):
        fig = build_figure(name, result, isotherm_step=isotherm_step, f_rsi_min=f_rsi_min)
        try:
            out[name] = save(fig, folder / name, formats, dpi)
        finally:
            plt.close(fig)
    return out
