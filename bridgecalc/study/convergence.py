"""Mesh-convergence study: a sequence of nested meshes, the observed order of
convergence, a Richardson-extrapolated Ψ (or L2D) with an error estimate, and
the ISO 10211 doubling criterion.

The sequence
------------
The first mesh comes from gmsh (:func:`bridgecalc.mesh.build_mesh`); every
later one refines the previous one inside this package
(:func:`bridgecalc.mesh.refine`), so the meshes are nested and material and
surface tags stay exact. ``method="adaptive"`` (default, P1) refines the
triangles that carry half of the residual error estimate
(:mod:`bridgecalc.study.indicators`); ``method="uniform"`` splits every triangle into
four (halves every edge).

Extrapolation and error estimate
--------------------------------
On nested meshes without heat sources the discrete L2D of a two-temperature
model decreases monotonically to the exact value (it is the energy of the
normalised solution; Galerkin orthogonality), so the sequence is one-sided
and regular. Over the last three levels Q_k (k = 1, 2, 3, with N_k nodes) the
model Q = Q∞ + C·N^(−r) is fitted exactly (generalised Richardson
extrapolation; Richardson, Phil. Trans. R. Soc. A 210, 1911; Roache, J.
Fluids Eng. 116, 1994, 405–413, for the grid-convergence index). The observed
order is reported per mesh size h ∝ N^(−1/2), i.e. p = 2r.

The error estimate of the extrapolated value is deliberately the one of the
finest computed level, enlarged by Roache's safety factor Fs = 1.25 for
three-grid studies (from memory): e = Fs·|Q3 − Q∞|. The extrapolated value
is normally closer to the truth than Q3, so e covers its error with margin;
the test suite checks that it does on models with known answers. Where the
differences change sign or the observed order is implausible, no
extrapolation is claimed: the finest value is reported with
e = 3·max|Q3 − Q2|, |Q2 − Q1| (Celik et al., J. Fluids Eng. 130, 2008,
078001, oscillatory convergence; from memory) and convergence is not
claimed. Changes within round-off count as a mesh-independent answer (a
one-dimensional field is exact on every mesh): within 1e-10 relative, or ten
times the heat-flow imbalance |Σ Φ| / max |Φ| of the last three levels where
that is larger, as on needles one element across a foil, whose round-off
reaches 1e-7; the estimate is then at least that round-off.

Ψ differs from L2D by the exact constant Σ U·l, so both have the same
absolute error. The Ψ tolerance is relative to max(|Ψ|, PSI_FLOOR·L2D): a
Ψ near zero (a well-insulated junction) is resolved to 1e-4·L2D at the
default tolerance (a few 1e-5 W/(m·K) for a wall junction, far below the
precision Ψ is reported with) instead of chasing an unreachable relative
error. This floor is the tool's own rule, not taken from a standard.

ISO 10211 doubling criterion
----------------------------
ISO 10211 (5.3.2, from memory of the clause number) asks that doubling the
number of subdivisions changes the heat flow by less than 1 %. Reported is
the relative change of the interior heat flow between the final mesh and
the last earlier level with at most a quarter of its triangles (its
subdivisions at least doubled everywhere on average; for uniform refinement
exactly the previous level), or the first (coarsest) mesh when no level is
that coarse. On nested meshes this change is larger than the
one a further doubling of the final mesh would bring, so the check errs on
the safe side.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import ModelError
from ..mesh import Mesh, MeshOptions, build_mesh, refine
from . import indicators

#: Default target relative error of Ψ and L2D [-] (0.1 %).
DEFAULT_TOLERANCE = 1e-3
#: Default node budget of the study [-].
DEFAULT_MAX_NODES = 250_000
#: ISO 10211 doubling criterion on the heat flow [-].
ISO_DOUBLING_LIMIT = 0.01
#: Roache's safety factor for three-grid estimates [-].
SAFETY_FACTOR = 1.25
#: Roache's factor when the observed order is not confirmed (from memory) [-].
UNCONFIRMED_FACTOR = 3.0
#: Factor on the largest recent change when no order can be fitted [-].
OSCILLATION_FACTOR = 3.0
#: Ψ tolerance floor, as a share of L2D [-]. At 0.01 the demo slab edge
#: (Ψ ≈ −0.005 W/(m·K)) refined to 58k nodes for a 5e-6 W/(m·K) error; at
#: 0.1 it stops at 9k nodes with 4e-5 W/(m·K) and the same Ψ to 5 digits.
PSI_FLOOR = 0.1
#: Plausible range of the observed order per node count r (p = 2r per h).
ORDER_RANGE = (0.05, 3.0)
#: Levels without a plausible order after which the study gives up.
STALL_LEVELS = 3
METHODS = ("adaptive", "uniform")
#: Relative changes below this are round-off: the answer is mesh-independent [-].
ROUND_OFF = 1e-10
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
#: Asymptotic rate r per node count of the L2D error, Q − Q∞ ∝ N^(−r): the
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


@dataclass
class Level:
    """One mesh of the study.

    Attributes
    ----------
    nodes, triangles : int
    heat_flow : float
        Heat flow into the model from the interior side [W/m].
    coupling_coefficient : float
        L2D [W/(m·K)].
    psi : float or None
        Ψ [W/(m·K)].
    theta_si_min : float
        [°C], surface-temperature case.
    """

    nodes: int
    triangles: int
    heat_flow: float
    coupling_coefficient: float
    psi: float | None
    theta_si_min: float

    def to_dict(self) -> dict:
        return {"nodes": self.nodes, "triangles": self.triangles, "heat_flow": self.heat_flow,
                "coupling_coefficient": self.coupling_coefficient, "psi": self.psi,
                "theta_si_min": self.theta_si_min}


@dataclass(frozen=True)
class Extrapolation:
    """Richardson extrapolation over the last three levels.

    Attributes
    ----------
    value : float
        Extrapolated quantity (finest value when ``fitted`` is False).
    error_estimate : float
        Estimated absolute error of ``value`` (same unit).
    order : float or None
        Observed order per mesh size h (p = 2r, with Q − Q∞ ∝ N^(−r)).
    fitted : bool
        Whether a regular (monotone, plausible-order) fit was possible.
    """

    value: float
    error_estimate: float
    order: float | None
    fitted: bool


def _rate_equation(r, n1, n2, n3):
    a, b, c = n1 ** -r, n2 ** -r, n3 ** -r
    return (a - b) / (b - c)


def extrapolate(nodes, values, max_rate: float = ORDER_RANGE[1],
                noise: float = ROUND_OFF) -> Extrapolation:
    """Fit Q = Q∞ + C·N^(−r) exactly through the last three (N, Q) pairs.

    A fitted rate above ``max_rate`` (the element's asymptotic rate, e.g. 1
    for the P1 energy and L2D) marks a pre-asymptotic sequence; the
    extrapolation then uses ``max_rate``, which gives the larger, safer
    correction, and the error estimate takes Roache's factor 3 for an
    unconfirmed order instead of 1.25.

    When both changes over the last three levels are within ``noise`` the
    values are taken as mesh-independent: Q3 with an error estimate of three
    times the larger change, and at least ``noise`` itself.

    Parameters
    ----------
    nodes : sequence of int
        Node counts N_k, increasing.
    values : sequence of float
        Q_k [any unit].
    max_rate : float
        Largest rate r per node count to extrapolate with [-].
    noise : float
        Relative size of round-off in the values [-].

    Returns
    -------
    Extrapolation
    """
    n = [float(x) for x in nodes]
    q = [float(x) for x in values]
    if len(q) < 2:
        return Extrapolation(q[-1], math.inf, None, False)
    if len(q) < 3:
        return Extrapolation(q[-1], OSCILLATION_FACTOR * abs(q[-1] - q[-2]), None, False)
    (n1, n2, n3), (q1, q2, q3) = n[-3:], q[-3:]
    d12, d23 = q1 - q2, q2 - q3
    unfitted = Extrapolation(q3, OSCILLATION_FACTOR * max(abs(d12), abs(d23)), None, False)
    scale = max(abs(q1), abs(q2), abs(q3))
    if max(abs(d12), abs(d23)) <= max(noise, ROUND_OFF) * scale:
        # exact on every mesh (e.g. 1D) to round-off; the estimate is at least that
        floor = noise * scale if noise > ROUND_OFF else 0.0
        return Extrapolation(q3, max(OSCILLATION_FACTOR * max(abs(d12), abs(d23)), floor),
                             None, True)
    if d23 == 0.0 or d12 == 0.0 or (d12 > 0) != (d23 > 0):
        return unfitted
    ratio = d12 / d23
    lo, hi = ORDER_RANGE
    f_lo, f_hi = _rate_equation(lo, n1, n2, n3) - ratio, _rate_equation(hi, n1, n2, n3) - ratio
    if f_lo * f_hi > 0:
        return unfitted
    for _ in range(100):                                 # bisection: the ratio grows with r
        mid = 0.5 * (lo + hi)
        f_mid = _rate_equation(mid, n1, n2, n3) - ratio
        if (f_mid > 0) == (f_hi > 0):
            hi, f_hi = mid, f_mid
        else:
            lo, f_lo = mid, f_mid
    r = 0.5 * (lo + hi)
    order = 2.0 * r
    # an order above the asymptotic one is not yet confirmed: larger factor
    factor = SAFETY_FACTOR if r <= max_rate else UNCONFIRMED_FACTOR
    r = min(r, max_rate)
    b, c = n2 ** -r, n3 ** -r
    limit = q3 - d23 * c / (b - c)
    return Extrapolation(limit, factor * abs(q3 - limit), order, True)


@dataclass
class ConvergenceStudy:
    """Everything the study found; ``to_dict`` is results.json's ``convergence``."""

    method: str
    element: str
    tolerance: float
    max_nodes: int
    levels: list[Level] = field(default_factory=list)
    psi: Extrapolation | None = None
    coupling_coefficient: Extrapolation | None = None
    iso_doubling_change: float | None = None
    criterion_met: bool = False
    stop_reason: str = ""

    @property
    def psi_extrapolated(self):
        return None if self.psi is None else self.psi.value

    @property
    def psi_error_estimate(self):
        return None if self.psi is None else self.psi.error_estimate

    def relative_errors(self) -> dict:
        """Estimated relative errors of L2D and Ψ (Ψ against its floor) [-]."""
        out = {}
        cc = self.coupling_coefficient
        if cc is not None:
            out["coupling_coefficient"] = cc.error_estimate / abs(cc.value) if cc.value else math.inf
        if self.psi is not None and cc is not None:
            scale = max(abs(self.psi.value), PSI_FLOOR * abs(cc.value))
            out["psi"] = self.psi.error_estimate / scale if scale else math.inf
        return out

    def to_dict(self) -> dict:
        rel = self.relative_errors()

        def finite(x):
            return None if x is None or not math.isfinite(x) else x

        cc = self.coupling_coefficient
        return {
            "method": self.method,
            "element": self.element,
            "tolerance": self.tolerance,
            "max_nodes": self.max_nodes,
            "levels": [lv.to_dict() for lv in self.levels],
            "observed_order": None if cc is None else cc.order,
            "psi_extrapolated": self.psi_extrapolated,
            "psi_error_estimate": finite(self.psi_error_estimate),
            "psi_relative_error_estimate": finite(rel.get("psi")),
            "coupling_coefficient_extrapolated": None if cc is None else cc.value,
            "coupling_coefficient_error_estimate": None if cc is None else finite(cc.error_estimate),
            "coupling_coefficient_relative_error_estimate": finite(rel.get("coupling_coefficient")),
            "iso_doubling_change": self.iso_doubling_change,
            "iso_doubling_limit": ISO_DOUBLING_LIMIT,
            "criterion_met": self.criterion_met,
            "stop_reason": self.stop_reason,
        }

    def summary_lines(self) -> list[str]:
        """Plain-words lines for the command-line summary and reports."""
        rel = self.relative_errors()
        lines = [f"convergence: {self.method} refinement, {len(self.levels)} meshes, "
                 f"{self.levels[-1].nodes if self.levels else 0} nodes on the finest"]
        for name, key in (("Ψ", "psi"), ("L2D", "coupling_coefficient")):
            if key in rel and math.isfinite(rel[key]):
                lines.append(f"  estimated relative error of {name}: {rel[key]:.2e} "
                             f"(target {self.tolerance:.1e})")
        if self.iso_doubling_change is not None:
            lines.append(f"  ISO 10211 doubling check: heat flow changed by "
                         f"{100 * self.iso_doubling_change:.3f} % (limit 1 %)")
        if self.criterion_met:
            lines.append("  converged: the mesh-convergence criteria are met")
        else:
            lines.append("  NOT CONVERGED: " + self.stop_reason)
        return lines


