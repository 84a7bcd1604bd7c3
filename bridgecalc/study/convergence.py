"""Mesh-convergence study: nested meshes, every coupling coefficient
extrapolated with an error estimate, and the ISO 10211 doubling criterion.

The sequence
------------
The first mesh comes from gmsh (:func:`bridgecalc.mesh.build_mesh`); every
later one refines the previous one inside this package
(:func:`bridgecalc.mesh.refine`), so the meshes are nested and material and
surface tags stay exact. ``method="adaptive"`` (default, P1) refines the
triangles that carry half of the residual error estimate of the worst-resolved
quantity (:mod:`bridgecalc.study.indicators`); ``method="uniform"`` splits
every triangle into four (halves every edge). Each level solves the model's
unit cases (:mod:`bridgecalc.solve.cases`).

What is extrapolated
--------------------
On nested meshes without heat sources the discrete heat flow out of any set
of environments c at 1 °C into the others at 0 °C, the energy E_c, decreases
monotonically to its exact value (it is twice a potential energy; Galerkin
orthogonality), so its sequence is one-sided and regular and suits
Richardson extrapolation (:mod:`bridgecalc.study.extrapolation`). A single
coupling coefficient L_ij between more than two environments need not be
monotone: where its own last three values fit the model regularly it is
extrapolated by itself, and otherwise from the three energies it is made of,
L_ij = (E_i + E_j − E_ij)/2, with their error estimates added
(:func:`bridgecalc.study.extrapolation.coupling_from_energies`): a sound but
wider estimate. On the test suite's three-environment junction both covered
the finite-volume reference at every level from the fourth, the first by 3 to
10 times its true error (2026-12-02). A model
whose environments hold two temperatures keeps its headline L2D (the heat
flow from the interior side over θi − θe): it is the energy of the interior
side, extrapolated directly. θsi,min is extrapolated too and reported, with
its estimate, but it does not decide when the study stops.

The study stops when every controlled quantity is within the tolerance: each
L_ij relative to max(|L_ij|, COUPLING_FLOOR·max L), each Ψ (headline or of a
pair with flanking elements) relative to max(|Ψ|, PSI_FLOOR·L); and the ISO
doubling check holds. Ψ differs from its L by the exact constant Σ U·l, so
both have the same absolute error. A Ψ near zero (a well-insulated junction)
is resolved to 1e-4·L at the default tolerance instead of chasing an
unreachable relative error; both floors are the tool's own rule, not taken
from a standard. Adaptive refinement aims at the quantity with the largest
ratio of estimated error to tolerance.

ISO 10211 doubling criterion
----------------------------
ISO 10211 (5.3.2, from memory of the clause number) asks that doubling the
number of subdivisions changes the heat flow by less than 1 %. Reported is
the relative change of the heat flow between the final mesh and the last
earlier level with at most a quarter of its triangles (its subdivisions at
least doubled everywhere on average; for uniform refinement exactly the
previous level), or the first (coarsest) mesh when no level is that coarse:
the flow from the interior side of a two-temperature model; with more
temperatures, the largest change of the flow into any temperature level,
relative to the largest of those flows. On nested meshes this change is
larger than the one a further doubling of the final mesh would bring, so the
check errs on the safe side.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import ModelError
from ..mesh import Mesh, MeshOptions, build_mesh, refine
from ..model import Model
from ..model.rules import two_temperature_sides
from ..solve import Condition
from ..solve.cases import UnitCases, solve_cases
from . import indicators
from .extrapolation import (OSCILLATION_FACTOR, ORDER_RANGE, ROUND_OFF, SAFETY_FACTOR,
                            UNCONFIRMED_FACTOR, Extrapolation, coupling_from_energies,
                            extrapolate)

__all__ = ["DEFAULT_MAX_NODES", "DEFAULT_TOLERANCE", "ELEMENT_RATE", "FIRST_MESH",
           "ISO_DOUBLING_LIMIT", "ConvergenceStudy", "Extrapolation", "Level", "StudyOutcome",
           "check_settings", "converge", "extrapolate", "OSCILLATION_FACTOR", "ORDER_RANGE",
           "ROUND_OFF", "SAFETY_FACTOR", "UNCONFIRMED_FACTOR"]

#: Default target relative error of Ψ and L2D [-] (0.1 %).
DEFAULT_TOLERANCE = 1e-3
#: Default node budget of the study [-].
DEFAULT_MAX_NODES = 250_000
#: ISO 10211 doubling criterion on the heat flow [-].
ISO_DOUBLING_LIMIT = 0.01
#: Ψ tolerance floor, as a share of L [-]. At 0.01 the demo slab edge
#: (Ψ ≈ −0.005 W/(m·K)) refined to 58k nodes for a 5e-6 W/(m·K) error; at
#: 0.1 it stops at 9k nodes with 4e-5 W/(m·K) and the same Ψ to 5 digits.
PSI_FLOOR = 0.1
#: L_ij tolerance floor, as a share of the largest coupling coefficient of the
#: model [-]: a coupling a hundred times smaller than the largest is resolved
#: to tolerance × 1 % of the largest (the tool's own rule).
COUPLING_FLOOR = 0.01
#: Levels without a plausible order after which the study gives up.
STALL_LEVELS = 3
METHODS = ("adaptive", "uniform")
#: Relative changes below this multiple of the heat-flow imbalance |Σ Φ| / max |Φ|
#: of the last levels are round-off too [-]. The imbalance is the round-off of
#: the solution itself (it is zero in exact arithmetic): 1e-11 to 1.5e-10 on
#: the shipped junctions (the iterative solver's tolerance), far below any
#: change between their levels, but needles one element across a foil
#: (0.01 mm aluminium, elements 10⁴ times longer than thick) raise it and the
#: round-off of L2D alike to about 1e-7 (measured: L2D's error against ISO 6946
#: within 5 % of the imbalance on every level).
BALANCE_NOISE = 10.0
#: ... up to this relative change at most [-]: an imbalance above 1e-6 means a
#: solve gone wrong (the pipeline warns of it), not round-off to be discounted.
NOISE_LIMIT = 1e-5
#: Asymptotic rate r per node count of the energy error, Q − Q∞ ∝ N^(−r): the
#: squared energy-norm error, h^(2k) for degree k, i.e. N^(−k) (e.g. Braess,
#: *Finite Elements*, ch. II; reached by adaptive meshes even at corners).
ELEMENT_RATE = {"P1": 1.0, "P2": 2.0}
#: First mesh of a study when the caller gives none: coarse, with one size per
#: part (at least one element across each) and no grading towards corners or
#: interior surfaces, because adaptive refinement then puts the nodes where
#: the error is, and gmsh's graded size fields are the costly part of
#: meshing. On the balcony, steel column and window jamb this reached Ψ within
#: 1e-4 of a 1e-5-tolerance reference in 20–45 % less time than a first mesh
#: graded towards corners (2026-12-02).
#: A strip at least 20 times longer than thick, and at most a quarter as thick
#: as the elements beside it (a liner, foil, membrane or sheet), gets one
#: element across and its neighbours' size along (``thin_aspect``,
#: :mod:`bridgecalc.mesh`): a 1 mm steel liner over a 2 m wall then starts
#: from 468 nodes instead of 12 566 and converges at 40 000, where it did not
#: within 250 000; a 0.2 mm one starts from 638 instead of 59 481 (2026-12-02;
#: docs/performance.md, "Thin layers"). In the shipped junctions the glazing
#: of the window jamb, the bitumen layer of the parapet, the floor layers of
#: the ground floor and the aluminium plate and web of ISO 10211 case 2
#: qualify: their Ψ (L2D) is as close to tight-tolerance references as before
#: (closer for the parapet, window jamb and case 2), in 1.1–2.1× less time.
FIRST_MESH = MeshOptions(cells_across_model=15.0, cells_across_part=1.0, corner_ratio=1.0,
                         surface_ratio=1.0, growth=0.5, thin_aspect=20.0)

#: A pair of environments, by name, in model order.
Pair = tuple[str, str]


def pairs_of(model: Model) -> list[tuple[int, int]]:
    """Index pairs (i, j), i < j, of every two environments, in model order."""
    n = len(model.environments)
    return [(i, j) for i in range(n) for j in range(i + 1, n)]


def pair_name(model: Model, i: int, j: int) -> Pair:
    """The names of environments i and j."""
    return model.environments[i].name, model.environments[j].name


def interior_side(model: Model) -> tuple[float, float, list[int]] | None:
    """(θi, θe, indices of the environments at θi) of a model whose
    environments hold two temperatures (:func:`bridgecalc.model.rules.two_temperature_sides`),
    else None."""
    sides = two_temperature_sides(model)
    if sides is None:
        return None
    theta_i, theta_e = sides
    return theta_i, theta_e, [k for k, e in enumerate(model.environments)
                              if e.temperature == theta_i]


def cut_energy(couplings: np.ndarray, members) -> float:
    """E_c = Σ_{i∈c, j∉c} L_ij [W/(m·K)]: the heat flow out of the environments
    ``members`` (indices) at 1 °C into the others at 0 °C."""
    inside = np.zeros(len(couplings), dtype=bool)
    inside[list(members)] = True
    return float(couplings[np.ix_(inside, ~inside)].sum())


def heat_flow_balance(heat_flow, generated: float = 0.0) -> float:
    """|Σ heat flow + generated| / max |heat flow| [-]: zero for a conserved field.

    Parameters
    ----------
    heat_flow : iterable of float
        Heat flow into the model per environment [W/m].
    generated : float
        Heat generated inside the section [W/m].
    """
    values = np.array(list(heat_flow), dtype=float)
    scale = max(np.abs(values).max(initial=0.0), abs(generated))
    return float(abs(values.sum() + generated) / scale) if scale > 0 else 0.0


def given_heat_flows(cases: UnitCases) -> np.ndarray:
    """Heat flow into the model from each environment at the model's
    temperatures [W/m] (heat-flow case, sources on)."""
    return cases.temperatures @ cases.heat.flow_matrix + cases.heat.source_flows


def interior_surfaces(model: Model) -> list[int]:
    """Indices of the surfaces facing an interior environment."""
    return [j for j, s in enumerate(model.surfaces)
            if model.environment(s.environment).kind == "interior"]


@dataclass
class Level:
    """One mesh of the study.

    Attributes
    ----------
    nodes, triangles : int
    heat_flow : float or None
        Two temperatures: heat flow into the model from the interior side [W/m].
    coupling_coefficient : float or None
        Two temperatures: L2D [W/(m·K)].
    psi : float or None
        Ψ [W/(m·K)] of the two-temperature L2D, with flanking elements.
    theta_si_min : float
        [°C], surface-temperature case.
    coupling_coefficients : dict of (str, str) to float
        L_ij of every pair of environments [W/(m·K)].
    heat_flows : dict of str to float
        Heat flow into the model per environment at the model's temperatures [W/m].
    """

    nodes: int
    triangles: int
    heat_flow: float | None
    coupling_coefficient: float | None
    psi: float | None
    theta_si_min: float
    coupling_coefficients: dict = field(default_factory=dict)
    heat_flows: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        return {"nodes": self.nodes, "triangles": self.triangles, "heat_flow": self.heat_flow,
                "coupling_coefficient": self.coupling_coefficient, "psi": self.psi,
                "theta_si_min": self.theta_si_min,
                "coupling_coefficients": [{"between": list(pair), "value": value}
                                          for pair, value in self.coupling_coefficients.items()]}


def _finite(x):
    return None if x is None or not math.isfinite(x) else x


@dataclass
class ConvergenceStudy:
    """Everything the study found; ``to_dict`` is results.json's ``convergence``.

    Attributes
    ----------
    psi, coupling_coefficient : Extrapolation or None
        The two-temperature Ψ and L2D (None with more temperatures, or Ψ
        without flanking elements).
    couplings : dict of (str, str) to Extrapolation
        L_ij of every pair [W/(m·K)].
    pair_psi : dict of (str, str) to Extrapolation
        Ψ_ij of the pairs that flanking elements name [W/(m·K)].
    theta_si_min : Extrapolation or None
        θsi,min [°C]; reported, not a stopping criterion.
    """

    method: str
    element: str
    tolerance: float
    max_nodes: int
    levels: list[Level] = field(default_factory=list)
    psi: Extrapolation | None = None
    coupling_coefficient: Extrapolation | None = None
    couplings: dict = field(default_factory=dict)
    pair_psi: dict = field(default_factory=dict)
    theta_si_min: Extrapolation | None = None
    iso_doubling_change: float | None = None
    criterion_met: bool = False
    stop_reason: str = ""

    @property
    def psi_extrapolated(self):
        return None if self.psi is None else self.psi.value

    @property
    def psi_error_estimate(self):
        return None if self.psi is None else self.psi.error_estimate

    def _coupling_scale(self) -> float:
        values = [abs(x.value) for x in self.couplings.values()]
        if self.coupling_coefficient is not None:
            values.append(abs(self.coupling_coefficient.value))
        return COUPLING_FLOOR * max(values, default=0.0)

    def controlled(self) -> list[tuple[str, object, Extrapolation, float]]:
        """The quantities the study converges: (key, what, extrapolation, scale).

        ``key`` is ``"coupling_coefficient"`` or ``"psi"`` for the
        two-temperature L2D and Ψ, else ``("coupling", pair)`` or
        ``("psi", pair)``; ``scale`` is what its error is relative to. A pair
        of a model with exactly two environments is the L2D itself and is
        not listed twice.
        """
        out = []
        cc = self.coupling_coefficient
        if cc is not None:
            out.append(("coupling_coefficient", None, cc, abs(cc.value)))
            if self.psi is not None:
                out.append(("psi", None, self.psi,
                            max(abs(self.psi.value), PSI_FLOOR * abs(cc.value))))
        if cc is None or len(self.couplings) > 1:
            floor = self._coupling_scale()
            for pair, x in self.couplings.items():
                out.append(("coupling", pair, x, max(abs(x.value), floor)))
        for pair, x in self.pair_psi.items():
            if cc is not None and len(self.couplings) == 1:
                continue                               # the same as the headline Ψ
            scale = max(abs(x.value), PSI_FLOOR * abs(self.couplings[pair].value))
            out.append(("psi", pair, x, scale))
        return out

    def relative_errors(self) -> dict:
        """Estimated relative errors [-] of the controlled quantities, keyed
        ``"coupling_coefficient"``, ``"psi"`` (two temperatures) and
        ``"coupling_coefficient a|b"``, ``"psi a|b"`` (pairs)."""
        out = {}
        for key, pair, x, scale in self.controlled():
            name = key if pair is None else f"{'psi' if key == 'psi' else 'coupling_coefficient'}" \
                                            f" {pair[0]}|{pair[1]}"
            out[name] = x.error_estimate / scale if scale else math.inf
        return out

    @staticmethod
    def label(key: str) -> str:
        """A :meth:`relative_errors` key in words: L2D, Ψ, L(a, b), Ψ(a, b)."""
        what, _, pair = key.partition(" ")
        symbol = {"coupling_coefficient": "L2D", "psi": "Ψ"}[what]
        if not pair:
            return symbol
        a, b = pair.split("|")
        return f"{'L' if symbol == 'L2D' else 'Ψ'}({a}, {b})"

    def to_dict(self) -> dict:
        rel = self.relative_errors()
        cc = self.coupling_coefficient
        out = {
            "method": self.method,
            "element": self.element,
            "tolerance": self.tolerance,
            "max_nodes": self.max_nodes,
            "levels": [lv.to_dict() for lv in self.levels],
            "observed_order": None if cc is None else cc.order,
            "psi_extrapolated": self.psi_extrapolated,
            "psi_error_estimate": _finite(self.psi_error_estimate),
            "psi_relative_error_estimate": _finite(rel.get("psi")),
            "coupling_coefficient_extrapolated": None if cc is None else cc.value,
            "coupling_coefficient_error_estimate": None if cc is None
            else _finite(cc.error_estimate),
            "coupling_coefficient_relative_error_estimate": _finite(
                rel.get("coupling_coefficient")),
            "coupling_coefficients": [],
            "iso_doubling_change": self.iso_doubling_change,
            "iso_doubling_limit": ISO_DOUBLING_LIMIT,
            "criterion_met": self.criterion_met,
            "stop_reason": self.stop_reason,
        }
        floor = self._coupling_scale()
        for pair, x in self.couplings.items():
            entry = {"between": list(pair), "extrapolated": x.value,
                     "error_estimate": _finite(x.error_estimate),
                     "relative_error_estimate": _finite(
                         x.error_estimate / max(abs(x.value), floor)
                         if max(abs(x.value), floor) else math.inf),
                     "observed_order": x.order}
            if pair in self.pair_psi:
                entry["psi_extrapolated"] = self.pair_psi[pair].value
            out["coupling_coefficients"].append(entry)
        if self.theta_si_min is not None:
            out["theta_si_min_extrapolated"] = self.theta_si_min.value
            out["theta_si_min_error_estimate"] = _finite(self.theta_si_min.error_estimate)
        return out

    def summary_lines(self) -> list[str]:
        """Plain-words lines for the command-line summary and reports."""
        rel = self.relative_errors()
        lines = [f"convergence: {self.method} refinement, {len(self.levels)} meshes, "
                 f"{self.levels[-1].nodes if self.levels else 0} nodes on the finest"]
        order = sorted(rel, key=lambda k: (k.startswith("coupling_coefficient"), k))
        for key in order:
            if math.isfinite(rel[key]):
                lines.append(f"  estimated relative error of {self.label(key)}: "
                             f"{rel[key]:.2e} (target {self.tolerance:.1e})")
        if self.iso_doubling_change is not None:
            lines.append(f"  ISO 10211 doubling check: heat flow changed by "
                         f"{100 * self.iso_doubling_change:.3f} % (limit 1 %)")
        if self.criterion_met:
            lines.append("  converged: the mesh-convergence criteria are met")
        else:
            lines.append("  NOT CONVERGED: " + self.stop_reason)
        return lines


@dataclass
class StudyOutcome:
    """What :func:`converge` returns: the finest level's cases and mesh, and the study."""

    cases: UnitCases
    mesh: Mesh
    study: ConvergenceStudy


