"""What the audit reports: one finding per suspicious place in a model."""

from __future__ import annotations

from dataclasses import dataclass

from ..model import geometry


@dataclass(frozen=True)
class Finding:
    """Something in a model that may be a slip but can be legitimate.

    Attributes
    ----------
    rule : str
        Short name of the rule that found it (e.g. ``"slit"``), stable for scripts.
    at : (float, float)
        Where it is [length_unit of the model].
    message : str
        What is wrong there, in words a user can check on the drawing.
    action : str
        What to do about it.
    """

    rule: str
    at: tuple[float, float]
    message: str
    action: str

    def text(self, origin: str, unit: str, size: float) -> str:
        """One line for stderr, results.json ``warnings`` and the report.

        Parameters
        ----------
        origin : str
            The model's file or script.
        unit : str
            The model's length unit.
        size : float
            The model's largest dimension [length_unit], for rounding ``at``.
        """
        place = geometry.position_text(self.at, size)
        return f"{origin}: audit, {self.rule} at {place} {unit}: {self.message}; {self.action}"

    def to_dict(self) -> dict:
        """The finding in results.json's ``audit`` list."""
        return {"rule": self.rule, "at": [float(self.at[0]), float(self.at[1])],
                "message": self.message, "action": self.action}
