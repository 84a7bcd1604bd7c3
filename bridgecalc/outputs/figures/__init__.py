"""Figures for envelope submissions; they plot results and never recompute physics.

Five figures, each a :class:`matplotlib.figure.Figure` built by one function
and written as PNG (200 dpi), and on request SVG and PDF too, by
:func:`write_figures`:

``materials``, ``mesh``
    the section as drawn, and the element size of the finest mesh as a map
    (:mod:`.section`).
``temperature``
    the surface-temperature case's field with isotherms at a chosen step and
    the θsi,min point marked (:mod:`.temperature`).
``heat_flux``
    |q| of the heat-flow case per triangle on a log scale, with arrows for the
    direction of flow (:mod:`.heat_flux`).
``surface_temperature``
    θ along every run of interior surface against distance along it, with the
    user's fRsi criterion as a line when one is given (:mod:`.profile`).
``moisture``
    with an ISO 13788 check: the fRsi each month asks for against the
    junction's (:mod:`.moisture`, which also draws the critical month's
    isotherm on the temperature figure).

Where the junction is small in a large section, the materials, mesh,
temperature and heat-flux figures show its close view
(:func:`.catalogue.detail_window`) beside the whole, in the same figure
(:func:`.catalogue.beside_layout`); the whole marks the close view's frame.
``materials_detail``, ``mesh_detail``, ``temperature_detail`` and
``heat_flux_detail`` build the close view alone, on request.
The modules: :mod:`.catalogue` (which figures a run has, what each shows,
their sizes: known without drawing and without matplotlib), :mod:`.style`
(the house style), :mod:`.layout` (header, frame, panels), :mod:`.edges`
and :mod:`.raster` (mesh edges and sampled fields as drawn),
:mod:`.isotherms`, one module per figure, and :mod:`.files` (writing them).
This module builds figures by name; it loads matplotlib only when a figure,
or the house style, is first asked for.

Every quantity plotted comes from :mod:`bridgecalc.results` (fields, q, the
surface profiles). Lengths are in the model's length unit.
"""

from __future__ import annotations

from importlib import import_module
from pathlib import Path
from types import MappingProxyType

from .catalogue import (DEFAULT_FORMATS, DETAIL_FIGURES, FIGURES, FORMATS, PAGE_WIDTH, PNG_DPI,
                        detail_window, figure_formats, figure_names, figure_size)

#: The module of each name that needs matplotlib, loaded when the name is
#: first used (PEP 562 module ``__getattr__``).
_DRAWING = MappingProxyType({
    "plt": "style", "STYLE": "style", "TEMPERATURE_CMAP": "style", "HEAT_FLUX_CMAP": "style",
    "material_colours": "style",
    "materials_figure": "section", "mesh_figure": "section",
    "temperature_figure": "temperature", "heat_flux_figure": "heat_flux",
    "surface_temperature_figure": "profile", "moisture_figure": "moisture",
    "MAX_ISOTHERMS": "isotherms", "default_isotherm_step": "isotherms",
    "isotherm_levels": "isotherms",
    "save": "files", "prepare": "files",
})

__all__ = ("FIGURES", "DETAIL_FIGURES", "FORMATS", "DEFAULT_FORMATS", "PNG_DPI", "PAGE_WIDTH",
           "figure_formats", "figure_names", "figure_size", "detail_window", "build_figure", "share_ahead",
           "write_figures", *_DRAWING)


def __getattr__(name: str):
    """The figure builders, the house style and the file writer, with matplotlib."""
    if name in _DRAWING:
        return getattr(import_module(f".{_DRAWING[name]}", __name__), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def build_figure(name: str, result, **options):
    """One of :func:`figure_names` as a Figure (``isotherm_step``, ``f_rsi_min`` apply)."""
    from .heat_flux import heat_flux_figure
    from .moisture import moisture_figure
    from .profile import surface_temperature_figure
    from .section import materials_figure, mesh_figure
    from .temperature import temperature_figure
    step, f_rsi_min = options.get("isotherm_step"), options.get("f_rsi_min")
    builders = {
        "materials": lambda: materials_figure(result),
        "mesh": lambda: mesh_figure(result),
        "mesh_detail": lambda: mesh_figure(result, detail=True),
        "heat_flux_detail": lambda: heat_flux_figure(result, detail=True),
        "temperature": lambda: temperature_figure(result, step),
        "materials_detail": lambda: materials_figure(result, detail=True),
        "temperature_detail": lambda: temperature_figure(result, step, detail=True),
        "heat_flux": lambda: heat_flux_figure(result),
        "surface_temperature": lambda: surface_temperature_figure(result, f_rsi_min),
        "moisture": lambda: moisture_figure(result),
    }
    return builders[name]()


def share_ahead(result) -> None:
    """Work out, and keep on ``result``, what several figures draw from: the
    material boundaries, the triangle centres, the heat-flux density, and
    which triangle lies under each pixel of each view (:func:`.raster.pixel_grid`).

    Called before figure workers are forked, so that each finds them there
    instead of working them out again.
    """
    import matplotlib.tri as mtri
    from .catalogue import heat_flux, padded_extent, section_points
    from .edges import material_boundaries
    from .layout import new_figure, views
    from .raster import pixel_grid
    from .style import STYLE, plt
    xy, _ = section_points(result)
    material_boundaries(result)
    heat_flux(result)
    extent = padded_extent(result)
    with plt.rc_context(STYLE):
        fig, ax, _ = new_figure(result, "", "", extent, close=detail_window(result))
    try:
        triangulation = mtri.Triangulation(xy[:, 0], xy[:, 1], result.mesh.triangles)
        for axes, (lo, hi), _ in views(fig, ax, extent, False):
            # the plot box as :func:`.layout.frame` leaves it
            axes.set_xlim(lo[0], hi[0])
            axes.set_ylim(lo[1], hi[1])
            axes.set_aspect("equal", adjustable="box", anchor="SW")
            axes.apply_aspect()
            pixel_grid(fig, axes, (lo, hi), triangulation, result)
    finally:
        plt.close(fig)


def write_figures(result, folder, isotherm_step=None, f_rsi_min=None,
                  formats=DEFAULT_FORMATS, dpi=PNG_DPI) -> dict:
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
    from .files import save
    from .style import plt
    folder = Path(folder)
    out = {}
    for name in figure_names(result):
        fig = build_figure(name, result, isotherm_step=isotherm_step, f_rsi_min=f_rsi_min)
        try:
            out[name] = save(fig, folder / name, formats, dpi)
        finally:
            plt.close(fig)
    return out
