"""A model's calculation cases on one mesh: one unit solution per environment.

Without heat sources the temperature field is linear in the environment
temperatures, so it is a sum of unit solutions: u_k solves the model with
environment k at 1 °C and every other at 0 °C, and

    θ(x) = Σ_k θ_k u_k(x) + w(x),

w being the solution with every environment at 0 °C and the heat sources on
(ISO 10211:2017, the coupling coefficients and weighting factors rest on this
superposition). The constant field 1 solves the case with every environment
at 1 °C, so Σ_k u_k = 1 and N − 1 solves give all N unit solutions; the last
environment's is derived. Its flows are the negated sum of the others', since
the constant field carries no heat.

Two resistance sets are solved, each with one matrix and one factorisation or
multigrid hierarchy for all its cases: the resistances for heat flow (L_ij,
Ψ) and those for surface temperature (θsi,min, fRsi, g; ISO 13788). When the
two sets are equal, one serves both.

The coupling coefficient L_ij is the heat flow into environment j per kelvin
in environment i's unit case (field-notes: L_ij = L_ji by the symmetry of the
operator): ``flow_matrix[i, j]`` is the flow *into the model* from j in unit
case i, so L_ij = −flow_matrix[i, j] for i ≠ j.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..model import Model
from .problem import Condition, ConductionProblem, TemperatureField


@dataclass
class CaseSet:
    """The unit solutions of one resistance set.

    Attributes
    ----------
    resistances : tuple of float
        Rj per surface [m²·K/W].
    unit : list of TemperatureField
        u_k per environment, in model order [°C per °C].
    source : TemperatureField or None
        w, every environment at 0 °C with the heat sources; None without any.
    flow_matrix : ndarray, shape (N, N)
        [k, j]: heat flow into the model from environment j in unit case k
        [W/(m·K)].
    source_flows : ndarray, shape (N,)
        Heat flow into the model from each environment in the source case [W/m].
    """

    resistances: tuple
    unit: list
    source: TemperatureField | None
    flow_matrix: np.ndarray
    source_flows: np.ndarray

    @property
    def couplings(self) -> np.ndarray:
        """L_ij [W/(m·K)], shape (N, N), symmetric, zero diagonal: the mean of
        the two unit solutions' values (they agree to solver round-off)."""
        q = -self.flow_matrix
        matrix = 0.5 * (q + q.T)
        np.fill_diagonal(matrix, 0.0)
        return matrix

    def field(self, temperatures) -> TemperatureField:
        """The field with environment k at ``temperatures[k]`` [°C], sources on."""
        return self._superposed(temperatures, self.source)

    def combination(self, members) -> TemperatureField:
        """u_c = Σ_{k in members} u_k: the environments ``members`` (indices)
        at 1 °C and the others at 0 °C, without sources."""
        weights = np.zeros(len(self.unit))
        weights[list(members)] = 1.0
        return self._superposed(weights, None)

    def _superposed(self, temperatures, source) -> TemperatureField:
        """Σ_k θ_k u_k (+ w) with its heat flows."""
        theta = np.asarray(temperatures, dtype=float)
        values = sum(t * u.temperature for t, u in zip(theta, self.unit))
        flows = sum(t * u.heat_flow for t, u in zip(theta, self.unit))
        generated = 0.0
        if source is not None:
            values, flows = values + source.temperature, flows + source.heat_flow
            generated = source.generated
        return TemperatureField(self.unit[0].problem, np.asarray(values, dtype=float),
                                np.asarray(flows, dtype=float), generated)


@dataclass
class UnitCases:
    """Every calculation case of a model on one mesh.

    Attributes
    ----------
    model : Model
    problem : ConductionProblem
    heat : CaseSet
        With the surface resistances for heat flow.
    surface : CaseSet
        With those for surface temperature (the same object when equal).
    """

    model: Model
    problem: ConductionProblem
    heat: CaseSet
    surface: CaseSet

    @property
    def environments(self) -> list[str]:
        """Environment names, in model order: the index of every matrix here."""
        return [e.name for e in self.model.environments]

    @property
    def temperatures(self) -> np.ndarray:
        """θ_k of each environment [°C]."""
        return np.array([e.temperature for e in self.model.environments], dtype=float)


def material_arrays(model: Model, mesh):
    """λ [W/(m·K)] and heat generation q [W/m³] per triangle."""
    conductivity = np.array([model.materials[r.material].conductivity for r in model.regions])
    source = np.array([r.heat_source for r in model.regions], dtype=float)
    return conductivity[mesh.region], source[mesh.region]


