"""Any number of environments (model format 1, addition A) and regions with
holes (addition B).

References, each named beside its check:
- an independent finite-volume solver on graded tensor grids
  (tests/reference_grid.py: no bridgecalc code; itself checked against
  ISO 6946, the ISO 10211 case 1 Fourier series and ISO 10211 case 2);
- ISO 6946:2017, 6.7.1, plane layers: U = 1/(Rsi + Σ d/λ + Rse) (from memory);
- properties of the mathematics: reciprocity L_ij = L_ji of the symmetric
  operator, Σ g_j = 1 (the constant field), and superposition (linearity).
"""

from __future__ import annotations

import dataclasses
import json
import math
import textwrap

import numpy as np
import pytest

import reference_grid
from bridgecalc.api import run
from bridgecalc.cli import main
from bridgecalc.errors import ModelError
from bridgecalc.mesh import build_mesh
from bridgecalc.physics.iso6946 import u_value_plane_layers
from bridgecalc.readers.modelfile import dumps, loads
from bridgecalc.solve.cases import conditions, solve_cases


@pytest.fixture(scope="module")
def three():
    """The fictional room over a garage at an insulated wall, three environments."""
    text = reference_grid.three_environment_case()
    return text, loads(text, "three.toml")


@pytest.fixture(scope="module")
def three_result(three):
    return run(three[1])


@pytest.fixture(scope="module")
def three_reference(three):
    """Finite volumes, three nested graded grids, Richardson-extrapolated."""
    return reference_grid.reference(three[0], reference_grid.THREE_ENVIRONMENT_H, levels=3)


# -- against an independent reference --------------------------------------------


def test_coupling_coefficients_match_finite_volume_reference(three_result, three_reference):
    """Every L_ij within 0.5 % of the independent finite-volume reference
    (tests/reference_grid.py), and within the two error estimates combined."""
    ref = three_reference["coupling_coefficients"]
    assert len(three_result.coupling_coefficients) == 3
    for c in three_result.coupling_coefficients:
        r = ref[tuple(c.between)] if tuple(c.between) in ref else ref[tuple(reversed(c.between))]
        assert c.value == pytest.approx(r["value"], rel=5e-3), c.between
        estimate = three_result.convergence.couplings[tuple(c.between)].error_estimate
        assert abs(c.value - r["value"]) <= estimate + r["error"], c.between


def test_weighting_factors_match_finite_volume_reference(three_result, three_reference):
    """g_j at the tool's θsi,min point within 0.005 of the finite-volume field
    there (tests/reference_grid.py), and θsi,min within 0.05 K of the
    reference's own minimum."""
    st = three_result.surface_temperature_case
    finest = three_reference["solutions"][-1]
    g_ref = finest.weighting_factors(st.theta_si_min_at, "surface_temperature")
    for name, g in st.weighting_factors.items():
        assert g == pytest.approx(g_ref[name], abs=5e-3), name
    assert st.theta_si_min == pytest.approx(three_reference["theta_si_min"]["value"], abs=0.05)
    assert st.theta_si_min_environment == "room"


def test_unheated_surfaces_are_not_searched(three, three_result):
    """θsi,min lies on the room; the garage's surfaces, colder still, count in
    the heat flows but are not interior surfaces (addition A, kind unheated)."""
    model = three[1]
    st = three_result.surface_temperature_case
    field = st.field
    garage = [j for j, s in enumerate(model.surfaces) if s.environment == "garage"]
    colder, _ = field.minimum_on(garage)
    assert colder < st.theta_si_min
    assert three_result.heat_flow_case.heat_flow["garage"] > 1.0


# -- properties of the mathematics ------------------------------------------------


@pytest.fixture(scope="module")
def three_cases(three):
    model = three[1]
    return solve_cases(model, build_mesh(model))


def test_reciprocity_from_different_unit_solutions(three_cases):
    """L_ij = L_ji: the flow into j in i's unit case equals the flow into i
    in j's (the operator is symmetric). Room and garage are both solved; the
    outside's unit case is derived from Σ u = 1."""
    for case_set in (three_cases.heat, three_cases.surface):
        q = case_set.flow_matrix
        scale = np.abs(q).max()
        assert abs(q[0, 1] - q[1, 0]) <= 1e-8 * scale
        assert abs(q[0, 2] - q[2, 0]) <= 1e-8 * scale
        assert abs(q[1, 2] - q[2, 1]) <= 1e-8 * scale
        assert np.allclose(q.sum(axis=1), 0.0, atol=1e-8 * scale)   # each case balances


