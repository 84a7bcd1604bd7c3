"""The heat-flow case: heat flows per environment, the coupling coefficients
L_ij of every pair of environments, and Ψ = L − Σ U·l where flanking elements
name a pair (ISO 10211:2017, 10.4; field-notes: "More than two environments").

A model whose environments hold two temperatures also keeps its headline
L2D = Φi / (θi − θe) and Ψ = L2D − Σ U·l, as format 1 defines them.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field

import numpy as np

from ..model import Model
from ..solve.cases import UnitCases
from ..study.levels import (ConvergenceStudy, given_heat_flows, heat_flow_balance,
                                 interior_side, pair_name, pairs_of)
from .flanking import FlankingResult, flanking_by_coupling, flanking_results


def coupling_coefficient(interior_heat_flow: float, theta_i: float, theta_e: float) -> float:
    """Thermal coupling coefficient L2D = Φ / (θi − θe) [W/(m·K)].

    ISO 10211:2017, 10.4.2 (from memory of clause numbering).

    Parameters
    ----------
    interior_heat_flow : float
        Heat flow Φ into the model from the interior side [W/m].
    theta_i, theta_e : float
        Interior and exterior temperatures [°C].
    """
    return interior_heat_flow / (theta_i - theta_e)


def linear_thermal_transmittance(l2d: float, u_lengths) -> float:
    """Ψ = L2D − Σ Uj·lj [W/(m·K)], ISO 10211:2017, Formula (2) (from memory).

    Parameters
    ----------
    l2d : float
        Thermal coupling coefficient [W/(m·K)].
    u_lengths : iterable of float
        Products Uj·lj [W/(m·K)], lj in metres.
    """
    return l2d - math.fsum(u_lengths)


@dataclass
class Coupling:
    """The coupling coefficient of one pair of environments.

    Attributes
    ----------
    between : (str, str)
        The two environments, in model order.
    value : float
        L_ij [W/(m·K)]: the heat flow from i to j per kelvin of θi − θj.
    flanking : list of FlankingResult
        The flanking elements that name this pair.
    psi : float or None
        Ψ_ij = L_ij − Σ U·l [W/(m·K)] when flanking elements name the pair.
    """

    between: tuple[str, str]
    value: float
    flanking: list = field(default_factory=list)
    psi: float | None = None

    def to_dict(self) -> dict:
        out = {"between": list(self.between), "value": self.value}
        if self.psi is not None:
            out["psi"] = self.psi
            out["flanking"] = [f.to_dict() for f in self.flanking]
        return out


@dataclass
class HeatFlowCase:
    """Results with the surface resistances for heat flow.

    Attributes
    ----------
    heat_flow : dict of str to float
        Heat flow into the model per environment at the model's temperatures [W/m].
    balance : float
        |Σ heat flow + generated| / max |heat flow| [-].
    coupling_coefficient : float or None
        L2D [W/(m·K)] of a two-temperature model, else None.
    flanking : list of FlankingResult
    psi : float or None
        Ψ [W/(m·K)] of a two-temperature model with flanking elements.
    probes : dict of str to float
        [°C]
    coupling_coefficients : list of Coupling
        Every pair of environments, in model order.
    field : TemperatureField
        The field at the model's temperatures.
    """

    heat_flow: dict[str, float]
    balance: float
    coupling_coefficient: float | None
    flanking: list[FlankingResult]
    psi: float | None
    probes: dict[str, float]
    field: object = field(repr=False, default=None)
    coupling_coefficients: list = dataclasses.field(default_factory=list)

    def coupling(self, a: str, b: str) -> Coupling:
        """The coupling of environments ``a`` and ``b`` (either order)."""
        for c in self.coupling_coefficients:
            if set(c.between) == {a, b}:
                return c
        raise KeyError(f"no coupling between {a!r} and {b!r}")

    def to_dict(self) -> dict:
        """results.json's ``heat_flow_case``."""
        out = {"heat_flow": dict(self.heat_flow), "balance": self.balance}
        if self.coupling_coefficient is not None:
            out["coupling_coefficient"] = self.coupling_coefficient
        out["flanking"] = [f.to_dict() for f in self.flanking]
        if self.psi is not None:
            out["psi"] = self.psi
        out["probes"] = dict(self.probes)
        out["coupling_coefficients"] = [c.to_dict() for c in self.coupling_coefficients]
        return out


