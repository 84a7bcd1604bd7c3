"""report.pdf: the report's blocks (:func:`.content.report_content`) laid out with ReportLab.

ReportLab is pure Python from PyPI and renders without a browser or system
libraries. Text is set in DejaVu Sans, which matplotlib ships (it covers Ψ, θ,
λ, ², ·), embedded in the file. ``invariant`` mode leaves out random ids and
the clock, so the same report gives the same bytes; in that mode ReportLab
dates every file 1 January 2000 (its fixed stand-in for the time), so the
document information is given the report's own date instead
(:func:`_dated_canvas`): the same report, the same bytes, and the right day.
"""

from __future__ import annotations

import contextlib
from pathlib import Path
from types import MappingProxyType
from xml.sax.saxutils import escape

from ... import __version__
from .blocks import Figure, Heading, KeyFigures, Para, Report, Table

REPORT_PDF_FILE = "report.pdf"

FONT = "BridgecalcSans"
FONT_BOLD = "BridgecalcSans-Bold"

INK = "#1d2731"
MUTED = "#5f6b73"
RULE = "#d9d4c7"
BAND = "#f4f1ea"
ACCENT = "#9c3d1f"
TONES = MappingProxyType({"pass": ("#23613a", "#edf5ef"), "fail": ("#9b1c1c", "#fbeeee"),
                          "warn": ("#7a5200", "#fbf4e6"), "caution": (INK, BAND)})


def _font_folder() -> Path:
    """matplotlib's folder of TrueType fonts, found without importing matplotlib.

    matplotlib keeps its data in ``mpl-data`` beside its ``__init__.py``
    (what ``matplotlib.get_data_path`` returns); the helper process that lays
    out the report has not imported matplotlib, and importing it only for
    this path would cost it some 60 ms. Where the folder is not there, ask
    matplotlib.
    """
    import importlib.util
    spec = importlib.util.find_spec("matplotlib")
    if spec is not None and spec.origin:
        folder = Path(spec.origin).with_name("mpl-data") / "fonts" / "ttf"
        if (folder / "DejaVuSans.ttf").is_file():
            return folder
    import matplotlib
    return Path(matplotlib.get_data_path()) / "fonts" / "ttf"


def _fonts():
    """Register DejaVu Sans (from matplotlib's data folder) once."""
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFont
    if FONT in pdfmetrics.getRegisteredFontNames():
        return
    folder = _font_folder()
    pdfmetrics.registerFont(TTFont(FONT, str(folder / "DejaVuSans.ttf")))
    pdfmetrics.registerFont(TTFont(FONT_BOLD, str(folder / "DejaVuSans-Bold.ttf")))
    from reportlab.lib.fonts import addMapping
    addMapping(FONT, 0, 0, FONT)
    addMapping(FONT, 1, 0, FONT_BOLD)
    addMapping(FONT, 0, 1, FONT)
    addMapping(FONT, 1, 1, FONT_BOLD)


def prepare(vector: bool = False) -> None:
    """Import the PDF libraries and register the fonts ahead of :func:`write_pdf`
    (pypdf only with ``vector``: it places vector figure pages; PNG figures go
    in with ReportLab alone, :func:`place_figures`)."""
    if vector:
        import pypdf  # noqa: F401
    import reportlab.platypus  # noqa: F401
    _fonts()


def _styles():
    from reportlab.lib.colors import HexColor
    from reportlab.lib.styles import ParagraphStyle
    base = ParagraphStyle("body", fontName=FONT, fontSize=9, leading=12.5,
                          textColor=HexColor(INK), spaceAfter=5)
    return {
        "title": ParagraphStyle("title", parent=base, fontName=FONT_BOLD, fontSize=15,
                                leading=19, spaceAfter=3),
        "sub": ParagraphStyle("sub", parent=base, fontSize=7.5, leading=10,
                              textColor=HexColor(MUTED), spaceAfter=2),
        "h2": ParagraphStyle("h2", parent=base, fontName=FONT_BOLD, fontSize=11.5,
                             leading=15, spaceBefore=12, spaceAfter=5, keepWithNext=1),
        "body": base,
        "note": ParagraphStyle("note", parent=base, textColor=HexColor(MUTED)),
        "cell": ParagraphStyle("cell", parent=base, fontSize=7.5, leading=9.5, spaceAfter=0),
        "cellnum": ParagraphStyle("cellnum", parent=base, fontSize=7.5, leading=9.5,
                                  spaceAfter=0, alignment=2),
        "head": ParagraphStyle("head", parent=base, fontName=FONT_BOLD, fontSize=7.5,
                               leading=9.5, spaceAfter=0),
        "caption": ParagraphStyle("caption", parent=base, fontSize=7.5, leading=10,
                                  textColor=HexColor(MUTED), spaceAfter=10),
        "keylabel": ParagraphStyle("keylabel", parent=base, fontSize=7.5, leading=9,
                                   textColor=HexColor(MUTED), spaceAfter=0),
        "keyvalue": ParagraphStyle("keyvalue", parent=base, fontName=FONT_BOLD, fontSize=14,
                                   leading=17, spaceAfter=0),
    }


