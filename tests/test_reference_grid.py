"""Checks of the independent tensor-grid finite-volume reference (tests/reference_grid.py).

The reference exists so that the tool can be compared with something outside its
own code path; these tests tie the reference itself to sources outside the
project: ISO 6946 plane layers, the analytic Fourier-series solution of a
rectangle, ISO 10211 test reference case 2, and the identities of ISO 10211 for
several environments (L_ij = L_ji, Σ g_j = 1).
"""

import math
import tomllib

import numpy as np
import pytest

import reference_grid as rg


# --------------------------------------------------------------------------
# 1D: plane layers (ISO 6946)
# --------------------------------------------------------------------------

# Illustrative layers (the check is exact whatever the values): thickness [mm], λ [W/(m·K)].
LAYERS = [("render", 15, 0.8), ("masonry", 240, 0.6), ("insulation", 120, 0.035),
          ("board", 12.5, 0.25)]
HEIGHT = 1000.0  # [mm]


def layered_wall(r_si=0.13, r_si_t=0.25, r_se=0.04, unit="mm"):
    """Plane layers along x between "inside" (20 °C, at x = 0) and "outside" (0 °C)."""
    f = 1.0 if unit == "mm" else 1e-3
    lines = ['format = 1', f'length_unit = "{unit}"']
    for name, _, lam in LAYERS:
        lines += [f"[materials.{name}]", f"conductivity = {lam}"]
    x = 0.0
    for name, d, _ in LAYERS:
        lines += ["[[regions]]", f'material = "{name}"',
                  f"rectangle = [{x * f}, 0, {(x + d) * f}, {HEIGHT * f}]"]
        x += d
    lines += ['[[environments]]', 'name = "inside"', 'temperature = 20.0', 'kind = "interior"',
              '[[environments]]', 'name = "outside"', 'temperature = 0.0', 'kind = "exterior"',
              '[[surfaces]]', 'environment = "inside"', f'resistance = {r_si}',
              f'resistance_surface_temperature = {r_si_t}', f'path = [[0, 0], [0, {HEIGHT * f}]]',
              '[[surfaces]]', 'environment = "outside"', f'resistance = {r_se}',
              f'path = [[{x * f}, {HEIGHT * f}], [{x * f}, 0]]']
    return "\n".join(lines) + "\n", x


@pytest.mark.parametrize("unit", ["mm", "m"])
def test_layered_wall_is_exact(unit):
    """ISO 6946 (plane homogeneous layers): U = 1/(Rsi + Σ d/λ + Rse), L = U·l.

    A cell-centred FV scheme with series (harmonic) face conductances is exact in
    1D, so L, the inner surface temperature θsi = θi − Rsi·U·(θi − θe) and the
    temperature at a layer interface agree to round-off.
    """
    text, total = layered_wall(unit=unit)
    sol = rg.solve(text, 50.0 if unit == "mm" else 0.05)
    r_layers = sum(d / 1000 / lam for _, d, lam in LAYERS)
    u = 1 / (0.13 + r_layers + 0.04)
    assert sol.coupling("inside", "outside") == pytest.approx(u * HEIGHT / 1000, rel=1e-9)
    assert sol.heat_flow["inside"] == pytest.approx(20 * u * HEIGHT / 1000, rel=1e-9)

    u_t = 1 / (0.25 + r_layers + 0.04)                      # surface-temperature set
    f = 1.0 if unit == "mm" else 1e-3
    mid = 0.37 * HEIGHT * f
    assert sol.surface_temperature([0, mid]) == pytest.approx(20 - 0.25 * u_t * 20, abs=1e-9)
    # interface between masonry and insulation, from the inside: Rsi + render + masonry
    x_if = (15 + 240) * f
    r_in = 0.25 + 0.015 / 0.8 + 0.240 / 0.6
    assert sol.temperature([x_if, mid]) == pytest.approx(20 - r_in * u_t * 20, abs=1e-9)
    info = sol.theta_si_min
    assert info["value"] == pytest.approx(20 - 0.25 * u_t * 20, abs=1e-9)
    assert info["at"][0] == 0


# --------------------------------------------------------------------------
# ISO 10211 test reference case 1: rectangle, analytic Fourier series
# --------------------------------------------------------------------------

