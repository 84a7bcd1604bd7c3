"""The core path against published references and physical invariants.

References: ISO 10211:2017 Annex C (test reference cases 1 and 2),
ISO 6946:2017 6.7.1 (plane layers), the 1D generating slab (Incropera et al.,
Fundamentals of Heat and Mass Transfer, §3.5), and ISO 10211's own mesh
criterion (doubling the subdivisions changes the heat flow by < 1 %).
"""

import dataclasses
import json
import math

import numpy as np
import pytest

from bridgecalc import ModelError
from bridgecalc.validation import cases as validation
from bridgecalc.mesh import MeshOptions
from bridgecalc.model import Environment, Flanking, Probe, Region, Surface
from bridgecalc.outputs import results_json
from bridgecalc.api import load, run

from conftest import GEOMETRIES


@pytest.mark.parametrize("check", validation.CHECKS, ids=lambda c: c.__name__)
def test_validation_case_passes(check):
    """Every built-in reference case passes at default settings."""
    rows = check(run)
    failed = [f"{r.quantity}: {r.value:.6g} vs {r.reference:.6g}" for r in rows if not r.passed]
    assert rows and not failed


def test_case1_at_28_points_against_fourier_series():
    """ISO 10211 case-1 set-up: 28 points within 0.1 K of the Fourier series."""
    rows = validation.check_case1(run)
    assert len(rows) >= 28
    assert max(abs(r.deviation) for r in rows) < 0.1


def test_fourier_series_itself():
    """The series meets its boundary data: hot side 20 °C, midline symmetric,
    and at the centre of a square the value is θh/4 (superposition of four
    rotated problems; Incropera et al. §4.2)."""
    square = validation.fourier_rectangle(0.5, 0.5, width=1.0, height=1.0, hot=20.0)
    assert square == pytest.approx(5.0, abs=1e-9)
    near_hot = validation.fourier_rectangle(0.5, 1.999999, hot=20.0, terms=200000)
    assert near_hot == pytest.approx(20.0, abs=0.01)
    left = validation.fourier_rectangle(0.2, 1.0)
    right = validation.fourier_rectangle(0.8, 1.0)
    assert left == pytest.approx(right, rel=1e-12)


def test_case2_heat_flow_and_temperatures():
    """ISO 10211 case 2: 9.5 W/m within 0.1 W/m; nine points within 0.1 K."""
    rows = validation.check_case2(run)
    assert all(r.passed for r in rows)
    flow = [r for r in rows if r.quantity.startswith("heat flow")][0]
    assert abs(flow.value - 9.5) < 0.1


def test_plane_layers_u_value_and_zero_psi():
    """ISO 6946 plane layers: U to 1e-9 relative and Ψ = 0 within round-off."""
    result = run(validation.layers_model())
    u = 1.0 / (0.13 + 0.015 / 0.70 + 0.240 / 0.80 + 0.160 / 0.035 + 0.010 / 0.87 + 0.04)
    assert result.coupling_coefficient == pytest.approx(u * 1.0, rel=1e-9)
    assert abs(result.psi) < 1e-9
    assert result.heat_flow_case.flanking[0].u_value == pytest.approx(u, rel=1e-12)


def test_heat_source_parabola_p2_exact():
    """P2 contains the parabola: Galerkin reproduces it to round-off."""
    result = run(validation.source_model(), element="P2")
    for probe in validation.source_model().probes:
        assert result.heat_flow_case.probes[probe.name] == pytest.approx(
            validation.slab_profile(probe.at[0]), abs=1e-9)


def test_heat_source_balance_includes_generation():
    """Flows out through both faces equal q·L·h (energy conservation)."""
    result = run(validation.source_model())
    flows = result.heat_flow_case.heat_flow
    generated = validation.SLAB_GENERATION * validation.SLAB_THICKNESS * 0.4
    assert -(flows["warm"] + flows["cold"]) == pytest.approx(generated, rel=1e-9)
    assert result.heat_flow_case.balance < 1e-9


# -- a strong thermal bridge for invariants -----------------------------------

@pytest.fixture(scope="module")
def balcony():
    return load(GEOMETRIES / "balcony.py")


