"""Guaranteed bounds of the coupling coefficients (model-format.md, addition G).

Every check compares the two-sided interval [lower, upper] that
bridgecalc.study.bounds computes (Galerkin energy above, Prager–Synge
complementary energy of an equilibrated flux below) with a value from outside
the package:

* ISO 6946 plane layers: U = 1/(Rsi + Σ d/λ + Rse), by hand below;
* ISO 10211 case 1's rectangle (1 m × 2 m, λ = 1) with its far side (y = 0)
  as an environment of its own, the hot side (y = b) held at 1 °C and the two
  lateral sides behind a surface resistance: a Fourier (Sturm–Liouville)
  series, separation of variables as in Carslaw & Jaeger, *Conduction of Heat
  in Solids*, §5.3 (eigenvalues of the Robin sides from μ tan(μa/2) = 1/(λR));
* the cylinder: the condenser of two coaxial circles, 2πλ / ln(r2/r1)
  (Incropera et al., *Fundamentals of Heat and Mass Transfer*, §3.3), with
  polygons inside and outside the circles (domain monotonicity of the
  capacity: a larger hot conductor or a smaller cold one conducts more);
* the shipped junctions drawn from rectangles: the independent finite-volume
  solver of tests/reference_grid.py, extrapolated, within its own error estimate.
"""

from __future__ import annotations

import dataclasses
import functools
import math

import numpy as np
import pytest

import reference_grid as rg
from bridgecalc.api import load, run
from bridgecalc.mesh import build_mesh, refine
from bridgecalc.model import Environment, Material, Model, Region, Surface
from bridgecalc.readers.modelfile import dumps
from bridgecalc.solve.cases import solve_cases
from bridgecalc.study import indicators
from bridgecalc.study.bounds import coupling_bounds, unavailable_reason
from bridgecalc.study.convergence import FIRST_MESH
from bridgecalc.study.levels import interior_side
from bridgecalc.validation import cases as validation

#: Round-off allowance of a bound, relative to the value [-].
ROUND = 1e-10


def bracket(interval, exact, slack=0.0):
    """lower ≤ exact ≤ upper, to round-off (and ``slack`` for a reference's own error)."""
    tol = ROUND * abs(exact) + slack
    return interval.lower - tol <= exact <= interval.upper + tol


# -- ISO 6946 plane layers -----------------------------------------------------

def test_plane_layers_interval_closes_on_iso6946():
    """One-dimensional flow is exact in P1 and its flux is exact in RT0: the
    interval closes to round-off around H / (Rsi + Σ d/λ + Rse) (ISO 6946, 6.7.1)."""
    model = validation.layers_model()
    r_total = validation.LAYERS_RSI + validation.LAYERS_RSE + sum(
        d * 1e-3 / k for _, k, d in validation.LAYERS)
    exact = validation.LAYERS_HEIGHT * 1e-3 / r_total
    mesh = build_mesh(model)
    for _ in range(2):
        found = coupling_bounds(solve_cases(model, mesh), interior_side(model))
        assert bracket(found.coupling_coefficient, exact)
        assert found.coupling_coefficient.width <= 1e-9 * exact
        mesh = refine(mesh)


# -- ISO 10211 case 1's rectangle with its far side --------------------------

A, B, R_SIDE = validation.CASE1_WIDTH, validation.CASE1_HEIGHT, 0.25


def far_side_model() -> Model:
    """Case 1's rectangle, λ = 1: hot side y = b held, far side y = 0 held, both
    lateral sides to a third environment through R = 0.25 m²·K/W [m]."""
    return Model(
        length_unit="m", name="case 1 rectangle, far side and lateral sides apart",
        materials={"solid": Material("solid", 1.0)},
        regions=[Region.rectangle("solid", 0, 0, A, B)],
        environments=[Environment("hot", 1.0, "interior"),
                      Environment("far", 0.0, "exterior"),
                      Environment("side", 0.0, "unheated")],
        surfaces=[Surface("hot", 0.0, ((0, B), (A, B))),
                  Surface("far", 0.0, ((0, 0), (A, 0))),
                  Surface("side", R_SIDE, ((0, B), (0, 0))),
                  Surface("side", R_SIDE, ((A, 0), (A, B)))])