CASE1 = """
format = 1
name = "ISO 10211 reference case 1 set-up"
length_unit = "m"
[materials.uniform]
conductivity = 1.0
[[regions]]
material = "uniform"
rectangle = [0, 0, 1, 2]
[[environments]]
name = "hot"
temperature = 20.0
kind = "interior"
[[environments]]
name = "cold"
temperature = 0.0
kind = "exterior"
[[surfaces]]
environment = "hot"
resistance = 0.0
path = [[0, 2], [1, 2]]
[[surfaces]]
environment = "cold"
resistance = 0.0
path = [[0, 2], [0, 0], [1, 0], [1, 2]]
"""


def fourier_rectangle(x, y, a=1.0, b=2.0, t_top=20.0, terms=4001):
    """Steady temperature [°C] in 0 < x < a, 0 < y < b [m] with T = t_top on y = b and 0
    on the other three sides: T = Σ_(n odd) 4·t_top/(nπ) · sin(nπx/a) · sinh(nπy/a)/sinh(nπb/a).

    Separation of variables; Carslaw & Jaeger, Conduction of Heat in Solids, 2nd ed.,
    the steady rectangle (§5.3, section number from memory).
    """
    n = np.arange(1, terms + 1, 2)
    k = n * np.pi / a
    # sinh(k y)/sinh(k b) written without overflow
    ratio = np.exp(k * (y - b)) * (1 - np.exp(-2 * k * y)) / (1 - np.exp(-2 * k * b))
    return float(np.sum(4 * t_top / (n * np.pi) * np.sin(k * x) * ratio))


def test_iso10211_case1_against_fourier_series():
    """ISO 10211 test reference case 1 set-up (1 m × 2 m, λ = 1, one side at 20 °C, the
    others at 0 °C): inner temperatures within 0.05 K of the analytic series
    (Carslaw & Jaeger, see :func:`fourier_rectangle`) on a moderate grid (h = 0.05 m)."""
    sol = rg.solve(CASE1, 0.05)
    for x, y in [(0.5, 1.0), (0.25, 1.75), (0.5, 1.5), (0.75, 1.9), (0.5, 0.25), (0.9, 1.2)]:
        assert sol.temperature([x, y]) == pytest.approx(fourier_rectangle(x, y), abs=0.05), (x, y)


# --------------------------------------------------------------------------
# ISO 10211 test reference case 2
# --------------------------------------------------------------------------

# Source: ISO 10211:2017 Annex C, test reference case 2 (also ISO 10211:2007 Annex A),
# as given in /work/shared/validation/iso10211-case2.md (metres, λ in W/(m·K)).
CASE2 = """
format = 1
name = "ISO 10211 reference case 2"
length_unit = "m"
[materials.concrete]
conductivity = 1.15
[materials.wood]
conductivity = 0.12
[materials.insulation]
conductivity = 0.029
[materials.aluminium]
conductivity = 230.0
[[regions]]
material = "insulation"
rectangle = [0, 0, 0.5, 0.0415]
[[regions]]
material = "concrete"
rectangle = [0, 0.0415, 0.5, 0.0475]
[[regions]]
material = "wood"
rectangle = [0, 0.0365, 0.015, 0.0415]
[[regions]]
material = "aluminium"
rectangle = [0, 0, 0.5, 0.0015]
[[regions]]
material = "aluminium"
rectangle = [0, 0.0015, 0.0015, 0.035]
[[regions]]
material = "aluminium"
rectangle = [0, 0.035, 0.015, 0.0365]
[[environments]]
name = "inside"
temperature = 20.0
kind = "interior"
[[environments]]
name = "outside"
temperature = 0.0
kind = "exterior"
[[surfaces]]
environment = "inside"
resistance = 0.11
path = [[0, 0], [0.5, 0]]
[[surfaces]]
environment = "outside"
resistance = 0.06
path = [[0, 0.0475], [0.5, 0.0475]]
"""

# point: (x [m], y [m], θ [°C]); tolerance 0.1 K; total heat flow 9.5 W/m ± 0.1.
CASE2_POINTS = {"A": (0, 0.0475, 7.1), "B": (0.5, 0.0475, 0.8), "C": (0, 0.0415, 7.9),
                "D": (0.015, 0.0415, 6.3), "E": (0.5, 0.0415, 0.8), "F": (0, 0.0365, 16.4),
                "G": (0.015, 0.0365, 16.3), "H": (0, 0, 16.8), "I": (0.5, 0, 18.3)}