#: A table cell longer than this [characters] is shortened in the PDF: a row
#: must fit on a page (report.html and results.json keep the whole text).
CELL_CHARACTERS = 400


def _text(value: str) -> str:
    return escape(value)


def _cell(value: str, limit: int = CELL_CHARACTERS) -> str:
    if len(value) > limit:
        value = value[:limit] + "… (shortened; whole in report.html)"
    return escape(value)


def _linked(text: str, href: str | None) -> str:
    """A cell's text as a link to ``href`` (a file relative to the report)."""
    if href is None:
        return text
    return f'<a href="{escape(href, {chr(34): "&quot;"})}" color="{ACCENT}">{text}</a>'


def _flowables(report: Report, width: float, placed: list, forms: bool = False):
    from reportlab.lib.colors import HexColor
    from reportlab.platypus import (KeepTogether, Paragraph, Spacer,
                                    Table as RLTable, TableStyle)
    s = _styles()
    out = [Paragraph(_text(report.title), s["title"]),
           Paragraph(_text(report.subtitle), s["sub"]), Spacer(1, 2)]
    rule = RLTable([[""]], colWidths=[width], rowHeights=[2])
    rule.setStyle(TableStyle([("LINEABOVE", (0, 0), (-1, 0), 1.5, HexColor(ACCENT))]))
    out.append(rule)
    heading = None      # a heading waits to go on the page of the figure after it
    for block in report.blocks:
        kept = None     # a heading kept on the page of the block after it
        if heading is not None and not isinstance(block, Figure):
            kept, heading = heading, None
            start = len(out)
        if isinstance(block, Heading):
            heading = Paragraph(_text(block.text), s["h2"])
        elif isinstance(block, Para):
            if block.tone in TONES:
                edge, fill = TONES[block.tone]
                style = s["body"]
                if block.tone == "fail":
                    style = s["head"].clone("failbody", fontSize=9, leading=12.5)
                box = RLTable([[Paragraph(_cell(block.text, 5 * CELL_CHARACTERS), style)]],
                              colWidths=[width])
                box.setStyle(TableStyle([
                    ("BACKGROUND", (0, 0), (-1, -1), HexColor(fill)),
                    ("LINEBEFORE", (0, 0), (0, -1), 4, HexColor(edge)),
                    ("LEFTPADDING", (0, 0), (-1, -1), 8), ("RIGHTPADDING", (0, 0), (-1, -1), 8),
                    ("TOPPADDING", (0, 0), (-1, -1), 5), ("BOTTOMPADDING", (0, 0), (-1, -1), 5),
                ]))
                out += [box, Spacer(1, 5)]
            else:
                out.append(Paragraph(_text(block.text), s["note" if block.tone == "note"
                                                          else "body"]))
        elif isinstance(block, KeyFigures):
            cells = [[Paragraph(_text(label), s["keylabel"]),
                      Paragraph(f"{_text(value)} <font size=8 name={FONT}>{_text(unit)}</font>",
                                s["keyvalue"]),
                      Paragraph(_cell(note), s["keylabel"])]
                     for label, value, unit, note in block.items]
            n = len(cells)
            grid = RLTable([cells], colWidths=[width / n] * n)
            grid.setStyle(TableStyle([
                ("LINEABOVE", (0, 0), (-1, 0), 2.5, HexColor(INK)),
                ("BOX", (0, 0), (-1, -1), 0.5, HexColor(RULE)),
                ("INNERGRID", (0, 0), (-1, -1), 0.5, HexColor(RULE)),
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
            ]))
            out += [grid, Spacer(1, 8)]
        elif isinstance(block, Table):
            weights = block.widths or (1.0,) * len(block.header)
            total = sum(weights)
            widths = [width * w / total for w in weights]
            rows = [[Paragraph(_text(h), s["head"]) for h in block.header]]
            for r, row in enumerate(block.rows):
                rows.append([Paragraph(_linked(_cell(c), block.links.get((r, i))),
                                       s["cellnum" if i in block.numeric else "cell"])
                             for i, c in enumerate(row)])
            table = RLTable(rows, colWidths=widths, repeatRows=1)
            table.setStyle(TableStyle([
                ("LINEBELOW", (0, 0), (-1, 0), 1.0, HexColor(INK)),
                ("LINEBELOW", (0, 1), (-1, -1), 0.4, HexColor(RULE)),
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("LEFTPADDING", (0, 0), (-1, -1), 3), ("RIGHTPADDING", (0, 0), (-1, -1), 3),
            ]))
            out.append(table)
            out.append(Paragraph(_text(block.caption), s["caption"]) if block.caption
                       else Spacer(1, 8))
        elif isinstance(block, Figure):
            if block.size is not None:
                fig_w, fig_h = block.size
            else:
                from PIL import Image as PILImage
                with PILImage.open(block.png) as im:
                    fig_w, fig_h = im.size
            height = width * fig_h / fig_w
            max_height = 21.0 * 72 / 2.54        # leave room for the caption on an A4 page
            w = width
            if height > max_height:
                w, height = width * max_height / height, max_height
            out.append(KeepTogether(([heading] if heading is not None else [])
                                    + [_Placeholder(block.png, w, height, placed, forms),
                                       Paragraph(_text(block.caption), s["caption"])]))
            heading = None
        else:
            raise TypeError(f"unknown report block {block!r}")
        if kept is not None:
            # never a heading alone at the foot of a page (or on the last one)
            out[start:start + 1] = [KeepTogether([kept] + out[start:start + 1])]
    if heading is not None:
        out.append(heading)
    return out


