"""The verdict on a temperature-factor criterion: the one place it is decided."""

from __future__ import annotations

#: The words of a verdict (model format 1, addition F).
PASSES, FAILS, NOT_ASSESSED = "passes", "fails", "not assessed"


def f_rsi_verdict(f_rsi: float | None, f_rsi_min: float | None, warnings=()) -> str | None:
    """The verdict of a junction's fRsi [-] on a criterion fRsi,min [-].

    ``"passes"`` when fRsi ≥ fRsi,min, ``"fails"`` when below, ``"not assessed"``
    when the result carries warnings (its fRsi may be 1 by construction) or
    has no fRsi (more than two temperatures: the weighting factors take its
    place, ISO 10211), and None without a criterion.
    """
    if f_rsi_min is None:
        return None
    if warnings or f_rsi is None:
        return NOT_ASSESSED
    return PASSES if f_rsi >= f_rsi_min else FAILS