def transformed(model, transform, unit=None, scale=1.0):
    """The same model with every coordinate mapped by ``transform``."""
    def pt(p):
        x, y = transform(np.asarray(p, dtype=float))
        return (float(x) * scale, float(y) * scale)

    regions = [Region.polygon(r.material, [pt(v) for v in r.vertices], r.heat_source)
               for r in model.regions]
    surfaces = [dataclasses.replace(s, path=tuple(pt(v) for v in s.path)) for s in model.surfaces]
    probes = [Probe(p.name, pt(p.at)) for p in model.probes]
    flanking = []
    for f in model.flanking:
        layers = (tuple(dataclasses.replace(layer, thickness=layer.thickness * scale)
                        for layer in f.layers) if f.layers else f.layers)
        flanking.append(dataclasses.replace(f, length=f.length * scale, layers=layers))
    materials = dict(model.materials)
    if scale != 1.0:
        materials = {}
        for name, m in model.materials.items():
            if m.air_layer is not None:
                m = dataclasses.replace(m, air_layer=dataclasses.replace(
                    m.air_layer, thickness=m.air_layer.thickness * scale))
            materials[name] = m
    return dataclasses.replace(model, regions=regions, surfaces=surfaces, probes=probes,
                               flanking=flanking, materials=materials,
                               length_unit=unit or model.length_unit)


#: Meshes of a turned or mirrored model differ (the mesher is not invariant),
#: so results agree within the discretisation error: we state 0.5 % of L2D
#: for Ψ and 0.005 for fRsi at default settings.
PSI_TOLERANCE_OF_L2D = 5e-3
F_RSI_TOLERANCE = 5e-3


@pytest.mark.parametrize("name, transform, unit, scale", [
    ("turned 90°", lambda p: np.array([-p[1], p[0]]), None, 1.0),
    ("mirrored", lambda p: np.array([-p[0], p[1]]), None, 1.0),
    ("shifted", lambda p: p + np.array([12345.0, -6789.0]), None, 1.0),
    ("in metres", lambda p: p, "m", 1e-3),
])
def test_same_detail_same_answer(balcony, name, transform, unit, scale):
    base = run(balcony)
    other = run(transformed(balcony, transform, unit, scale))
    assert other.psi == pytest.approx(base.psi, abs=PSI_TOLERANCE_OF_L2D * base.coupling_coefficient)
    assert other.f_rsi == pytest.approx(base.f_rsi, abs=F_RSI_TOLERANCE)
    assert other.coupling_coefficient == pytest.approx(
        base.coupling_coefficient, rel=PSI_TOLERANCE_OF_L2D)


def test_metres_and_millimetres_identical_mesh(balcony):
    """A pure change of unit meshes identically: results agree to round-off."""
    base = run(balcony)
    other = run(transformed(balcony, lambda p: p, "m", 1e-3))
    assert other.coupling_coefficient == pytest.approx(base.coupling_coefficient, rel=1e-6)
    assert other.f_rsi == pytest.approx(base.f_rsi, abs=1e-6)


def test_balance_and_iso_doubling_criterion(balcony):
    """Heat-flow balance below 1e-9; one uniform refinement (all sizes halved)
    changes the heat flow by less than 1 % (ISO 10211:2017, 5.3.2 criterion,
    from memory of the clause number)."""
    coarse = run(balcony, refinement=None)                 # one mesh each, no study
    fine = run(balcony, MeshOptions(refinement=2.0), refinement=None)
    assert coarse.heat_flow_case.balance < 1e-9
    assert fine.heat_flow_case.balance < 1e-9
    assert fine.mesh.node_count > 2 * coarse.mesh.node_count      # really refined
    q0 = coarse.heat_flow_case.heat_flow["inside"] if "inside" in coarse.heat_flow_case.heat_flow \
        else max(coarse.heat_flow_case.heat_flow.values())
    q1 = fine.heat_flow_case.heat_flow["inside"] if "inside" in fine.heat_flow_case.heat_flow \
        else max(fine.heat_flow_case.heat_flow.values())
    assert abs(q1 - q0) / abs(q1) < 0.01


