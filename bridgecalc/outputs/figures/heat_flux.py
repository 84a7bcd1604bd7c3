"""The heat-flux figure: |q| of the heat-flow case per triangle on a log scale,
with arrows for the direction of flow."""

from __future__ import annotations

import matplotlib.colors as mcolors
import matplotlib.tri as mtri
import numpy as np

from .catalogue import detail_window, heat_flux, view
from .edges import material_boundaries, segments_path
from .layout import colour_bar, frame, new_figure, outline_detail, views
from .raster import cells_on_grid, field_image, pixel_grid
from .style import HEAT_FLUX_CMAP, INK, STYLE, plt


def heat_flux_figure(result, detail=False):
    """|q| of the heat-flow case per triangle (log scale) with flow-direction arrows.

    Parameters
    ----------
    result : bridgecalc.results.Result
    detail : bool
        Draw the :func:`detail_window` only (there must be one).

    Returns
    -------
    matplotlib.figure.Figure
    """
    model, mesh = result.model, result.mesh
    xy = mesh.nodes / model.metres_per_unit
    q, magnitude = heat_flux(result)
    top = float(magnitude.max())
    floor = max(top * 1e-3, float(magnitude[magnitude > 0].min()) if np.any(magnitude > 0)
                else 1e-12)
    floor = min(floor, top * 0.5) if top > 0 else 1e-12
    top = max(top, floor * 10)
    triangulation = mtri.Triangulation(xy[:, 0], xy[:, 1], mesh.triangles)
    extent = view(result, detail)
    close = None if detail else detail_window(result)
    with plt.rc_context(STYLE):
        fig, ax, aspect = new_figure(
            result, model.name or "junction",
            ("Heat-flux density at the junction (detail)" if detail else
             "Heat-flux density |q| = |−λ∇θ|")
            + ", heat-flow case; arrows show direction only", extent, close=close)
        norm = mcolors.LogNorm(vmin=floor, vmax=top)
        inner = material_boundaries(result)
        for axes, shown, is_close in views(fig, ax, extent, detail):
            frame(axes, result, shown)
            # |q| is constant in each triangle: each pixel shows its triangle's value
            gx, gy, px, py, cells = pixel_grid(fig, axes, shown, triangulation, result)
            values = np.full(px.shape, np.nan)
            values[cells >= 0] = np.clip(magnitude[cells[cells >= 0]], floor, top)
            shade = field_image(axes, gx, gy, values, cmap=HEAT_FLUX_CMAP, norm=norm,
                                interpolation="nearest")
            shade.set_gid("heat-flux-fill")
            axes.add_artist(segments_path(inner, edgecolor="white", linewidth=0.5, alpha=0.6))
            _flow_arrows(axes, triangulation, xy, q, magnitude, shown)
            if not is_close:
                outline_detail(axes, result)
        # plain numbers (0.1, 1, 10; 2, 5 between them when the range is short)
        colour_bar(fig, ax, shade, aspect, "heat-flux density |q| [W/m²], log scale")
    return fig


def _flow_arrows(ax, triangulation, xy, q, magnitude, extent):
    """Unit arrows along q on a regular grid over the view, one per cell inside the solid."""
    lo = np.maximum(xy.min(axis=0), extent[0])
    hi = np.minimum(xy.max(axis=0), extent[1])
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
