"""What a calculation is for: the title block of its reports (model format 1,
addition F, the ``[report]`` table).

Carried from a model file or a project file into the title block of every
report made from it; the date also dates the PDF files.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass

#: Keys of a ``[report]`` table, in the order the title block shows them.
TITLE_BLOCK_KEYS = ("project", "reference", "prepared_by", "checked_by", "date")

#: How each key reads in a report.
TITLE_BLOCK_LABELS = {"project": "Project", "reference": "Reference",
                      "prepared_by": "Prepared by", "checked_by": "Checked by",
                      "date": "Date"}


@dataclass(frozen=True)
class TitleBlock:
    """The ``[report]`` table.

    Attributes
    ----------
    project, reference, prepared_by, checked_by : str or None
        Free text, shown as given.
    date : str or None
        ISO 8601 date (``YYYY-MM-DD``); None: the day the report is made.
    """

    project: str | None = None
    reference: str | None = None
    prepared_by: str | None = None
    checked_by: str | None = None
    date: str | None = None

    def merged_over(self, other: "TitleBlock | None") -> "TitleBlock":
        """This block with the keys it leaves empty taken from ``other``."""
        if other is None:
            return self
        return TitleBlock(**{key: getattr(self, key) if getattr(self, key) is not None
                             else getattr(other, key) for key in TITLE_BLOCK_KEYS})

    def to_dict(self) -> dict:
        """The keys that are set, as a ``[report]`` table holds them."""
        return {key: getattr(self, key) for key in TITLE_BLOCK_KEYS
                if getattr(self, key) is not None}


def report_date(block: TitleBlock | None, today: _dt.date | None = None) -> str:
    """The date a report carries: the title block's, else ``today`` (default:
    the day of the run), as ISO 8601 ``YYYY-MM-DD``."""
    if block is not None and block.date is not None:
        return block.date
    return (today or _dt.date.today()).isoformat()
