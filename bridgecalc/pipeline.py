"""The one path: model -> mesh -> solve -> results.

``run`` is what the command line calls, and what a Python user calls::

    model = load("detail.toml")
    result = run(model)
    result.psi
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from .model import rules as model_rules
from .readers import read
from .errors import ModelError
from .solve.linsolve import one_blas_thread
from .mesh import Mesh, MeshOptions, build_mesh
from .model import Model
from .results import (HeatFlowCase, SurfaceTemperatureCase, coupling_coefficient,
                      design_temperatures, heat_flow_balance, heat_flow_case,
                      linear_thermal_transmittance, surface_temperature_case)
from .solve import Condition, ConductionProblem
from .study import convergence as convergence_study
from .study.convergence import DEFAULT_MAX_NODES, DEFAULT_TOLERANCE

RESULTS_FORMAT = 1


def load(path, **params) -> Model:
    """Read a model file (``.toml``) or build a geometry script (``.py``).

    Parameters
    ----------
    path : str or Path
    **params
        Geometry script parameters overriding its defaults.
    """
    return read(path, **params)


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
    convergence : bridgecalc.study.convergence.ConvergenceStudy or None
    warnings : list of str
        What makes the numbers unfit to use as they stand (no surface facing
        the exterior, heat flows that do not balance); written to
        results.json, the summary and the report.
    """

    model: Model
    mesh: Mesh
    element: str
    heat_flow_case: HeatFlowCase
    surface_temperature_case: SurfaceTemperatureCase
    convergence: object = None
    warnings: list = dataclasses.field(default_factory=list)

    @property
    def psi(self):
        """Ψ [W/(m·K)], or None without flanking elements."""
        return self.heat_flow_case.psi

    @property
    def coupling_coefficient(self) -> float:
        """L2D [W/(m·K)]."""
        return self.heat_flow_case.coupling_coefficient

    @property
    def theta_si_min(self) -> float:
        """θsi,min [°C]."""
        return self.surface_temperature_case.theta_si_min

    @property
    def f_rsi(self) -> float:
        """fRsi [-]."""
        return self.surface_temperature_case.f_rsi

    def to_dict(self) -> dict:
        """The content of results.json (format 1)."""
        hf, st = self.heat_flow_case, self.surface_temperature_case
        theta_i, theta_e = design_temperatures(self.model)
        heat = {
            "heat_flow": dict(hf.heat_flow),
            "balance": hf.balance,
            "coupling_coefficient": hf.coupling_coefficient,
            "flanking": [{"name": f.name, "u_value": f.u_value, "length": f.length,
                          "ul": f.ul} for f in hf.flanking],
        }
        if hf.psi is not None:
            heat["psi"] = hf.psi
        heat["probes"] = dict(hf.probes)
        return {
            "format": RESULTS_FORMAT,
            "name": self.model.name,
            "length_unit": self.model.length_unit,
            "mesh": {"nodes": self.mesh.node_count, "triangles": self.mesh.triangle_count,
                     "element": self.element},
            "temperatures": {"interior": theta_i, "exterior": theta_e},
            "heat_flow_case": heat,
            "surface_temperature_case": {
                "theta_si_min": st.theta_si_min,
                "theta_si_min_at": list(st.theta_si_min_at),
                "f_rsi": st.f_rsi,
                "probes": dict(st.probes),
            },
            **({"convergence": self.convergence.to_dict()} if self.convergence is not None
               else {}),
            **({"warnings": list(self.warnings)} if self.warnings else {}),
        }


def _conditions(model: Model, for_surface_temperature: bool):
    temperatures = {e.name: e.temperature for e in model.environments}
    return [Condition(temperatures[s.environment],
                      s.resistance_for_surface_temperature if for_surface_temperature
                      else s.resistance)
            for s in model.surfaces]


def material_arrays(model: Model, mesh: Mesh):
    """λ [W/(m·K)] and heat generation q [W/m³] per triangle."""
    conductivity = np.array([model.materials[r.material].conductivity for r in model.regions])
    source = np.array([r.heat_source for r in model.regions], dtype=float)
    return conductivity[mesh.region], source[mesh.region]


def _solve_mesh(model: Model, mesh: Mesh, element: str, coarser=None):
    """Both calculation cases on one mesh, sharing its assembled operators.

    ``coarser``: the (heat, surface) temperature fields of ``mesh.coarser``,
    interpolated as starting guesses for iterative solvers (nested iteration).
    """
    conductivity, source = material_arrays(model, mesh)
    problem = ConductionProblem(mesh, conductivity, len(model.surfaces), source, element)
    guesses = (None, None)
    if coarser is not None and element == "P1" and mesh.prolongation is not None:
        guesses = tuple(mesh.prolongation @ f.temperature for f in coarser)
    heat_conditions = _conditions(model, False)
    heat_field = problem.solve(heat_conditions, guesses[0])
    surface_conditions = _conditions(model, True)
    surface_field = (heat_field if surface_conditions == heat_conditions
                     else problem.solve(surface_conditions, guesses[1]))
    return (heat_flow_case(model, heat_field), surface_temperature_case(model, surface_field),
            problem, heat_field, heat_conditions)


