"""Temperature fields -> the quantities a junction is reported by.

L2D, Ψ, θsi,min and fRsi, computed from the heat flows and temperatures of the
two calculation cases of ISO 10211 (heat flow with the surface resistances for
heat flow; surface temperature with those for surface temperature, ISO 13788).
No assembly and no meshing here.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .errors import ModelError
from .model import Model, flanking_u_value

CAUTION = (
    "Results support, and do not replace, the judgement of a qualified practitioner. "
    "Inputs (conductivities, surface resistances, criteria) must follow the codes and "
    "standards in force where the building stands; a temperature factor criterion "
    "against mould or condensation is set by local rules, not by this tool.")


def design_temperatures(model: Model) -> tuple[float, float]:
    """The interior and exterior temperatures θi, θe [°C] of a two-temperature model.

    This version computes junctions between exactly two temperatures: every
    interior environment at one, every exterior environment at another.

    Raises
    ------
    ModelError
        If the environments hold more than two temperatures, or θi = θe.
    """
    interior = {e.temperature for e in model.environments if e.kind == "interior"}
    exterior = {e.temperature for e in model.environments if e.kind == "exterior"}
    if len(interior) != 1 or len(exterior) != 1:
        listing = ", ".join(f"{e.name} ({e.kind}) {e.temperature:g} °C" for e in model.environments)
        raise ModelError(
            f"{model.origin}: environments: this version computes two-temperature junctions "
            f"only (all interior environments at one temperature, all exterior at another); "
            f"got {listing}")
    theta_i, theta_e = interior.pop(), exterior.pop()
    if theta_i == theta_e:
        raise ModelError(f"{model.origin}: environments: interior and exterior are both at "
                         f"{theta_i:g} °C; L2D and fRsi need a temperature difference")
    return theta_i, theta_e


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


def temperature_factor(theta_si_min: float, theta_i: float, theta_e: float) -> float:
    """fRsi = (θsi,min − θe) / (θi − θe) [-], ISO 10211:2017, 11.2 / ISO 13788."""
    return (theta_si_min - theta_e) / (theta_i - theta_e)


@dataclass
class FlankingResult:
    """One flanking element's share of the 1D heat flow.

    Attributes
    ----------
    name : str
    u_value : float
        [W/(m²·K)]
    length : float
        [length_unit]
    ul : float
        U·l [W/(m·K)].
    """

    name: str
    u_value: float
    length: float
    ul: float


@dataclass
class HeatFlowCase:
    """Results with the surface resistances for heat flow.

    Attributes
    ----------
    heat_flow : dict of str to float
        Heat flow into the model per environment [W/m].
    balance : float
        |Σ heat flow + generated| / max |heat flow| [-].
    coupling_coefficient : float
        L2D [W/(m·K)].
    flanking : list of FlankingResult
    psi : float or None
        Ψ [W/(m·K)], when flanking elements are given.
    probes : dict of str to float
        [°C]
    """

    heat_flow: dict[str, float]
    balance: float
    coupling_coefficient: float
    flanking: list[FlankingResult]
    psi: float | None
    probes: dict[str, float]
    field: object = field(repr=False, default=None)


@dataclass
class SurfaceTemperatureCase:
    """Results with the surface resistances for surface temperature.

    Attributes
    ----------
    theta_si_min : float
        Lowest interior surface temperature [°C].
    theta_si_min_at : tuple of float
        Where [length_unit].
    f_rsi : float
        Temperature factor at the interior surface [-].
    probes : dict of str to float
        [°C]
    """

    theta_si_min: float
    theta_si_min_at: tuple[float, float]
    f_rsi: float
    probes: dict[str, float]
    field: object = field(repr=False, default=None)


def heat_flow_by_environment(model: Model, temperature_field) -> dict[str, float]:
    """Sum the per-surface heat flows of a field by environment [W/m]."""
    flows = {e.name: 0.0 for e in model.environments}
    for surface, flow in zip(model.surfaces, temperature_field.heat_flow):
        flows[surface.environment] += float(flow)
    return flows


def probe_temperatures(model: Model, temperature_field) -> dict[str, float]:
    """Temperature at each probe [°C]."""
    if not model.probes:
        return {}
    points = np.array([p.at for p in model.probes], dtype=float) * model.metres_per_unit
    values = temperature_field.at(points)
    return {p.name: float(v) for p, v in zip(model.probes, values)}


def heat_flow_case(model: Model, temperature_field) -> HeatFlowCase:
    """Heat flows, balance, L2D and Ψ from the heat-flow case's field."""
    theta_i, theta_e = design_temperatures(model)
    flows = heat_flow_by_environment(model, temperature_field)
    values = np.array(list(flows.values()))
    scale_flow = max(np.abs(values).max(), abs(temperature_field.generated))
    balance = (abs(values.sum() + temperature_field.generated) / scale_flow
               if scale_flow > 0 else 0.0)
    interior = sum(flows[e.name] for e in model.environments if e.kind == "interior")
    l2d = coupling_coefficient(interior, theta_i, theta_e)
    flanking = []
    for f in model.flanking:
        u = flanking_u_value(model, f)
        flanking.append(FlankingResult(f.name, u, f.length, u * f.length * model.metres_per_unit))
    psi = (linear_thermal_transmittance(l2d, [f.ul for f in flanking])
           if flanking else None)
    return HeatFlowCase(flows, float(balance), l2d, flanking, psi,
                        probe_temperatures(model, temperature_field), temperature_field)


def surface_temperature_case(model: Model, temperature_field) -> SurfaceTemperatureCase:
    """θsi,min over every surface facing an interior environment, and fRsi."""
    theta_i, theta_e = design_temperatures(model)
    interior = [j for j, s in enumerate(model.surfaces)
                if model.environment(s.environment).kind == "interior"]
    if not interior:
        raise ModelError(f"{model.origin}: surfaces: no surface faces an interior "
                         f"environment, so there is no interior surface temperature")
    theta_min, where = temperature_field.minimum_on(interior)
    at = tuple(float(c) for c in where / model.metres_per_unit)
    return SurfaceTemperatureCase(theta_min, at, temperature_factor(theta_min, theta_i, theta_e),
                                  probe_temperatures(model, temperature_field), temperature_field)