#: The form XObject that draws figure k of a report laid out with its figures
#: to come (:func:`lay_out`, :func:`place_figures`), and the image in it.
FIGURE_FORM, FIGURE_IMAGE = "BridgecalcFigure{}", "BridgecalcImage{}"


def _Placeholder(png: Path, width: float, height: float, placed: list, forms: bool = False):
    """Space for a figure; records where it lands so that the figure (its PNG's
    pixels, or its own vector PDF page) can be put there afterwards. With
    ``forms``, it draws the form XObject :data:`FIGURE_FORM` there, which
    :func:`place_figures` defines once the PNG exists."""
    from reportlab.platypus import Flowable

    class Placeholder(Flowable):
        def __init__(self):
            super().__init__()
            self.width, self.height = width, height

        def draw(self):
            x, y = self.canv.absolutePosition(0, 0)
            if forms:
                # drawn at this flowable's corner; defined, with a box of its
                # size, before the file is written
                self.canv.doForm(FIGURE_FORM.format(len(placed)))
            placed.append((self.canv.getPageNumber() - 1, x, y, self.width, self.height,
                           png))

    return Placeholder()


def png_stream(png: Path) -> tuple[bytes, dict]:
    """A PNG file as the stream and the entries of a PDF image XObject: the
    compressed data, and its width, height, colour space, filter and decode
    parameters [PDF names without the slash; pixels].

    An 8-bit RGB or grey PNG without interlacing goes in as it is: its IDAT
    chunks are a zlib stream of scanlines, each with its PNG filter byte,
    which is what PDF's FlateDecode with the PNG predictors (``Predictor
    15``) reads (ISO 32000-1, 7.4.4.4). Nothing is decoded or compressed
    again: report.pdf shares the figure's PNG with report.html. Any other
    PNG is decoded by Pillow, laid on white, and compressed.
    """
    import struct
    import zlib
    data = Path(png).read_bytes()
    chunks, at = [], 8
    while at + 8 <= len(data):
        length, kind = struct.unpack(">I4s", data[at:at + 8])
        chunks.append((kind, data[at + 8:at + 8 + length]))
        at += 12 + length
    header = dict(chunks).get(b"IHDR", b"")
    width, height, depth, colour, _, _, interlace = struct.unpack(">IIBBBBB", header)
    colours = {0: 1, 2: 3}.get(colour)
    entries = {"Width": width, "Height": height, "BitsPerComponent": 8,
               "Filter": "FlateDecode"}
    if depth == 8 and colours is not None and interlace == 0:
        stream = b"".join(body for kind, body in chunks if kind == b"IDAT")
        entries["DecodeParms"] = {"Predictor": 15, "Colors": colours, "BitsPerComponent": 8,
                                  "Columns": width}
    else:
        from PIL import Image
        with Image.open(png) as opened:
            rgba = opened.convert("RGBA")
        flat = Image.new("RGB", rgba.size, "white")
        flat.paste(rgba, mask=rgba.getchannel("A"))
        colours = 3
        stream = zlib.compress(flat.tobytes(), 6)
    entries["ColorSpace"] = "DeviceRGB" if colours == 3 else "DeviceGray"
    return stream, entries


