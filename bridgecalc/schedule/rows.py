"""The schedule's rows and its total: H_TB = Σ Ψ·l with its error bound, as
schedule.json and schedule.csv give them (model format 1, addition E)."""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass, field

from ..sweep.table import csv_cell
from .junction import JunctionOutcome
from .project import JunctionSpec, Project

SCHEDULE_FORMAT = 1
CSV_FILE = "schedule.csv"

CSV_COLUMNS = ("junction", "model", "parameters", "between", "length [m]", "psi [W/(m·K)]",
               "psi_error_estimate [W/(m·K)]", "psi_length [W/K]",
               "psi_length_error_bound [W/K]", "share_of_total [-]", "theta_si_min [°C]",
               "f_rsi [-]", "criterion_met", "moisture_passes", "psi_reference [W/(m·K)]",
               "psi_difference [W/(m·K)]", "status", "reused", "folder")


@dataclass(frozen=True)
class JunctionRow:
    """One junction of the schedule: what the project says of it and what was computed.

    Attributes
    ----------
    spec : JunctionSpec
    outcome : JunctionOutcome
    reused : bool
        Taken from the previous run in the output folder, not computed now.
    reuse_key : str or None
        What the results depend on (:func:`.reuse.reuse_key`); None when the
        model could not be built.
    """

    spec: JunctionSpec
    outcome: JunctionOutcome
    reused: bool = False
    reuse_key: str | None = None

    @property
    def ok(self) -> bool:
        return self.outcome.ok

    @property
    def psi_length(self) -> float | None:
        """Ψ·l [W/K]."""
        return None if self.outcome.psi is None else self.outcome.psi * self.spec.length

    @property
    def psi_length_error_bound(self) -> float | None:
        """|error estimate of Ψ| · l [W/K]."""
        error = self.outcome.psi_error_estimate
        return None if error is None or not self.ok else error * self.spec.length

    @property
    def psi_difference(self) -> float | None:
        """Ψ − Ψ_reference [W/(m·K)]."""
        if self.outcome.psi is None or self.spec.psi_reference is None:
            return None
        return self.outcome.psi - self.spec.psi_reference

    @property
    def criterion_met(self) -> bool | None:
        """fRsi against the project's criterion; None without one or when not assessed."""
        return {"passes": True, "fails": False}.get(self.outcome.f_rsi_verdict)

    @property
    def moisture_passes(self) -> bool | None:
        moisture = self.outcome.moisture
        return None if not moisture else moisture.get("passes")

    @property
    def error(self) -> str | None:
        status = self.outcome.status
        return None if self.ok else status.removeprefix("failed: ")

    def to_dict(self) -> dict:
        """The row's entry in schedule.json."""
        spec, outcome = self.spec, self.outcome
        out = {"name": spec.name, "model": spec.model_text, "set": dict(spec.params),
               "between": None if spec.between is None else list(spec.between),
               "psi": outcome.psi, "psi_error_estimate": outcome.psi_error_estimate,
               "length": spec.length, "psi_length": self.psi_length,
               "psi_length_error_bound": self.psi_length_error_bound,
               "f_rsi": outcome.f_rsi, "criterion_met": self.criterion_met,
               "psi_reference": spec.psi_reference, "psi_difference": self.psi_difference,
               "folder": spec.folder if self.ok else None,
               "error": self.error, "reused": self.reused, "reuse_key": self.reuse_key}
        if outcome.moisture is not None:
            out["moisture_passes"] = self.moisture_passes
        out.update({k: v for k, v in outcome.to_dict().items() if k not in out})
        return out


