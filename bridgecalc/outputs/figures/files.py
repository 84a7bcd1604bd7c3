"""Writing a figure as PNG (200 dpi), and on request SVG and PDF, the same bytes
for the same input."""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
from PIL import Image

from .catalogue import DEFAULT_FORMATS, PNG_DPI
from .style import STYLE, plt

#: Resolution of the shaded fields inside SVG and PDF figures; lines and text
#: there stay vector.
VECTOR_RASTER_DPI = 150


def _defer_import(name: str) -> None:
    """Let module ``name`` load when first used rather than when first imported.

    matplotlib's PDF writer imports fontTools' subsetter (about 0.2 s) at
    import, but uses it only for Type 42 fonts; the figures embed Type 3
    (``pdf.fonttype`` in :data:`STYLE`). With a lazy module in its place it is
    loaded only if some code does use it.
    """
    import importlib.util
    import sys
    if name in sys.modules:
        return
    spec = importlib.util.find_spec(name)
    if spec is None or spec.loader is None:
        return
    spec.loader = importlib.util.LazyLoader(spec.loader)
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module
    spec.loader.exec_module(module)
    # bound on its package too, so ``from package import module`` takes it as
    # it is (looking it up through the import system would load it at once)
    package, _, short = name.rpartition(".")
    if package:
        setattr(importlib.import_module(package), short, module)


def prepare(vector: bool = True) -> None:
    """Import the figure modules and load the fonts, and with ``vector`` import
    the SVG and PDF writers, ahead of drawing.

    Done once before figure workers are forked, they share it instead of
    each doing it again.
    """
    if vector:
        _defer_import("fontTools.subset")
        import matplotlib.backends.backend_pdf  # noqa: F401
        import matplotlib.backends.backend_svg  # noqa: F401
    # the figure modules (and matplotlib.tri, contour, offsetbox they use):
    # imported here, once, rather than in each worker after the fork
    from . import heat_flux, moisture, profile, section, temperature  # noqa: F401
    from matplotlib import font_manager
    for weight in ("normal", "bold"):
        font_manager.get_font(font_manager.findfont(
            font_manager.FontProperties(family=STYLE["font.family"], weight=weight)))


#: zlib level of the PNG files: 1, the fastest. Pillow picks a filter for each
#: row by the least sum of absolute differences (the heuristic the PNG
#: specification suggests to encoders); on these figures, mostly flat colour
#: and smooth fields, level 1 is the quickest and still writes files no larger
#: than the package's own "Up"-filter encoder did at the same level.
PNG_COMPRESS_LEVEL = 1


def png_bytes(pixels, dpi: float) -> bytes:
    """A PNG file of 8-bit RGB or RGBA ``pixels``, shape (rows, columns, 3 or 4).

    Written by Pillow at zlib level :data:`PNG_COMPRESS_LEVEL`. The pHYs chunk
    states ``dpi`` [1/in]; no text or time chunks, so the same pixels give the
    same bytes.
    """
    return _png(Image.fromarray(np.ascontiguousarray(pixels, dtype=np.uint8)), dpi)


def _png(image, dpi: float) -> bytes:
    buffer = io.BytesIO()
    image.save(buffer, format="PNG", dpi=(dpi, dpi), compress_level=PNG_COMPRESS_LEVEL)
    return buffer.getvalue()


class _Kept(io.RawIOBase):
    """A file that keeps what is written to it instead of copying it: the
    figure's raw RGBA pixels, straight from Agg's buffer (some 6 MB at 200 dpi)."""

    def __init__(self):
        super().__init__()
        self.parts = []

    def writable(self) -> bool:
        return True

    def write(self, data) -> int:
        self.parts.append(data)
        return memoryview(data).nbytes

    def data(self):
        return self.parts[0] if len(self.parts) == 1 else b"".join(self.parts)


def _render_png(fig, dpi: float) -> bytes:
    """``fig`` drawn by Agg at ``dpi`` [1/in], as PNG bytes (RGB when it is opaque)."""
    kept = _Kept()
    fig.savefig(kept, format="raw", dpi=dpi)
    renderer = fig.canvas.renderer            # the one that just drew, at ``dpi``
    size = int(renderer.width), int(renderer.height)
    rgba = kept.data()
    image = Image.frombuffer("RGBA", size, rgba, "raw", "RGBA", 0, 1)
    # opaque when every pixel, read as a little-endian 32-bit word, has its
    # alpha byte (the high byte) at 255
    if np.frombuffer(rgba, dtype="<u4").min() >= 0xFF000000:
        image = image.convert("RGB")
    return _png(image, dpi)


def save(fig, stem: Path, formats=DEFAULT_FORMATS, dpi=PNG_DPI) -> list[Path]:
    """Write ``fig`` as ``stem.png`` (``dpi`` [1/in]), and as ``stem.svg`` and
    ``stem.pdf`` when ``formats`` names them.

    Metadata that would change from run to run (dates, versions) is left
    out, so the same input gives the same files.
    """
    metadata = {"svg": {"Date": None, "Creator": None},
                "pdf": {"CreationDate": None, "ModDate": None, "Producer": None,
                        "Creator": None}}
    written = []
    with plt.rc_context(STYLE):
        for fmt in formats:
            path = stem.with_suffix(f".{fmt}")
            if fmt == "png":
                path.write_bytes(_render_png(fig, dpi))
            else:
                fig.savefig(path, format=fmt, dpi=VECTOR_RASTER_DPI, metadata=metadata[fmt])
            written.append(path)
    return written
