"""The figures of a run, the part of the section each shows, and their sizes.

All of it is known before anything is drawn, and without matplotlib: the
report is laid out from these sizes while matplotlib is still loading for
the figures themselves. A figure of the section is a plot of one view (the
whole section, or the junction's detail window) at equal scale, a header
above it and a panel for its legend or colour bar: right of a tall section,
below a wide one. Sizes are fixed in inches from the view's aspect.
"""

from __future__ import annotations

import math

import numpy as np

from ...model.rules import two_temperature_sides
from ..verdicts import moisture_of


FIGURES = ("materials", "mesh", "temperature", "heat_flux", "surface_temperature")
#: Figures of the section: where it has a :func:`detail_window`, each shows the
#: close view beside the whole, in the same figure (:func:`beside_layout`).
SECTION_FIGURES = ("materials", "mesh", "temperature", "heat_flux")
#: The close view alone, as a figure of its own: built on request
#: (:func:`bridgecalc.outputs.figures.build_figure`), not written by a run.
DETAIL_FIGURES = ("materials_detail", "mesh_detail", "temperature_detail", "heat_flux_detail")
#: Every file a figure can be written as, in this order, and the resolution of
#: the PNG [1/in].
FORMATS = ("png", "svg", "pdf")
#: 200 dpi: 1120 pixels across a figure, sharp on a screen and in print; 300 dpi
#: cost half as much again to draw and encode, for every figure of every run.
PNG_DPI = 200
#: What a run writes of each figure by default: the PNG, drawn once and used by
#: report.html and report.pdf alike. The vector files cost as much again to draw
#: and are written on request (``vector_figures``, ``--vector-figures``).
DEFAULT_FORMATS = ("png",)


def figure_formats(vector: bool = False) -> tuple[str, ...]:
    """The files of each figure: :data:`DEFAULT_FORMATS`, or with ``vector`` every
    one of :data:`FORMATS`."""
    return FORMATS if vector else DEFAULT_FORMATS


def figure_names(result) -> tuple[str, ...]:
    """The figures of a run: :data:`FIGURES` (those of the section with their
    close view beside the whole when there is a :func:`detail_window`), and
    ``moisture`` when the result carries an ISO 13788 check."""
    return FIGURES + moisture_figures(result)


def moisture_figures(result) -> tuple[str, ...]:
    """``("moisture",)`` when the result's assessment holds an ISO 13788 check."""
    assessment = getattr(result, "assessment", None)
    return ("moisture",) if getattr(assessment, "moisture", None) is not None else ()


def figure_size(name: str, result) -> tuple[float, float]:
    """Width and height [in] that figure ``name`` will have, without drawing it."""
    if name in ("surface_temperature", "moisture"):
        return PAGE_WIDTH, PROFILE_HEIGHT
    if name in SECTION_FIGURES and detail_window(result) is not None:
        return PAGE_WIDTH, beside_layout(padded_extent(result), detail_window(result),
                                         legend_rows(name, result))["height"]
    return PAGE_WIDTH, section_layout(_extent(name, result), legend_rows(name, result))[4]


def _extent(name: str, result):
    return detail_window(result) if name in DETAIL_FIGURES else padded_extent(result)


PAGE_WIDTH = 5.6         # figure width [in]: fits the text width of an A4 page
#: Layout [in]: margins around the plot, the side panel of tall sections and the
#: panel below wide ones. Fixed positions instead of a layout engine: cheaper
#: and the same every run.
MARGIN_LEFT, MARGIN_RIGHT, MARGIN_TOP, MARGIN_BOTTOM = 0.8, 0.15, 0.62, 0.5
SIDE_PANEL, BELOW_PANEL = 1.75, 1.05
MAX_PLOT_HEIGHT = 5.6
#: Height of a row of two-line legend entries [in].
LEGEND_ROW = 0.3
#: Height of the surface-temperature figure, and of the room under its plot
#: for the axis and the legend [in].
PROFILE_HEIGHT, PROFILE_BOTTOM = 3.6, 1.2


def kept(result, name: str, compute):
    """``compute()``, worked out once per result and kept on it
    (``_bridgecalc_kept``): what several figures of one run draw from the same
    mesh (material boundaries, triangle centres, the heat-flux density). Kept
    before figure workers are forked, each worker finds it there. Callers
    must not write into what they get."""
    store = getattr(result, "_bridgecalc_kept", None)
    if store is None:
        store = {}
        try:
            result._bridgecalc_kept = store
        except AttributeError:      # pragma: no cover - a result that takes no attributes
            pass
    if name not in store:
        store[name] = compute()
    return store[name]


