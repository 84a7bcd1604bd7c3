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

from .model import geometry
from .errors import ModelError
from .model import Flanking, Model
from .physics import iso6946

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


def flanking_u_value(model: Model, flanking: Flanking) -> float:
    """Thermal transmittance Uj of a flanking element [W/(m²·K)].

    The given ``u_value``, or, for a layer stack, U = 1 / (Rsi + ΣRj + Rse)
    by ISO 6946:2017 Formulae (7)–(9) (:func:`bridgecalc.physics.iso6946.u_value_plane_layers`)
    with thicknesses converted to metres. A layer of an air-layer material
    takes R from ISO 6946 Annex D for that layer's own thickness
    (:func:`bridgecalc.physics.iso6946.air_layer_resistance`). (Rsi, Rse) default to
    :data:`bridgecalc.physics.iso6946.DEFAULT_SURFACE_RESISTANCES`.

    Parameters
    ----------
    model : Model
        Supplies materials and the length unit.
    flanking : Flanking
        One of ``model.flanking`` (or any validated flanking element).
    """
    if flanking.u_value is not None:
        return float(flanking.u_value)
    scale = model.metres_per_unit
    resistances = []
    for layer in flanking.layers:
        mat = model.materials.get(layer.material)
        if mat is None:
            raise ModelError(f"{model.origin}: flanking {flanking.name!r}: material "
                             f"{layer.material!r} is not defined")
        d = float(layer.thickness) * scale
        if mat.air_layer is not None:
            resistances.append(iso6946.air_layer_resistance(
                d, mat.air_layer.direction, tuple(mat.air_layer.emissivities)))
        else:
            resistances.append(iso6946.thermal_resistance(d, float(mat.conductivity)))
    rsi, rse = flanking.surface_resistances or iso6946.DEFAULT_SURFACE_RESISTANCES
    return iso6946.u_value_plane_layers(resistances, float(rsi), float(rse))


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


def f_rsi_verdict(f_rsi: float, f_rsi_min: float | None, warnings=()) -> str | None:
    """The verdict on a criterion fRsi,min [-]: ``"meets"`` (fRsi ≥ fRsi,min),
    ``"fails"``, ``"not assessed"`` when the result carries warnings (its fRsi
    may be 1 by construction), or None without a criterion."""
    if f_rsi_min is None:
        return None
    if warnings:
        return "not assessed"
    return "meets" if f_rsi >= f_rsi_min else "fails"


def printed_position(model: Model, point) -> str:
    """A position [length_unit] as text, to a ten-thousandth of the model's size.

    The one rounding of positions for the summary, the report and the
    figures (:func:`bridgecalc.model.geometry.position_text`); results.json keeps
    every digit.
    """
    size = geometry.largest_dimension([r.vertices for r in model.regions])
    return geometry.position_text(point, size)


def heat_flow_balance(heat_flow: dict, generated: float = 0.0) -> float:
    """|Σ heat flow + generated| / max |heat flow| [-]: zero for a conserved field.

    Parameters
    ----------
    heat_flow : dict of str to float
        Heat flow into the model per environment [W/m].
    generated : float
        Heat generated inside the section [W/m].
    """
    values = np.array(list(heat_flow.values()), dtype=float)
    scale = max(np.abs(values).max(initial=0.0), abs(generated))
    return float(abs(values.sum() + generated) / scale) if scale > 0 else 0.0


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
    balance = heat_flow_balance(flows, temperature_field.generated)
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


# -- post-processing for figures and exports ----------------------------------


def heat_flux_density(model: Model, temperature_field) -> np.ndarray:
    """Heat-flux density q = −λ∇θ, averaged over each triangle [W/m²].

    Fourier's law. For P1 elements ∇θ is constant in a triangle, so the value
    is exact for the discrete field; for P2 it is the area mean of the
    triangle's linear gradient.

    Parameters
    ----------
    model : Model
    temperature_field : bridgecalc.solve.TemperatureField

    Returns
    -------
    ndarray, shape (T, 2)
        (qx, qy) per mesh triangle [W/m²], in mesh triangle order.
    """
    problem = temperature_field.problem
    mesh = problem.mesh
    conductivity = np.array([model.materials[r.material].conductivity
                             for r in model.regions])[mesh.region]
    basis = problem.basis
    gradient = basis.interpolate(temperature_field.temperature).grad    # (2, T, nqp) [K/m]
    weights = basis.dx                                                 # (T, nqp) [m²]
    mean = (gradient * weights[None]).sum(axis=2) / weights.sum(axis=1)[None]
    return -(conductivity[:, None] * mean.T)


