"""The house layout of a figure of the section: header, plot frame, scale bar,
and the legend or colour bar in the panel that :mod:`.catalogue` sized
(right of a tall section, below a wide one)."""

from __future__ import annotations

import math

import numpy as np
from matplotlib.cm import ScalarMappable
from matplotlib.colors import LogNorm
from matplotlib.lines import Line2D
from matplotlib.patches import Polygon
from mpl_toolkits.axes_grid1.anchored_artists import AnchoredSizeBar

from .catalogue import (MARGIN_BOTTOM, MARGIN_LEFT, MARGIN_RIGHT, PAGE_WIDTH, SIDE_PANEL,
                        below_panel, beside_layout, detail_window, section_layout, section_points,
                        side_or_below)
from .style import INK, INTERIOR, MUTED, plt


def outline_detail(ax, result):
    """The close view's limits as a dashed box on a view of the whole section:
    those of the close view beside it in the same figure, else the detail
    window (:func:`.catalogue.detail_window`)."""
    near = getattr(ax.figure, "_bridgecalc_close", None)
    window = near._bridgecalc_extent if near is not None else detail_window(result)
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


#: Header [in from the top]: the top of the title line, of the subtitle line, and
#: the rule under them.
TITLE_AT, SUBTITLE_AT, RULE_AT = 0.12, 0.33, 0.5


def header(fig, title: str, subtitle: str) -> None:
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


def new_figure(result, title: str, subtitle: str, extent, legend_rows=0,
               panel_at_edge=False, close=None):
    """A figure sized to the view's aspect, with the house header.

    Returns the figure, the plot axes and the aspect; the panel box (left,
    bottom, width, height) [figure fraction] for the legend or colour bar is
    kept on the figure, and whether it is beside a plot. ``panel_at_edge``
    puts a side panel at the page's right edge instead of beside the plot:
    beside a narrow plot, the room between is then free for the θsi,min label.

    With ``close`` (plot limits of a close view [length_unit]), the figure
    holds the whole view and the close view in one page width
    (:func:`.catalogue.beside_layout`); the close view's axes are kept on the
    figure (``_bridgecalc_close``, gid ``close-view``), and the aspect
    returned is the panel's: 1 beside, 0 below.
    """
    if close is not None:
        return _beside_figure(title, subtitle, extent, close, legend_rows)
    aspect, side, plot_w, plot_h, fig_h = section_layout(extent, legend_rows)
    fig = plt.figure(figsize=(PAGE_WIDTH, fig_h))
    below = below_panel(legend_rows)
    bottom = MARGIN_BOTTOM + (0.0 if side else below)
    ax = fig.add_axes([MARGIN_LEFT / PAGE_WIDTH, bottom / fig_h,
                       plot_w / PAGE_WIDTH, plot_h / fig_h])
    header(fig, title, subtitle)
    if side:
        left = ((PAGE_WIDTH - MARGIN_RIGHT - SIDE_PANEL if panel_at_edge
                 else MARGIN_LEFT + plot_w) + 0.2) / PAGE_WIDTH
        panel = (left, bottom / fig_h, 1 - left - MARGIN_RIGHT / PAGE_WIDTH, plot_h / fig_h)
    else:
        panel = (MARGIN_LEFT / PAGE_WIDTH, 0.1 / fig_h, plot_w / PAGE_WIDTH,
                 (below - 0.25) / fig_h)
    fig._bridgecalc_panel = panel
    fig._bridgecalc_side = side
    fig._bridgecalc_close = None
    return fig, ax, aspect


def _beside_figure(title, subtitle, whole, close, legend_rows):
    layout = beside_layout(whole, close, legend_rows)
    fig_h = layout["height"]
    fig = plt.figure(figsize=(PAGE_WIDTH, fig_h))

    def fraction(box):
        left, bottom, width, height = box
        return (left / PAGE_WIDTH, bottom / fig_h, width / PAGE_WIDTH, height / fig_h)
    ax = fig.add_axes(fraction(layout["whole"]))
    near = fig.add_axes(fraction(layout["close"]))
    near._bridgecalc_extent = fill_box(close, layout["close"])
    near.set_gid("close-view")
    header(fig, title, subtitle + ("; close view below" if layout["side"]
                                   else "; close view at right"))
    fig._bridgecalc_panel = fraction(layout["panel"])
    fig._bridgecalc_side = layout["side"]
    fig._bridgecalc_close = near
    return fig, ax, 1.0 if layout["side"] else 0.0