def test_weighting_factors_sum_to_one(three_result, three_cases):
    """Σ g_j = 1 at θsi,min and at every node: the constant field (ISO 10211)."""
    assert math.fsum(three_result.weighting_factors.values()) == pytest.approx(1.0, abs=1e-12)
    total = sum(u.temperature for u in three_cases.surface.unit)
    assert np.abs(total - 1.0).max() < 1e-12
    st = three_result.surface_temperature_case
    theta = sum(g * e.temperature for (name, g), e in
                zip(st.weighting_factors.items(), three_result.model.environments))
    assert theta == pytest.approx(st.theta_si_min, abs=1e-9)


def test_superposition_equals_a_direct_solve(three, three_cases):
    """The unit solutions combined at the model's temperatures equal one solve
    with those temperatures, to round-off (linearity)."""
    model = three[1]
    for case_set, surface in ((three_cases.heat, False), (three_cases.surface, True)):
        combined = case_set.field(three_cases.temperatures)
        direct = three_cases.problem.solve(conditions(model, surface))
        assert np.abs(combined.temperature - direct.temperature).max() < 1e-9 * 25.0
        assert np.abs(combined.heat_flow - direct.heat_flow).max() \
            < 1e-9 * np.abs(direct.heat_flow).max()


def test_heat_source_leaves_couplings_and_adds_to_flows(three):
    """Addition A: a heat source adds one solution with every environment at
    0 °C; the L_ij stay those of the source-free model (the same mesh), and
    the flows balance with the heat generated."""
    model = three[1]
    mesh = build_mesh(model)
    regions = [dataclasses.replace(r, heat_source=500.0) if k == 0 else r
               for k, r in enumerate(model.regions)]
    heated = dataclasses.replace(model, regions=regions)
    plain, warm = solve_cases(model, mesh), solve_cases(heated, mesh)
    assert np.allclose(warm.heat.couplings, plain.heat.couplings, rtol=1e-10, atol=0)
    assert warm.heat.source is not None and warm.heat.source.generated > 0
    flows = warm.temperatures @ warm.heat.flow_matrix + warm.heat.source_flows
    assert abs(flows.sum() + warm.heat.source.generated) < 1e-9 * np.abs(flows).max()


# -- ISO 6946 between two rooms ---------------------------------------------------

TWO_ROOMS = textwrap.dedent("""\
    format = 1
    name = "Party wall between two flats, fictional"
    length_unit = "mm"
    dimension_system = "internal"

    [materials.plaster]
    conductivity = 0.57
    [materials.masonry]
    conductivity = 0.79
    [materials.mineral_wool]
    conductivity = 0.037

    [[regions]]
    material = "plaster"
    rectangle = [0, 0, 15, 1500]
    [[regions]]
    material = "masonry"
    rectangle = [15, 0, 190, 1500]
    [[regions]]
    material = "mineral_wool"
    rectangle = [190, 0, 240, 1500]
    [[regions]]
    material = "masonry"
    rectangle = [240, 0, 415, 1500]

    [[environments]]
    name = "flat A"
    temperature = 20.0
    kind = "interior"
    [[environments]]
    name = "flat B"
    temperature = 14.0
    kind = "interior"

    [[surfaces]]
    environment = "flat A"
    resistance = 0.13
    path = [[0, 0], [0, 1500]]
    [[surfaces]]
    environment = "flat B"
    resistance = 0.13
    path = [[415, 0], [415, 1500]]

    [[flanking]]
    name = "party wall"
    between = ["flat B", "flat A"]
    length = 1500
    layers = [{ material = "plaster", thickness = 15 }, { material = "masonry", thickness = 175 },
              { material = "mineral_wool", thickness = 50 }, { material = "masonry", thickness = 175 }]
    surface_resistances = [0.13, 0.13]
    """)