def far_side_exact(terms=20000):
    """L_hot,far and L_hot,side [W/(m·K)] by the series.

    u = Σ c_n cos(μ_n(x − a/2)) sinh(μ_n y)/sinh(μ_n b), μ_n the roots of
    μ tan(μa/2) = h/λ (symmetric Robin eigenfunctions), c_n = ∫X_n / ∫X_n²;
    the flow in at y = b is Σ c_n μ_n coth(μ_n b) ∫X_n, the flow out at y = 0
    Σ c_n μ_n / sinh(μ_n b) ∫X_n (λ = 1)."""
    h_over = 1.0 / R_SIDE
    n = np.arange(terms)
    lo, hi = n * math.pi, n * math.pi + math.pi / 2 - 1e-15
    for _ in range(200):                      # z tan z = h a / 2 on (nπ, nπ + π/2)
        mid = 0.5 * (lo + hi)
        f = mid * np.tan(mid) - h_over * A / 2
        lo, hi = np.where(f < 0, mid, lo), np.where(f < 0, hi, mid)
    mu = 2 * 0.5 * (lo + hi) / A
    integral = 2 / mu * np.sin(mu * A / 2)
    square = A / 2 + np.sin(mu * A) / (2 * mu)
    c = integral / square
    top = np.sum(c * mu * integral / np.tanh(mu * B))
    far = np.sum(c * mu * integral * np.exp(-mu * B) / (-np.expm1(-2 * mu * B)) * 2)
    return far, top - far


@pytest.mark.parametrize("method", ["uniform", "gap"])
def test_far_side_couplings_bracketed_at_every_level(method):
    """Every L_ij of the three-environment rectangle lies in its interval on
    every mesh, the energies E_c too. The bounds come from quadratic fields:
    uniformly refined, the interval of L(hot, far) shrinks like N⁻¹ (h²: the
    held temperature jumps at the hot side's corners, and the field's
    singularity there caps the rate of any element); refined by the
    triangles' shares of the gap, like N⁻² (h⁴, the squared energy error of
    P2 on a smooth field, which adaptive meshes recover at corners)."""
    model = far_side_model()
    l_far, l_side = far_side_exact()
    exact = {("hot", "far"): l_far, ("hot", "side"): l_side, ("far", "side"): l_side}
    mesh = build_mesh(model)
    widths, nodes = [], []
    for _ in range(4):
        cases = solve_cases(model, mesh)
        found = coupling_bounds(cases, None, gaps=True)
        for pair, value in exact.items():
            assert bracket(found.couplings[pair], value), (pair, found.couplings[pair], value)
        assert bracket(found.energies[(0,)], l_far + l_side)
        assert bracket(found.energies[(2,)], 2 * l_side)
        widths.append(found.couplings[("hot", "far")].width)
        nodes.append(mesh.node_count)
        marked = None if method == "uniform" else indicators.mark(
            found.indicators([(0,), (1,), (0, 1)]))
        mesh = refine(mesh, marked)
    rates = [-math.log(widths[k + 1] / widths[k]) / math.log(nodes[k + 1] / nodes[k])
             for k in range(len(widths) - 1)]
    if method == "uniform":
        assert min(rates[1:]) > 0.8, rates        # theory: 1 (singular corners)
    else:
        assert min(rates) > 1.8, rates            # theory: 2 (P2, adaptive)


# -- the cylinder ----------------------------------------------------------------

R1, R2, SIDES = 0.1, 0.3, 48