def level_of(cases: UnitCases, side, flanking_ul: dict) -> tuple[Level, float]:
    """The numbers of one level, and its heat-flow imbalance [-].

    Parameters
    ----------
    cases : UnitCases
    side : (θi, θe, interior indices) or None
        :func:`interior_side` of the model.
    flanking_ul : dict
        Σ U·l [W/(m·K)] of the flanking elements, keyed None for the
        two-temperature Ψ and by pair for Ψ_ij.
    """
    model = cases.model
    couplings = cases.heat.couplings
    flows = given_heat_flows(cases)
    generated = cases.heat.source.generated if cases.heat.source is not None else 0.0
    balance = heat_flow_balance(flows, generated)
    heat_flow = l2d = psi = None
    if side is not None:
        theta_i, theta_e, inside = side
        heat_flow = float(flows[inside].sum())
        l2d = heat_flow / (theta_i - theta_e)
        if None in flanking_ul:
            psi = l2d - flanking_ul[None]
    surface = cases.surface.field(cases.temperatures)
    theta_min, _ = surface.minimum_on(interior_surfaces(model))
    mesh = cases.problem.mesh
    pairs = {pair_name(model, i, j): float(couplings[i, j]) for i, j in pairs_of(model)}
    names = [e.name for e in model.environments]
    level = Level(mesh.node_count, mesh.triangle_count, heat_flow, l2d, psi, float(theta_min),
                  pairs, dict(zip(names, map(float, flows))))
    return level, balance if math.isfinite(balance) else 0.0