def test_wall_between_two_rooms_is_u_times_length():
    """Two interior environments at different temperatures need no exterior
    (addition A); a plane layered wall between them has L = U·l, U by
    ISO 6946:2017, 6.7.1 with Rsi on both sides (0.13, from memory), and Ψ = 0."""
    model = loads(TWO_ROOMS, "two-rooms.toml")
    result = run(model)
    u = u_value_plane_layers([0.015 / 0.57, 0.175 / 0.79, 0.050 / 0.037, 0.175 / 0.79],
                             0.13, 0.13)
    (coupling,) = result.coupling_coefficients
    assert coupling.between == ("flat A", "flat B")
    assert coupling.value == pytest.approx(u * 1.5, rel=1e-9)
    assert result.coupling_coefficient == pytest.approx(u * 1.5, rel=1e-9)
    assert abs(coupling.psi) < 1e-9 and abs(result.psi) < 1e-9
    assert result.heat_flow_case.heat_flow["flat A"] == pytest.approx(u * 1.5 * 6.0, rel=1e-9)
    # the coldest interior surface is flat B's; fRsi is read against its own room
    st = result.surface_temperature_case
    assert st.theta_si_min_environment == "flat B"
    assert st.f_rsi == pytest.approx(st.weighting_factors["flat B"], abs=1e-12)
    assert result.to_dict()["dimension_system"] == "internal"
    assert loads(dumps(model), "again.toml") == model          # between, dimension_system


# -- splitting an environment, holes ------------------------------------------------

PLATE = textwrap.dedent("""\
    format = 1
    name = "Plate through insulation"
    length_unit = "mm"
    [materials.concrete]
    conductivity = 2.3
    [materials.insulation]
    conductivity = 0.035
    [materials.steel]
    conductivity = 50.0
    [[regions]]
    material = "concrete"
    rectangle = [0, 0, 200, 2000]
    [[regions]]
    material = "insulation"
    rectangle = [200, 0, 360, 2000]
    [[regions]]
    material = "steel"
    rectangle = [200, 995, 360, 1005]
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
    resistance = 0.13
    resistance_surface_temperature = 0.25
    path = [[0, 0], [0, 2000]]
    [[surfaces]]
    environment = "outside"
    resistance = 0.04
    path = [[360, 0], [360, 2000]]
    [[flanking]]
    name = "wall"
    u_value = 0.2
    length = 2000
    """)


def edit(text: str, old: str, new: str) -> str:
    """``text`` with ``old`` replaced by ``new``, both without indentation;
    ``old`` must be there."""
    old, new = ("\n".join(line.lstrip() for line in t.split("\n")) for t in (old, new))
    assert old in text, old
    return text.replace(old, new)


def test_splitting_an_environment_changes_nothing():
    """The inside split into two environments at the same temperature (the
    room above and below a slab, say): the heat flows add up to the original,
    L2D, Ψ and θsi,min are unchanged within the error estimates, and the
    coupling between the two halves is reported as its own pair."""
    whole = run(loads(PLATE, "whole.toml"))
    split_text = edit(edit(PLATE, '''[[environments]]
    name = "outside"''', '''[[environments]]
    name = "inside below"
    temperature = 20.0
    kind = "interior"
    [[environments]]
    name = "outside"'''), '''    path = [[0, 0], [0, 2000]]''', '''    path = [[0, 1000], [0, 2000]]
    [[surfaces]]
    environment = "inside below"
    resistance = 0.13
    resistance_surface_temperature = 0.25
    path = [[0, 0], [0, 1000]]''')
    split = run(loads(split_text, "split.toml"))
    flows = split.heat_flow_case.heat_flow
    estimate = whole.convergence.coupling_coefficient.error_estimate \
        + split.convergence.coupling_coefficient.error_estimate
    assert flows["inside"] + flows["inside below"] == pytest.approx(
        whole.heat_flow_case.heat_flow["inside"], abs=20.0 * estimate)
    assert split.coupling_coefficient == pytest.approx(whole.coupling_coefficient, abs=estimate)
    assert split.psi == pytest.approx(whole.psi, abs=estimate)
    assert split.theta_si_min == pytest.approx(whole.theta_si_min, abs=0.01)
    assert split.f_rsi == pytest.approx(whole.f_rsi, abs=1e-3)
    pairs = {c.between for c in split.coupling_coefficients}
    assert pairs == {("inside", "inside below"), ("inside", "outside"),
                     ("inside below", "outside")}