def annulus_quarter(r_hot, r_cold, sides=SIDES) -> Model:
    """A quarter of the ring between two regular polygons of ``sides`` sides
    (vertices at radius r_hot and r_cold), held at 1 and 0 °C; the two cuts are
    symmetry planes (adiabatic) [m]."""
    k = sides // 4
    angles = np.linspace(0, math.pi / 2, k + 1)
    inner = [(r_hot * math.cos(t), r_hot * math.sin(t)) for t in angles]
    outer = [(r_cold * math.cos(t), r_cold * math.sin(t)) for t in angles]
    ring = outer + inner[::-1]
    return Model(
        length_unit="m", name="quarter ring", materials={"m": Material("m", 1.0)},
        regions=[Region.polygon("m", tuple(ring))],
        environments=[Environment("in", 1.0, "interior"), Environment("out", 0.0, "exterior")],
        surfaces=[Surface("in", 0.0, tuple(inner)), Surface("out", 0.0, tuple(outer))])


def test_cylinder_between_polygon_rings():
    """2πλ/ln(r2/r1) per metre of pipe (Incropera §3.3). The ring whose hot
    polygon lies inside the circle r1 and cold polygon outside r2 conducts
    less, the other one more (capacity grows with the hot conductor and
    shrinks with the cold one); a quarter carries a quarter. So the first
    one's lower bound lies below the analytic value and the second one's
    upper bound above it, on every mesh; and both intervals close in on it."""
    exact = 2 * math.pi / math.log(R2 / R1) / 4
    stretch = 1 / math.cos(math.pi / SIDES)          # circumscribed polygon radius
    less = annulus_quarter(R1, R2 * stretch)          # inscribed hot, circumscribed cold
    more = annulus_quarter(R1 * stretch, R2)
    for model, side in ((less, "lower"), (more, "upper")):
        mesh = build_mesh(model)
        for _ in range(3):
            found = coupling_bounds(solve_cases(model, mesh), interior_side(model))
            interval = found.coupling_coefficient
            assert interval.lower <= interval.upper
            if side == "lower":
                assert interval.lower <= exact
            else:
                assert interval.upper >= exact
            mesh = refine(mesh)
        assert abs(interval.middle - exact) < 0.01 * exact


def full_ring(r_hot, r_cold, sides=SIDES) -> Model:
    """The whole ring between two regular polygons [m]: its hole's boundary is
    the hot surface, which passes the whole heat flow."""
    angles = np.linspace(0, 2 * math.pi, sides, endpoint=False)
    inner = [(r_hot * math.cos(t), r_hot * math.sin(t)) for t in angles]
    outer = [(r_cold * math.cos(t), r_cold * math.sin(t)) for t in angles]
    return Model(
        length_unit="m", name="ring", materials={"m": Material("m", 1.0)},
        regions=[Region.polygon("m", tuple(outer), holes=(tuple(inner),))],
        environments=[Environment("in", 1.0, "interior"), Environment("out", 0.0, "exterior")],
        surfaces=[Surface("in", 0.0, tuple(inner + inner[:1])),
                  Surface("out", 0.0, tuple(outer + outer[:1]))])


def test_a_hole_with_a_surface_is_bounded_by_the_equilibrated_flux():
    """A stream function cannot pass a net heat flow around a hole, so where a
    hole's boundary is a surface the lower bound comes from the vertex-patch
    equilibration of the linear field instead (and the quadratic fields are not
    used); the cylinder's bracket (Incropera §3.3, as above) still holds on
    every mesh. The quarter ring, simply connected, takes the stream function."""
    exact = 2 * math.pi / math.log(R2 / R1)
    stretch = 1 / math.cos(math.pi / SIDES)
    for model, side in ((full_ring(R1, R2 * stretch), "lower"),
                        (full_ring(R1 * stretch, R2), "upper")):
        mesh = build_mesh(model)
        for _ in range(2):
            found = coupling_bounds(solve_cases(model, mesh), interior_side(model))
            assert found.quadratic is None
            interval = found.coupling_coefficient
            assert interval.lower <= interval.upper
            assert (interval.lower <= exact) if side == "lower" else (interval.upper >= exact)
            mesh = refine(mesh)
        assert abs(interval.middle - exact) < 0.02 * exact
    quarter = annulus_quarter(R1, R2)
    found = coupling_bounds(solve_cases(quarter, build_mesh(quarter)), interior_side(quarter))
    assert found.quadratic is not None