def test_p2_agrees_with_p1(balcony):
    p1 = run(balcony)
    p2 = run(balcony, element="P2")
    assert p2.psi == pytest.approx(p1.psi, abs=PSI_TOLERANCE_OF_L2D * p1.coupling_coefficient)


def test_deterministic(balcony):
    """The same input gives byte-identical results.json."""
    assert results_json(run(balcony)) == results_json(run(balcony))


def test_results_json_has_the_contract_keys(balcony):
    data = json.loads(results_json(run(balcony)))
    assert data["format"] == 1
    assert set(data["mesh"]) >= {"nodes", "triangles", "element"}
    hf, st = data["heat_flow_case"], data["surface_temperature_case"]
    assert set(hf) >= {"heat_flow", "balance", "coupling_coefficient", "flanking", "psi",
                       "probes"}
    assert set(st) >= {"theta_si_min", "theta_si_min_at", "f_rsi", "probes"}
    for f in hf["flanking"]:
        assert set(f) == {"name", "u_value", "length", "ul"}
        assert f["ul"] == pytest.approx(f["u_value"] * f["length"] * 1e-3, rel=1e-12)
    assert math.isclose(sum(hf["heat_flow"].values()), 0.0, abs_tol=1e-9)


def test_surface_temperature_case_uses_its_own_resistance(balcony):
    """With Rsi = 0.25 instead of 0.13 the coldest interior surface is colder."""
    result = run(balcony)
    assert result.surface_temperature_case.theta_si_min < min(
        result.heat_flow_case.probes.values(), default=math.inf) + 1.0
    same = dataclasses.replace(balcony, surfaces=[
        dataclasses.replace(s, resistance_surface_temperature=None) for s in balcony.surfaces])
    assert run(same).theta_si_min > result.theta_si_min


def test_more_than_two_temperatures_need_the_flanking_pair(balcony):
    """Addition A: a third environment at its own temperature makes Ψ a matter
    of pairs, so flanking elements must name theirs."""
    envs = list(balcony.environments) + [Environment("neighbour", 12.0, "interior")]
    model = dataclasses.replace(balcony, environments=envs)
    with pytest.raises(ModelError, match=r"flanking\[0\]\.between: missing"):
        run(model)


def test_equal_temperatures_is_a_clear_error(balcony):
    envs = [dataclasses.replace(e, temperature=20.0) for e in balcony.environments]
    with pytest.raises(ModelError, match="temperature difference"):
        run(dataclasses.replace(balcony, environments=envs))


def test_probe_on_outline_corner():
    """A probe exactly on an outline corner is evaluated (ISO case 2, point A)."""
    result = run(validation.case2_model())
    assert result.heat_flow_case.probes["A"] == pytest.approx(7.1, abs=0.1)


def test_written_model_reads_back_to_same_results(balcony, tmp_path):
    from bridgecalc.readers.modelfile import write
    path = tmp_path / "balcony.toml"
    write(balcony, path)
    again = load(path)
    assert results_json(run(again)) == results_json(run(balcony)).replace(
        json.dumps(balcony.name), json.dumps(again.name))


def test_flanking_result_is_ul(balcony):
    result = run(balcony)
    total = sum(f.ul for f in result.heat_flow_case.flanking)
    assert result.psi == pytest.approx(result.coupling_coefficient - total, abs=1e-12)
    assert isinstance(balcony.flanking[0], Flanking)
    assert all(isinstance(s, Surface) for s in balcony.surfaces)


def test_positions_are_printed_to_a_ten_thousandth_of_the_model():
    """The rounding rule of bridgecalc.model.geometry.position_text (the tool's own)."""
    from bridgecalc.model.geometry import position_text
    assert position_text((-6.86813, 150.0), 24400.0) == "(-7, 150)"
    assert position_text((0.0, -1200.0), 2620.0) == "(0, -1200)"
    assert position_text((191.04, 100.0), 2620.0) == "(191, 100)"
    assert position_text((0.012549, 1.2), 2.62) == "(0.0125, 1.2)"
    assert position_text((-0.00001, 3.0), 2.62) == "(0, 3)"
