"""Everything computed for one model, as results.json gives it (format 1)."""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from ..errors import ModelError
from ..mesh import Mesh
from ..model import Model
from ..model.rules import two_temperature_sides
from ..solve.cases import UnitCases
from ..study.levels import ConvergenceStudy
from .couplings import HeatFlowCase, heat_flow_case
from .surface import SurfaceTemperatureCase, surface_temperature_case

RESULTS_FORMAT = 1
#: A balance |Σ Φ| / max |Φ| above this means the linear system was not solved
#: to any useful accuracy (a sound solve gives 1e-9 or better).
BALANCE_LIMIT = 1e-6


@dataclass
class Result:
    """Everything computed for one model.

    Attributes
    ----------
    model : Model
    mesh : Mesh
    element : str
    heat_flow_case : HeatFlowCase
    surface_temperature_case : SurfaceTemperatureCase
    convergence : ConvergenceStudy or None
    warnings : list of str
        What makes the numbers unfit to use as they stand (no surface facing
        an environment, heat flows that do not balance); written to
        results.json, the summary and the report.
    cases : UnitCases or None
        The finest mesh's unit solutions (one per environment and resistance set).
    assessment : object or None
        What :mod:`bridgecalc.assessments` made of the result (verdicts on
        criteria, the ISO 13788 check); it adds its keys to results.json
        through its ``add_to(results)``.
    audit : list of dict
        The audit's findings (:func:`bridgecalc.audit.audit`), each with
        ``rule``, ``at`` [length_unit], ``message``, ``action`` and ``text``,
        the line it has in ``warnings``.
    """

    model: Model
    mesh: Mesh
    element: str
    heat_flow_case: HeatFlowCase
    surface_temperature_case: SurfaceTemperatureCase
    convergence: ConvergenceStudy | None = None
    warnings: list = dataclasses.field(default_factory=list)
    cases: UnitCases | None = dataclasses.field(default=None, repr=False)
    assessment: object = None
    audit: list = dataclasses.field(default_factory=list)

    @property
    def psi(self):
        """Ψ [W/(m·K)] of a two-temperature model, or None without flanking elements."""
        return self.heat_flow_case.psi

    @property
    def coupling_coefficient(self) -> float | None:
        """L2D [W/(m·K)] of a two-temperature model."""
        return self.heat_flow_case.coupling_coefficient

    @property
    def coupling_coefficients(self) -> list:
        """L_ij of every pair of environments (:class:`bridgecalc.results.Coupling`)."""
        return self.heat_flow_case.coupling_coefficients

    @property
    def theta_si_min(self) -> float:
        """θsi,min [°C]."""
        return self.surface_temperature_case.theta_si_min

    @property
    def f_rsi(self) -> float | None:
        """fRsi [-] of a two-temperature model."""
        return self.surface_temperature_case.f_rsi

    @property
    def weighting_factors(self) -> dict:
        """g_j at θsi,min [-]."""
        return self.surface_temperature_case.weighting_factors

    def to_dict(self) -> dict:
        """The content of results.json (format 1)."""
        model = self.model
        out = {
            "format": RESULTS_FORMAT,
            "name": model.name,
            "length_unit": model.length_unit,
            "dimension_system": model.dimension_system,
            "mesh": {"nodes": self.mesh.node_count, "triangles": self.mesh.triangle_count,
                     "element": self.element},
        }
        sides = two_temperature_sides(model)
        if sides is not None:
            out["temperatures"] = {"interior": sides[0], "exterior": sides[1]}
        out["environments"] = [{"name": e.name, "temperature": e.temperature, "kind": e.kind}
                               for e in model.environments]
        out["heat_flow_case"] = self.heat_flow_case.to_dict()
        out["surface_temperature_case"] = self.surface_temperature_case.to_dict()
        if self.convergence is not None:
            out["convergence"] = self.convergence.to_dict()
        if getattr(model, "drawing", None) is not None:     # addition C: which unit was used
            out["drawing"] = {"file": model.drawing.file, "unit": model.drawing.unit,
                              "unit_from": model.drawing.unit_from,
                              "snap": model.drawing.snap,
                              "warnings": list(model.drawing.warnings)}
        if self.warnings:
            out["warnings"] = list(self.warnings)
        if self.assessment is not None:
            self.assessment.add_to(out)
        if self.audit:
            out["audit"] = [dict(finding) for finding in self.audit]
        return out


def build_result(cases: UnitCases, study: ConvergenceStudy | None, element: str,
                 warnings=(), audit=()) -> Result:
    """The Result of the finest mesh's cases and the study, checked.

    Raises
    ------
    ModelError
        When a reported number is not finite.
    """
    heat = heat_flow_case(cases, study)
    surface = surface_temperature_case(cases)
    result = Result(cases.model, cases.problem.mesh, element, heat, surface, study,
                    list(warnings), cases, audit=list(audit))
    return checked(result)


def checked(result: Result) -> Result:
    """Refuse a result that is not finite; warn of one whose heat flows do not balance.

    Inputs at the edge of floating point (a U-value of 1e308, a conductivity
    of 1e30 against 0.035) give an infinite Ψ, or a solution that does not
    conserve heat; neither must pass for a result. When the surfaces face
    one temperature only, no heat flows and there is nothing to balance.
    """
    model = result.model
    hf, st = result.heat_flow_case, result.surface_temperature_case
    numbers = {"L2D": hf.coupling_coefficient, "θsi,min": st.theta_si_min, "fRsi": st.f_rsi,
               **{f"heat flow {name}": flow for name, flow in hf.heat_flow.items()},
               **{f"L({c.between[0]}, {c.between[1]})": c.value
                  for c in hf.coupling_coefficients},
               **({"Ψ": hf.psi} if hf.psi is not None else {}),
               **{f"U of {f.name}": f.u_value for f in hf.flanking}}
    bad = [f"{name} = {value}" for name, value in numbers.items()
           if value is not None and not np.isfinite(value)]
    if bad:
        raise ModelError(f"{model.origin}: the result is not a finite number ({', '.join(bad)}); "
                         f"an input is out of any physical range: check conductivities, "
                         f"U-values, lengths, heat sources and temperatures")
    faced = {model.environment(s.environment).temperature for s in model.surfaces}
    if not (hf.balance <= BALANCE_LIMIT) and len(faced) > 1:
        result.warnings.append(
            f"{model.origin}: the heat flows do not balance (|Σ Φ| / max |Φ| = "
            f"{hf.balance:.1e}, where a sound solution gives 1e-9 or less): the linear system "
            f"could not be solved accurately, as with conductivities many orders of magnitude "
            f"apart; check the materials")
    return result