@dataclass
class ScheduleResult:
    """A computed schedule.

    Attributes
    ----------
    project : Project
    rows : list of JunctionRow
        In the project file's order.
    warnings : list of str
    out_dir : Path or None
        Where it was written.
    """

    project: Project
    rows: list
    warnings: list = field(default_factory=list)
    out_dir: object = None

    @property
    def ok(self) -> bool:
        return all(r.ok for r in self.rows)

    @property
    def heat_transfer_coefficient(self) -> float | None:
        """H_TB = Σ Ψ_k·l_k [W/K] (ISO 14683, ISO 13789); None when a junction failed."""
        if not self.ok:
            return None
        return math.fsum(r.psi_length for r in self.rows)

    @property
    def error_bound(self) -> float | None:
        """Σ |error estimate of Ψ_k|·l_k [W/K]: a bound on the error of H_TB from
        the junctions' mesh-convergence estimates (the errors may not cancel,
        so they are added); None when a junction failed or has no estimate."""
        if not self.ok or any(r.psi_length_error_bound is None for r in self.rows):
            return None
        return math.fsum(r.psi_length_error_bound for r in self.rows)

    @property
    def reused(self) -> list[str]:
        return [r.spec.name for r in self.rows if r.reused]

    @property
    def computed(self) -> list[str]:
        """Junctions computed by this run (without error)."""
        return [r.spec.name for r in self.rows if not r.reused and r.ok]

    def share(self, row: JunctionRow) -> float | None:
        """Ψ·l of ``row`` over H_TB [-]."""
        total = self.heat_transfer_coefficient
        if total is None or total == 0 or row.psi_length is None:
            return None
        return row.psi_length / total

    def to_dict(self) -> dict:
        """schedule.json's content."""
        project = self.project
        out = {"format": SCHEDULE_FORMAT, "name": project.name,
               "dimension_system": project.dimension_system,
               "junctions": [r.to_dict() for r in self.rows]}
        total = self.heat_transfer_coefficient
        if total is not None:
            out["heat_transfer_coefficient"] = total
            out["heat_transfer_coefficient_error_bound"] = self.error_bound
        out.update({"f_rsi_min": project.f_rsi_min, "tolerance": project.tolerance,
                    "max_nodes": project.max_nodes,
                    "report": None if project.report is None else project.report.to_dict(),
                    "reused": self.reused, "computed": self.computed,
                    "failed": [r.spec.name for r in self.rows if not r.ok],
                    "warnings": list(self.warnings)})
        return out


def parameters_text(params: dict) -> str:
    return "; ".join(f"{k}={csv_cell(v)}" for k, v in params.items())


def csv_text(result: ScheduleResult) -> str:
    """schedule.csv: one row per junction, then the total H_TB (when every
    junction was computed). Floats in full, so the file is the same for the
    same input."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(CSV_COLUMNS)
    for r in result.rows:
        o = r.outcome
        writer.writerow([csv_cell(v) for v in (
            r.spec.name, r.spec.model_text, parameters_text(r.spec.params),
            "" if r.spec.between is None else "|".join(r.spec.between), r.spec.length,
            o.psi, o.psi_error_estimate, r.psi_length, r.psi_length_error_bound,
            result.share(r), o.theta_si_min, o.f_rsi, r.criterion_met, r.moisture_passes,
            r.spec.psi_reference, r.psi_difference, o.status, r.reused,
            r.spec.folder if r.ok else None)])
    total = result.heat_transfer_coefficient
    if total is not None:
        row = [""] * len(CSV_COLUMNS)
        row[0] = "H_TB = Σ Ψ·l"
        row[CSV_COLUMNS.index("psi_length [W/K]")] = csv_cell(total)
        row[CSV_COLUMNS.index("psi_length_error_bound [W/K]")] = csv_cell(result.error_bound)
        row[CSV_COLUMNS.index("status")] = "total"
        writer.writerow(row)
    return buffer.getvalue()


def row_of_failure(spec: JunctionSpec, message: str) -> JunctionRow:
    return JunctionRow(spec, JunctionOutcome(f"failed: {message}"))


__all__ = ("CSV_COLUMNS", "CSV_FILE", "JunctionRow", "ScheduleResult", "csv_text",
           "parameters_text", "row_of_failure")