def test_iso10211_case2():
    """ISO 10211 Annex C case 2: heat flow within 0.1 W/m of 9.5 and the nine tabulated
    temperatures within 0.1 K (points on the outline by the surface interpolation)."""
    sol = rg.solve(CASE2, 0.00125)
    assert sol.heat_flow["inside"] == pytest.approx(9.5, abs=0.1)
    assert sol.balance < 1e-9
    for name, (x, y, theta) in CASE2_POINTS.items():
        assert sol.temperature([x, y], "heat_flow") == pytest.approx(theta, abs=0.1), name
    for name in "ABCEFHI":                       # these lie on the outline
        x, y, theta = CASE2_POINTS[name]
        assert sol.surface_temperature([x, y], "heat_flow") == pytest.approx(theta, abs=0.1), name


# --------------------------------------------------------------------------
# Three environments (ISO 10211: coupling coefficients and weighting factors)
# --------------------------------------------------------------------------

@pytest.fixture(scope="module")
def three_env():
    return rg.reference(rg.three_environment_case(), rg.THREE_ENVIRONMENT_H)


# Keys of model-format.md (format 1 and addition A) for the tables used by the case.
SPEC_KEYS = {
    "top": {"format", "name", "length_unit", "materials", "regions", "environments", "surfaces",
            "flanking", "probes"},
    "materials": {"conductivity", "source"},
    "regions": {"material", "rectangle", "polygon", "heat_source", "holes"},
    "environments": {"name", "temperature", "kind"},
    "surfaces": {"environment", "resistance", "resistance_surface_temperature", "path", "assess"},
    "flanking": {"name", "between", "u_value", "length", "layers", "surface_resistances"},
    "probes": {"name", "at"},
}


def test_three_environment_case_is_a_model_file():
    """The case follows model-format.md (format 1, addition A): keys as spelled there,
    three environments of kinds interior / unheated / exterior, flanking `between` pairs."""
    data = tomllib.loads(rg.three_environment_case())
    assert data["format"] == 1 and data["length_unit"] == "mm"
    assert set(data) <= SPEC_KEYS["top"]
    for name, mat in data["materials"].items():
        assert set(mat) <= SPEC_KEYS["materials"], name
    for table in ("regions", "environments", "surfaces", "flanking", "probes"):
        for k, entry in enumerate(data[table]):
            assert set(entry) <= SPEC_KEYS[table], f"{table}[{k}]"
    names = [e["name"] for e in data["environments"]]
    assert sorted(e["kind"] for e in data["environments"]) == ["exterior", "interior", "unheated"]
    pairs = {frozenset(f["between"]) for f in data["flanking"]}
    assert all(p <= set(names) and len(p) == 2 for p in pairs)
    assert len(pairs) == 3                        # every pair has a flanking element
    for f in data["flanking"]:
        for layer in f.get("layers", []):
            assert set(layer) == {"material", "thickness"} and layer["material"] in data["materials"]


def test_three_environment_couplings_reciprocal_and_non_zero(three_env):
    """ISO 10211: L_ij = L_ji, each from a different unit solution (the discrete operator
    is symmetric, so to round-off); every pair exchanges a clearly non-zero heat flow."""
    for sol in three_env["solutions"]:
        L = sol.coupling_matrix
        for i in range(3):
            for j in range(i + 1, 3):
                assert L[i, j] == pytest.approx(L[j, i], rel=1e-9)
            # unit case i: what leaves i arrives in the others (energy balance)
            assert L[i, i] == pytest.approx(sum(L[i, j] for j in range(3) if j != i), rel=1e-9)
    for pair, est in three_env["coupling_coefficients"].items():
        assert est["value"] > 0.2, pair
        assert est["error"] < 1e-3 * est["value"], pair    # well inside a 0.5 % comparison


def test_three_environment_heat_flows_by_superposition(three_env):
    """ISO 10211: the heat flow into environment j is Σ_i L_ij (θ_i − θ_j) (superposition)."""
    sol = three_env["solutions"][-1]
    theta = dict(zip(sol.names, sol.temperatures))
    for j in sol.names:
        expected = sum(sol.coupling(i, j) * (theta[i] - theta[j]) for i in sol.names if i != j)
        assert -sol.heat_flow[j] == pytest.approx(expected, rel=1e-9)
    assert sol.balance < 1e-9


