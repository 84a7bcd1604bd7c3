"""Guaranteed two-sided bounds of the coupling coefficients (Prager–Synge).

Which energy each L is
----------------------
Let environments c be at 1 °C and all others at 0 °C, g_j the temperature of
surface j's environment (1 or 0), u_c the exact field and Γ_R, Γ_D the
surfaces with a resistance R_j > 0 (h_j = 1/R_j) and those held (R_j = 0).
The field minimises the potential energy

    J(v) = ½ ∫ λ|∇v|² dΩ + ½ Σ_R h_j ∫_Γj (v − g_j)² dΓ,   v = g_j on Γ_D,

and Green's formula with the flux condition gives 2 J(u_c) = Σ_j g_j Q_j:
the heat flow into the model from the environments c, the cut energy E_c =
Σ_{i∈c, j∉c} L_ij [W/(m·K)] (ISO 10211:2017, superposition). Hence

* two environments, or two temperatures: L2D = E_S, S the environments at θi
  (the field is θe + (θi − θe) u_S);
* more: L_ij = (E_i + E_j − E_{ij}) / 2, so with E_c ∈ [E_c⁻, E_c⁺],
  L_ij ∈ [(E_i⁻ + E_j⁻ − E_{ij}⁺)/2, (E_i⁺ + E_j⁺ − E_{ij}⁻)/2];
* Ψ = L2D − Σ U·l, Σ U·l exact: the same absolute interval.

Upper bound: J over the Galerkin space is J at the discrete field, so
E_c ≤ 2 J(u_h), evaluated on the computed vector itself (it is an admissible
function whatever the solver's tolerance; held values are exact on the held
edges as long as no node is held by two environments at different
temperatures — then the exact E_c is infinite and no bound is given).

Lower bound (complementary energy; Prager & Synge, *Q. Appl. Math.* 5, 1947,
241–269, extended to the surface resistance term): for every flux σ with
∇·σ = 0 in Ω and σ·n = 0 on the adiabatic outline, and every admissible v,
Young's inequality applied to ∫ λ|∇v|² and to h (v − g)² gives

    2 J(v) ≥ 2 F(σ) − Q(σ),   F = Σ_{j: g_j = 1} ∫_Γj σ·n dΓ,
    Q = ∫ λ⁻¹|σ|² dΩ + Σ_R R_j ∫_Γj (σ·n)² dΓ,

with equality at σ = λ∇u_c. The gap of a pair (v, σ),

    2 J(v) − (2F − Q) = ∫ λ⁻¹|λ∇v − σ|² + Σ_R R ∫ (h(g − v) − σ·n)²,

is a sum of non-negative parts per triangle: they say where to refine.

Which pair
----------
Both sides come from quadratic elements on the study's mesh, whatever the
element of the study: the upper bound from the quadratic (P2) Galerkin field,
the lower one from the best quadratic stream function, σ = rot s
(:mod:`bridgecalc.solve.dual`). The gap then falls like the squared energy
error of P2 (h⁴ where the field is smooth), faster than the error of the
linear fields the study extrapolates, so the interval is about as narrow as
the true error of the extrapolated value (0.12 to 2.3 times it on the shipped
junctions), not tens of times wider (docs/performance.md). Where a hole of the section
carries a surface (a net heat flow around it would make s many-valued), σ
comes instead from the linear field by vertex-patch equilibration in RT0
(:mod:`bridgecalc.solve.equilibration`; Braess & Schöberl, *Math. Comp.*
77, 2008, 651–672; Ern & Vohralík, *SIAM J. Numer. Anal.* 53, 2015,
1058–1081; from memory), with F²/Q (the best multiple of σ) as the bound and
the linear field's energy above: a wider interval, as sound.

With a heat source the coupling coefficients are those of the source-free
model, but σ would have to balance the source; no bounds are given then.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..model.types import holds_temperature
from ..solve.cases import UnitCases, material_arrays, solve_set
from ..solve.dual import ComplementaryProblem, edge_resistances, holes_with_surfaces
from ..solve.equilibration import Equilibrator
from ..solve.problem import ConductionProblem
from .levels import pair_name, pairs_of


@dataclass(frozen=True)
class Interval:
    """[lower, upper] [W/(m·K)]."""

    lower: float
    upper: float

    @property
    def width(self) -> float:
        return self.upper - self.lower

    @property
    def middle(self) -> float:
        return 0.5 * (self.lower + self.upper)

    def shifted(self, by: float) -> "Interval":
        """The interval of the quantity minus ``by`` (Ψ = L − Σ U·l)."""
        return Interval(self.lower - by, self.upper - by)

    def farthest(self, value: float) -> float:
        """The largest possible error of ``value`` [W/(m·K)]: its distance to
        the farther end (the exact value lies in the interval)."""
        return max(abs(value - self.lower), abs(value - self.upper))

    def to_list(self) -> list:
        return [self.lower, self.upper]


@dataclass
class QuadraticFields:
    """The quadratic (P2) Galerkin fields of the upper bounds, kept for the
    surface-temperature check of the finest mesh.

    Attributes
    ----------
    problem : ConductionProblem
        P2, on the study's mesh.
    heat : CaseSet
        Unit cases with the surface resistances for heat flow.
    """

    problem: ConductionProblem
    heat: object


@dataclass
class CouplingBounds:
    """Bounds of one level.

    Attributes
    ----------
    energies : dict of tuple to Interval
        E_c per set of environment indices [W/(m·K)].
    coupling_coefficient : Interval or None
        Two temperatures: L2D.
    couplings : dict of (str, str) to Interval
        L_ij per pair.
    gaps : dict of tuple to ndarray
        Per set c, each triangle's share of the gap of E_c [W/(m·K)].
    quadratic : QuadraticFields or None
        The P2 fields of the upper bounds (None on the equilibration path).
    """

    energies: dict
    coupling_coefficient: Interval | None
    couplings: dict
    gaps: dict = field(default_factory=dict)
    quadratic: QuadraticFields | None = None

    def indicators(self, members_list) -> np.ndarray:
        """Sum of the triangles' gap shares of the given energies."""
        return sum(self.gaps[m] for m in members_list)