def converge(model: Model, mesh_options: MeshOptions | None, element: str, tolerance: float,
             max_nodes: int, method: str, flanking_ul: dict | None = None) -> StudyOutcome:
    """Run the study.

    Parameters
    ----------
    model : Model
        Validated.
    mesh_options : MeshOptions or None
        Options of the first (gmsh) mesh; default :data:`FIRST_MESH`.
    element : str
    tolerance : float
        Target relative error of every L_ij and Ψ [-], > 0.
    max_nodes : int
        Node budget [-].
    method : str
        ``"adaptive"`` or ``"uniform"``.
    flanking_ul : dict, optional
        Σ U·l [W/(m·K)] keyed None (the two-temperature Ψ) and by pair of
        names (Ψ_ij), for the pairs flanking elements name.

    Returns
    -------
    StudyOutcome
    """
    check_settings(tolerance, max_nodes, method)
    flanking_ul = dict(flanking_ul or {})
    if method == "adaptive" and element != "P1":
        method = "uniform"                  # the residual estimator is for P1
    study = ConvergenceStudy(method, element, float(tolerance), int(max_nodes))
    side = interior_side(model)
    index_pairs = pairs_of(model)
    energies: dict[tuple, list] = {}
    mesh: Mesh = build_mesh(model, mesh_options or FIRST_MESH)
    cases = None
    stalled = 0
    imbalance = []
    while True:
        cases = solve_cases(model, mesh, element, cases)
        level, balance = level_of(cases, side, flanking_ul)
        study.levels.append(level)
        imbalance.append(balance)
        couplings = cases.heat.couplings
        for members in [(i,) for i in range(len(model.environments))] + index_pairs:
            energies.setdefault(members, []).append(cut_energy(couplings, members))
        _extrapolate(study, model, side, energies, flanking_ul, imbalance)
        study.iso_doubling_change = _doubling_change(study.levels, side, model)
        controlled = study.controlled()
        rel = study.relative_errors()
        fitted = all(x.fitted for _, _, x, _ in controlled)
        within = (fitted and len(study.levels) >= 3
                  and all(v <= tolerance for v in rel.values()))
        iso_ok = study.iso_doubling_change is not None and \
            study.iso_doubling_change < ISO_DOUBLING_LIMIT
        if within and iso_ok:
            study.criterion_met = True
            study.stop_reason = "estimated errors below the tolerance and ISO doubling check met"
            break
        if len(study.levels) >= 3 and not fitted:
            stalled += 1
        else:
            stalled = 0
        if stalled >= STALL_LEVELS:
            study.stop_reason = (
                "the heat flow does not settle regularly as the mesh is refined (no "
                "plausible order of convergence over the last meshes). One cause is a held "
                "temperature (surface resistance 0) that jumps at a corner, which makes the "
                "exact heat flow infinite. The values shown are those of the finest mesh; "
                "there is no error estimate to rely on.")
            break
        marked = None if method == "uniform" else indicators.mark(
            _worst_indicators(cases, side, controlled))
        finer = refine(mesh, marked)
        if finer.node_count > max_nodes:
            study.stop_reason = (
                f"the tolerance {tolerance:g} could not be reached within the node budget "
                f"of {max_nodes} nodes (--max-nodes); the estimated relative errors are "
                + ", ".join(f"{study.label(k)} {v:.2e}" for k, v in rel.items())
                + ("" if iso_ok else "; the ISO 10211 doubling check is not met"))
            break
        mesh = finer
    return StudyOutcome(cases, mesh, study)