def fill_box(extent, box):
    """``extent`` (plot limits [length_unit]) grown about its centre to the
    aspect of ``box`` (left, bottom, width, height [in]), so that a plot of
    it at equal scale fills the box: a close view stacked beside a panel
    taller than it shows more of the section above and below, instead of
    leaving the room empty."""
    (x0, y0), (x1, y1) = (np.asarray(extent[0], float), np.asarray(extent[1], float))
    want = box[3] / box[2]
    have = (y1 - y0) / max(x1 - x0, 1e-12)
    if want > have * 1.001:
        middle, half = (y0 + y1) / 2, (x1 - x0) * want / 2
        y0, y1 = middle - half, middle + half
    elif want < have / 1.001:
        middle, half = (x0 + x1) / 2, (y1 - y0) / want / 2
        x0, x1 = middle - half, middle + half
    return np.array([x0, y0]), np.array([x1, y1])


def views(fig, ax, extent, detail):
    """(axes, plot limits, whether a close view) of each view in the figure:
    the one ``ax`` shows, then the close view beside it when there is one."""
    out = [(ax, extent, detail)]
    near = getattr(fig, "_bridgecalc_close", None)
    if near is not None:
        out.append((near, near._bridgecalc_extent, True))
    return out


def panel_beside(fig, aspect) -> bool:
    """True when the figure's legend and colour bar go upright beside a plot."""
    side = getattr(fig, "_bridgecalc_side", None)
    return side_or_below(aspect) if side is None else bool(side)


def frame(ax, result, extent):
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
    _, centroids = section_points(result)
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


#: The legend's handle length, the gap to its text and its padding [font sizes].
LEGEND_HANDLE, LEGEND_GAP, LEGEND_PAD = 2.4, 0.8, 0.4


def wrap_to_width(text: str, width: float, size: float) -> str:
    """``text`` with each line broken so that none is wider than ``width`` [in]
    at ``size`` [pt] (measured from the font's outlines, as :func:`text_width`):
    at spaces, then inside a word after "_" or "-", then anywhere. A legend
    label of a long material name ("cement_screed (thin: outlined)") ran off
    the page."""
    from matplotlib.font_manager import FontProperties
    from matplotlib.textpath import text_to_path
    font = FontProperties(size=size)

    def wide(piece):
        return text_to_path.get_text_width_height_descent(piece, font, ismath=False)[0] / 72.0

    def pieces(word):
        """The word cut where it may be (after _ or -), each piece fitting if it can."""
        out, start = [], 0
        for k, c in enumerate(word):
            if c in "_-" and k + 1 < len(word):
                out.append(word[start:k + 1])
                start = k + 1
        out.append(word[start:])
        fitted = []
        for piece in out:
            while len(piece) > 1 and wide(piece) > width:
                cut = 1                     # the longest start that fits, one character at least
                while cut < len(piece) and wide(piece[:cut + 1]) <= width:
                    cut += 1
                fitted.append(piece[:cut])
                piece = piece[cut:]
            fitted.append(piece)
        return fitted

    lines = []
    for line in text.split("\n"):
        if wide(line) <= width:
            lines.append(line)
            continue
        current = ""
        for word in line.split(" "):
            trial = f"{current} {word}" if current else word
            if wide(trial) <= width:
                current = trial
                continue
            if current:
                lines.append(current)
            current = ""
            for piece in pieces(word):
                if current and wide(current + piece) > width:
                    lines.append(current)
                    current = ""
                current += piece
        lines.append(current)
    return "\n".join(lines)


