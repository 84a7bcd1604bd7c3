"""Writing a figure as PNG (300 dpi), SVG and PDF, the same bytes for the same input."""

from __future__ import annotations

import io
import struct
import zlib
from pathlib import Path

import numpy as np

from .catalogue import FORMATS, PNG_DPI
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


def prepare() -> None:
    """Import the SVG and PDF writers and load the fonts, ahead of drawing.

    Done once before figure workers are forked, they share it instead of
    each doing it again.
    """
    _defer_import("fontTools.subset")
    import matplotlib.backends.backend_pdf  # noqa: F401
    import matplotlib.backends.backend_svg  # noqa: F401
    from matplotlib import font_manager
    for weight in ("normal", "bold"):
        font_manager.get_font(font_manager.findfont(
            font_manager.FontProperties(family=STYLE["font.family"], weight=weight)))


def png_bytes(pixels, dpi: float) -> bytes:
    """A PNG file of 8-bit RGB or RGBA ``pixels``, shape (rows, columns, 3 or 4).

    Every row uses the "Up" filter (PNG specification, filter type 2: the
    difference to the row above, modulo 256) and zlib at level 1. Figures are
    mostly flat colour and smooth fields, so this compresses as well as
    choosing a filter per row, at a quarter of the time. The pHYs chunk states
    ``dpi`` [1/in]; no text chunks, so the same pixels give the same bytes.
    """
    pixels = np.ascontiguousarray(pixels, dtype=np.uint8)
    rows, columns, channels = pixels.shape
    flat = pixels.reshape(rows, columns * channels)
    filtered = np.empty((rows, columns * channels + 1), dtype=np.uint8)
    filtered[:, 0] = 2
    filtered[0, 1:] = flat[0]
    np.subtract(flat[1:], flat[:-1], out=filtered[1:, 1:])

    def chunk(kind: bytes, data: bytes) -> bytes:
        return (struct.pack(">I", len(data)) + kind + data
                + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF))

    per_metre = int(round(dpi / 0.0254))
    return (b"\x89PNG\r\n\x1a\n"
            + chunk(b"IHDR", struct.pack(">IIBBBBB", columns, rows, 8,
                                         {3: 2, 4: 6}[channels], 0, 0, 0))
            + chunk(b"pHYs", struct.pack(">IIB", per_metre, per_metre, 1))
            + chunk(b"IDAT", zlib.compress(memoryview(filtered), 1))
            + chunk(b"IEND", b""))


def _render_png(fig, dpi: float) -> bytes:
    """``fig`` drawn by Agg at ``dpi`` [1/in], as PNG bytes (RGB when it is opaque)."""
    raw = io.BytesIO()
    fig.savefig(raw, format="raw", dpi=dpi)
    renderer = fig.canvas.renderer            # the one that just drew, at ``dpi``
    width, height = int(renderer.width), int(renderer.height)
    pixels = np.frombuffer(raw.getbuffer(), dtype=np.uint8).reshape(height, width, 4)
    if pixels[..., 3].min() == 255:
        pixels = pixels[..., :3]
    return png_bytes(pixels, dpi)


def save(fig, stem: Path, formats=FORMATS, dpi=PNG_DPI) -> list[Path]:
    """Write ``fig`` as ``stem.png`` (``dpi`` [1/in]), ``stem.svg`` and ``stem.pdf``.

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
