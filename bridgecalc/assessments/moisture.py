"""A junction against a climate: ISO 13788's monthly surface-humidity check
(model format 1, addition D).

For each month: pe = φe·psat(θe); pi from the humidity class (pe + 1.10·Δp)
or a fixed φi; the lowest acceptable surface temperature θsi,min with
psat(θsi,min) = pi/φsi,crit; and fRsi,min = (θsi,min − θe)/(θi − θe). The
month of the largest fRsi,min is the critical month, and the junction passes
when its fRsi reaches that value (ISO 13788 clause 5, from memory; formulas in
:mod:`bridgecalc.physics.iso13788`).

With more than two environments there is no single fRsi: each month the
environments take that month's temperatures (the exterior the climate's,
the interior θi, an unheated space its model temperature or the climate's
column named after it), the coldest surface of the interior environment
follows from the temperature weighting factors (ISO 10211, by superposing
the unit solutions), and the month passes when it is no colder than θsi,min.
The junction's ``f_rsi`` is then its equivalent in each month,
(θsi − θe)/(θi − θe), and the top-level one that of the critical month.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..physics import iso13788
from ..results import lowest_surface_temperature, temperature_factor
from .criteria import FAILS, NOT_ASSESSED, PASSES


@dataclass(frozen=True)
class MonthRequirement:
    """One month of the check. Pressures [Pa], temperatures [°C], factors [-].

    ``f_rsi_required`` is None when θe ≥ θi (the month asks nothing);
    ``surface_temperature`` is the junction's lowest interior surface
    temperature in the month's conditions and ``f_rsi`` its temperature
    factor then (None where θe ≥ θi, or without a result to read them from).
    """

    month: int
    exterior_temperature: float
    exterior_relative_humidity: float
    exterior_vapour_pressure: float
    interior_vapour_pressure: float
    interior_temperature: float
    minimum_surface_temperature: float
    f_rsi_required: float | None
    surface_temperature: float | None = None
    f_rsi: float | None = None

    def to_dict(self) -> dict:
        out = {"month": self.month, "exterior_temperature": self.exterior_temperature,
               "exterior_relative_humidity": self.exterior_relative_humidity,
               "exterior_vapour_pressure": self.exterior_vapour_pressure,
               "interior_vapour_pressure": self.interior_vapour_pressure,
               "interior_temperature": self.interior_temperature,
               "minimum_surface_temperature": self.minimum_surface_temperature}
        if self.f_rsi_required is not None:
            out["f_rsi_required"] = self.f_rsi_required
        if self.surface_temperature is not None:
            out["surface_temperature"] = self.surface_temperature
        if self.f_rsi is not None:
            out["f_rsi"] = self.f_rsi
        return out


@dataclass(frozen=True)
class MoistureAssessment:
    """results.json's ``moisture`` (addition D).

    Attributes
    ----------
    criterion : str
        ``"mould"`` or ``"condensation"``.
    critical_surface_relative_humidity : float
        φsi,crit [-].
    months : tuple of MonthRequirement
    critical_month : int or None
        The month of the largest fRsi,min; None when no month sets one.
    f_rsi_required : float or None
        That largest fRsi,min [-].
    f_rsi : float or None
        The junction's fRsi [-] (with more than two environments, its
        equivalent in the critical month).
    verdict : str
        ``"passes"``, ``"fails"`` or ``"not assessed"`` (a result with warnings).
    humidity : str
        The interior humidity in words (class or fixed φi), for the outputs.
    climate_source : str
        Where the climate came from.
    """

    criterion: str
    critical_surface_relative_humidity: float
    months: tuple
    critical_month: int | None
    f_rsi_required: float | None
    f_rsi: float | None
    verdict: str
    humidity: str = ""
    climate_source: str = "inline"

    @property
    def passes(self) -> bool:
        return self.verdict == PASSES

    @property
    def critical(self) -> MonthRequirement | None:
        """The critical month's requirement."""
        return next((m for m in self.months if m.month == self.critical_month), None)

    def to_dict(self) -> dict:
        return {"criterion": self.criterion,
                "critical_surface_relative_humidity": self.critical_surface_relative_humidity,
                "interior_humidity": self.humidity, "climate": self.climate_source,
                "months": [m.to_dict() for m in self.months],
                "critical_month": self.critical_month, "f_rsi_required": self.f_rsi_required,
                "f_rsi": self.f_rsi, "passes": self.passes, "verdict": self.verdict}


