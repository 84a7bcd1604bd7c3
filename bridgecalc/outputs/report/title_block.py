"""The title block at the top of a report: project, reference, who prepared
and who checked it, and its date (model format 1, addition F)."""

from __future__ import annotations

from ...model.title_block import TITLE_BLOCK_KEYS, TITLE_BLOCK_LABELS, TitleBlock, report_date
from .blocks import Table


def title_block_table(block: TitleBlock | None, date: str) -> Table:
    """The title block as a two-row table; keys not given read "not stated".

    Parameters
    ----------
    block : TitleBlock or None
        The ``[report]`` table of the model or project.
    date : str
        The report's date, ISO 8601 (:func:`report_date`).
    """
    values = {key: (getattr(block, key) if block is not None else None) for key in TITLE_BLOCK_KEYS}
    values["date"] = date
    return Table([TITLE_BLOCK_LABELS[key] for key in TITLE_BLOCK_KEYS],
                 [[values[key] if values[key] is not None else "not stated"
                   for key in TITLE_BLOCK_KEYS]],
                 "", (), (2.6, 1.6, 1.8, 1.8, 1.2))


__all__ = ("report_date", "title_block_table")
