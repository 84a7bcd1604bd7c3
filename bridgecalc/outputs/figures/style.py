"""The house style of the figures: matplotlib set up, colours, fonts, material fills.

Colour maps are perceptually uniform and monotonic in lightness (cividis,
magma, and a lightness ramp for materials), so figures stay readable printed
in grey; line styles, not colours alone, tell the boundary conditions apart.
"""

from __future__ import annotations

import math
import os
import tempfile
from types import MappingProxyType

# matplotlib caches fonts in MPLCONFIGDIR; a read-only home must not stop a run
if not os.access(os.path.expanduser("~"), os.W_OK) and "MPLCONFIGDIR" not in os.environ:
    os.environ["MPLCONFIGDIR"] = tempfile.mkdtemp(prefix="bridgecalc-mpl-")

import matplotlib  # noqa: E402

matplotlib.use("Agg")


def _import_quietly():
    """Import pyplot and the parts of matplotlib the figures use, without
    matplotlib writing, as it defines each artist class, the list of its
    properties into the docstring of its ``set`` method.

    That list is help text for an interactive session; building it for some
    hundred classes is about a third of matplotlib's import time (some 0.1 s
    of every run). The methods themselves, their signatures and every
    drawing are the same. matplotlib's own function for the list is put
    back at once, for any class defined later.
    """
    import matplotlib.artist as artist
    kwdoc = getattr(artist, "kwdoc", None)
    if callable(kwdoc):
        artist.kwdoc = lambda _: ""
    try:
        import matplotlib.pyplot
        import matplotlib.legend  # noqa: F401
        import matplotlib.offsetbox  # noqa: F401
        import matplotlib.quiver  # noqa: F401
        import matplotlib.tri  # noqa: F401
        import mpl_toolkits.axes_grid1.anchored_artists  # noqa: F401
    finally:
        if callable(kwdoc):
            artist.kwdoc = kwdoc
    return matplotlib.pyplot


plt = _import_quietly()     # the pyplot of every figure module

#: Temperature fields: perceptually uniform, colour-blind safe, monotonic in grey.
TEMPERATURE_CMAP = "cividis"
#: Heat-flux magnitude (log scale): perceptually uniform, monotonic in grey.
HEAT_FLUX_CMAP = "magma"

INK = "#1d2731"          # text, outlines
MUTED = "#5f6b73"        # subtitles, secondary lines
PAPER = "#ffffff"
VOID = "#eceae4"         # background outside the solid
INTERIOR = "#9c3d1f"     # interior surfaces (solid line)
EXTERIOR = "#245a7a"     # exterior surfaces (dashed line)
UNHEATED = "#7d6424"     # surfaces of unheated spaces (dash-dotted line)
ADIABATIC = "#7a7a7a"    # cut-off and symmetry planes (dotted line)
HATCHES = ("", "////", "....", "\\\\\\\\", "xxx", "---", "|||", "ooo", "+++", "**")

STYLE = MappingProxyType({
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
})


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