def section_points(result):
    """Node positions and triangle centres [length_unit]."""
    def compute():
        xy = result.mesh.nodes / result.model.metres_per_unit
        return xy, xy[result.mesh.triangles].mean(axis=1)
    return kept(result, "points", compute)


def heat_flux(result):
    """Heat-flux density q (heat-flow case) per triangle [W/m²], shape (T, 2), and |q|."""
    def compute():
        from ...results import heat_flux_density
        q = heat_flux_density(result.model, result.heat_flow_case.field)
        return q, np.hypot(q[:, 0], q[:, 1])
    return kept(result, "heat_flux", compute)


def padded_extent(result):
    """Plot limits [length_unit]: the section's bounding box and a 3 % margin."""
    def compute():
        xy, _ = section_points(result)
        lo, hi = xy.min(axis=0), xy.max(axis=0)
        pad = 0.03 * float((hi - lo).max())
        return lo - pad, hi + pad
    lo, hi = kept(result, "padded_extent", compute)
    return lo.copy(), hi.copy()


#: A close view is drawn when its window's longer side is at most this share of
#: the whole section's longer side: it then shows the junction at least twice
#: as large.
DETAIL_SIZE_SHARE = 0.5
#: Where the heat-flux density exceeds this many times its area-weighted median
#: over the section, the flow is concentrated: that is the junction.
CONCENTRATION = 2.0
#: Share of the dissipation ∫λ|∇θ|² dA held by the triangles of highest density
#: that mark where the temperature gradient concentrates.
DISSIPATION_SHARE = 0.3


def _weighted_quantile(values, weights, q):
    order = np.argsort(values)
    cumulative = np.cumsum(weights[order])
    return float(np.interp(q * cumulative[-1], cumulative, values[order]))


def detail_window(result):
    """Plot limits [length_unit] of a close view of the junction, or None.

    Computed once per result and kept on it (``_bridgecalc_detail_window``):
    every figure and the report's layout ask for it.

    Some sections are much larger than the construction they hold: ISO 10211
    asks for 1 m of flanking wall on each side of a junction, and several
    metres of ground around a ground-floor edge; a view of the whole shows the
    junction small. The junction is where the heat flow concentrates: the
    triangles whose heat-flux density |q| (heat-flow case) is more than
    :data:`CONCENTRATION` times its median over the section's area (where the
    flow is one-dimensional, through the flanking elements, |q| stays near
    U·Δθ), and more than the geometric mean of that median and the 99.5th
    percentile (so that a slowly fading flow, as in the ground, counts only
    where it is strongest). Their box is narrowed to where the temperature
    gradient concentrates too, when the two overlap: the box of the
    triangles of highest dissipation density λ|∇θ|² that hold
    :data:`DISSIPATION_SHARE` of the section's (the energy of the field). Their box, from the 2nd to the 98th area-weighted percentile in x
    and y (a few stray triangles do not stretch it), with the θsi,min point
    unless that lies on a cut-off plane, and a margin, is the window. It is
    drawn when its longer side is at most :data:`DETAIL_SIZE_SHARE` of the
    whole section's (the tool's own rule: a compact section shows its junction
    well enough whole).
    """
    cached = getattr(result, "_bridgecalc_detail_window", False)
    if cached is not False:
        return cached
    window = _concentration_window(result)
    try:
        result._bridgecalc_detail_window = window
    except AttributeError:          # pragma: no cover - a result that takes no attributes
        pass
    return window