def test_weighting_factors_sum_to_one(three_env):
    """ISO 10211: θ = Σ g_j θ_j with Σ g_j = 1; g from three separate unit solutions."""
    sol = three_env["solutions"][-1]
    info = sol.theta_si_min
    assert info["environment"] == "room"
    g = info["weighting_factors"]
    assert sum(g.values()) == pytest.approx(1.0, abs=1e-9)
    assert all(0 < v < 1 for v in g.values())
    assert info["value"] == pytest.approx(sum(g[n] * t for n, t in zip(sol.names, sol.temperatures)),
                                          abs=1e-9)
    assert sol.surface_temperature(info["at"]) == pytest.approx(info["value"], abs=1e-9)
    for point in ([360, 350], [260, 125], [1000, 300], [80, 0]):
        assert sum(sol.weighting_factors(point).values()) == pytest.approx(1.0, abs=1e-9)


def test_richardson_error_covers_a_much_finer_grid():
    """The extrapolated L_ij ± error from three grids (h = 50 mm, 25, 12.5) contains the
    value of a grid four times finer than the finest of them (h = 3.125 mm, 0.7 M cells,
    about 7 s). Error estimate: Roache, J. Fluids Eng. 116, 1994, 405–413 (safety 1.25).

    Checked once by hand for the reference grids used above (h = 25 mm: 25, 12.5,
    6.25) against h = 1.5625 mm (2.7 M cells); the test runs the cheaper pair.
    """
    text = rg.three_environment_case()
    ref = rg.reference(text, 50.0)
    fine = rg.solve(text, 50.0, level=4)
    for (a, b), est in ref["coupling_coefficients"].items():
        assert abs(fine.coupling(a, b) - est["value"]) <= est["error"], (a, b)
        assert est["error"] < 2e-3 * est["value"], (a, b)


def test_richardson_on_a_known_sequence():
    """Richardson extrapolation of v(h) = 1 + 0.3·h² on h = 1, 1/2, 1/4 recovers 1 exactly."""
    est = rg.richardson([1 + 0.3 * h ** 2 for h in (1, 0.5, 0.25)])
    assert est["value"] == pytest.approx(1.0, abs=1e-12)
    assert est["order"] == pytest.approx(2.0)


# --------------------------------------------------------------------------
# The subset the reference accepts
# --------------------------------------------------------------------------

def test_axis_parallel_polygon_equals_rectangles():
    """An L-shaped polygon paints the same cells as the two rectangles it is made of."""
    head = 'format = 1\nlength_unit = "mm"\n[materials.m]\nconductivity = 1.0\n'
    tail = ('[[environments]]\nname = "in"\ntemperature = 20.0\nkind = "interior"\n'
            '[[environments]]\nname = "out"\ntemperature = 0.0\nkind = "exterior"\n'
            '[[surfaces]]\nenvironment = "in"\nresistance = 0.13\npath = [[0, 0], [0, 1000]]\n'
            '[[surfaces]]\nenvironment = "out"\nresistance = 0.04\n'
            'path = [[1000, 0], [1000, 200], [200, 200], [200, 1000]]\n')
    poly = head + ('[[regions]]\nmaterial = "m"\n'
                   'polygon = [[0, 0], [1000, 0], [1000, 200], [200, 200], [200, 1000], [0, 1000]]\n')
    rects = head + ('[[regions]]\nmaterial = "m"\nrectangle = [0, 0, 200, 1000]\n'
                    '[[regions]]\nmaterial = "m"\nrectangle = [200, 0, 1000, 200]\n')
    a = rg.solve(poly + tail, 100.0).coupling("in", "out")
    b = rg.solve(rects + tail, 100.0).coupling("in", "out")
    assert a == pytest.approx(b, rel=1e-12)


def test_outside_the_subset_is_refused():
    text, _ = layered_wall()
    with pytest.raises(rg.UnsupportedModel, match="diagonal"):
        rg.solve(text.replace("path = [[0, 0], [0, 1000.0]]", "path = [[0, 0], [10, 1000.0]]"), 50)
    tri = text.replace("rectangle = [0.0, 0, 15.0, 1000.0]", "polygon = [[0, 0], [15, 0], [0, 1000]]")
    assert tri != text
    with pytest.raises(rg.UnsupportedModel, match="axis-parallel"):
        rg.solve(tri, 50)
    with pytest.raises(rg.UnsupportedModel, match="heat source"):
        rg.solve(text.replace('material = "render"', 'material = "render"\nheat_source = 10.0'), 50)
    assert math.isfinite(rg.solve(text, 50).coupling("inside", "outside"))
