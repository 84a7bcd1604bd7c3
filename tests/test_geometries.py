"""The junction library in geometries/: valid models, checked parameters, and
plausible results.

Sources of the reference values:

- Ψ ranges: the default Ψ values of ISO 14683 (Annex, table of default values,
  external dimensions), recalled from memory and not checked against the
  current text; the ranges below are deliberately generous around them, as a
  practitioner's plausibility check, not a validation.
- Timber stud: the upper and lower limits of thermal resistance of ISO 6946
  (clause on inhomogeneous layers, from memory). They bound the exact 2D
  resistance of a wall with a repeating stud, so the computed U must lie
  between them; this is a check against a published method, not against the
  code.
- Directions of change (more insulation at a bridge -> lower Ψ): common
  practice, no single source.

Demo data are from the fictional building of docs/scenario.md.
"""

from __future__ import annotations

import functools
import importlib.util
import math
from pathlib import Path

import pytest

from bridgecalc.errors import ModelError
from bridgecalc.model import Model

from bridgecalc import run


GEOMETRIES = Path(__file__).resolve().parent.parent / "geometries"
FAMILIES = ["slab_edge", "balcony", "wall_corner", "window_jamb", "eaves", "parapet",
            "ground_floor", "steel_beam", "timber_stud"]


@functools.cache
def script(name):
    spec = importlib.util.spec_from_file_location(f"geometry_{name}", GEOMETRIES / f"{name}.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@functools.cache
def result(name, **params):
    return run(script(name).build(**params))


def validate_model(model):
    from bridgecalc.model import validate
    validate(model)


# --------------------------------------------------------------------------- building

@pytest.mark.parametrize("name", FAMILIES)
def test_defaults_build_a_valid_model(name):
    module = script(name)
    model = module.build()
    assert isinstance(model, Model)
    assert model.length_unit == "mm"
    assert module.DIMENSION_SYSTEM in model.name
    kinds = {env.kind for env in model.environments}
    assert kinds == {"interior", "exterior"}
    assert model.flanking, "every family gives its flanking elements"
    assert 2 <= len(model.regions) <= 60          # modest models
    validate_model(model)


@pytest.mark.parametrize("name", FAMILIES)
def test_parameters_carry_units_in_their_names(name):
    for parameter, default in script(name).PARAMETERS.items():
        if isinstance(default, bool):
            continue
        assert parameter.rsplit("_", 1)[-1] in ("mm", "mk", "deg"), parameter


@pytest.mark.parametrize("name", FAMILIES)
def test_unknown_parameter_is_named(name):
    with pytest.raises(ModelError, match="insulaton_thickness_mm"):
        script(name).build(insulaton_thickness_mm=100.0)


@pytest.mark.parametrize("name", FAMILIES)
def test_negative_thickness_is_named(name):
    parameter = next(p for p in script(name).PARAMETERS if p.endswith("_mm"))
    with pytest.raises(ModelError, match=parameter):
        script(name).build(**{parameter: -10.0})


@pytest.mark.parametrize("name", FAMILIES)
def test_non_number_is_named(name):
    parameter = next(p for p in script(name).PARAMETERS if p.endswith("_mm"))
    with pytest.raises(ModelError, match=parameter):
        script(name).build(**{parameter: "thick"})


# one geometric limit per family: a layer thicker than its place allows
LIMITS = [
    ("slab_edge", "slab_edge_insulation_mm", 240.0),
    ("balcony", "break_thickness_mm", 200.0),
    ("wall_corner", "wall_thickness_mm", 0.0),
    ("window_jamb", "reveal_insulation_mm", 100.0),
    ("eaves", "roof_pitch_deg", 80.0),
    ("parapet", "upstand_insulation_mm", 5000.0),
    ("ground_floor", "floor_level_mm", 500.0),
    ("steel_beam", "column_projection_mm", 160.0),
    ("timber_stud", "stud_width_mm", 600.0),
]


@pytest.mark.parametrize("name, parameter, value", LIMITS)
def test_geometric_limit_is_named(name, parameter, value):
    with pytest.raises(ModelError, match=parameter):
        script(name).build(**{parameter: value})


@pytest.mark.parametrize("value", [1, "yes", None])
def test_flag_must_be_bool(value):
    with pytest.raises(ModelError, match="thermal_break"):
        script("balcony").build(thermal_break=value)


# --------------------------------------------------------------------------- results

# ISO 14683 default Ψ values, external dimensions, recalled from memory (not
# checked against the current text); generous ranges around them [W/(m·K)].
PSI_RANGES = {
    # intermediate floor, insulation continuous outside: about 0
    "slab_edge": (-0.10, 0.20),
    # balcony with a thermal break: well below the continuous slab (~0.9)
    "balcony": (0.05, 0.50),
    # outside corner of an externally insulated wall: slightly negative
    "wall_corner": (-0.25, 0.0),
    # window in an externally insulated wall: about 0 to a few tenths
    "window_jamb": (-0.10, 0.50),
    # roof to wall: about 0 to 0.2
    "eaves": (-0.25, 0.30),
    # parapet: a few tenths
    "parapet": (-0.10, 0.80),
    # ground floor edge: about 0 to 0.6
    "ground_floor": (-0.20, 0.90),
    # no table entry: plausibility only (common practice)
    "steel_beam": (0.0, 0.50),
    "timber_stud": (0.0, 0.10),
}


@pytest.mark.parametrize("name", FAMILIES)
def test_psi_at_defaults_is_plausible(name):
    r = result(name)
    low, high = PSI_RANGES[name]
    assert low <= r.psi <= high, f"{name}: Ψ = {r.psi:.4f} W/(m·K)"
    assert 0.0 < r.f_rsi < 1.0
    assert r.coupling_coefficient > 0.0


def test_balcony_without_break_is_near_the_default_table():
    # ISO 14683, balcony slab through the insulation: about 0.9 (from memory)
    psi = result("balcony", thermal_break=False).psi
    assert 0.40 <= psi <= 1.50


def test_thermal_break_lowers_psi():
    with_break = result("balcony").psi
    without = result("balcony", thermal_break=False).psi
    assert with_break < 0.6 * without


def test_slab_edge_insulation_lowers_psi():
    bare = result("slab_edge", slab_edge_insulation_mm=0.0).psi
    insulated = result("slab_edge", slab_edge_insulation_mm=120.0).psi
    assert insulated < bare


def test_column_projection_raises_psi():
    assert result("steel_beam", column_projection_mm=0.0).psi < \
        result("steel_beam", column_projection_mm=120.0).psi


def test_reveal_insulation_lowers_psi():
    assert result("window_jamb", reveal_insulation_mm=60.0).psi < \
        result("window_jamb", reveal_insulation_mm=0.0).psi


# Directions of change for the remaining families with a clear one (common
# practice, no single source: insulating the path of the bridge lowers Ψ, a
# wider conducting member across the insulation raises it; the flanking
# clear-field U is the same in each pair, so Ψ follows L2D).

def test_parapet_upstand_insulation_lowers_psi():
    assert result("parapet", upstand_insulation_mm=120.0).psi < \
        result("parapet", upstand_insulation_mm=40.0).psi


def test_ground_floor_perimeter_insulation_lowers_psi():
    none = result("ground_floor", perimeter_insulation_mm=0.0).psi
    shallow = result("ground_floor", perimeter_insulation_depth_mm=300.0).psi
    default = result("ground_floor").psi
    assert default < shallow < none


def test_wider_timber_stud_raises_psi():
    # timber λ 0.13 against mineral wool 0.035 W/(m·K) (ISO 10456 typical, from memory)
    assert result("timber_stud", stud_width_mm=90.0).psi > \
        result("timber_stud", stud_width_mm=45.0).psi


def test_timber_stud_lies_between_iso6946_limits():
    """U of the 2D stud wall between the ISO 6946 upper and lower limits of R.

    ISO 6946, inhomogeneous layers (from memory): upper limit
    1/R' = Σ f_m / R_T,m over parallel paths; lower limit
    R'' = Rsi + Σ_j 1/(Σ_m f_m/R_mj) + Rse. The exact 2D resistance lies
    between them.
    """
    module = script("timber_stud")
    p = module.PARAMETERS
    model = module.build()
    lam = {name: m.conductivity for name, m in model.materials.items()}
    rsi, rse = 0.13, 0.04                 # ISO 6946, horizontal (from memory)
    f_stud = p["stud_width_mm"] / p["stud_spacing_mm"]
    common = (p["lining_thickness_mm"] / 1000 / lam["plasterboard"]
              + p["service_void_mm"] / 1000 / lam["service_void"]
              + p["sheathing_thickness_mm"] / 1000 / lam["plywood"]
              + p["outer_insulation_mm"] / 1000 / lam["mineral_wool"])
    d_stud = p["stud_depth_mm"] / 1000
    r_stud_path = rsi + common + d_stud / lam["softwood"] + rse
    r_clear_path = rsi + common + d_stud / lam["mineral_wool"] + rse
    r_upper = 1.0 / (f_stud / r_stud_path + (1 - f_stud) / r_clear_path)
    r_lower = rsi + common + 1.0 / (f_stud * lam["softwood"] / d_stud
                                    + (1 - f_stud) * lam["mineral_wool"] / d_stud) + rse
    u_2d = result("timber_stud").coupling_coefficient / (p["stud_spacing_mm"] / 1000)
    assert 1.0 / r_upper * 0.995 <= u_2d <= 1.0 / r_lower * 1.005


@pytest.mark.parametrize("name", FAMILIES)
def test_round_trip_through_a_model_file(name, tmp_path):
    from bridgecalc.readers import modelfile as model_module
    path = tmp_path / f"{name}.toml"
    model_module.write(script(name).build(), path)
    again = run(model_module.read(path))
    first = result(name)
    for attribute in ("psi", "f_rsi", "coupling_coefficient"):
        assert math.isclose(getattr(again, attribute), getattr(first, attribute),
                            rel_tol=1e-9, abs_tol=1e-12), attribute