def _interior_heat_flow(model, flows) -> float:
    return float(sum(flows[e.name] for e in model.environments if e.kind == "interior"))


def converge(model, mesh_options: MeshOptions | None, element: str, tolerance: float,
             max_nodes: int, method: str, solve_level):
    """Run the study.

    Parameters
    ----------
    model : Model
        Validated.
    mesh_options : MeshOptions or None
        Options of the first (gmsh) mesh.
    element : str
    tolerance : float
        Target relative error of Ψ and L2D [-], > 0.
    max_nodes : int
        Node budget [-].
    method : str
        ``"adaptive"`` or ``"uniform"``.
    solve_level : callable
        ``solve_level(mesh) -> (heat_case, surface_case, problem, heat_field,
        heat_conditions)``, supplied by the pipeline.

    Returns
    -------
    (heat_case, surface_case, mesh, ConvergenceStudy)
        The cases and mesh of the finest level, and the study.
    """
    check_settings(tolerance, max_nodes, method)
    if method == "adaptive" and element != "P1":
        method = "uniform"                  # the residual estimator is for P1
    study = ConvergenceStudy(method, element, float(tolerance), int(max_nodes))
    mesh: Mesh = build_mesh(model, mesh_options or FIRST_MESH)
    stalled = 0
    imbalance = []
    while True:
        heat, surface, problem, heat_field, conditions = solve_level(mesh)
        interior = _interior_heat_flow(model, heat.heat_flow)
        study.levels.append(Level(mesh.node_count, mesh.triangle_count, interior,
                                  heat.coupling_coefficient, heat.psi, surface.theta_si_min))
        imbalance.append(heat.balance if math.isfinite(heat.balance) else 0.0)
        nodes = [lv.nodes for lv in study.levels]
        study.coupling_coefficient = extrapolate(
            nodes, [lv.coupling_coefficient for lv in study.levels], ELEMENT_RATE[element],
            min(BALANCE_NOISE * max(imbalance[-3:]), NOISE_LIMIT))
        if heat.psi is not None:
            ul = heat.coupling_coefficient - heat.psi          # Σ U·l, exact
            cc = study.coupling_coefficient
            study.psi = Extrapolation(cc.value - ul, cc.error_estimate, cc.order, cc.fitted)
        study.iso_doubling_change = _doubling_change(study.levels)
        rel = study.relative_errors()
        fitted = study.coupling_coefficient.fitted
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
        marked = (None if method == "uniform" else
                  indicators.mark(indicators.energy_error_indicators(problem, heat_field, conditions)))
        finer = refine(mesh, marked)
        if finer.node_count > max_nodes:
            study.stop_reason = (
                f"the tolerance {tolerance:g} could not be reached within the node budget "
                f"of {max_nodes} nodes (--max-nodes); the estimated relative errors are "
                + ", ".join(f"{k.replace('coupling_coefficient', 'L2D').replace('psi', 'Ψ')} "
                            f"{v:.2e}" for k, v in rel.items())
                + ("" if iso_ok else "; the ISO 10211 doubling check is not met"))
            break
        mesh = finer
    return heat, surface, mesh, study


def _doubling_change(levels) -> float | None:
    if len(levels) < 2:
        return None
    final = levels[-1]
    ref = levels[0]                   # coarsest: the largest change, on the safe side
    for lv in levels[:-1]:
        if lv.triangles * 4 <= final.triangles:
            ref = lv
    if final.heat_flow == 0:
        return None
    return abs(final.heat_flow - ref.heat_flow) / abs(final.heat_flow)


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
