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

from .catalogue import legend_rows, material_codes, padded_extent, view
from .edges import chained_path, material_edges, segments_path
from .layout import frame, legend, new_figure, outline_detail
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
    with plt.rc_context(STYLE):
        fig, ax, aspect = new_figure(
            result, model.name or "junction",
            ("Materials at the junction (detail); " if detail else "Materials; ")
            + "lighter fill = lower conductivity λ", extent,
            legend_rows("materials", result))
        style = material_colours(model)
        for region in model.regions:
            s = style[region.material]
            ax.add_artist(Polygon(np.asarray(region.vertices, float), closed=True,
                                 facecolor=s["fill"], edgecolor=s["line"], hatch=s["hatch"],
                                 linewidth=0.0))
        names, codes = material_codes(result)
        xy = result.mesh.nodes / model.metres_per_unit
        ax.add_artist(segments_path(xy[material_edges(result.mesh, codes)], edgecolor=INK,
                                   linewidth=0.7, gid="material-edges"))
        handles = [Patch(facecolor=style[n]["fill"], edgecolor=style[n]["line"],
                         hatch=style[n]["hatch"], linewidth=0.4,
                         label=f"{n}\nλ = {model.materials[n].conductivity:g} W/(m·K)")
                   for n in names]
        frame(ax, result, extent)
        if not detail:
            outline_detail(ax, result)
        legend(fig, ax, handles, aspect, title="material")
    return fig


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
    extent = padded_extent(result)
    with plt.rc_context(STYLE):
        fig, ax, aspect = new_figure(
            result, model.name or "junction",
            f"Mesh: {mesh.node_count} nodes, {mesh.triangle_count} triangles, "
            f"{result.element} elements; outline by boundary condition", extent,
            legend_rows("mesh", result))
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
        frame(ax, result, extent)
        legend(fig, ax, handles, aspect, title="outline")
    return fig


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
    "adiabatic": "adiabatic\n(cut-off or symmetry plane)",
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