def solve_cases(model: Model, mesh, element: str = "P1",
                coarser: UnitCases | None = None) -> UnitCases:
    """Assemble the model on ``mesh`` and solve its unit cases.

    Parameters
    ----------
    model : Model
        Validated.
    mesh : Mesh
    element : str
        ``"P1"`` or ``"P2"``.
    coarser : UnitCases, optional
        The cases of ``mesh.coarser``, whose fields, interpolated, start the
        iterative solvers (nested iteration).
    """
    conductivity, source = material_arrays(model, mesh)
    problem = ConductionProblem(mesh, conductivity, len(model.surfaces), source, element)
    heat_r = tuple(s.resistance for s in model.surfaces)
    surface_r = tuple(s.resistance_for_surface_temperature for s in model.surfaces)
    guesses = _guesses(mesh, element, coarser)
    heat = solve_set(model, problem, heat_r, guesses and guesses[0])
    surface = heat if surface_r == heat_r else solve_set(model, problem, surface_r,
                                                          guesses and guesses[1])
    return UnitCases(model, problem, heat, surface)


def _guesses(mesh, element, coarser):
    """Per resistance set, the coarser mesh's fields interpolated (or None)."""
    if coarser is None or element != "P1" or mesh.prolongation is None \
            or coarser.problem.mesh is not mesh.coarser:
        return None

    def interpolated(case_set):
        fields = list(case_set.unit) + ([case_set.source] if case_set.source else [])
        return [mesh.prolongation @ f.temperature for f in fields]

    return interpolated(coarser.heat), interpolated(coarser.surface)


def solve_set(model: Model, problem: ConductionProblem, resistances,
               guesses=None) -> CaseSet:
    """The unit cases (and the source case) of one resistance set.

    Environments no surface faces have u = 0 without a solve; the last
    environment that surfaces face is derived from Σ u = 1.
    """
    names = [e.name for e in model.environments]
    n_env, n_surf = len(names), len(model.surfaces)
    faces = np.zeros((n_env, n_surf))
    for j, s in enumerate(model.surfaces):
        faces[names.index(s.environment), j] = 1.0
    faced = [k for k in range(n_env) if faces[k].any()]
    derived = faced[-1]
    solved = [k for k in faced if k != derived]
    has_source = bool(np.any(problem.source != 0))
    rows = [faces[k] for k in solved] + ([np.zeros(n_surf)] if has_source else [])
    sources = [0.0] * len(solved) + ([1.0] if has_source else [])
    fields = []
    if rows:
        initial = None
        if guesses is not None:
            initial = np.column_stack([guesses[k] for k in solved]
                                      + ([guesses[n_env]] if has_source else []))
        fields = problem.solve_cases(resistances, np.array(rows), sources, initial)
    unit: list = [None] * n_env
    for k, f in zip(solved, fields):
        unit[k] = f
    zero = np.zeros(problem.n_dofs)
    for k in range(n_env):
        if k not in faced:
            unit[k] = TemperatureField(problem, zero.copy(), np.zeros(n_surf), 0.0)
    others = [unit[k] for k in solved]
    unit[derived] = TemperatureField(
        problem, 1.0 - sum((f.temperature for f in others), zero),
        -sum((f.heat_flow for f in others), np.zeros(n_surf)), 0.0)
    source_field = fields[-1] if has_source else None
    flow_matrix = np.array([[faces[j] @ unit[k].heat_flow for j in range(n_env)]
                            for k in range(n_env)])
    source_flows = (np.array([faces[j] @ source_field.heat_flow for j in range(n_env)])
                    if has_source else np.zeros(n_env))
    return CaseSet(tuple(resistances), unit, source_field, flow_matrix, source_flows)


def conditions(model: Model, surface_temperature: bool = False,
               temperatures: dict | None = None) -> list:
    """The boundary condition of every surface: its environment's temperature
    [°C] (the model's, or ``temperatures`` by environment name) and its
    resistance for heat flow (or, with ``surface_temperature``, for surface
    temperature) [m²·K/W]."""
    if temperatures is None:
        temperatures = {e.name: e.temperature for e in model.environments}
    return [Condition(temperatures[s.environment],
                      s.resistance_for_surface_temperature if surface_temperature
                      else s.resistance)
            for s in model.surfaces]
