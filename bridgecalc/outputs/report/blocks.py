"""The blocks a report is made of: headings, paragraphs, key figures, tables, figures.

:mod:`.content` builds a report from them once; :mod:`.html` and :mod:`.pdf`
render the same blocks, so both carry the same content by construction.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path


@dataclass
class Heading:
    level: int
    text: str
    anchor: str = ""


@dataclass
class Para:
    """A paragraph. ``tone``: normal, note, pass, fail, warn, caution."""

    text: str
    tone: str = "normal"


@dataclass
class Table:
    header: list[str]
    rows: list[list[str]]
    caption: str = ""
    numeric: tuple[int, ...] = ()       # right-aligned columns
    widths: tuple[float, ...] = ()      # relative column widths (PDF)
    links: dict = field(default_factory=dict)   # (row, column) -> relative link of the cell


@dataclass
class Figure:
    """A figure: its PNG file and, when known before it is drawn, its size [in]."""

    name: str
    png: Path
    caption: str
    size: tuple[float, float] | None = None


@dataclass
class KeyFigures:
    """The headline numbers: (label, value, unit, note)."""

    items: list[tuple[str, str, str, str]] = field(default_factory=list)


@dataclass
class Report:
    """A report: its title, the line under it, its blocks, and its date
    (ISO 8601, also the PDF's creation date; None: no date stated)."""

    title: str
    subtitle: str
    blocks: list
    date: str | None = None