def test_a_hole_equals_the_region_drawn_around_it():
    """Addition B: a polygon region with a hole shows what lies below it
    (here the concrete, drawn first); the same section drawn as pieces
    around the hole gives the same L2D, Ψ and θsi,min within the estimates."""
    base = edit(PLATE, '''[[regions]]
    material = "concrete"
    rectangle = [0, 0, 200, 2000]''', '''[[regions]]
    material = "concrete"
    rectangle = [0, 0, 360, 2000]''')
    holed = loads(edit(base, '''    material = "insulation"
    rectangle = [200, 0, 360, 2000]''', '''    material = "insulation"
    polygon = [[200, 0], [360, 0], [360, 2000], [200, 2000]]
    holes = [[[240, 300], [300, 300], [300, 600], [240, 600]]]'''), "holed.toml")
    pieces = loads(edit(base, '''    material = "insulation"
    rectangle = [200, 0, 360, 2000]''', '''    material = "insulation"
    rectangle = [200, 0, 240, 2000]
    [[regions]]
    material = "insulation"
    rectangle = [300, 0, 360, 2000]
    [[regions]]
    material = "insulation"
    rectangle = [240, 0, 300, 300]
    [[regions]]
    material = "insulation"
    rectangle = [240, 600, 300, 2000]'''), "pieces.toml")
    a, b = run(holed), run(pieces)
    estimate = a.convergence.coupling_coefficient.error_estimate \
        + b.convergence.coupling_coefficient.error_estimate
    assert a.coupling_coefficient == pytest.approx(b.coupling_coefficient, abs=estimate)
    assert a.theta_si_min == pytest.approx(b.theta_si_min, abs=0.01)
    # and the concrete showing through carries heat: more than without it
    assert a.coupling_coefficient > run(loads(PLATE, "plate.toml")).coupling_coefficient


def test_a_hole_over_nothing_is_a_void():
    """Where nothing lies below a hole, it is outside the model: an enclosed
    void whose edges are adiabatic; the written file reads back the same."""
    model = loads(edit(PLATE, '''    material = "insulation"
    rectangle = [200, 0, 360, 2000]''', '''    material = "insulation"
    polygon = [[200, 0], [360, 0], [360, 2000], [200, 2000]]
    holes = [[[240, 300], [300, 300], [300, 600], [240, 600]]]'''), "void.toml")
    mesh = build_mesh(model)
    centroids = mesh.nodes[mesh.triangles].mean(axis=1) * 1e3
    inside_void = ((centroids[:, 0] > 240) & (centroids[:, 0] < 300)
                   & (centroids[:, 1] > 300) & (centroids[:, 1] < 600))
    assert not inside_void.any()
    assert loads(dumps(model), "again.toml") == model


# -- results.json ------------------------------------------------------------------


def test_results_json_of_three_environments(three_result):
    """Addition A's keys: one coupling per pair with Ψ and flanking where
    named, the environment of θsi,min and the weighting factors; no L2D, Ψ
    or fRsi of two temperatures."""
    data = json.loads(json.dumps(three_result.to_dict()))
    hf, st = data["heat_flow_case"], data["surface_temperature_case"]
    assert [c["between"] for c in hf["coupling_coefficients"]] == [
        ["room", "garage"], ["room", "outside"], ["garage", "outside"]]
    for c in hf["coupling_coefficients"]:
        assert "psi" in c and c["flanking"]
        assert c["psi"] == pytest.approx(c["value"] - sum(f["ul"] for f in c["flanking"]),
                                         abs=1e-12)
    assert {"coupling_coefficient", "psi"}.isdisjoint(hf)
    assert "f_rsi" not in st
    assert st["theta_si_min_environment"] == "room"
    assert set(st["temperature_weighting_factors"]) == {"room", "garage", "outside"}
    assert abs(sum(hf["heat_flow"].values())) <= 1e-9 * max(map(abs, hf["heat_flow"].values()))
    levels = data["convergence"]["levels"]
    assert all(len(lv["coupling_coefficients"]) == 3 for lv in levels)
    assert data["convergence"]["criterion_met"] is True


# -- bad input: exit 2, file, table and key named, nothing written -------------------