def _extrapolate(study: ConvergenceStudy, model: Model, side, energies: dict,
                 flanking_ul: dict, imbalance: list) -> None:
    """Every extrapolation of the study from its levels so far."""
    nodes = [lv.nodes for lv in study.levels]
    rate = ELEMENT_RATE[study.element]
    noise = min(BALANCE_NOISE * max(imbalance[-3:]), NOISE_LIMIT)
    fits = {members: extrapolate(nodes, values, rate, noise)
            for members, values in energies.items()}
    study.couplings = {}
    study.pair_psi = {}
    for i, j in pairs_of(model):
        pair = pair_name(model, i, j)
        x = extrapolate(nodes, [lv.coupling_coefficients[pair] for lv in study.levels], rate,
                        noise)
        if not x.fitted:            # not regular on its own: from its monotone energies
            x = coupling_from_energies(fits[(i,)], fits[(j,)], fits[(i, j)])
        study.couplings[pair] = x
        if pair in flanking_ul:
            study.pair_psi[pair] = Extrapolation(x.value - flanking_ul[pair], x.error_estimate,
                                                 x.order, x.fitted)
    if side is not None:
        cc = extrapolate(nodes, [lv.coupling_coefficient for lv in study.levels], rate, noise)
        study.coupling_coefficient = cc
        if None in flanking_ul:
            study.psi = Extrapolation(cc.value - flanking_ul[None], cc.error_estimate,
                                      cc.order, cc.fitted)
    study.theta_si_min = extrapolate(nodes, [lv.theta_si_min for lv in study.levels], rate,
                                     noise)


