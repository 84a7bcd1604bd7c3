"""The review report: one content, two renderings (report.html, report.pdf).

:mod:`.content` builds the report once from a result, as the blocks of
:mod:`.blocks` (headings, paragraphs, tables, figures); :mod:`.html` writes
those blocks as one self-contained page and :mod:`.pdf` lays the same blocks
out on A4 pages. So both carry the same content by construction.
"""

from .content import report_content
from .html import REPORT_FILE, render_html
from .pdf import REPORT_PDF_FILE, write_pdf

__all__ = ("REPORT_FILE", "REPORT_PDF_FILE", "render_html", "report_content", "write_pdf")