THREE_ROOMS = edit(PLATE, '''    [[flanking]]
    name = "wall"
    u_value = 0.2
    length = 2000''', '''    [[environments]]
    name = "stair"
    temperature = 12.0
    kind = "unheated"
    [[flanking]]
    name = "wall"
    between = ["inside", "outside"]
    u_value = 0.2
    length = 2000''')


@pytest.mark.parametrize("text, where", [
    (THREE_ROOMS.replace('between = ["inside", "outside"]', 'between = ["inside", "outdoors"]'),
     "flanking[0].between[1]: environment 'outdoors' is not defined"),
    (THREE_ROOMS.replace('between = ["inside", "outside"]', 'between = ["inside", "inside"]'),
     "flanking[0].between: names 'inside' twice"),
    (THREE_ROOMS.replace('between = ["inside", "outside"]\n', ''),
     "flanking[0].between: missing"),
    (THREE_ROOMS.replace('between = ["inside", "outside"]', 'between = ["inside"]'),
     "flanking[0].between: expected the names of two environments"),
    (PLATE.replace("temperature = 0.0", "temperature = 20.0"),
     "environments[1].temperature: every environment is at 20 °C"),
    (PLATE.replace('kind = "interior"', 'kind = "unheated"'),
     "environments: no interior environment"),
    (edit(PLATE, '''    material = "insulation"
    rectangle = [200, 0, 360, 2000]''', '''    material = "insulation"
    polygon = [[200, 0], [360, 0], [360, 2000], [200, 2000]]
    holes = [[[400, 300], [450, 300], [450, 600], [400, 600]]]'''),
     "regions[1].holes[0]: lies outside the region's polygon"),
    (edit(PLATE, '''    material = "insulation"
    rectangle = [200, 0, 360, 2000]''', '''    material = "insulation"
    polygon = [[200, 0], [360, 0], [360, 2000], [200, 2000]]
    holes = [[[300, 300], [450, 300], [450, 600], [300, 600]]]'''),
     "regions[1].holes[0]: crosses or touches the outline"),
    (edit(PLATE, '''    material = "insulation"
    rectangle = [200, 0, 360, 2000]''', '''    material = "insulation"
    polygon = [[200, 0], [360, 0], [360, 2000], [200, 2000]]
    holes = [[[240, 300], [300, 300], [300, 600], [240, 600]],
             [[260, 500], [320, 500], [320, 700], [260, 700]]]'''),
     "regions[1].holes[1]: overlaps or touches regions[1].holes[0]"),
    (edit(PLATE, '''    rectangle = [200, 0, 360, 2000]''', '''    rectangle = [200, 0, 360, 2000]
    holes = [[[240, 300], [300, 300], [300, 600], [240, 600]]]'''),
     "regions[1].holes: only a polygon region may have holes"),
    (PLATE.replace('''length_unit = "mm"''', '''length_unit = "mm"
    dimension_system = "outside"'''.replace("    ", "")),
     "dimension_system: unknown dimension system 'outside'"),
], ids=["between-unknown", "between-twice", "between-missing", "between-one-name",
        "one-temperature", "no-interior", "hole-outside", "hole-crossing", "holes-overlapping",
        "hole-in-rectangle", "dimension-system-unknown"])
def test_bad_environments_and_holes_exit_2(tmp_path, capsys, text, where):
    path = tmp_path / "detail.toml"
    path.write_text(text, encoding="utf-8")
    out = tmp_path / "out"
    assert main(["run", str(path), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"error: {path}: {where}"), err
    assert "Traceback" not in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["detail.toml"]


def test_an_environment_no_surface_faces_is_a_warning():
    """A third environment no surface faces couples to nothing: the run says
    so, naming it, rather than report zeros silently."""
    model = loads(THREE_ROOMS, "three-rooms.toml")
    result = run(model, refinement=None)
    assert any("no surface faces an unheated environment ('stair')" in w
               for w in result.warnings)
    stair = [c for c in result.coupling_coefficients if "stair" in c.between]
    assert stair and all(c.value == 0.0 for c in stair)


def test_more_temperatures_have_no_design_temperatures(three):
    from bridgecalc.results import design_temperatures
    with pytest.raises(ModelError, match="weighting factors"):
        design_temperatures(three[1])