def _worst_indicators(cases: UnitCases, side, controlled) -> np.ndarray:
    """Error indicators of the fields that make up the quantity whose estimated
    error is largest against the tolerance: the two-temperature model's
    heat-flow field (scaled to 1 K) for L2D and Ψ; for L_ij of a pair, the
    unit solutions u_i, u_j and u_i + u_j whose energies make it."""
    worst = max(controlled, key=lambda c: (c[2].error_estimate / c[3] if c[3] else math.inf))
    key, pair, _, _ = worst
    problem = cases.problem
    resistances = cases.heat.resistances
    if pair is None:
        theta_i, theta_e, _ = side
        field_ = cases.heat.field(cases.temperatures)
        temps = {e.name: e.temperature for e in cases.model.environments}
        conditions = _conditions(cases.model, resistances, temps)
        return indicators.energy_error_indicators(problem, field_, conditions) \
            / (theta_i - theta_e) ** 2
    names = cases.environments
    i, j = names.index(pair[0]), names.index(pair[1])
    eta = np.zeros(problem.mesh.triangle_count)
    for members in ((i,), (j,), (i, j)):
        field_ = cases.heat.combination(members)
        temps = {name: (1.0 if k in members else 0.0) for k, name in enumerate(names)}
        eta += indicators.energy_error_indicators(
            problem, field_, _conditions(cases.model, resistances, temps))
    return eta


