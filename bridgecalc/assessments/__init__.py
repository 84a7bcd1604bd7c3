"""Results → verdicts: what a junction's numbers mean against criteria.

``criteria``: the verdict of fRsi on a criterion fRsi,min (``--f-rsi-min``);
``moisture``: ISO 13788's monthly surface-humidity check against a climate
(the model's ``[moisture]``). :func:`assess` makes both for one result; the
outputs show them and never decide a verdict themselves.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

from .criteria import FAILS, NOT_ASSESSED, PASSES, f_rsi_verdict
from .moisture import (MonthRequirement, MoistureAssessment, assess_moisture, critical_month,
                       monthly_requirements)


@dataclass(frozen=True)
class Assessment:
    """The verdicts on one result.

    Attributes
    ----------
    f_rsi_criterion : float or None
        The fRsi criterion given for the run [-] (``--f-rsi-min``).
    f_rsi_verdict : str or None
        ``"passes"``, ``"fails"``, ``"not assessed"``; None without a criterion.
    moisture : MoistureAssessment or None
        The ISO 13788 check, when the model asks for one.
    """

    f_rsi_criterion: float | None = None
    f_rsi_verdict: str | None = None
    moisture: MoistureAssessment | None = None

    def add_to(self, results: dict) -> None:
        """Its keys in results.json's content (addition F's in
        ``surface_temperature_case``, addition D's ``moisture``)."""
        if self.f_rsi_criterion is not None:
            case = results["surface_temperature_case"]
            case["f_rsi_criterion"] = self.f_rsi_criterion
            case["f_rsi_verdict"] = self.f_rsi_verdict
        if self.moisture is not None:
            results["moisture"] = self.moisture.to_dict()


def assess(result, f_rsi_min: float | None = None):
    """``result`` with its :class:`Assessment` against ``f_rsi_min`` [-] and the
    model's ``[moisture]`` (a copy; the result given is left as it was)."""
    st = result.surface_temperature_case
    assessment = Assessment(f_rsi_min, f_rsi_verdict(st.f_rsi, f_rsi_min, result.warnings),
                            assess_moisture(result))
    return dataclasses.replace(result, assessment=assessment)


def criterion_of(result) -> float | None:
    """The fRsi criterion a result was assessed against [-], or None."""
    assessment = getattr(result, "assessment", None)
    return None if assessment is None else assessment.f_rsi_criterion


__all__ = ("Assessment", "FAILS", "MoistureAssessment", "MonthRequirement", "NOT_ASSESSED",
           "PASSES", "assess", "assess_moisture", "criterion_of", "critical_month",
           "f_rsi_verdict", "monthly_requirements")