def test_outline_orientation_does_not_depend_on_how_triangles_are_listed(geometries):
    """The stream function's boundary work needs every outline edge with the
    section on its left; listing some triangles clockwise changes nothing."""
    from bridgecalc.solve.dual import oriented_outline
    model = load(geometries / "wall_corner.py")
    mesh = build_mesh(model, FIRST_MESH)
    edges = oriented_outline(mesh)
    p, q = mesh.nodes[edges[:, 0]], mesh.nodes[edges[:, 1]]
    # the outline, walked this way, encloses a positive area (counter-clockwise)
    assert 0.5 * np.sum(p[:, 0] * q[:, 1] - q[:, 0] * p[:, 1]) > 0
    flipped = dataclasses.replace(mesh, triangles=mesh.triangles.copy())
    flipped.triangles[::2] = flipped.triangles[::2, ::-1]
    assert np.array_equal(oriented_outline(flipped), edges)


# -- shipped junctions drawn from rectangles ------------------------------------

#: Coarsest cell [mm] of the reference grids; their Richardson error is far
#: below the interval widths met here.
RECTILINEAR = {"balcony.py": 20.0, "parapet.py": 20.0, "slab_edge.py": 40.0,
               "steel_beam.py": 20.0, "wall_corner.py": 40.0, "window_jamb.py": 20.0}


@functools.lru_cache(maxsize=None)
def junction_reference(name: str, path: str) -> dict:
    """The finite-volume reference of one shipped junction, solved once per session."""
    return rg.reference(dumps(load(path)), RECTILINEAR[name])


@pytest.mark.parametrize("name", sorted(RECTILINEAR))
def test_shipped_junction_inside_its_bounds(name, geometries):
    """L2D of every shipped junction that the finite-volume reference can
    represent lies within the bounds on every level of a gap-driven study
    (within the reference's own Richardson error), and the bounds close in.
    The quadratic bounds are soon narrower than the reference's own error:
    the first level, where they are not, gives the check its teeth."""
    model = load(geometries / name)
    ref = junction_reference(name, str(geometries / name))
    (pair, estimate), = ref["coupling_coefficients"].items()
    exact, slack = estimate["value"], estimate["error"]
    side = interior_side(model)
    mesh = build_mesh(model, FIRST_MESH)
    widths = []
    for _ in range(3):
        cases = solve_cases(model, mesh)
        found = coupling_bounds(cases, side, gaps=True)
        assert bracket(found.coupling_coefficient, exact, slack), \
            (mesh.node_count, found.coupling_coefficient, exact, slack)
        widths.append(found.coupling_coefficient.width)
        mesh = refine(mesh, indicators.mark(found.indicators([tuple(side[2])])))
    assert widths[-1] < widths[0] / 4
    assert slack < 0.5 * widths[0]                 # the check has teeth