def probe_temperatures(model: Model, temperature_field) -> dict[str, float]:
    """Temperature at each probe [°C]."""
    if not model.probes:
        return {}
    points = np.array([p.at for p in model.probes], dtype=float) * model.metres_per_unit
    values = temperature_field.at(points)
    return {p.name: float(v) for p, v in zip(model.probes, values)}


def best_heat_flows(cases: UnitCases, study: ConvergenceStudy | None) -> np.ndarray:
    """Heat flow per environment at the model's temperatures [W/m], with the
    study's extrapolation applied.

    Without a study: the finest mesh's flows. A two-temperature model: the
    finest flows plus w times their last change, w being the extrapolation
    weight fitted on L2D (Q∞ = Q₃ + w·(Q₃ − Q₂)); this keeps L2D = Φi/(θi − θe)
    and Ψ = L2D − Σ U·l exact and, being linear, the flows balanced. More
    temperatures: the finest flows plus Σ_i (L_ij,∞ − L_ij)(θj − θi) from the
    extrapolated coupling coefficients, which sums to zero, so the balance
    stays that of the finest solution.
    """
    flows = given_heat_flows(cases)
    if study is None or not study.levels:
        return flows
    model = cases.model
    names = [e.name for e in model.environments]
    if study.coupling_coefficient is not None:
        levels = study.levels
        values = [lv.coupling_coefficient for lv in levels]
        weight = 0.0
        if len(values) >= 2 and values[-1] != values[-2]:
            weight = (study.coupling_coefficient.value - values[-1]) / (values[-1] - values[-2])
        if weight and len(levels) >= 2:
            before = np.array([levels[-2].heat_flows[n] for n in names])
            flows = flows + weight * (flows - before)
        return flows
    theta = cases.temperatures
    finest = cases.heat.couplings
    for i, j in pairs_of(model):
        change = study.couplings[pair_name(model, i, j)].value - finest[i, j]
        flows[j] += change * (theta[j] - theta[i])
        flows[i] += change * (theta[i] - theta[j])
    return flows


def heat_flow_case(cases: UnitCases, study: ConvergenceStudy | None = None) -> HeatFlowCase:
    """Heat flows, balance, every L_ij, Ψ, and the two-temperature L2D and Ψ.

    Parameters
    ----------
    cases : UnitCases
        The finest mesh's unit cases.
    study : ConvergenceStudy, optional
        Its extrapolated values are reported when given, and the study is
        made to record the very numbers reported (they differ by round-off).
    """
    model = cases.model
    names = [e.name for e in model.environments]
    flanking = flanking_results(model)
    groups = flanking_by_coupling(model, flanking)
    flows = best_heat_flows(cases, study)
    source = cases.heat.source
    generated = source.generated if source is not None else 0.0
    heat_flow = {n: float(q) for n, q in zip(names, flows)}
    finest = cases.heat.couplings
    couplings = []
    for i, j in pairs_of(model):
        pair = pair_name(model, i, j)
        value = float(study.couplings[pair].value if study is not None and study.couplings
                      else finest[i, j])
        members = groups.get(pair, [])
        psi = linear_thermal_transmittance(value, [f.ul for f in members]) if members else None
        couplings.append(Coupling(pair, value, members, psi))
    l2d = psi = None
    side = interior_side(model)
    if side is not None:
        theta_i, theta_e, inside = side
        l2d = coupling_coefficient(float(flows[inside].sum()), theta_i, theta_e)
        if None in groups:
            psi = linear_thermal_transmittance(l2d, [f.ul for f in groups[None]])
        if study is not None and study.coupling_coefficient is not None:
            study.coupling_coefficient = _with_value(study.coupling_coefficient, l2d)
            if study.psi is not None and psi is not None:
                study.psi = _with_value(study.psi, psi)
    field_ = cases.heat.field(cases.temperatures)
    return HeatFlowCase(heat_flow, heat_flow_balance(flows, generated), l2d, flanking, psi,
                        probe_temperatures(model, field_), field_, couplings)


def _with_value(extrapolation, value):
    return dataclasses.replace(extrapolation, value=value)
