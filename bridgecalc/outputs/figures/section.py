"""The section as drawn: the materials figure and the mesh figure.

``materials``
    the section coloured by conductivity (lighter = more insulating, on a log
    scale) with one hatch per material; the legend names each material and λ.
``mesh``
    the triangles, and the outline drawn by boundary condition (interior,
    exterior, adiabatic), surfaces labelled S1, S2, ... as in the report.
"""

from __future__ import annotations

from types import MappingProxyType

import matplotlib.colors as mcolors
import numpy as np
from matplotlib.lines import Line2D
from matplotlib.patches import Patch, Polygon

from .catalogue import detail_window, legend_rows, material_codes, section_points, view
from .edges import chained_path, material_boundaries, segments_path
from .layout import frame, legend, new_figure, outline_detail, views
from .style import (ADIABATIC, EXTERIOR, INK, INTERIOR, MUTED, STYLE, UNHEATED,
                    material_colours, plt)


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
    extent = view(result, detail)
    close = None if detail else detail_window(result)
    with plt.rc_context(STYLE):
        fig, ax, aspect = new_figure(
            result, model.name or "junction",
            ("Materials at the junction (detail); " if detail else "Materials; ")
            + "lighter fill = lower conductivity λ", extent,
            legend_rows("materials", result), close=close)
        style = material_colours(model)
        names, _ = material_codes(result)
        inner = material_boundaries(result)
        thin = set()
        for axes, shown, is_close in views(fig, ax, extent, detail):
            for region in model.regions:
                s = style[region.material]
                axes.add_artist(Polygon(np.asarray(region.vertices, float), closed=True,
                                        facecolor=s["fill"], edgecolor=s["line"],
                                        hatch=s["hatch"], linewidth=0.0))
            axes.add_artist(segments_path(inner, edgecolor=INK, linewidth=0.7,
                                          gid="material-edges"))
            frame(axes, result, shown)
            thin |= _outline_thin_regions(axes, model, style, shown)
            if not is_close:
                outline_detail(axes, result)
        handles = [Patch(facecolor=style[n]["fill"], edgecolor=style[n]["line"],
                         hatch=style[n]["hatch"], linewidth=0.4,
                         label=f"{n}" + (" (thin:\u00a0outlined)" if n in thin else "")
                         + f"\nλ = {model.materials[n].conductivity:g} W/(m·K)")
                   for n in names]
        legend(fig, ax, handles, aspect, title="material")
    return fig


#: A region thinner than this on the page [pt] is outlined in its own colour
#: with a line this wide, so that it shows at any scale.
THIN_OUTLINE = 1.6


def _outline_thin_regions(ax, model, style, extent) -> set:
    """Outline, in their fill colour and :data:`THIN_OUTLINE` wide, the regions
    that would be thinner than that on the page; returns their materials.

    A region's thickness is taken as 2·area/perimeter (exact for a long
    strip: a board, a sheet, a foil). Outlines go over the material edges, so
    a 12.5 mm board or a 0.5 mm sheet in a 2.6 m section keeps its colour.
    """
    (x0, _), (x1, _) = extent
    points_per_unit = ax.get_window_extent().width / max(x1 - x0, 1e-12) * 72.0 / ax.figure.dpi
    thin = set()
    for region in model.regions:
        v = np.asarray(region.vertices, float)
        w = np.roll(v, -1, axis=0)
        area = 0.5 * abs(float(np.sum(v[:, 0] * w[:, 1] - w[:, 0] * v[:, 1])))
        perimeter = float(np.hypot(*(w - v).T).sum())
        if perimeter <= 0 or 2 * area / perimeter * points_per_unit >= THIN_OUTLINE:
            continue
        thin.add(region.material)
        ax.add_artist(Polygon(v, closed=True, fill=False, edgecolor=style[region.material]["fill"],
                              linewidth=THIN_OUTLINE, zorder=4, joinstyle="miter",
                              gid=f"thin-{region.material}"))
    return thin


#: In a close view, every mesh edge is drawn over the element-size map when the
#: view holds at most this many triangles; more would blot the picture.
MAX_DRAWN_EDGES_TRIANGLES = 6000


def element_sizes(result) -> np.ndarray:
    """Size of each triangle [length_unit]: the side of a square of twice its
    area (the side of a right isosceles triangle of that area)."""
    xy = result.mesh.nodes / result.model.metres_per_unit
    p = xy[result.mesh.triangles]
    e1, e2 = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
    return np.sqrt(np.abs(e1[:, 0] * e2[:, 1] - e1[:, 1] * e2[:, 0]))