def legend(fig, ax, handles, aspect, title=None, below=None):
    """Legend in the figure's panel: right of a tall section, below a wide one;
    under the colour bar ``below`` when the panel holds one too. Labels are
    wrapped to the panel's width (:func:`wrap_to_width`)."""
    left, bottom, width, height = fig._bridgecalc_panel
    side = panel_beside(fig, aspect)
    columns = 1 if side else min(2, len(handles))
    size = float(plt.rcParams["legend.fontsize"])
    room = (width * fig.get_figwidth() / columns
            - (LEGEND_HANDLE + LEGEND_GAP + 2 * LEGEND_PAD) * size / 72.0)
    for handle in handles:
        handle.set_label(wrap_to_width(handle.get_label(), room, size))
    top = bottom + height
    if below is not None:
        box = below.ax.get_position()
        top = box.y0 - (0.3 if side else 0.55) / fig.get_figheight()
    leg = fig.legend(handles=handles, loc="upper left",
                     bbox_to_anchor=(left, top), borderaxespad=0.0,
                     title=title, alignment="left", handlelength=LEGEND_HANDLE,
                     handletextpad=LEGEND_GAP, borderpad=LEGEND_PAD, handleheight=1.8,
                     ncols=columns, labelspacing=0.6)
    leg.get_title().set_fontweight("bold")
    for text in leg.get_texts():
        text.set_parse_math(False)        # material names are the user's, "$" included
    leg.set_gid("legend")
    return leg


def log_ticks(lo: float, hi: float, most: int = 7) -> list[float]:
    """Ticks of a log scale from ``lo`` to ``hi`` (0 < lo < hi): powers of ten,
    with 2 and 5 times them (then 3 too) while fewer than three fall in the
    range; every other power when more than ``most`` would. Labelled as plain
    numbers (0.1, 2, 40), not powers in mathtext."""
    first, last = math.floor(math.log10(lo)), math.ceil(math.log10(hi))
    ticks: list[float] = []
    for multiples in ((1,), (1, 2, 5), (1, 2, 3, 5)):
        ticks = [float(f"{m * 10.0 ** e:.12g}") for e in range(first, last + 1)
                 for m in multiples if lo * (1 - 1e-9) <= m * 10.0 ** e <= hi * (1 + 1e-9)]
        if len(ticks) >= 3:
            break
    while len(ticks) > most:
        ticks = ticks[::2]
    return ticks


def colour_bar(fig, ax, mappable, aspect, label, ticks=None, length=1.0):
    """Colour bar in the figure's panel: upright beside a tall section, flat below a wide one.

    It is drawn from ``mappable``'s colour map and norm only (a field image
    holds colours, not values). ``length``: the share of a side panel's height
    it takes (the rest may hold a legend). ``ticks`` [the field's unit]:
    default, on a log scale, :func:`log_ticks`; labelled as plain numbers,
    without minor ticks.
    """
    left, bottom, width, height = fig._bridgecalc_panel
    mappable = ScalarMappable(norm=mappable.norm, cmap=mappable.cmap)
    if panel_beside(fig, aspect):
        bar_h = min(height * length, 4.5 / fig.get_figheight())
        cax = fig.add_axes([left, bottom + height - bar_h, 0.16 / PAGE_WIDTH, bar_h])
        bar = fig.colorbar(mappable, cax=cax)
    else:
        cax = fig.add_axes([left, bottom + height - 0.16 / fig.get_figheight(),
                            min(width, 4.0 / PAGE_WIDTH), 0.16 / fig.get_figheight()])
        bar = fig.colorbar(mappable, cax=cax, orientation="horizontal")
    bar.set_label(label)
    if ticks is None and isinstance(mappable.norm, LogNorm):
        ticks = log_ticks(mappable.norm.vmin, mappable.norm.vmax)
    if ticks is not None:
        # a few labelled ticks and no minor ones: each tick is a line and a
        # text that matplotlib lays out and draws (some 1 ms apiece), and a
        # log scale's default minor ticks are some thirty of them
        bar.set_ticks(ticks, labels=[f"{t:g}" for t in ticks])
    bar.minorticks_off()
    bar.outline.set_linewidth(0.5)
    cax.tick_params(labelsize=7, length=2.5, width=0.5)
    cax.set_gid("colour-bar")
    return bar