@pytest.mark.parametrize("name", sorted(RECTILINEAR))
def test_run_error_estimate_covers_the_reference(name, geometries):
    """A default ``run()`` (adaptive study, default tolerance): its Ψ lies
    within its reported error of the finite-volume reference's Ψ
    (tests/reference_grid.py, Richardson-extrapolated, plus that reference's
    own error); the error is guaranteed, so it must also hold for the
    reference to within its error. Ψ = L2D − Σ U·l with the same Σ U·l on
    both sides, so the check is made on L2D, and Ψ is checked to carry L2D's
    error. θsi,min likewise lies within its estimated error (four times the
    difference to quadratic elements on the finest mesh) of the reference's."""
    result = run(load(geometries / name))
    ref = junction_reference(name, str(geometries / name))
    (_, estimate), = ref["coupling_coefficients"].items()
    conv = result.convergence
    cc, psi = conv.coupling_coefficient, conv.psi
    assert cc.guaranteed and psi.guaranteed
    assert psi.error_estimate == pytest.approx(cc.error_estimate, rel=1e-9, abs=1e-15)
    shift = cc.value - psi.value
    off = abs(cc.value - estimate["value"])
    assert off <= cc.error_estimate + estimate["error"], \
        (name, cc.value, cc.error_estimate, estimate["value"], estimate["error"])
    psi_ref = estimate["value"] - shift
    assert abs(psi.value - psi_ref) <= psi.error_estimate + estimate["error"]
    # the error is not vacuous: well below the value itself
    assert cc.error_estimate < 1e-2 * abs(cc.value)
    theta_ref = ref["theta_si_min"]
    theta_2, theta_estimate = conv.theta_si_min_check
    off = abs(result.theta_si_min - theta_ref["value"])
    assert off <= theta_estimate + theta_ref["error"], \
        (name, result.theta_si_min, theta_estimate, theta_ref["value"], theta_ref["error"])
    assert theta_estimate < 0.05


# -- lower ≤ upper in hard cases --------------------------------------------------

def contrast_model(held: bool, thin: float, ratio: float) -> Model:
    """A wall with a conductive fin ``ratio`` times the insulation's λ and a
    foil ``thin`` thick along its face; the inside held or behind Rsi [mm]."""
    return Model(
        length_unit="mm", name="contrast",
        materials={"ins": Material("ins", 0.03), "fin": Material("fin", 0.03 * ratio),
                   "foil": Material("foil", 0.03 * ratio)},
        regions=[Region.rectangle("ins", 0, 0, 200, 500),
                 Region.rectangle("fin", 0, 240, 150, 260),
                 Region.rectangle("foil", 200, 0, 200 + thin, 500)],
        environments=[Environment("in", 20.0, "interior"), Environment("out", 0.0, "exterior")],
        surfaces=[Surface("in", 0.0 if held else 0.13, ((0, 0), (0, 500))),
                  Surface("out", 0.04, ((200 + thin, 0), (200 + thin, 500)))])


@pytest.mark.parametrize("held,thin,ratio", [(True, 0.2, 1e4), (False, 0.2, 1e4),
                                             (True, 5.0, 1.0)])
def test_lower_never_above_upper(held, thin, ratio):
    """Held temperatures, a 0.2 mm foil one element across, materials 10⁴
    apart: the interval never inverts and agrees with the finite-volume
    reference (tests/reference_grid.py) within its error."""
    model = contrast_model(held, thin, ratio)
    ref = rg.reference(dumps(model), 10.0)
    (_, estimate), = ref["coupling_coefficients"].items()
    mesh = build_mesh(model, FIRST_MESH)
    for _ in range(3):
        found = coupling_bounds(solve_cases(model, mesh), interior_side(model), gaps=True)
        interval = found.coupling_coefficient
        assert interval.lower <= interval.upper * (1 + ROUND)
        assert bracket(interval, estimate["value"], estimate["error"])
        mesh = refine(mesh, indicators.mark(found.indicators([(0,)])))


# -- results.json ------------------------------------------------------------------