def stamp_figures(path, placed: list) -> None:
    """Put each figure's own PDF page (the vector file beside its PNG) into the
    report written at ``path``, where :func:`lay_out` left room for it,
    scaled to fit.

    A figure page becomes a form XObject whose content stream is copied as it
    is (still compressed), so nothing is parsed or re-encoded.
    """
    path = Path(path)
    from pypdf import PdfReader, PdfWriter
    from pypdf.generic import (ArrayObject, DecodedStreamObject, DictionaryObject,
                               FloatObject, NameObject)
    writer = PdfWriter(clone_from=PdfReader(path))
    for k, (page_index, x, y, width, height, png) in enumerate(placed):
        page = writer.pages[page_index]
        resources = page["/Resources"].get_object()
        if "/XObject" not in resources:
            resources[NameObject("/XObject")] = DictionaryObject()
        name = f"/BridgecalcFigure{k}"
        draw = DecodedStreamObject()
        figure = PdfReader(Path(png).with_suffix(".pdf")).pages[0]
        box = [float(v) for v in figure.mediabox]
        fw, fh = box[2] - box[0], box[3] - box[1]
        scale = min(width / fw, height / fh)
        contents = figure["/Contents"].get_object()
        if isinstance(contents, ArrayObject):          # several streams: join them
            data = b"\n".join(c.get_object().get_data() for c in contents)
            form = DecodedStreamObject()
            form.set_data(data)
        else:
            form = contents.clone(writer)
        form[NameObject("/Type")] = NameObject("/XObject")
        form[NameObject("/Subtype")] = NameObject("/Form")
        form[NameObject("/BBox")] = ArrayObject([FloatObject(v) for v in box])
        form[NameObject("/Resources")] = figure["/Resources"].clone(writer)
        form_ref = writer._add_object(form)
        resources["/XObject"].get_object()[NameObject(name)] = form_ref
        draw.set_data(f"q {scale:.6f} 0 0 {scale:.6f} {x - box[0] * scale:.4f} "
                      f"{y - box[1] * scale:.4f} cm {name} Do Q".encode("ascii"))
        old = page["/Contents"]
        parts = list(old.get_object()) if isinstance(old.get_object(), ArrayObject) else [old]
        page[NameObject("/Contents")] = ArrayObject(parts + [writer._add_object(draw)])
    writer.add_metadata({"/Producer": f"bridgecalc {__version__}"})
    with open(path, "wb") as handle:
        writer.write(handle)


def write_pdf(report: Report, path, vector: bool = False) -> None:
    """Lay out ``report`` on A4 pages and write it to ``path``, figures included
    (their PNGs, or with ``vector`` the PDF files beside them)."""
    place_figures(lay_out(report, path, vector))


def _dated_canvas(date: str | None):
    """A ReportLab canvas class whose document is dated ``date`` (ISO 8601,
    00:00 UTC) in its creation and modification dates, or None to leave
    ReportLab's own date.

    ReportLab takes the document's time stamp from the clock, or in
    ``invariant`` mode from ``SOURCE_DATE_EPOCH`` or else 946684800 s
    (2000-01-01); the stamp is made when the canvas is, so it is replaced
    right after.
    """
    if date is None:
        return None
    import calendar
    import datetime as dt
    import time
    from reportlab.lib.utils import TimeStamp
    from reportlab.pdfgen.canvas import Canvas
    epoch = calendar.timegm(dt.date.fromisoformat(date).timetuple())

    class DatedCanvas(Canvas):
        def __init__(self, *args, **kwargs):
            super().__init__(*args, **kwargs)
            stamp = TimeStamp(invariant=1)
            stamp.t, stamp.lt = epoch, time.gmtime(epoch)
            stamp.YMDhms = tuple(stamp.lt)[:6]
            self._doc._timeStamp = stamp

    return DatedCanvas


class Pages:
    """report.pdf laid out, its figures to come (:func:`lay_out`).

    Attributes
    ----------
    path : Path
    placed : list
        Per figure: page index, x, y, width, height [pt] of its room, its PNG.
    vector : bool
        Whether the figures go in as their own PDF pages (the file is then
        written, and :func:`stamp_figures` adds them) or as their PNGs (the
        file is not written yet: ``canvas`` writes it, :func:`place_figures`).
    canvas : reportlab.pdfgen.canvas.Canvas or None
    """

    def __init__(self, path, placed, vector, canvas=None):
        self.path, self.placed, self.vector, self.canvas = Path(path), placed, vector, canvas


