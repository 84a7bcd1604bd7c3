"""The verdicts of a result in words, for the summary, the report and the tables.

They are read from the result's assessment (:mod:`bridgecalc.assessments`);
nothing is decided here.
"""

from __future__ import annotations

MONTH_NAMES = ("January", "February", "March", "April", "May", "June", "July", "August",
               "September", "October", "November", "December")

#: What every moisture verdict carries.
MOISTURE_CAUTION = (
    "ISO 13788's monthly check on a two-dimensional steady calculation: a pass is no proof "
    "of a mould-free detail (air leaks, local moisture loads, furniture against cold walls, "
    "three-dimensional corners and workmanship are outside it); the codes in force where "
    "the building stands and a licensed practitioner's judgement decide.")


def month_name(month) -> str:
    """``1`` → ``"January"``."""
    return MONTH_NAMES[int(month) - 1]


def moisture_of(result):
    """The result's ISO 13788 assessment, or None."""
    assessment = getattr(result, "assessment", None)
    return None if assessment is None else assessment.moisture


def f_rsi_verdict_text(result) -> str | None:
    """``passes the criterion fRsi ≥ 0.75 given for this run``, or None without one."""
    assessment = getattr(result, "assessment", None)
    if assessment is None or assessment.f_rsi_criterion is None:
        return None
    words = {"passes": "passes", "fails": "FAILS"}.get(assessment.f_rsi_verdict,
                                                       "NOT ASSESSED against")
    return f"{words} the criterion fRsi ≥ {assessment.f_rsi_criterion:g} given for this run"


def moisture_verdict_text(result) -> str | None:
    """The ISO 13788 verdict in one sentence, or None without the check."""
    moisture = moisture_of(result)
    if moisture is None:
        return None
    what = f"ISO 13788 ({moisture.criterion}, {short_humidity(moisture.humidity)})"
    if moisture.critical_month is None:
        return (f"{what}: passes, no month sets a requirement (the exterior is never colder "
                f"than the interior)")
    month = f"critical month {moisture.critical_month} ({month_name(moisture.critical_month)})"
    sign = "≥" if moisture.f_rsi >= moisture.f_rsi_required else "<"
    required = f"fRsi {moisture.f_rsi:.3f} {sign} {moisture.f_rsi_required:.3f} required"
    if moisture.verdict == "not assessed":
        return f"{what}: NOT ASSESSED (see the warnings), {month}"
    word = "passes" if moisture.verdict == "passes" else "FAILS"
    return f"{word} {what}: {required}, {month}"


def short_humidity(humidity: str) -> str:
    """``humidity class 3 (ISO 13788 Annex A, ...)`` → ``humidity class 3``."""
    return humidity.split(" (")[0]


def summary_lines(result) -> list[str]:
    """The verdict lines of the terminal summary."""
    lines = []
    text = f_rsi_verdict_text(result)
    if text:
        lines.append(f"  verdict            fRsi {text}")
    text = moisture_verdict_text(result)
    if text:
        lines.append(f"  moisture           {text}")
        lines.append("  a pass is no proof of a mould-free detail (2D steady calculation)")
    return lines
