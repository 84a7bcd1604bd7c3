"""Figures for envelope submissions; they plot results and never recompute physics.

Five figures, each a :class:`matplotlib.figure.Figure` built by one function
and written as PNG (300 dpi), SVG and PDF by :func:`write_figures`:

``materials``, ``mesh``
    the section as drawn (:mod:`.section`).
``temperature``
    the surface-temperature case's field with isotherms at a chosen step and
    the θsi,min point marked (:mod:`.temperature`).
``heat_flux``
    |q| of the heat-flow case per triangle on a log scale, with arrows for the
    direction of flow (:mod:`.heat_flux`).
``surface_temperature``
    θ along every run of interior surface against distance along it, with the
    user's fRsi criterion as a line when one is given (:mod:`.profile`).

Where the junction is small in a large section, ``materials_detail`` and
``temperature_detail`` show its close view (:func:`.layout.detail_window`).
The modules: :mod:`.style` (the house style), :mod:`.layout` (views,
panels, header), :mod:`.edges` and :mod:`.raster` (mesh edges and sampled
fields as drawn), :mod:`.isotherms`, one module per figure, and
:mod:`.files` (writing them). This module is the catalogue: which figures a
run has, their sizes, and building them by name.

Every quantity plotted comes from :mod:`bridgecalc.results` (fields, q, the
surface profiles). Lengths are in the model's length unit.
"""

from __future__ import annotations

from pathlib import Path
from types import MappingProxyType

from .style import HEAT_FLUX_CMAP, PAGE_WIDTH, STYLE, TEMPERATURE_CMAP, material_colours, plt
from .heat_flux import heat_flux_figure
from .isotherms import MAX_ISOTHERMS, default_isotherm_step, isotherm_levels
from .layout import detail_window, padded_extent, section_layout
from .profile import PROFILE_HEIGHT, surface_temperature_figure
from .files import FORMATS, PNG_DPI, prepare, save
from .section import legend_rows, materials_figure, mesh_figure
from .temperature import temperature_figure

__all__ = [
    "FIGURES", "DETAIL_FIGURES", "FORMATS", "PNG_DPI", "MAX_ISOTHERMS", "STYLE", "PAGE_WIDTH",
    "TEMPERATURE_CMAP", "HEAT_FLUX_CMAP", "plt", "figure_names", "figure_size",
    "build_figure", "write_figures", "save", "prepare", "detail_window", "material_colours",
    "default_isotherm_step", "isotherm_levels", "materials_figure", "mesh_figure",
    "temperature_figure", "heat_flux_figure", "surface_temperature_figure",
]

FIGURES = ("materials", "mesh", "temperature", "heat_flux", "surface_temperature")
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
    return detail_window(result) if name in DETAIL_FIGURES else padded_extent(result)


def figure_size(name: str, result) -> tuple[float, float]:
    """Width and height [in] that figure ``name`` will have, without drawing it."""
    if name == "surface_temperature":
        return PAGE_WIDTH, PROFILE_HEIGHT
    return PAGE_WIDTH, section_layout(_extent(name, result), legend_rows(name, result))[4]


BUILDERS = MappingProxyType({
    "materials": lambda r, o: materials_figure(r),
    "mesh": lambda r, o: mesh_figure(r),
    "temperature": lambda r, o: temperature_figure(r, o.get("isotherm_step")),
    "materials_detail": lambda r, o: materials_figure(r, detail=True),
    "temperature_detail": lambda r, o: temperature_figure(r, o.get("isotherm_step"),
                                                          detail=True),
    "heat_flux": lambda r, o: heat_flux_figure(r),
    "surface_temperature": lambda r, o: surface_temperature_figure(r, o.get("f_rsi_min")),
})


def build_figure(name: str, result, **options):
    """One of :func:`figure_names` as a Figure (``isotherm_step``, ``f_rsi_min`` apply)."""
    return BUILDERS[name](result, options)


def write_figures(result, folder, isotherm_step=None, f_rsi_min=None,
                  formats=FORMATS, dpi=PNG_DPI) -> dict:
    """Build and write every figure into ``folder``.

    Parameters
    ----------
    result : bridgecalc.pipeline.Result
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
