"""The surface-temperature case: θsi,min, where it is and on which
environment's surface, the temperature weighting factors g there, and fRsi.

Computed with the surface resistances for surface temperature (ISO 13788).
θ at any point is Σ g_j θ_j (+ the heat sources' share) with Σ g_j = 1, g_j
being environment j's unit solution there (ISO 10211:2017, temperature
weighting factors). With two temperatures, fRsi = (θsi,min − θe)/(θi − θe);
with more, the weighting factors take its place.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import numpy as np

from ..errors import ModelError
from ..model import Model, geometry
from ..model.rules import two_temperature_sides
from ..solve.cases import UnitCases
from ..study.levels import interior_surfaces
from .couplings import probe_temperatures

CAUTION = (
    "Results support, and do not replace, the judgement of a qualified practitioner. "
    "Inputs (conductivities, surface resistances, criteria) must follow the codes and "
    "standards in force where the building stands; a temperature factor criterion "
    "against mould or condensation is set by local rules, not by this tool.")


def design_temperatures(model: Model) -> tuple[float, float]:
    """The interior and exterior temperatures θi, θe [°C] of a two-temperature model.

    See :func:`bridgecalc.model.rules.two_temperature_sides`.

    Raises
    ------
    ModelError
        If the environments hold more than two temperatures (L2D and fRsi are
        then replaced by the coupling coefficients and weighting factors).
    """
    sides = two_temperature_sides(model)
    if sides is None:
        listing = ", ".join(f"{e.name} ({e.kind}) {e.temperature:g} °C"
                            for e in model.environments)
        raise ModelError(f"{model.origin}: environments: L2D and fRsi are defined for "
                         f"two temperatures; this model has more ({listing}): use its "
                         f"coupling coefficients and temperature weighting factors")
    return sides


def temperature_factor(theta_si_min: float, theta_i: float, theta_e: float) -> float:
    """fRsi = (θsi,min − θe) / (θi − θe) [-], ISO 10211:2017, 11.2 / ISO 13788."""
    return (theta_si_min - theta_e) / (theta_i - theta_e)


def printed_position(model: Model, point) -> str:
    """A position [length_unit] as text, to a ten-thousandth of the model's size.

    The one rounding of positions for the summary, the report and the
    figures (:func:`bridgecalc.model.geometry.position_text`); results.json keeps
    every digit.
    """
    size = geometry.largest_dimension([r.vertices for r in model.regions])
    return geometry.position_text(point, size)


@dataclass
class SurfaceTemperatureCase:
    """Results with the surface resistances for surface temperature.

    Attributes
    ----------
    theta_si_min : float
        Lowest temperature on surfaces facing an interior environment [°C].
    theta_si_min_at : tuple of float
        Where [length_unit].
    f_rsi : float or None
        Temperature factor at that point [-]; None with more than two
        temperatures.
    probes : dict of str to float
        [°C]
    field : TemperatureField
        The field at the model's temperatures.
    theta_si_min_environment : str
        The interior environment whose surface holds θsi,min.
    weighting_factors : dict of str to float
        g_j at θsi,min [-], Σ g_j = 1.
    """

    theta_si_min: float
    theta_si_min_at: tuple[float, float]
    f_rsi: float | None
    probes: dict[str, float]
    field: object = field(repr=False, default=None)
    theta_si_min_environment: str = ""
    weighting_factors: dict = dataclasses.field(default_factory=dict)

    def to_dict(self) -> dict:
        """results.json's ``surface_temperature_case``."""
        out = {"theta_si_min": self.theta_si_min, "theta_si_min_at": list(self.theta_si_min_at)}
        if self.f_rsi is not None:
            out["f_rsi"] = self.f_rsi
        out["probes"] = dict(self.probes)
        out["theta_si_min_environment"] = self.theta_si_min_environment
        out["temperature_weighting_factors"] = dict(self.weighting_factors)
        return out


def surface_temperature_case(cases: UnitCases) -> SurfaceTemperatureCase:
    """θsi,min over every surface facing an interior environment, g there, and fRsi."""
    model = cases.model
    interior = interior_surfaces(model)
    if not interior:
        raise ModelError(f"{model.origin}: surfaces: no surface faces an interior "
                         f"environment, so there is no interior surface temperature")
    field_ = cases.surface.field(cases.temperatures)
    theta_min, where = field_.minimum_on(interior)
    edge, t = _edge_at(field_, interior, where)
    environment = model.surfaces[int(field_.problem.mesh.boundary_surface[edge])].environment
    g = {e.name: u.along_edge(edge, t) for e, u in zip(model.environments, cases.surface.unit)}
    sides = two_temperature_sides(model)
    f_rsi = None
    if sides is not None:
        own = model.environment(environment).temperature
        other = sides[1] if own == sides[0] else sides[0]
        f_rsi = temperature_factor(theta_min, own, other)
    at = tuple(float(c) for c in where / model.metres_per_unit)
    return SurfaceTemperatureCase(theta_min, at, f_rsi, probe_temperatures(model, field_),
                                  field_, environment, g)


def lowest_surface_temperature(cases: UnitCases, temperatures: dict,
                               environment: str | None = None) -> float:
    """The lowest temperature [°C] on the surfaces searched for θsi,min (facing
    ``environment`` only, when given) with the environments at ``temperatures``
    [°C, by name] instead of the model's, by superposing the unit solutions of
    the surface-temperature case (ISO 10211; the heat sources' share included)."""
    model = cases.model
    surfaces = [j for j in interior_surfaces(model)
                if environment is None or model.surfaces[j].environment == environment]
    values = np.array([temperatures[e.name] for e in model.environments], float)
    return float(cases.surface.field(values).minimum_on(surfaces)[0])


def _edge_at(field_, surfaces, where) -> tuple[int, float]:
    """The outline edge of ``surfaces`` nearest to ``where`` [m] (an index into
    ``mesh.boundary_edges``) and the parameter t ∈ [0, 1] of the point along it."""
    mesh = field_.problem.mesh
    candidates = np.flatnonzero(np.isin(mesh.boundary_surface, list(surfaces)))
    edges = mesh.boundary_edges[candidates]
    a, b = mesh.nodes[edges[:, 0]], mesh.nodes[edges[:, 1]]
    d = b - a
    t = np.clip(((where - a) * d).sum(axis=1) / np.maximum((d * d).sum(axis=1), 1e-300), 0, 1)
    distance = np.linalg.norm(a + t[:, None] * d - where, axis=1)
    k = int(np.argmin(distance))
    return int(candidates[k]), float(t[k])
