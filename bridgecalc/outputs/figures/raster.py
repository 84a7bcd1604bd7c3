"""Fields sampled on the pixels of a plot, shown as one image.

Each pixel centre is assigned the triangle it lies in (:func:`cells_on_grid`)
and the field is evaluated there: a per-triangle value as it is, a nodal
field by its linear interpolant in the triangle (:func:`linear_in_cells`).
"""

from __future__ import annotations

import matplotlib
import numpy as np
from matplotlib.image import AxesImage
from matplotlib.transforms import Affine2D, Bbox


#: Pixels per inch of plot for the sampled field images (shown at 200 dpi in PNG).
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


def linear_in_cells(xy, triangles, nodal, cells, x, y) -> np.ndarray:
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


def pixel_grid(fig, ax, extent, triangulation, result=None):
    """Pixel centres over the plot [length_unit] and the triangle under each (-1: none).

    With ``result``, the grid is kept on it (``_bridgecalc_pixel_grids``, by
    view and pixel count): the mesh, heat-flux and temperature figures of the
    same view sample the same pixels, and finding the triangle under each is
    the costly part. The arrays are shared: callers must not write into them.
    """
    lo, hi = extent
    # one sample per pixel of the plot as the PNG has it (FIELD_PPI = PNG_DPI):
    # the image is then drawn as it is, without resampling (:class:`PixelImage`)
    box = ax.get_position()
    nx = max(round(box.width * fig.get_figwidth() * FIELD_PPI), 50)
    ny = max(round(box.height * fig.get_figheight() * FIELD_PPI), 20)
    key = (tuple(np.asarray(lo, float).round(12)), tuple(np.asarray(hi, float).round(12)),
           nx, ny, len(triangulation.triangles))
    kept = getattr(result, "_bridgecalc_pixel_grids", None) if result is not None else None
    if kept is not None and key in kept:
        return kept[key]
    gx = lo[0] + (np.arange(nx) + 0.5) * (hi[0] - lo[0]) / nx
    gy = lo[1] + (np.arange(ny) + 0.5) * (hi[1] - lo[1]) / ny
    px, py = np.meshgrid(gx, gy)
    cells = cells_on_grid(np.column_stack([triangulation.x, triangulation.y]),
                          triangulation.triangles, gx, gy)
    grid = (gx, gy, px, py, cells)
    for array in grid:
        array.flags.writeable = False
    if result is not None:
        try:
            if kept is None:
                kept = result._bridgecalc_pixel_grids = {}
            kept[key] = grid
        except AttributeError:      # pragma: no cover - a result that takes no attributes
            pass
    return grid


def field_image(ax, gx, gy, values, cmap, norm, interpolation):
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
    image = PixelImage(ax, origin="lower", extent=(lo[0], hi[0], lo[1], hi[1]), zorder=1,
                       interpolation=interpolation, interpolation_stage="rgba")
    image.set_data(rgba)
    ax.add_image(image)
    image.set_cmap(cmap)
    image.set_norm(norm)
    return image


class PixelImage(AxesImage):
    """An image of colours that matches the pixels it is drawn on: drawn as it
    is, without resampling.

    Where the image's columns and rows are the plot's width and height in
    output pixels to within one (a field sampled by :func:`pixel_grid` and
    written at :data:`FIELD_PPI`), its pixels are put down at the plot's
    corner, rounded to a whole pixel, as they are. Any other size (a vector
    file's raster, another resolution) is resampled as matplotlib does.
    Resampling an image of exactly the output's size changes no colour but
    costs some 20 ms an image: a round trip of every pixel through floating
    point.
    """

    def make_image(self, renderer, magnification=1.0, unsampled=False):
        data = self._A
        if not unsampled and data is not None and data.ndim == 3 and data.dtype == np.uint8:
            x1, x2, y1, y2 = self.get_extent()
            box = Bbox([[x1, y1], [x2, y2]]).transformed(self.get_transform())
            rows, columns = data.shape[:2]
            clip = self.get_clip_box() or self.axes.bbox
            if (magnification == 1.0 and abs(box.width - columns) < 1
                    and abs(box.height - rows) < 1 and self.origin == "lower"
                    and box.x0 >= clip.x0 - 1 and box.x1 <= clip.x1 + 1
                    and box.y0 >= clip.y0 - 1 and box.y1 <= clip.y1 + 1):
                x0, y0 = np.floor(box.x0 + 0.5), np.floor(box.y0 + 0.5)
                # rows as they are: the renderer puts row 0 at the bottom, as
                # matplotlib's own resampling leaves an image of origin "lower"
                pixels = np.ascontiguousarray(data if data.shape[2] == 4 else
                                              np.dstack([data, np.full((rows, columns), 255,
                                                                       np.uint8)]))
                return pixels, x0, y0, Affine2D().translate(x0, y0)
        return super().make_image(renderer, magnification, unsampled)


def _padded_extent_from_grid(gx, gy):
    dx, dy = gx[1] - gx[0] if len(gx) > 1 else 1.0, gy[1] - gy[0] if len(gy) > 1 else 1.0
    return (gx[0] - dx / 2, gy[0] - dy / 2), (gx[-1] + dx / 2, gy[-1] + dy / 2)