def test_results_json_carries_the_bounds(geometries):
    """addition G: [lower, upper] next to the extrapolated value, Ψ with the same
    width, and one entry per pair; the summary says they are guaranteed."""
    result = run(load(geometries / "steel_beam.py"))
    conv = result.to_dict()["convergence"]
    lo, hi = conv["coupling_coefficient_bounds"]
    assert lo <= result.heat_flow_case.coupling_coefficient <= hi * (1 + ROUND)
    plo, phi = conv["psi_bounds"]
    assert phi - plo == pytest.approx(hi - lo, rel=1e-9)
    assert plo <= conv["psi_extrapolated"] + conv["psi_error_estimate"]
    (entry,) = conv["coupling_coefficients_bounds"]
    assert entry["bounds"] == [lo, hi]
    assert any("guaranteed bounds" in line for line in result.convergence.summary_lines())
    # the errors beside the values are the guaranteed ones: the interval's far end
    assert conv["error_estimates_guaranteed"] is True
    value, error = conv["coupling_coefficient_extrapolated"], \
        conv["coupling_coefficient_error_estimate"]
    assert error >= max(value - lo, hi - value) and error <= (hi - lo) * (1 + 1e-6) + 1e-9
    assert conv["psi_error_estimate"] == pytest.approx(error, rel=1e-9)
    richardson = conv["richardson"]["coupling_coefficient"]
    assert richardson["error_estimate"] > 0 and "extrapolated" in richardson
    # θsi,min's check: the quadratic value, and four times the difference as the estimate
    theta_2 = conv["theta_si_min_quadratic"]
    theta_1 = result.surface_temperature_case.theta_si_min
    assert conv["theta_si_min_error_estimate"] == pytest.approx(4 * abs(theta_1 - theta_2))
    assert "not a bound" in conv["theta_si_min_error_basis"]
    # ... within the tolerance of θi − θe, since the study refines until it is
    temperatures = result.to_dict()["temperatures"]
    span = temperatures["interior"] - temperatures["exterior"]
    assert conv["theta_si_min_error_estimate"] <= conv["tolerance"] * span


def test_no_bounds_with_a_heat_source_or_held_corners():
    """A heat source, or two held surfaces of different temperature meeting
    (case 1: an infinite heat flow), leave the bounds out and say why."""
    source = run(validation.source_model()).to_dict()["convergence"]
    assert "coupling_coefficient_bounds" not in source
    assert "heat source" in source["bounds_unavailable"]
    model = validation.case1_model()
    cases = solve_cases(model, build_mesh(model))
    assert "infinite" in unavailable_reason(cases)


def test_report_states_the_bounds(geometries):
    """The report's refinement section gives the intervals next to the estimate."""
    from bridgecalc.outputs.report.blocks import Para
    from bridgecalc.outputs.report.content import report_content
    result = run(load(geometries / "steel_beam.py"))
    lo, hi = result.to_dict()["convergence"]["psi_bounds"]
    text = " ".join(b.text for b in report_content(result).blocks if isinstance(b, Para))
    assert "Guaranteed bounds on the finest mesh" in text
    assert f"Ψ [{lo:.6g}, {hi:.6g}]".replace("-", "−") in text


def test_interval_study_stops_on_guaranteed_intervals():
    """refinement="interval": the study stops when the intervals are narrower
    than the tolerance; the Fourier-series L(hot, far) of the three-environment
    rectangle lies inside, and the extrapolation is still reported. (A small
    L_ij between two large energies is bounded through their differences,
    L_ij = (E_i + E_j − E_ij)/2, so its interval is as wide as theirs: here
    5e-3 of L(hot, far) is reached with a few thousand nodes, 1e-3 not within
    250 000.)"""
    model = far_side_model()
    l_far, _ = far_side_exact()
    result = run(model, refinement="interval", tolerance=5e-3)
    conv = result.convergence
    assert conv.criterion_met and "guaranteed intervals" in conv.stop_reason
    interval = conv.couplings_bounds[("hot", "far")]
    assert bracket(interval, l_far)
    scale = max(abs(conv.couplings[("hot", "far")].value),
                0.01 * max(abs(x.value) for x in conv.couplings.values()))
    assert interval.width <= 5e-3 * scale
    assert conv.couplings[("hot", "far")].fitted


def test_summary_calls_the_theta_estimate_an_estimate(geometries):
    """θsi,min has no guaranteed bound: the summary says its error figure is an estimate."""
    result = run(load(geometries / "slab_edge.py"))
    lines = [line for line in result.convergence.summary_lines() if "θsi,min" in line]
    assert lines and "not a bound" in lines[0]
    assert "guaranteed" not in lines[0]