def run(model: Model, mesh_options: MeshOptions | None = None, element: str = "P1", *,
        tolerance: float = DEFAULT_TOLERANCE, max_nodes: int = DEFAULT_MAX_NODES,
        refinement: str | None = "adaptive") -> Result:
    """Mesh and solve a model until the answer no longer depends on the mesh.

    Parameters
    ----------
    model : Model
    mesh_options : MeshOptions, optional
        Options of the first mesh of the study.
    element : str
        ``"P1"`` (default) or ``"P2"``.
    tolerance : float
        Target estimated relative error of Ψ and L2D [-] (default 1e-3).
    max_nodes : int
        Node budget of the convergence study [-].
    refinement : str or None
        ``"adaptive"`` (default; P2 studies refine uniformly), ``"uniform"``,
        or None for one mesh without a study (``convergence`` is then None).

    Returns
    -------
    Result
        Fields and heat flows of the finest mesh; ``heat_flow_case.psi`` and
        ``coupling_coefficient`` are the study's best (extrapolated)
        estimates (see :mod:`bridgecalc.study.convergence`).
    """
    with one_blas_thread():
        return _run(model, mesh_options, element, tolerance, max_nodes, refinement)


def _run(model, mesh_options, element, tolerance, max_nodes, refinement) -> Result:
    model_rules.validate(model)
    unfaced = model_rules.unfaced_sides(model)   # these fail before meshing
    if "interior" in unfaced:
        raise ModelError(unfaced["interior"])
    model_rules.check_temperature_difference(model, *design_temperatures(model))
    warnings = [unfaced["exterior"]] if "exterior" in unfaced else []
    if refinement is None:
        mesh = build_mesh(model, mesh_options)
        heat, surface, *_ = _solve_mesh(model, mesh, element)
        return _checked(Result(model, mesh, element, heat, surface, warnings=warnings),
                        "exterior" in unfaced)
    level_flows, last = [], {}

    def solve_level(mesh):
        previous = last.get("fields") if last.get("mesh") is mesh.coarser else None
        solved = _solve_mesh(model, mesh, element, previous)
        level_flows.append(dict(solved[0].heat_flow))
        last.update(mesh=mesh, fields=(solved[0].field, solved[1].field))
        return solved

    heat, surface, mesh, study = convergence_study.converge(
        model, mesh_options, element, tolerance, max_nodes, refinement, solve_level)
    _use_best_estimates(model, heat, study, level_flows)
    return _checked(Result(model, mesh, element, heat, surface, study, warnings),
                    "exterior" in unfaced)


#: A balance |Σ Φ| / max |Φ| above this means the linear system was not solved
#: to any useful accuracy (a sound solve gives 1e-9 or better).
BALANCE_LIMIT = 1e-6


def _checked(result: Result, no_exterior: bool) -> Result:
    """Refuse a result that is not finite; warn of one whose heat flows do not balance.

    Inputs at the edge of floating point (a U-value of 1e308, a conductivity
    of 1e30 against 0.035) give an infinite Ψ, or a solution that does not
    conserve heat; neither must pass for a result. ``no_exterior``: no surface
    faces the exterior, so there is no flow to balance.
    """
    model = result.model
    hf, st = result.heat_flow_case, result.surface_temperature_case
    numbers = {"L2D": hf.coupling_coefficient, "θsi,min": st.theta_si_min, "fRsi": st.f_rsi,
               **{f"heat flow {name}": flow for name, flow in hf.heat_flow.items()},
               **({"Ψ": hf.psi} if hf.psi is not None else {}),
               **{f"U of {f.name}": f.u_value for f in hf.flanking}}
    bad = [f"{name} = {value}" for name, value in numbers.items() if not np.isfinite(value)]
    if bad:
        raise ModelError(f"{model.origin}: the result is not a finite number ({', '.join(bad)}); "
                         f"an input is out of any physical range: check conductivities, "
                         f"U-values, lengths, heat sources and temperatures")
    if not (hf.balance <= BALANCE_LIMIT) and not no_exterior:
        result.warnings.append(
            f"{model.origin}: the heat flows do not balance (|Σ Φ| / max |Φ| = "
            f"{hf.balance:.1e}, where a sound solution gives 1e-9 or less): the linear system "
            f"could not be solved accurately, as with conductivities many orders of magnitude "
            f"apart; check the materials")
    return result


def _use_best_estimates(model: Model, heat: HeatFlowCase, study, level_flows) -> None:
    """Report the study's extrapolated values, consistently.

    Richardson extrapolation over the last levels is Q∞ = Q₃ + w·(Q₃ − Q₂)
    with one weight w fitted on L2D. Applying that same w to every
    environment's heat flow keeps L2D = Φi/(θi − θe) and Ψ = L2D − Σ U·l exact,
    and, being linear, keeps the flows balanced; probes and surface
    temperatures stay those of the finest mesh.
    """
    l2d = [lv.coupling_coefficient for lv in study.levels]
    weight = 0.0
    if len(l2d) >= 2 and l2d[-1] != l2d[-2]:
        weight = (study.coupling_coefficient.value - l2d[-1]) / (l2d[-1] - l2d[-2])
    if weight and len(level_flows) >= 2:
        last, before = level_flows[-1], level_flows[-2]
        heat.heat_flow = {name: last[name] + weight * (last[name] - before[name])
                          for name in last}
    heat.balance = heat_flow_balance(heat.heat_flow, heat.field.generated)
    theta_i, theta_e = design_temperatures(model)
    interior = sum(heat.heat_flow[e.name] for e in model.environments if e.kind == "interior")
    heat.coupling_coefficient = coupling_coefficient(interior, theta_i, theta_e)
    if heat.psi is not None:
        heat.psi = linear_thermal_transmittance(heat.coupling_coefficient,
                                                [f.ul for f in heat.flanking])
    # the study records the very numbers reported (they differ by round-off only)
    study.coupling_coefficient = dataclasses.replace(study.coupling_coefficient,
                                                     value=heat.coupling_coefficient)
    if study.psi is not None and heat.psi is not None:
        study.psi = dataclasses.replace(study.psi, value=heat.psi)