def monthly_requirements(moisture, interior_temperature: float) -> list[MonthRequirement]:
    """Each month's pressures, θsi,min and fRsi,min for a MoistureCheck
    (:class:`bridgecalc.model.moisture.MoistureCheck`) at θi [°C], in month
    order; ISO 13788 clause 5.2 (from memory)."""
    phi_crit = moisture.critical_surface_relative_humidity
    theta_i = (moisture.interior_temperature if moisture.interior_temperature is not None
               else interior_temperature)
    out = []
    for m in sorted(moisture.climate, key=lambda m: m.month):
        pe = iso13788.exterior_vapour_pressure(m.temperature, m.relative_humidity)
        pi = iso13788.interior_vapour_pressure(
            m.temperature, m.relative_humidity, moisture.interior_humidity_class,
            moisture.interior_relative_humidity, theta_i)
        theta_min = iso13788.minimum_surface_temperature(pi, phi_crit)
        out.append(MonthRequirement(
            int(m.month), m.temperature, m.relative_humidity, pe, pi, theta_i, theta_min,
            iso13788.minimum_temperature_factor(theta_min, theta_i, m.temperature)))
    return out


def critical_month(months) -> MonthRequirement | None:
    """The month with the largest fRsi,min (the first such, in month order), or
    None when no month sets a requirement."""
    asking = [m for m in months if m.f_rsi_required is not None]
    return max(asking, key=lambda m: m.f_rsi_required) if asking else None


def humidity_text(moisture) -> str:
    """The interior humidity of a MoistureCheck in words."""
    if moisture.interior_humidity_class is not None:
        return (f"humidity class {int(moisture.interior_humidity_class)} "
                f"(ISO 13788 Annex A, with the 1.10 safety factor)")
    return f"fixed interior relative humidity {moisture.interior_relative_humidity:g}"


def assess_moisture(result) -> MoistureAssessment | None:
    """The monthly check of ``result`` (a :class:`bridgecalc.results.Result`)
    against its model's ``[moisture]``, or None without one."""
    model = result.model
    moisture = model.moisture
    if moisture is None:
        return None
    st = result.surface_temperature_case
    environment = model.environment(st.theta_si_min_environment)
    months = monthly_requirements(moisture, environment.temperature)
    if st.f_rsi is not None:
        months = [_with_surface(m, st.f_rsi) for m in months]
    else:
        months = [_with_field(m, result, environment.name, moisture) for m in months]
    critical = critical_month(months)
    asking = [m for m in months if m.f_rsi_required is not None]
    if result.warnings or any(m.surface_temperature is None for m in asking):
        verdict = NOT_ASSESSED
    else:
        verdict = PASSES if all(m.f_rsi >= m.f_rsi_required for m in asking) else FAILS
    f_rsi = st.f_rsi if st.f_rsi is not None else (critical.f_rsi if critical else None)
    return MoistureAssessment(
        moisture.criterion, moisture.critical_surface_relative_humidity, tuple(months),
        critical.month if critical else None, critical.f_rsi_required if critical else None,
        f_rsi, verdict, humidity_text(moisture), moisture.climate_source)


def _with_surface(month: MonthRequirement, f_rsi: float) -> MonthRequirement:
    """A month of a two-temperature junction: its surface at θe + fRsi·(θi − θe)."""
    if month.f_rsi_required is None:
        return month
    theta_e, theta_i = month.exterior_temperature, month.interior_temperature
    return _replace(month, surface_temperature=theta_e + f_rsi * (theta_i - theta_e),
                    f_rsi=f_rsi)


def _with_field(month: MonthRequirement, result, interior: str, moisture) -> MonthRequirement:
    """A month of a junction between more than two environments: the lowest
    surface temperature of ``interior`` with every environment at the month's
    temperature, from the unit solutions (or, without them, the weighting
    factors at θsi,min)."""
    if month.f_rsi_required is None:
        return month
    model = result.model
    columns = dict(next(m for m in moisture.climate if m.month == month.month).environments)
    temperatures = {}
    for env in model.environments:
        if env.name == interior:
            temperatures[env.name] = month.interior_temperature
        elif env.kind == "exterior":
            temperatures[env.name] = month.exterior_temperature
        else:
            temperatures[env.name] = columns.get(env.name, env.temperature)
    if result.cases is not None:
        surface = lowest_surface_temperature(result.cases, temperatures, interior)
    else:
        g = result.surface_temperature_case.weighting_factors
        surface = sum(g[name] * theta for name, theta in temperatures.items())
    return _replace(month, surface_temperature=surface,
                    f_rsi=temperature_factor(surface, month.interior_temperature,
                                             month.exterior_temperature))


def _replace(month: MonthRequirement, **changes) -> MonthRequirement:
    import dataclasses
    return dataclasses.replace(month, **changes)
