"""Numbers as the report prints them: fixed decimals, the minus sign of print."""

from __future__ import annotations

import math


def n_text(value, digits=4) -> str:
    """A number for tables: fixed decimals, minus sign as in print; "–" when missing."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "–"
    text = f"{value:.{digits}f}"
    return text.replace("-", "−")


def g_text(value) -> str:
    """A number as given (shortest form), minus sign as in print."""
    return f"{value:g}".replace("-", "−")


def point_text(p) -> str:
    """(x, y) as given."""
    return "(" + ", ".join(g_text(c) for c in p) + ")"