def _conditions(model: Model, resistances, temperatures: dict):
    return [Condition(temperatures[s.environment], r) for s, r in zip(model.surfaces, resistances)]


def _doubling_change(levels, side, model: Model) -> float | None:
    """The ISO 10211 doubling check's relative change of the heat flow [-]."""
    if len(levels) < 2:
        return None
    final = levels[-1]
    ref = levels[0]                   # coarsest: the largest change, on the safe side
    for lv in levels[:-1]:
        if lv.triangles * 4 <= final.triangles:
            ref = lv
    if side is not None:
        if final.heat_flow == 0:
            return None
        return abs(final.heat_flow - ref.heat_flow) / abs(final.heat_flow)
    groups = {}
    for e in model.environments:
        groups.setdefault(e.temperature, []).append(e.name)
    flows = [(sum(final.heat_flows[n] for n in names), sum(ref.heat_flows[n] for n in names))
             for names in groups.values()]
    scale = max(abs(f) for f, _ in flows)
    if scale == 0:
        return None
    return max(abs(f - r) for f, r in flows) / scale


def check_settings(tolerance, max_nodes, method) -> None:
    """Raise ModelError for settings a study cannot use."""
    if isinstance(tolerance, bool) or not isinstance(tolerance, (int, float)) \
            or not math.isfinite(tolerance) or tolerance <= 0:
        raise ModelError(f"tolerance must be a positive number, got {tolerance!r}")
    if isinstance(max_nodes, bool) or not isinstance(max_nodes, (int, np.integer)) \
            or max_nodes <= 0:
        raise ModelError(f"max_nodes must be a positive whole number, got {max_nodes!r}")
    if method not in METHODS:
        raise ModelError(f"refinement method must be one of {', '.join(METHODS)}, "
                         f"got {method!r}")