def unavailable_reason(cases: UnitCases) -> str | None:
    """Why no bounds can be given for these cases, or None."""
    problem = cases.problem
    if np.any(problem.source != 0):
        return "the model has a heat source"
    mesh = problem.mesh
    model = cases.model
    env_of = [s.environment for s in model.surfaces]
    held = [j for j, r in enumerate(cases.heat.resistances)
            if r is not None and holds_temperature(r)]
    owner: dict = {}
    for j in held:
        for node in np.unique(mesh.boundary_edges[mesh.boundary_surface == j]):
            other = owner.setdefault(int(node), env_of[j])
            if other != env_of[j]:
                return ("two held surfaces of different environments meet: the exact heat "
                        "flow there is infinite")
    if problem.element != "P1" and _holes_with_surfaces(cases) != 0:
        return ("a hole of the section has a surface on its boundary, and the flux "
                "equilibration of such a section is implemented for linear (P1) elements")
    return None


def _holes_with_surfaces(cases: UnitCases) -> int:
    mesh = cases.problem.mesh
    adiabatic = ~np.isfinite(edge_resistances(mesh, cases.heat.resistances))
    return holes_with_surfaces(mesh, adiabatic)


def coupling_bounds(cases: UnitCases, side, gaps: bool = False) -> CouplingBounds | None:
    """Guaranteed bounds of L2D and every L_ij on the cases' mesh.

    Parameters
    ----------
    cases : UnitCases
        Solved (P1 or P2).
    side : (θi, θe, interior indices) or None
        :func:`bridgecalc.study.levels.interior_side`.
    gaps : bool
        Also return each triangle's share of the gaps (for refinement).

    Returns
    -------
    CouplingBounds or None
        None when :func:`unavailable_reason` gives one.
    """
    if unavailable_reason(cases) is not None:
        return None
    model = cases.model
    n_env = len(model.environments)
    wanted = [(k,) for k in range(n_env)]
    index_pairs = pairs_of(model)
    if n_env > 2:
        wanted += [p for p in index_pairs]
    if side is not None:
        wanted.append(tuple(side[2]))
    wanted = list(dict.fromkeys(tuple(sorted(m)) for m in wanted))
    energies, shares, quadratic = energy_bounds(cases, wanted, gaps)
    couplings = {}
    for i, j in index_pairs:
        if n_env == 2:
            couplings[pair_name(model, i, j)] = energies[(i,)]
            continue
        a, b, ab = energies[(i,)], energies[(j,)], energies[(i, j)]
        couplings[pair_name(model, i, j)] = Interval(0.5 * (a.lower + b.lower - ab.upper),
                                                     0.5 * (a.upper + b.upper - ab.lower))
    headline = energies[tuple(sorted(side[2]))] if side is not None else None
    return CouplingBounds(energies, headline, couplings, shares, quadratic)


