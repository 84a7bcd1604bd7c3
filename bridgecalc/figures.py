"""Figures from results; reads fields, never recomputes physics."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import matplotlib.tri as mtri  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.collections import LineCollection  # noqa: E402

#: Colour map of temperature fields: perceptually uniform, readable in grey.
TEMPERATURE_CMAP = "cividis"


def material_edges(mesh, material_index) -> np.ndarray:
    """Mesh edges between triangles of different materials, and the outline.

    Parameters
    ----------
    mesh : bridgecalc.mesh.Mesh
    material_index : ndarray, shape (T,)
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
    # interior edge shared by two triangles: keep once if the labels differ
    pair = np.flatnonzero(same_as_next)
    differ = material_index[owner[pair]] != material_index[owner[pair + 1]]
    keep[pair] = differ
    keep[pair + 1] = False
    return key[keep]


def isotherm_figure(result, path, isotherm_step=None, dpi=150):
    """Filled temperature field of the surface-temperature case with isotherms.

    Parameters
    ----------
    result : bridgecalc.pipeline.Result
    path : str or Path
        PNG file to write.
    isotherm_step : float, optional
        Temperature step between labelled isolines [K]; default about 1/10
        of θi − θe.
    dpi : int
    """
    model, mesh = result.model, result.mesh
    case = result.surface_temperature_case
    scale = 1.0 / model.metres_per_unit
    xy = mesh.nodes * scale
    theta = case.field.nodal
    triangulation = mtri.Triangulation(xy[:, 0], xy[:, 1], mesh.triangles)
    lo, hi = float(theta.min()), float(theta.max())
    if isotherm_step is None:
        span = max(hi - lo, 1e-9)
        isotherm_step = _nice_step(span / 10)
    levels_fill = np.linspace(lo, hi, 41) if hi > lo else np.array([lo - 0.5, lo + 0.5])
    first = np.ceil(lo / isotherm_step) * isotherm_step
    lines = np.arange(first, hi + 1e-12, isotherm_step)

    width, height = np.ptp(xy, axis=0)
    aspect = height / max(width, 1e-12)
    fig_w = 7.0
    fig_h = float(np.clip(fig_w * aspect, 2.5, 9.0)) + 0.8
    fig, ax = plt.subplots(figsize=(fig_w, fig_h), layout="constrained")
    filled = ax.tricontourf(triangulation, theta, levels=levels_fill, cmap=TEMPERATURE_CMAP)
    if len(lines):
        iso = ax.tricontour(triangulation, theta, levels=lines, colors="k", linewidths=0.6)
        ax.clabel(iso, fmt="%g", fontsize=7)
    labels = np.array([model.regions[r].material for r in mesh.region])
    _, material_codes = np.unique(labels, return_inverse=True)
    seg = xy[material_edges(mesh, material_codes)]
    ax.add_collection(LineCollection(seg, colors="white", linewidths=0.8))
    x_min, y_min = case.theta_si_min_at
    ax.plot([x_min], [y_min], marker="o", ms=8, mfc="none", mec="red", mew=2,
            label=f"θsi,min = {case.theta_si_min:.2f} °C")
    ax.legend(loc="best", fontsize=8)
    ax.set_aspect("equal")
    ax.set_xlabel(f"x [{model.length_unit}]")
    ax.set_ylabel(f"y [{model.length_unit}]")
    ax.set_title(model.name or "junction", fontsize=10)
    fig.colorbar(filled, ax=ax, label="temperature [°C]", shrink=0.9)
    fig.savefig(path, dpi=dpi)
    plt.close(fig)


def _nice_step(raw: float) -> float:
    """1, 2 or 5 times a power of ten, at least ``raw``."""
    exponent = np.floor(np.log10(raw))
    for m in (1, 2, 5, 10):
        if m * 10 ** exponent >= raw:
            return float(m * 10 ** exponent)
    return float(10 ** (exponent + 1))