def mesh_figure(result, detail=False):
    """The mesh as a map of element size, with boundary conditions along the outline.

    Every edge of a fine mesh (some 10⁵ triangles) drawn at the size of a page
    is a dark blot; the size of the elements, shaded on a log scale, shows
    where the study refined at any mesh size. A close view that holds few
    enough triangles (:data:`MAX_DRAWN_EDGES_TRIANGLES`) draws their edges too.

    Parameters
    ----------
    result : bridgecalc.results.Result
    detail : bool
        Draw the :func:`detail_window` only (there must be one).

    Returns
    -------
    matplotlib.figure.Figure
    """
    import matplotlib.tri as mtri
    from .layout import colour_bar
    from .raster import field_image, pixel_grid
    model, mesh = result.model, result.mesh
    xy = mesh.nodes / model.metres_per_unit
    extent = view(result, detail)
    close = None if detail else detail_window(result)
    size = element_sizes(result)
    lo, hi = float(size.min()), float(size.max())
    hi = max(hi, lo * 1.0001)
    with plt.rc_context(STYLE):
        fig, ax, aspect = new_figure(
            result, model.name or "junction",
            ("Mesh at the junction (detail): " if detail else "Mesh: ")
            + f"{mesh.node_count} nodes, {mesh.triangle_count} triangles, "
            f"{result.element} elements; shade = element size", extent,
            legend_rows("mesh", result), close=close)
        triangulation = mtri.Triangulation(xy[:, 0], xy[:, 1], mesh.triangles)
        norm = mcolors.LogNorm(vmin=lo, vmax=hi)
        inner = material_boundaries(result)
        _, centre = section_points(result)
        outline = _outline_segments(result)
        for axes, view_extent, is_close in views(fig, ax, extent, detail):
            frame(axes, result, view_extent)
            gx, gy, px, py, cells = pixel_grid(fig, axes, view_extent, triangulation, result)
            values = np.full(px.shape, np.nan)
            values[cells >= 0] = size[cells[cells >= 0]]
            shade = field_image(axes, gx, gy, values, cmap=MESH_CMAP, norm=norm,
                                interpolation="nearest")
            shade.set_gid("element-size")
            axes.add_artist(segments_path(inner, edgecolor="white", linewidth=0.6, alpha=0.8,
                                          gid="material-edges"))
            (x0, y0), (x1, y1) = view_extent
            shown = ((centre[:, 0] >= x0) & (centre[:, 0] <= x1)
                     & (centre[:, 1] >= y0) & (centre[:, 1] <= y1))
            if is_close and shown.sum() <= MAX_DRAWN_EDGES_TRIANGLES:
                near = np.flatnonzero(shown)
                every = np.sort(np.concatenate([mesh.triangles[near][:, [0, 1]],
                                                mesh.triangles[near][:, [1, 2]],
                                                mesh.triangles[near][:, [2, 0]]]), axis=1)
                every = np.unique(every, axis=0)
                axes.add_artist(segments_path(xy[every], edgecolor=INK, linewidth=0.12,
                                              alpha=0.7, gid="mesh-edges"))
            handles = []
            for kind, seg in outline.items():
                if len(seg):
                    st = OUTLINE_STYLE[kind]
                    axes.add_artist(chained_path(seg, edgecolor=st["colors"],
                                                 linewidth=st["linewidths"],
                                                 linestyle=st["linestyles"], capstyle="butt",
                                                 gid=f"outline-{kind}"))
                    handles.append(Line2D([], [], color=st["colors"], lw=st["linewidths"],
                                          ls=st["linestyles"], label=OUTLINE_LABEL[kind]))
            for j, p in _surface_label_points(result):
                if x0 <= p[0] <= x1 and y0 <= p[1] <= y1:
                    axes.annotate(f"S{j + 1}", p, fontsize=6.5, ha="center", va="center",
                                  color=INK, gid=f"surface-label-S{j + 1}",
                                  bbox=dict(boxstyle="round,pad=0.2", fc="white", ec=MUTED,
                                            lw=0.4))
            if not is_close:
                outline_detail(axes, result)
        bar = colour_bar(fig, ax, shade, aspect,
                         f"element size [{model.length_unit}], log scale", length=0.45)
        legend(fig, ax, handles, aspect, title="outline", below=bar)
    return fig


#: Element sizes: light where elements are large, dark where the study refined.
MESH_CMAP = "bone"


def _outline_segments(result):
    """Outline edges [length_unit] grouped as interior, unheated, exterior, adiabatic."""
    model, mesh = result.model, result.mesh
    xy = mesh.nodes / model.metres_per_unit
    kinds = np.array([model.environment(s.environment).kind for s in model.surfaces] + [""])
    kind = np.where(mesh.boundary_surface >= 0, kinds[mesh.boundary_surface], "adiabatic")
    seg = xy[mesh.boundary_edges]
    return {k: seg[kind == k] for k in ("interior", "unheated", "exterior", "adiabatic")}


OUTLINE_STYLE = MappingProxyType({
    "interior": MappingProxyType(dict(colors=INTERIOR, linewidths=2.2, linestyles="solid")),
    "exterior": MappingProxyType(dict(colors=EXTERIOR, linewidths=2.2, linestyles=(0, (4, 2)))),
    "unheated": MappingProxyType(dict(colors=UNHEATED, linewidths=2.2,
                                      linestyles=(0, (5, 1.5, 1, 1.5)))),
    "adiabatic": MappingProxyType(dict(colors=ADIABATIC, linewidths=1.4, linestyles=(0, (1, 1.5)))),
})


OUTLINE_LABEL = MappingProxyType({
    "interior": "interior surface",
    "exterior": "exterior surface",
    "unheated": "surface of an unheated space",
    "adiabatic": "adiabatic (cut-off\nor symmetry plane)",
})


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
