"""The ``[report]`` table (model format 1, addition F), read and checked the
same way in model files and project files."""

from __future__ import annotations

import datetime as _dt

from ..model.checker import Checker, describe
from ..model.title_block import TITLE_BLOCK_KEYS, TitleBlock


def read_title_block(check: Checker, value, where: str = "report") -> TitleBlock | None:
    """A :class:`TitleBlock` from the ``[report]`` table ``value`` (None if absent).

    ``date`` may be written as a TOML date (``date = 2026-12-02``) or as a
    string in ISO 8601 (``date = "2026-12-02"``).

    Raises
    ------
    ModelError
        Naming ``where`` and the key: not a table, an unknown key, a value
        that is not text, a date that is not an ISO 8601 calendar date.
    """
    if value is None:
        return None
    if not isinstance(value, dict):
        check.fail(where, f"expected a table [{where}], got {describe(value)}")
    check.keys(value, TITLE_BLOCK_KEYS, where)
    fields = {}
    for key in TITLE_BLOCK_KEYS[:-1]:
        if key in value:
            fields[key] = check.string(value[key], f"{where}.{key}")
    if "date" in value:
        fields["date"] = _date_text(check, value["date"], f"{where}.date")
    return TitleBlock(**fields)


def _date_text(check: Checker, value, where: str) -> str:
    if isinstance(value, _dt.datetime):
        return value.date().isoformat()
    if isinstance(value, _dt.date):
        return value.isoformat()
    if not isinstance(value, str):
        check.fail(where, f"expected an ISO 8601 date such as \"2026-12-02\", "
                          f"got {describe(value)}")
    text = value.strip()
    try:
        if len(text) != 10:
            raise ValueError
        return _dt.date.fromisoformat(text).isoformat()
    except ValueError:
        check.fail(where, f"expected an ISO 8601 date YYYY-MM-DD such as \"2026-12-02\", "
                          f"got {value!r}")