def _concentration_window(result):
    model, mesh = result.model, result.mesh
    xy = mesh.nodes / model.metres_per_unit
    lo, hi = padded_extent(result)
    size = float((hi - lo).max())
    if size <= 0 or mesh.triangle_count < 3:
        return None
    corners = xy[mesh.triangles]                              # (T, 3, 2)
    e1, e2 = corners[:, 1] - corners[:, 0], corners[:, 2] - corners[:, 0]
    area = 0.5 * np.abs(e1[:, 0] * e2[:, 1] - e1[:, 1] * e2[:, 0])
    centre = corners.mean(axis=1)
    q, magnitude = heat_flux(result)
    median = _weighted_quantile(magnitude, area, 0.5)
    high = _weighted_quantile(magnitude, area, 0.995)
    strong = magnitude > max(CONCENTRATION * median, np.sqrt(median * high))
    if not strong.any() or median <= 0:
        return None
    a = np.array([_weighted_quantile(centre[strong, k], area[strong], 0.02) for k in (0, 1)])
    b = np.array([_weighted_quantile(centre[strong, k], area[strong], 0.98) for k in (0, 1)])
    # where the temperature gradient concentrates too: the triangles of highest
    # dissipation density q²/λ = λ|∇θ|² that together hold DISSIPATION_SHARE of it
    conductivity = np.array([model.materials[r.material].conductivity
                             for r in model.regions])[mesh.region]
    density = magnitude ** 2 / conductivity
    order = np.argsort(-density)
    held = np.cumsum((density * area)[order])
    steep = order[:int(np.searchsorted(held, DISSIPATION_SHARE * held[-1])) + 1]
    c, d = centre[steep].min(axis=0), centre[steep].max(axis=0)
    if np.all(np.maximum(a, c) < np.minimum(b, d)):
        a, b = np.maximum(a, c), np.minimum(b, d)
    at = np.asarray(result.surface_temperature_case.theta_si_min_at, float)
    if not _on_cut_off(result, at):
        a, b = np.minimum(a, at), np.maximum(b, at)
    pad = max(0.2 * float((b - a).max()), 0.04 * size)
    a, b = np.maximum(a - pad, xy.min(axis=0)), np.minimum(b + pad, xy.max(axis=0))
    margin = 0.03 * float((b - a).max())
    a, b = a - margin, b + margin
    if float((b - a).max()) > DETAIL_SIZE_SHARE * size:
        return None
    return a, b


def _on_cut_off(result, at) -> bool:
    """True when the point ``at`` [length_unit] is a node of an adiabatic outline
    edge (a cut-off or symmetry plane)."""
    mesh = result.mesh
    adiabatic = mesh.boundary_edges[mesh.boundary_surface < 0].ravel()
    if not len(adiabatic):
        return False
    xy = mesh.nodes[adiabatic] / result.model.metres_per_unit
    size = float(np.ptp(mesh.nodes, axis=0).max()) / result.model.metres_per_unit
    return float(np.linalg.norm(xy - at, axis=1).min()) <= 1e-9 * size


def view(result, detail: bool):
    """Plot limits [length_unit]: the detail window, or the whole section."""
    if not detail:
        return padded_extent(result)
    window = detail_window(result)
    if window is None:
        raise ValueError("this section has no detail window (figures.catalogue.detail_window)")
    return window


def section_layout(extent, legend_rows=0):
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
    side = side_or_below(aspect)
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
        fig_h = MARGIN_TOP + plot_h + MARGIN_BOTTOM + below_panel(legend_rows)
    return aspect, side, plot_w, plot_h, fig_h


#: Between a whole view and its close view beside it: room for the close view's
#: y-axis labels [in]; under a whole view stacked over its close view, room for
#: the whole's x-axis labels [in]. The plots' common height below which a wide
#: section is stacked over its close view instead of beside it [in].
BESIDE_GAP, STACK_GAP, MIN_BESIDE_HEIGHT = 0.62, 0.55, 2.2
#: Largest height of a close view stacked under its whole view [in].
MAX_STACKED_CLOSE = 3.4