def lay_out(report: Report, path, vector: bool = False) -> Pages:
    """Lay out ``report`` with room where each figure goes, for :func:`place_figures`.

    Needs each figure's PNG, or its ``size``, but not the figure itself yet.
    PNG figures (the default) are drawn on their pages as forms that are
    defined, and the file written, once the PNGs exist; with ``vector``,
    the file is written now and the figures' PDF pages are stamped into it
    afterwards.
    """
    from reportlab.lib.colors import HexColor
    from reportlab.lib.pagesizes import A4
    from reportlab.lib.units import cm
    from reportlab.platypus import SimpleDocTemplate
    _fonts()
    margin = 1.8 * cm
    doc = SimpleDocTemplate(str(path), pagesize=A4, leftMargin=margin, rightMargin=margin,
                            topMargin=1.6 * cm, bottomMargin=1.8 * cm, title=report.title,
                            author=f"bridgecalc {__version__}", subject="thermal bridge report",
                            creator=f"bridgecalc {__version__}", invariant=1)
    doc._doSave = int(vector)           # ReportLab's switch: PNG figures save it later

    def footer(canvas, document):
        canvas.saveState()
        canvas.setFont(FONT, 7)
        canvas.setFillColor(HexColor(MUTED))
        canvas.drawString(margin, 1.0 * cm, f"{report.title} · bridgecalc {__version__}")
        canvas.drawRightString(A4[0] - margin, 1.0 * cm, f"page {document.page}")
        canvas.restoreState()

    placed: list = []
    canvas = _dated_canvas(getattr(report, "date", None))
    with _binary_streams():
        doc.build(_flowables(report, A4[0] - 2 * margin, placed, forms=not vector),
                  onFirstPage=footer, onLaterPages=footer,
                  **({"canvasmaker": canvas} if canvas else {}))
    return Pages(path, placed, vector, None if vector else doc.canv)


@contextlib.contextmanager
def _binary_streams():
    """ReportLab writing its streams binary: ASCII85 in pure Python costs seconds."""
    from reportlab import rl_config
    saved = rl_config.useA85
    rl_config.useA85 = 0
    try:
        yield
    finally:
        rl_config.useA85 = saved


def place_figures(pages: Pages) -> None:
    """Put the figures into report.pdf where :func:`lay_out` left room, and
    have the file whole.

    PNG figures: each form drawn on the pages becomes a box of its room's
    size holding the PNG's image (:func:`png_stream`), scaled to fit and
    set at the top, and the file is written: ReportLab alone, nothing read
    back. Vector figures: :func:`stamp_figures`.
    """
    if pages.vector:
        stamp_figures(pages.path, pages.placed)
        return
    from reportlab.pdfbase.pdfdoc import (PDFArray, PDFDictionary, PDFName,
                                          PDFObjectReference, PDFStream, PDFZCompress,
                                          xObjectName)
    canvas = pages.canvas
    document = canvas._doc

    def entry(value):
        if isinstance(value, dict):
            return PDFDictionary({k: entry(v) for k, v in value.items()})
        return value if isinstance(value, (int, float)) else PDFName(value)
    for k, (_, _, _, width, height, png) in enumerate(pages.placed):
        stream, entries = png_stream(png)
        image = PDFStream(PDFDictionary({"Type": PDFName("XObject"),
                                         "Subtype": PDFName("Image"),
                                         **{key: entry(v) for key, v in entries.items()}}),
                          stream)
        image_name = FIGURE_IMAGE.format(k)
        document.Reference(image, image_name)
        pw, ph = entries["Width"], entries["Height"]
        scale = min(width / pw, height / ph)
        draw = (f"q {pw * scale:.4f} 0 0 {ph * scale:.4f} 0 {height - ph * scale:.4f} cm "
                f"/Image Do Q")
        form = PDFStream(PDFDictionary({
            "Type": PDFName("XObject"), "Subtype": PDFName("Form"),
            "BBox": PDFArray([0, 0, round(width, 4), round(height, 4)]),
            "Resources": PDFDictionary({"XObject": PDFDictionary(
                {"Image": PDFObjectReference(image_name)})})}),
            draw.encode("ascii"), [PDFZCompress])
        document.Reference(form, xObjectName(FIGURE_FORM.format(k)))
    canvas.setProducer(f"bridgecalc {__version__}")     # as the vector path states it
    with _binary_streams():
        canvas.save()