def quadratic_fields(cases: UnitCases) -> QuadraticFields:
    """The P2 unit cases (heat-flow resistances) on the cases' mesh: the
    cases themselves when they are P2, else one more assembly and solve."""
    if cases.problem.element == "P2":
        return QuadraticFields(cases.problem, cases.heat)
    model, mesh = cases.model, cases.problem.mesh
    conductivity, _ = material_arrays(model, mesh)
    problem = ConductionProblem(mesh, conductivity, len(model.surfaces), None, "P2")
    return QuadraticFields(problem, solve_set(model, problem, cases.heat.resistances))


def energy_bounds(cases: UnitCases, wanted, gaps: bool = False):
    """[E_c⁻, E_c⁺] for each set c of environment indices in ``wanted``.

    Returns
    -------
    dict of tuple to Interval, dict of tuple to ndarray, QuadraticFields or None
        The intervals [W/(m·K)]; with ``gaps``, the triangles' gap shares; the
        quadratic fields of the upper bounds (None on the equilibration path).
    """
    model = cases.model
    names = [e.name for e in model.environments]
    n_env, n_surf = len(names), len(model.surfaces)
    faces = np.zeros((n_env, n_surf))
    for j, s in enumerate(model.surfaces):
        faces[names.index(s.environment), j] = 1.0
    kinds = cases.heat.resistances
    if cases.problem.element == "P1" and _holes_with_surfaces(cases) != 0:
        out, shares = _equilibrated_bounds(cases, wanted, faces, gaps)
        return out, shares, None
    quadratic = quadratic_fields(cases)
    dual = ComplementaryProblem(quadratic.problem, kinds)
    rows = np.array([np.asarray(faces[list(members)].sum(axis=0)) for members in wanted])
    lowers, streams = dual.lower_bounds(rows)
    out, shares = {}, {}
    for k, members in enumerate(wanted):
        g = rows[k]
        u = sum(quadratic.heat.unit[m].temperature for m in members)
        upper = _twice_potential(quadratic.problem, u, g, kinds)
        out[members] = _interval(float(lowers[k]), upper)
        if gaps:
            shares[members] = dual.gap_shares(u, streams[:, k], g)
    return out, shares, quadratic


def _interval(lower: float, upper: float) -> Interval:
    lower, upper = float(lower), float(upper)
    if math.isclose(lower, upper, rel_tol=1e-13):    # exact on this mesh (1D): round-off
        lower = min(lower, upper)
    return Interval(lower, upper)


def _equilibrated_bounds(cases: UnitCases, wanted, faces, gaps: bool):
    """The RT0 path: linear field above, equilibrated flux's F²/Q below."""
    problem = cases.problem
    heat = cases.heat
    n_surf = faces.shape[1]
    kinds = heat.resistances
    theta = np.column_stack([u.temperature for u in heat.unit])
    eq = Equilibrator(problem.mesh, problem.conductivity, kinds)
    flux = eq.fluxes(theta, faces)
    out, shares = {}, {}
    for members in wanted:
        g = faces[list(members)].sum(axis=0)                # θ_j per surface
        u = sum(heat.unit[k].temperature for k in members)
        upper = _twice_potential(problem, u, g, kinds)
        f = flux[:, list(members)].sum(axis=1)
        surfaces = [j for j in range(n_surf) if g[j] == 1.0]
        inflow, q = eq.complementary(f, surfaces)
        lower = inflow * inflow / q if q > 0 else 0.0
        out[members] = _interval(float(lower), float(upper))
        if gaps:
            theta_c = theta[:, list(members)].sum(axis=1)
            shares[members] = eq.gap(f, theta_c, g)
    return out, shares


def _twice_potential(problem, u, g, resistances) -> float:
    """2 J(u) = uᵀ K u + Σ_R h_j (u − g_j)ᵀ M_j (u − g_j) [W/(m·K)]."""
    value = float(u @ (problem.stiffness @ u))
    for j, r in enumerate(resistances):
        if r is None or not math.isfinite(r) or holds_temperature(r):
            continue                                 # adiabatic, or held: u = g_j there
        m, load = problem.surface_mass[j], problem.surface_load[j]
        value += (float(u @ (m @ u)) - 2 * g[j] * float(load @ u)
                  + g[j] ** 2 * float(load.sum())) / r
    return value