@dataclass
class SurfaceProfile:
    """Temperatures along one connected run of interior surface.

    Attributes
    ----------
    points : ndarray, shape (K, 2)
        Positions along the run [length_unit], in walking order.
    arc_length : ndarray, shape (K,)
        Distance along the run from its first point [length_unit].
    temperature : ndarray, shape (K,)
        Surface temperature [°C] at each point.
    surface : ndarray of int, shape (K - 1,)
        Index into ``model.surfaces`` of each piece between two points.
    """

    points: np.ndarray
    arc_length: np.ndarray
    temperature: np.ndarray
    surface: np.ndarray


def interior_surface_profiles(model: Model, temperature_field) -> list[SurfaceProfile]:
    """Surface temperature along every connected run of interior surface.

    Outline edges facing an interior environment are chained end to end; a
    run ends where the outline turns adiabatic (a cut-off plane) or faces
    an exterior environment. Each run starts at the end nearer to the first
    point of the lowest-numbered surface it contains, so the order follows
    the model's surface paths. Values are the field's own degrees of
    freedom: edge ends, and edge midpoints for P2.

    Parameters
    ----------
    model : Model
    temperature_field : bridgecalc.solve.TemperatureField
        Usually the surface-temperature case's field.

    Returns
    -------
    list of SurfaceProfile
        Ordered by the lowest surface index in each run.
    """
    problem = temperature_field.problem
    mesh = problem.mesh
    interior = [j for j, s in enumerate(model.surfaces)
                if model.environment(s.environment).kind == "interior"]
    mask = np.isin(mesh.boundary_surface, interior)
    edge_ids = np.flatnonzero(mask)
    theta = temperature_field.temperature
    mid = problem.edge_midpoint_dofs if problem.element == "P2" else None
    scale = 1.0 / model.metres_per_unit

    touching: dict[int, list[int]] = {}
    for e in edge_ids:
        for node in mesh.boundary_edges[e]:
            touching.setdefault(int(node), []).append(int(e))
    unused = set(int(e) for e in edge_ids)
    profiles = []
    while unused:
        first_surface = min(int(mesh.boundary_surface[e]) for e in unused)
        start_point = np.asarray(model.surfaces[first_surface].path[0], float) / scale
        # the run containing any edge of that surface: walk it to one end first
        seed = min(e for e in unused if mesh.boundary_surface[e] == first_surface)
        run_edges = _connected_run(seed, unused, touching, mesh.boundary_edges)
        ends = [n for n in {int(n) for e in run_edges for n in mesh.boundary_edges[e]}
                if sum(1 for e in touching[n] if e in run_edges) == 1]
        if ends:
            start = min(ends, key=lambda n: (float(np.linalg.norm(mesh.nodes[n] - start_point)),
                                             n))
        else:                                          # a closed loop (a hole)
            start = int(min((int(n) for e in run_edges for n in mesh.boundary_edges[e]),
                            key=lambda n: (float(np.linalg.norm(mesh.nodes[n] - start_point)),
                                           n)))
        points, values, surfaces = [mesh.nodes[start]], [theta[start]], []
        node, remaining = start, set(run_edges)
        while True:
            nxt = sorted(e for e in touching[node] if e in remaining)
            if not nxt:
                break
            e = nxt[0]
            remaining.discard(e)
            a, b = (int(v) for v in mesh.boundary_edges[e])
            other = b if a == node else a
            if mid is not None:
                points.append(0.5 * (mesh.nodes[node] + mesh.nodes[other]))
                values.append(theta[mid[e]])
                surfaces.append(int(mesh.boundary_surface[e]))
            points.append(mesh.nodes[other])
            values.append(theta[other])
            surfaces.append(int(mesh.boundary_surface[e]))
            node = other
        unused -= set(run_edges)
        xy = np.asarray(points) * scale
        arc = np.concatenate([[0.0], np.cumsum(np.linalg.norm(np.diff(xy, axis=0), axis=1))])
        profiles.append(SurfaceProfile(xy, arc, np.asarray(values, dtype=float),
                                       np.asarray(surfaces, dtype=np.int64)))
    return profiles


def _connected_run(seed, candidates, touching, edges) -> set:
    """Edges of ``candidates`` connected to ``seed`` through shared nodes."""
    run, stack = {seed}, [seed]
    while stack:
        e = stack.pop()
        for node in edges[e]:
            for f in touching[int(node)]:
                if f in candidates and f not in run:
                    run.add(f)
                    stack.append(f)
    return run