def beside_layout(whole, close, legend_rows=0) -> dict:
    """Where the whole view, its close view and the panel go in one figure [in].

    Beside each other at one height when that height is at least
    :data:`MIN_BESIDE_HEIGHT` (tall and square sections): the width of the
    page is shared in proportion to their widths, so neither leaves room
    unused, and the panel (colour bar, legend) spans the page below them. A
    wide section, which beside its close view would be a thin strip, spans
    the page's width instead, with its close view under it and the panel
    right of the close view.

    Parameters
    ----------
    whole, close : (ndarray, ndarray)
        Lower-left and upper-right plot limits [length_unit] of each view.
    legend_rows : int
        Rows of two-line legend entries a panel below must hold.

    Returns
    -------
    dict
        ``height`` of the figure, ``side`` (True: the panel is beside a
        plot), and boxes ``whole``, ``close`` and ``panel`` as (left,
        bottom, width, height) from the figure's lower-left corner [in].
    """
    def ratio(extent):
        lo, hi = extent
        span = np.asarray(hi, float) - np.asarray(lo, float)
        return float(span[1] / max(span[0], 1e-12))
    a_whole, a_close = ratio(whole), ratio(close)
    room = PAGE_WIDTH - MARGIN_LEFT - BESIDE_GAP - MARGIN_RIGHT - 0.05
    h = min(room / (1 / a_whole + 1 / a_close), MAX_PLOT_HEIGHT)
    if h >= MIN_BESIDE_HEIGHT:
        below = below_panel(legend_rows)
        w_whole, w_close = h / a_whole, h / a_close
        bottom = MARGIN_BOTTOM + below
        return {"height": MARGIN_TOP + h + bottom, "side": False,
                "whole": (MARGIN_LEFT, bottom, w_whole, h),
                "close": (MARGIN_LEFT + w_whole + BESIDE_GAP, bottom, w_close, h),
                "panel": (MARGIN_LEFT, 0.1, PAGE_WIDTH - MARGIN_LEFT - MARGIN_RIGHT - 0.1,
                          below - 0.25)}
    w_whole = PAGE_WIDTH - MARGIN_LEFT - MARGIN_RIGHT - 0.1
    h_whole = min(max(w_whole * a_whole, 0.25), MAX_PLOT_HEIGHT)
    w_whole = min(w_whole, h_whole / a_whole)
    w_close = PAGE_WIDTH - MARGIN_LEFT - MARGIN_RIGHT - SIDE_PANEL - 0.2
    h_close = w_close * a_close
    floor = 0.45 + LEGEND_ROW * 2 * legend_rows
    if h_close > MAX_STACKED_CLOSE:
        h_close = MAX_STACKED_CLOSE
        w_close = h_close / a_close
    h_close = max(h_close, min(floor, MAX_STACKED_CLOSE))
    w_close = min(w_close, h_close / a_close)
    panel_left = PAGE_WIDTH - MARGIN_RIGHT - SIDE_PANEL + 0.2
    height = MARGIN_TOP + h_whole + STACK_GAP + h_close + MARGIN_BOTTOM
    return {"height": height, "side": True,
            "whole": (MARGIN_LEFT, MARGIN_BOTTOM + h_close + STACK_GAP, w_whole, h_whole),
            "close": (MARGIN_LEFT, MARGIN_BOTTOM, w_close, h_close),
            "panel": (panel_left, MARGIN_BOTTOM, PAGE_WIDTH - MARGIN_RIGHT - panel_left,
                      h_close)}


def below_panel(legend_rows: int) -> float:
    """Height [in] of the panel under a wide view: a colour bar, or a legend
    (title, then rows of two-line entries)."""
    return max(BELOW_PANEL, 0.45 + LEGEND_ROW * legend_rows)


def side_or_below(aspect: float) -> bool:
    """True when legends and colour bars go to the right of a tall section."""
    return aspect >= 0.8


def legend_rows(name: str, result) -> int:
    """Rows of the legend of figure ``name`` when it sits in two columns below
    the view; a colour bar above a legend counts as the rows it takes too."""
    if name in ("materials", "materials_detail"):
        return math.ceil(len(material_codes(result)[0]) / 2)
    if name in ("mesh", "mesh_detail"):
        return 4
    if (name in ("temperature", "temperature_detail")
            and shown_critical_isotherm(result) is not None):
        return 3            # the colour bar, then the critical isotherm's entry
    return 0


def critical_isotherm_level(result) -> float | None:
    """The temperature [°C] of the figure's field at which its temperature factor
    equals the critical month's fRsi,min: θe + fRsi,min·(θi − θe) with the
    model's θi and θe. In the critical month's own conditions that line is its
    lowest acceptable surface temperature θsi,min. None without a moisture
    check, a critical month, or with more than two temperatures (the field's
    factor then depends on the month)."""
    moisture = moisture_of(result)
    sides = two_temperature_sides(result.model)
    if moisture is None or moisture.critical_month is None or sides is None:
        return None
    theta_i, theta_e = sides
    return theta_e + moisture.f_rsi_required * (theta_i - theta_e)


def shown_critical_isotherm(result) -> float | None:
    """The level [°C] of the critical month's isotherm when the temperature
    figure draws it (:func:`critical_isotherm_level`, inside the field's
    range), else None."""
    level = critical_isotherm_level(result)
    if level is None:
        return None
    theta = result.surface_temperature_case.field.nodal
    return level if float(np.min(theta)) < level < float(np.max(theta)) else None


def material_codes(result):
    """Material names in first-use order, and each triangle's index into them."""
    names = list(dict.fromkeys(r.material for r in result.model.regions))
    code_of_region = np.array([names.index(r.material) for r in result.model.regions])
    return names, code_of_region[result.mesh.region]
