"""What the refinement study records: one level per mesh, the study's
extrapolations and what it controls, and the numbers of a level taken from
the unit cases (heat flows at the model's temperatures, L_ij, θsi,min).

The pairs of environments are named in model order; L_ij = L_ji.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..mesh import Mesh
from ..model import Model
from ..model.rules import two_temperature_sides
from ..solve.cases import UnitCases
from .extrapolation import Extrapolation

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
    """Indices of the surfaces searched for θsi,min: those facing an interior
    environment, less those with ``assess = false`` (addition F)."""
    return [j for j, s in enumerate(model.surfaces)
            if s.assess and model.environment(s.environment).kind == "interior"]


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
        θsi,min [°C], Richardson-extrapolated over the levels (reported).
    coupling_coefficient_bounds, psi_bounds : Interval or None
        Guaranteed [lower, upper] of the two-temperature L2D and Ψ on the
        finest mesh [W/(m·K)] (:mod:`bridgecalc.study.bounds`).
    couplings_bounds, pair_psi_bounds : dict of (str, str) to Interval
        The same of every L_ij and of each Ψ_ij with flanking elements.
    bounds_note : str
        Why there are no bounds, when there are none.
    richardson : dict
        When the bounds give the errors: the Richardson extrapolations they
        replaced, keyed ``"coupling_coefficient"``, ``"psi"``,
        ``("coupling", pair)`` and ``("psi", pair)``.
    theta_si_min_check : (float, float) or None
        θsi,min of the quadratic field on the finest mesh [°C] and the
        estimated error of the reported (finest linear) θsi,min [K]
        (:func:`bridgecalc.study.convergence._theta_check`).
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
    coupling_coefficient_bounds: object = None
    psi_bounds: object = None
    couplings_bounds: dict = field(default_factory=dict)
    pair_psi_bounds: dict = field(default_factory=dict)
    bounds_note: str = ""
    richardson: dict = field(default_factory=dict)
    theta_si_min_check: tuple | None = None

    @property
    def guaranteed(self) -> bool:
        """Whether the errors of the controlled values are guaranteed bounds."""
        controlled = self.controlled()
        return bool(controlled) and all(x.guaranteed for _, _, x, _ in controlled)

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
        out["error_estimates_guaranteed"] = self.guaranteed
        if self.richardson:
            out["richardson"] = self._richardson_dict()
        if self.theta_si_min is not None:
            out["theta_si_min_extrapolated"] = self.theta_si_min.value
            out["theta_si_min_error_estimate"] = _finite(self.theta_si_min.error_estimate)
        if self.theta_si_min_check is not None:
            out["theta_si_min_quadratic"] = self.theta_si_min_check[0]
            out["theta_si_min_error_estimate"] = self.theta_si_min_check[1]
            out["theta_si_min_error_basis"] = (
                "four times the difference between the finest mesh's linear and quadratic "
                "fields: an estimate, not a bound")
        if self.couplings_bounds:
            if self.coupling_coefficient_bounds is not None:
                out["coupling_coefficient_bounds"] = self.coupling_coefficient_bounds.to_list()
            if self.psi_bounds is not None:
                out["psi_bounds"] = self.psi_bounds.to_list()
            out["coupling_coefficients_bounds"] = []
            for pair, interval in self.couplings_bounds.items():
                entry = {"between": list(pair), "bounds": interval.to_list()}
                if pair in self.pair_psi_bounds:
                    entry["psi_bounds"] = self.pair_psi_bounds[pair].to_list()
                out["coupling_coefficients_bounds"].append(entry)
        elif self.bounds_note:
            out["bounds_unavailable"] = self.bounds_note
        return out

    def _richardson_dict(self) -> dict:
        """The Richardson values the guaranteed errors replaced, for results.json."""
        out: dict = {"coupling_coefficients": []}
        for key in ("coupling_coefficient", "psi"):
            if key in self.richardson:
                x = self.richardson[key]
                out[key] = {"extrapolated": x.value, "error_estimate": _finite(x.error_estimate)}
        for key, x in self.richardson.items():
            if isinstance(key, tuple):
                out["coupling_coefficients"].append(
                    {"between": list(key[1]), "what": key[0], "extrapolated": x.value,
                     "error_estimate": _finite(x.error_estimate)})
        return out

    def bounds_lines(self) -> list[str]:
        """The guaranteed intervals in words, for the summary and the report."""
        if not self.couplings_bounds:
            return [f"no guaranteed bounds: {self.bounds_note}"] if self.bounds_note else []
        lines = []

        def text(symbol, interval):
            return (f"{symbol} in [{interval.lower:.6g}, {interval.upper:.6g}] W/(m·K) "
                    f"(width {interval.width:.2g})")

        if self.coupling_coefficient_bounds is not None:
            lines.append(text("L2D", self.coupling_coefficient_bounds))
            if self.psi_bounds is not None:
                lines.append(text("Ψ", self.psi_bounds))
        if self.coupling_coefficient_bounds is None or len(self.couplings_bounds) > 1:
            for pair, interval in self.couplings_bounds.items():
                lines.append(text(f"L({pair[0]}, {pair[1]})", interval))
                if pair in self.pair_psi_bounds:
                    lines.append(text(f"Ψ({pair[0]}, {pair[1]})", self.pair_psi_bounds[pair]))
        return ["guaranteed bounds for the model as written (finest mesh): " + lines[0]] + \
            ["  " + line for line in lines[1:]]

    def summary_lines(self) -> list[str]:
        """Plain-words lines for the command-line summary and reports."""
        rel = self.relative_errors()
        lines = [f"convergence: {self.method} refinement, {len(self.levels)} meshes, "
                 f"{self.levels[-1].nodes if self.levels else 0} nodes on the finest"]
        order = sorted(rel, key=lambda k: (k.startswith("coupling_coefficient"), k))
        what = ("relative error at most (guaranteed by the bounds)" if self.guaranteed
                else "estimated relative error")
        for key in order:
            if math.isfinite(rel[key]):
                lines.append(f"  {what} of {self.label(key)}: "
                             f"{rel[key]:.2e} (target {self.tolerance:.1e})")
        lines.extend("  " + line for line in self.bounds_lines())
        t = self.theta_si_min
        if self.theta_si_min_check is not None:
            theta_1 = self.levels[-1].theta_si_min
            lines.append(f"  θsi,min {theta_1:.3f} °C, estimated error "
                         f"{self.theta_si_min_check[1]:.1e} K (four times its difference to "
                         "quadratic elements on the same mesh: an estimate, not a bound)")
        elif t is not None and math.isfinite(t.error_estimate):
            lines.append(f"  θsi,min {t.value:.3f} °C, estimated error {t.error_estimate:.1e} K "
                         "(an estimate from the mesh sequence, not a bound)")
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
