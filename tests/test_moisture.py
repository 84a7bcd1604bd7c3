"""ISO 13788 surface humidity: the formulas, the [moisture] table and its climate,
the monthly check and its verdict.

Outside references: ASHRAE's saturation pressure over water and ice (the
Hyland–Wexler formulas as psychrolib implements them, ASHRAE Handbook
Fundamentals 2017 ch. 1 eq. 5 and 6), and one month worked by hand from ISO
13788's formulas (Annex E psat, Annex A humidity classes, clause 5.2; from
memory of that standard, as bridgecalc/physics/iso13788.py says).
"""

import json
import math
import textwrap
from types import SimpleNamespace

import numpy as np
import psychrolib
import pytest

from bridgecalc.assessments import assess_moisture, critical_month, monthly_requirements
from bridgecalc.cli import main
from bridgecalc.errors import ModelError
from bridgecalc.model.moisture import ClimateMonth, MoistureCheck
from bridgecalc.physics import iso13788
from bridgecalc.readers.modelfile import dumps, loads, read

psychrolib.SetUnitSystem(psychrolib.SI)

#: A climate of the fictional town of the demos (docs/scenario.md), invented.
CLIMATE = [(1, -1.0, 0.85), (2, 0.5, 0.83), (3, 3.5, 0.80), (4, 7.5, 0.76),
           (5, 11.5, 0.75), (6, 14.5, 0.76), (7, 16.5, 0.77), (8, 16.0, 0.79),
           (9, 13.0, 0.82), (10, 9.0, 0.85), (11, 4.0, 0.87), (12, 0.5, 0.87)]
CSV = "month,temperature,relative_humidity\n" + "".join(
    f"{m},{t},{h}\n" for m, t, h in CLIMATE)

MODEL = textwrap.dedent("""\
    format = 1
    name = "Plate, moisture"
    length_unit = "mm"
    [materials.concrete]
    conductivity = 2.3
    [materials.insulation]
    conductivity = 0.035
    [materials.steel]
    conductivity = 50.0
    [[regions]]
    material = "concrete"
    rectangle = [0, 0, 200, 1000]
    [[regions]]
    material = "insulation"
    rectangle = [200, 0, 360, 1000]
    [[regions]]
    material = "steel"
    rectangle = [200, 495, 360, 505]
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
    path = [[0, 0], [0, 1000]]
    [[surfaces]]
    environment = "outside"
    resistance = 0.04
    path = [[360, 0], [360, 1000]]
    """)


def moisture_table(**keys) -> str:
    keys = {"climate": '"climate.csv"', "interior_humidity_class": "3",
            "criterion": '"mould"', **keys}
    return "\n[moisture]\n" + "".join(f"{k} = {v}\n" for k, v in keys.items() if v is not None)


def files(tmp_path, csv=CSV, **keys):
    (tmp_path / "climate.csv").write_text(csv, encoding="utf-8")
    path = tmp_path / "detail.toml"
    path.write_text(MODEL + moisture_table(**keys), encoding="utf-8")
    return path


# -- the formulas --------------------------------------------------------------

GRID = np.round(np.arange(-20.0, 30.01, 0.5), 2)


@pytest.mark.parametrize("theta", GRID)
def test_saturation_pressure_agrees_with_ashrae(theta):
    """psat of ISO 13788 Annex E against psychrolib's GetSatVapPres (ASHRAE,
    over ice below 0.01 °C): within 0.5 % from −19.5 to 30 °C. At −20 °C the
    two differ by 0.504 % (measured here): ISO 13788's ice formula is a
    Magnus fit, so that point gets 0.51 %."""
    reference = psychrolib.GetSatVapPres(float(theta))
    tolerance = 0.0051 if theta < -19.75 else 0.005
    assert iso13788.saturation_vapour_pressure(theta) == pytest.approx(reference,
                                                                      rel=tolerance)


@pytest.mark.parametrize("theta", GRID)
def test_saturation_temperature_inverts_it_against_ashrae(theta):
    """The inverse gives back the temperature exactly, and the temperature it
    gives for ASHRAE's pressure is one at which ASHRAE's psat is that pressure
    within the same 0.5 % (0.51 % at −20 °C)."""
    assert iso13788.saturation_temperature(
        iso13788.saturation_vapour_pressure(theta)) == pytest.approx(theta, abs=1e-9)
    reference = psychrolib.GetSatVapPres(float(theta))
    theta_back = iso13788.saturation_temperature(reference)
    tolerance = 0.0052 if theta < -19.75 else 0.005
    assert psychrolib.GetSatVapPres(theta_back) == pytest.approx(reference, rel=tolerance)


def test_saturation_pressure_is_continuous_at_zero():
    """Both branches give 610.5 Pa at 0 °C; across 0 °C the jump is no larger
    than the slope over the step (Annex E's own numbers: 610.5·17.269/237.3
    ≈ 44.4 Pa/K over water)."""
    step = 1e-6
    below = iso13788.saturation_vapour_pressure(-step)
    above = iso13788.saturation_vapour_pressure(step)
    assert iso13788.saturation_vapour_pressure(0.0) == 610.5
    assert abs(above - below) < 2 * step * 610.5 * 21.875 / 265.5
    assert iso13788.saturation_temperature(610.5) == 0.0
    assert abs(iso13788.saturation_temperature(610.5 * (1 - 1e-12))) < 1e-9


def test_one_month_worked_by_hand():
    """θe = 3.5 °C, φe = 0.88, humidity class 2, θi = 20 °C, mould (φsi,crit 0.8).

    psat(3.5) = 610.5·exp(17.269·3.5/240.8) = 610.5·exp(0.2510030) = 784.684 Pa
    pe = 0.88·784.684 = 690.522 Pa
    Δp = 540·(1 − 3.5/20) = 445.5 Pa; pi = 690.522 + 1.10·445.5 = 1180.572 Pa
    psat(θsi,min) = 1180.572/0.8 = 1475.715 Pa; x = ln(1475.715/610.5) = 0.882624
    θsi,min = 237.3·x/(17.269 − x) = 12.78169 °C
    fRsi,min = (12.78169 − 3.5)/(20 − 3.5) = 0.562527
    """
    assert iso13788.saturation_vapour_pressure(3.5) == pytest.approx(784.684, abs=1e-3)
    pe = iso13788.exterior_vapour_pressure(3.5, 0.88)
    assert pe == pytest.approx(690.522, abs=1e-3)
    assert iso13788.vapour_pressure_excess(2, 3.5) == pytest.approx(445.5, abs=1e-9)
    pi = iso13788.interior_vapour_pressure(3.5, 0.88, humidity_class=2)
    assert pi == pytest.approx(1180.572, abs=1e-3)
    theta = iso13788.minimum_surface_temperature(pi, 0.8)
    assert theta == pytest.approx(12.78169, abs=1e-4)
    assert iso13788.minimum_temperature_factor(theta, 20.0, 3.5) == pytest.approx(
        0.562527, abs=1e-4)
    # the same month through the model's check
    moisture = MoistureCheck(tuple(ClimateMonth(m, 3.5 if m == 1 else 25.0, 0.88)
                                   for m in range(1, 13)), "mould", 2)
    january = monthly_requirements(moisture, 20.0)[0]
    assert january.f_rsi_required == pytest.approx(0.562527, abs=1e-4)


def test_a_month_below_zero_worked_by_hand():
    """θe = −4 °C, φe = 0.9, class 4 (Δp 1080 Pa at θe ≤ 0), condensation, θi = 21 °C.

    psat(−4) = 610.5·exp(21.875·(−4)/261.5) = 610.5·exp(−0.334608) = 436.885 Pa
    pe = 393.197 Pa; pi = 393.197 + 1.10·1080 = 1581.197 Pa
    θsi,min: x = ln(1581.197/610.5) = 0.951628; 237.3·x/(17.269 − x) = 13.83980 °C
    fRsi,min = (13.83980 + 4)/25 = 0.713592
    """
    pi = iso13788.interior_vapour_pressure(-4.0, 0.9, humidity_class=4)
    assert pi == pytest.approx(1581.197, abs=1e-3)
    theta = iso13788.minimum_surface_temperature(pi, 1.0)
    assert theta == pytest.approx(13.83980, abs=1e-4)
    assert iso13788.minimum_temperature_factor(theta, 21.0, -4.0) == pytest.approx(
        0.713592, abs=1e-4)


def test_humidity_classes_fall_linearly_to_zero_at_twenty():
    """Annex A: 270·class Pa at θe ≤ 0 °C, half of it at 10 °C, none from 20 °C."""
    for k in range(1, 6):
        assert iso13788.vapour_pressure_excess(k, -5.0) == 270.0 * k
        assert iso13788.vapour_pressure_excess(k, 10.0) == pytest.approx(135.0 * k)
        assert iso13788.vapour_pressure_excess(k, 20.0) == 0.0
        assert iso13788.vapour_pressure_excess(k, 26.0) == 0.0


def test_fixed_interior_humidity():
    """pi = φi·psat(θi): 0.5 at 20 °C is 0.5·2337.1 Pa (Annex E water formula)."""
    expected = 0.5 * 610.5 * math.exp(17.269 * 20 / 257.3)
    assert iso13788.interior_vapour_pressure(5.0, 0.8, interior_relative_humidity=0.5,
                                             interior_temperature=20.0) == pytest.approx(
        expected, rel=1e-12)


# -- properties of the monthly check ----------------------------------------------

def random_climates(count=40, seed=14):
    rng = np.random.default_rng(seed)
    for _ in range(count):
        temperatures = rng.uniform(-15, 24, 12)
        humidities = rng.uniform(0.5, 1.0, 12)
        yield tuple(ClimateMonth(m + 1, float(t), float(h))
                    for m, (t, h) in enumerate(zip(temperatures, humidities)))


def stand_in(moisture, f_rsi):
    """A two-temperature result as the assessment reads it (fRsi only)."""
    model = SimpleNamespace(moisture=moisture, environment=lambda name: SimpleNamespace(
        name="inside", temperature=20.0, kind="interior"))
    case = SimpleNamespace(f_rsi=f_rsi, theta_si_min_environment="inside",
                           weighting_factors={})
    return SimpleNamespace(model=model, surface_temperature_case=case, warnings=[],
                           cases=None)


def test_properties_of_the_monthly_check():
    """Over invented climates: the critical month carries the largest
    requirement; months with θe ≥ θi carry none; a higher humidity class never
    lowers a requirement; a junction with a better fRsi passes wherever a worse
    one passes (ISO 13788 clause 5, from memory)."""
    for climate in random_climates():
        by_class = []
        for k in range(1, 6):
            moisture = MoistureCheck(climate, "mould", k)
            months = monthly_requirements(moisture, 20.0)
            for m in months:
                assert (m.f_rsi_required is None) == (m.exterior_temperature >= 20.0)
            critical = critical_month(months)
            required = [m.f_rsi_required for m in months if m.f_rsi_required is not None]
            assert critical.f_rsi_required == max(required)
            by_class.append([m.f_rsi_required for m in months])
            verdicts = [assess_moisture(stand_in(moisture, f)).verdict
                        for f in np.linspace(0.3, 0.99, 24)]
            first_pass = verdicts.index("passes") if "passes" in verdicts else len(verdicts)
            assert all(v == "fails" for v in verdicts[:first_pass])
            assert all(v == "passes" for v in verdicts[first_pass:])
        for lower, higher in zip(by_class, by_class[1:]):
            for a, b in zip(lower, higher):
                assert (a is None and b is None) or b >= a


def test_a_month_warmer_than_the_interior_asks_nothing():
    climate = tuple(ClimateMonth(m, 22.0 if m == 7 else 5.0, 0.8) for m in range(1, 13))
    months = monthly_requirements(MoistureCheck(climate, "condensation", 2), 20.0)
    assert months[6].f_rsi_required is None
    assert "f_rsi_required" not in months[6].to_dict()
    assert all(m.f_rsi_required is not None for k, m in enumerate(months) if k != 6)


def test_condensation_asks_less_than_mould():
    """φsi,crit 1.0 against 0.8: a lower θsi,min every month."""
    for climate in random_climates(5):
        mould = monthly_requirements(MoistureCheck(climate, "mould", 3), 20.0)
        wet = monthly_requirements(MoistureCheck(climate, "condensation", 3), 20.0)
        assert all(w.minimum_surface_temperature < m.minimum_surface_temperature
                   for m, w in zip(mould, wet))


# -- the [moisture] table -------------------------------------------------------

def test_reads_a_climate_file_and_writes_it_back_inline(tmp_path):
    model = read(files(tmp_path))
    assert [m.month for m in model.moisture.climate] == list(range(1, 13))
    assert model.moisture.climate[0].temperature == -1.0
    text = dumps(model)
    assert "[moisture]" in text and "climate.csv" not in text
    assert loads(text) == model


def test_inline_climate(tmp_path):
    rows = ", ".join(f"{{ month = {m}, temperature = {t}, relative_humidity = {h} }}"
                     for m, t, h in reversed(CLIMATE))
    path = files(tmp_path, climate=f"[{rows}]")
    model = read(path)
    assert [m.month for m in model.moisture.climate] == list(range(1, 13))
    assert model.moisture == read(files(tmp_path)).moisture


def bad(tmp_path, capsys, csv=CSV, **keys):
    """Run the command line on a bad model: exit 2, the message, nothing written."""
    path = files(tmp_path, csv, **keys)
    out = tmp_path / "out"
    assert main(["run", str(path), "--out", str(out)]) == 2
    assert not out.exists()
    err = capsys.readouterr().err
    assert err.startswith("error: ") and str(path) in err
    return err


@pytest.mark.parametrize("csv, expected", [
    ("".join(CSV.splitlines(keepends=True)[:-1]), "got 11; month 12 missing"),
    (CSV + "12,1.0,0.8\n", "month 12 is given twice"),
    (CSV.replace("\n5,", "\n4,"), "month 4 is given twice"),
    (CSV.replace("0.85\n", "85\n", 1), "looks like a percentage"),
    (CSV.replace("0.85\n", "150\n", 1), "a fraction 0 to 1, got 150"),
    (CSV.replace("0.85\n", "-0.1\n", 1), "a fraction 0 to 1, got -0.1"),
    (CSV.replace("0.85\n", "0\n", 1), "a relative humidity of 0 leaves no vapour"),
    (CSV.replace("3.5,", "warm,"), "column temperature: expected a number, got 'warm'"),
    (CSV.replace("3.5,", "nan,"), "expected a finite number"),
    (CSV.replace("month,", "mnth,"), "no column 'month'"),
    (CSV + "13,1.0,0.8\n", "expected a month number 1 to 12"),
])
def test_bad_climate_files(tmp_path, capsys, csv, expected):
    err = bad(tmp_path, capsys, csv)
    assert "moisture.climate" in err and "climate.csv" in err
    assert expected in err


def test_the_place_of_a_bad_value_in_the_climate_file(tmp_path, capsys):
    err = bad(tmp_path, capsys, CSV.replace("3.5,", "warm,"))
    assert "climate.csv, line 4, column temperature" in err


@pytest.mark.parametrize("keys, expected", [
    ({"interior_relative_humidity": "0.5"}, "either interior_humidity_class or "
                                            "interior_relative_humidity, not both"),
    ({"interior_humidity_class": "6"}, "moisture.interior_humidity_class: expected a whole "
                                       "number 1 to 5"),
    ({"interior_humidity_class": "0"}, "expected a whole number 1 to 5"),
    ({"interior_humidity_class": "2.5"}, "expected a whole number 1 to 5"),
    ({"interior_humidity_class": None}, "moisture.interior_humidity_class: missing"),
    ({"interior_humidity_class": None, "interior_relative_humidity": "50"},
     "moisture.interior_relative_humidity: 50 looks like a percentage"),
    ({"criterion": '"mold-ish"'}, "moisture.criterion: unknown criterion 'mold-ish'"),
    ({"climate": '"nowhere.csv"'}, "moisture.climate: nowhere.csv: no such climate file"),
    ({"dew": "1"}, "moisture.dew: unknown key"),
    ({"interior_temperature": '"warm"'}, "moisture.interior_temperature: expected a number"),
])
def test_bad_moisture_tables(tmp_path, capsys, keys, expected):
    err = bad(tmp_path, capsys, **keys)
    assert expected in err


def test_bad_inline_climate(tmp_path):
    rows = [f"{{ month = {m}, temperature = {t}, relative_humidity = {h} }}"
            for m, t, h in CLIMATE]
    rows[2] = '{ month = 3, temperature = "mild", relative_humidity = 0.8 }'
    with pytest.raises(ModelError, match=r"detail\.toml: moisture\.climate\[2\]\.temperature: "
                                         r"expected a number"):
        read(files(tmp_path, climate=f"[{', '.join(rows)}]"))
    with pytest.raises(ModelError, match=r"moisture\.climate: a climate has twelve months.*"
                                         r"got 11"):
        read(files(tmp_path, climate=f"[{', '.join(rows[:2] + rows[3:])}]"))


def test_a_climate_column_names_an_unheated_environment_only(tmp_path):
    csv = CSV.replace("relative_humidity\n", "relative_humidity,garage\n")
    csv = "\n".join(line + (",5.0" if k else "") for k, line in
                    enumerate(csv.splitlines())) + "\n"
    with pytest.raises(ModelError, match=r"column garage: unknown column: no environment"):
        read(files(tmp_path, csv))


# -- a run ----------------------------------------------------------------------

def test_a_run_writes_the_monthly_check(tmp_path, capsys):
    """The check of results.json against the monthly formulas for the junction's
    own fRsi: the critical month is the month of the largest requirement, and
    the verdict is fRsi ≥ it."""
    path = files(tmp_path)
    out = tmp_path / "out"
    assert main(["run", str(path), "--out", str(out), "--tolerance", "0.01",
                 "--f-rsi-min", "0.75"]) == 0
    printed = capsys.readouterr().out
    data = json.loads((out / "results.json").read_text(encoding="utf-8"))
    moisture = data["moisture"]
    f_rsi = data["surface_temperature_case"]["f_rsi"]
    assert moisture["f_rsi"] == f_rsi
    assert moisture["criterion"] == "mould"
    assert moisture["critical_surface_relative_humidity"] == 0.8
    required = {m["month"]: m["f_rsi_required"] for m in moisture["months"]}
    # December: 0.5 °C at 0.87 asks more than January's −1 °C at 0.85
    assert moisture["critical_month"] == max(required, key=required.get) == 12
    january = moisture["months"][0]
    # the spec's own example month (docs: θe −1 °C, φe 0.85, class 3)
    assert january["exterior_vapour_pressure"] == pytest.approx(477.7, abs=0.05)
    assert january["interior_vapour_pressure"] == pytest.approx(1368.7, abs=0.05)
    assert january["minimum_surface_temperature"] == pytest.approx(15.06, abs=0.005)
    assert january["f_rsi_required"] == pytest.approx(0.765, abs=5e-4)
    assert moisture["f_rsi_required"] == required[12]
    assert moisture["passes"] == (f_rsi >= moisture["f_rsi_required"])
    assert data["surface_temperature_case"]["f_rsi_criterion"] == 0.75
    assert data["surface_temperature_case"]["f_rsi_verdict"] == (
        "passes" if f_rsi >= 0.75 else "fails")
    assert "critical month 12 (December)" in printed


# -- surfaces left out of the search (addition F) ------------------------------------

GLAZED = MODEL.replace(textwrap.dedent("""\
    [[surfaces]]
    environment = "inside"
    resistance = 0.13
    resistance_surface_temperature = 0.25
    path = [[0, 0], [0, 1000]]
    """), textwrap.dedent("""\
    [[surfaces]]
    environment = "inside"
    resistance = 0.13
    resistance_surface_temperature = 0.25
    path = [[0, 0], [0, 400]]
    [[surfaces]]
    environment = "inside"
    resistance = 0.13
    path = [[0, 400], [0, 1000]]
    assess = false
    """)).replace("rectangle = [200, 495, 360, 505]", "rectangle = [0, 695, 360, 705]")
assert "assess = false" in GLAZED


def test_a_surface_left_out_carries_heat_but_is_not_searched():
    """The steel crosses the wall at y = 700 mm, on the part left out: θsi,min
    is then on the assessed part (y ≤ 400 mm), where the wall is warmer; the
    heat flow is that of the whole wall either way."""
    from bridgecalc import api
    left_out = loads(GLAZED, "glazed.toml")
    assert left_out.surfaces[1].assess is False
    assert "assess = false" in dumps(left_out) and loads(dumps(left_out)) == left_out
    searched = loads(GLAZED.replace("assess = false\n", ""), "all.toml")
    a = api.run(left_out, refinement=None)
    b = api.run(searched, refinement=None)
    assert a.surface_temperature_case.theta_si_min_at[1] <= 400 + 1e-6
    assert 650 < b.surface_temperature_case.theta_si_min_at[1] < 750
    assert a.theta_si_min > b.theta_si_min + 0.5
    assert a.heat_flow_case.heat_flow["inside"] == pytest.approx(
        b.heat_flow_case.heat_flow["inside"], rel=1e-12)


@pytest.mark.parametrize("change, expected", [
    (lambda t: t.replace("assess = false", 'assess = "no"'), "surfaces[1].assess: expected "
                                                           "true or false"),
    (lambda t: t.replace("path = [[0, 0], [0, 400]]\n",
                         "path = [[0, 0], [0, 400]]\nassess = false\n"),
     "every surface facing an interior environment has assess = false"),
    (lambda t: t.replace("path = [[360, 0], [360, 1000]]\n",
                         "path = [[360, 0], [360, 1000]]\nassess = false\n"),
     "surfaces[2].assess: only surfaces facing an interior environment"),
])
def test_bad_assess_keys(change, expected):
    with pytest.raises(ModelError, match=re_escape(expected)):
        loads(change(GLAZED), "glazed.toml")


def re_escape(text):
    import re
    return re.escape(text)


# -- more than two environments ---------------------------------------------------

THREE = MODEL.replace('''path = [[360, 0], [360, 1000]]''', '''path = [[360, 500], [360, 1000]]
[[surfaces]]
environment = "garage"
resistance = 0.13
path = [[360, 0], [360, 500]]''').replace('''[[surfaces]]''', '''[[environments]]
name = "garage"
temperature = 8.0
kind = "unheated"
[[surfaces]]''', 1)


def test_three_environments_use_the_month_s_temperatures(tmp_path):
    """Each month the exterior takes the climate's temperature and the garage
    its model temperature, or its own column when the climate has one; the
    coldest interior surface then follows by superposition (ISO 10211). Where
    the month's temperatures are the model's, it is the model's θsi,min; a
    colder garage column makes those months' surfaces colder."""
    from bridgecalc import api
    (tmp_path / "climate.csv").write_text(CSV, encoding="utf-8")
    garage = "month,temperature,relative_humidity,garage\n" + "".join(
        f"{m},{t},{h},{min(t + 2.0, 8.0)}\n" for m, t, h in CLIMATE)
    (tmp_path / "garage.csv").write_text(garage, encoding="utf-8")
    path = tmp_path / "three.toml"
    path.write_text(THREE + moisture_table(), encoding="utf-8")
    model = read(path)
    result = api.run(model, refinement=None)
    moisture = result.assessment.moisture
    assert result.f_rsi is None and moisture is not None
    g = result.weighting_factors
    for m in moisture.months:
        at_point = g["inside"] * 20.0 + g["garage"] * 8.0 + g["outside"] * m.exterior_temperature
        assert m.surface_temperature <= at_point + 1e-9
        assert m.f_rsi == pytest.approx((m.surface_temperature - m.exterior_temperature)
                                        / (20.0 - m.exterior_temperature), rel=1e-12)
    # the model's own temperatures (exterior 0 °C) give the model's θsi,min
    same = api.assess(result).assessment.moisture
    zero = MoistureCheck(tuple(ClimateMonth(k, 0.0, 0.8) for k in range(1, 13)), "mould", 3)
    import dataclasses
    at_zero = assess_moisture(dataclasses.replace(result, model=dataclasses.replace(
        model, moisture=zero)))
    assert at_zero.months[0].surface_temperature == pytest.approx(result.theta_si_min,
                                                                  abs=1e-9)
    assert same.critical_month == moisture.critical_month
    path.write_text(THREE + moisture_table(climate='"garage.csv"'), encoding="utf-8")
    colder = api.assess(dataclasses.replace(result, model=read(path))).assessment.moisture
    for c, m in zip(colder.months, moisture.months):
        if c.f_rsi_required is None:
            continue
        if m.exterior_temperature + 2.0 < 8.0:           # the column is colder than 8 °C
            assert c.surface_temperature < m.surface_temperature - 1e-6
        else:
            assert c.surface_temperature == pytest.approx(m.surface_temperature, abs=1e-9)
    data = api.assess(result).to_dict()["moisture"]
    assert data["critical_month"] == moisture.critical_month
    assert data["passes"] == all(m.f_rsi >= m.f_rsi_required for m in moisture.months
                                 if m.f_rsi_required is not None)


# -- outputs --------------------------------------------------------------------

def test_outputs_show_the_check(tmp_path):
    """The report's table and verdict, the monthly figure, the critical month's
    isotherm on the temperature figure, and results.csv read the assessment."""
    import csv
    from bridgecalc import api
    from bridgecalc.outputs import write_outputs
    from bridgecalc.outputs.figures.catalogue import critical_isotherm_level
    result = api.run(read(files(tmp_path)), refinement=None, f_rsi_min=0.95)
    out = write_outputs(result, tmp_path / "out", workers=1, stamp=False, vector_figures=True)
    data = json.loads((out / "results.json").read_text(encoding="utf-8"))
    moisture = data["moisture"]
    assert data["surface_temperature_case"]["f_rsi_verdict"] == "fails"
    row = next(csv.DictReader((out / "results.csv").open(encoding="utf-8")))
    assert row["critical_month"] == "12" and row["moisture_criterion"] == "mould"
    assert float(row["f_rsi_required"]) == moisture["f_rsi_required"]
    assert row["moisture_verdict"] == moisture["verdict"] == "passes"
    assert row["f_rsi_verdict"] == "fails"
    html = (out / "report.html").read_text(encoding="utf-8")
    assert "Surface humidity (ISO 13788)" in html and "December ◀ critical" in html
    assert "a pass is no proof of a mould-free detail" in html
    assert "licensed practitioner" in html
    unjudged = write_outputs(api.run(read(files(tmp_path)), refinement=None),
                             tmp_path / "plain", workers=1, stamp=False)
    plain = (unjudged / "report.html").read_text(encoding="utf-8")
    assert "the ISO 13788 check below states its own" in plain
    svg = (out / "moisture.svg").read_text(encoding="utf-8")
    assert 'id="critical-month' in svg and 'id="f-rsi-junction' in svg
    # the isotherm: where the model's field has the critical month's factor
    level = critical_isotherm_level(result)
    assert level == pytest.approx(0.0 + moisture["f_rsi_required"] * 20.0, rel=1e-12)
    assert 'id="critical-isotherm' in (out / "temperature.svg").read_text(encoding="utf-8")
    assert (out / "moisture.png").stat().st_size > 10_000


def test_the_sweep_table_carries_the_verdict(tmp_path):
    """A geometry script whose model asks for the check: sweep.csv gets its
    verdict, critical month and required fRsi per variant, and a higher
    humidity class asks for more."""
    from bridgecalc.sweep import csv_text
    from bridgecalc.sweep.runner import run_variant
    files(tmp_path)
    script = tmp_path / "wall.py"
    script.write_text(textwrap.dedent(f'''\
        import dataclasses
        from bridgecalc.readers.modelfile import read
        PARAMETERS = {{"humidity_class": 3}}
        def build(humidity_class):
            model = read({str(tmp_path / "detail.toml")!r})
            return dataclasses.replace(model, moisture=dataclasses.replace(
                model.moisture, interior_humidity_class=humidity_class))
        '''), encoding="utf-8")
    rows = [run_variant(str(script), k, {"humidity_class": c}, {"refinement": None})
            for k, c in enumerate((2, 5))]
    assert all(r.ok for r in rows), [r.status for r in rows]
    text = csv_text(rows).splitlines()
    header = text[0].split(",")
    assert header[-3:] == ["moisture_verdict", "critical_month", "f_rsi_required [-]"]
    (verdict2, month2, need2), (verdict5, month5, need5) = (r.moisture for r in rows)
    assert need5 > need2 and month2 == 12
    assert text[1].split(",")[-3:] == [verdict2, "12", repr(need2)]


@pytest.mark.parametrize("name", ["orrowmere", "vintry_fell", "caddow_sands"])
def test_shipped_climates_read(name):
    """The demo climates (docs/scenario.md) ship with the package and pass every rule."""
    from bridgecalc import api
    from bridgecalc.readers.climate import read_climate
    months = read_climate(api.geometries_folder() / f"climate_{name}.csv")
    assert [m.month for m in months] == list(range(1, 13))
    assert all(0 < m.relative_humidity < 1 for m in months)


def test_the_critical_isotherms_entry_sits_once_in_the_panel(tmp_path):
    """The critical month's isotherm had a legend inside each view, which in a
    narrow whole view ran over the close view beside it and the scale bar.
    Its one entry now sits in the figure's panel under the colour bar: inside
    the figure, clear of every plot, and the figure has the size the report
    laid out for it (catalogue.figure_size, known before drawing)."""
    from bridgecalc import api
    from bridgecalc.outputs import figures
    from bridgecalc.outputs.write import assessed
    result, _ = assessed(api.run(read(files(tmp_path)), refinement=None))
    fig = figures.build_figure("temperature", result)
    try:
        renderer = fig.canvas.get_renderer()
        entries = [leg for leg in fig.legends if leg.get_gid() == "critical-isotherm-legend"]
        assert len(entries) == 1
        assert not any(ax.get_legend() for ax in fig.axes)
        box = entries[0].get_window_extent(renderer)
        assert fig.bbox.x0 <= box.x0 and box.x1 <= fig.bbox.x1
        assert fig.bbox.y0 <= box.y0 and box.y1 <= fig.bbox.y1
        for ax in fig.axes:
            assert not box.overlaps(ax.get_window_extent()), ax.get_gid()
        assert tuple(fig.get_size_inches()) == pytest.approx(
            figures.figure_size("temperature", result), abs=1e-9)
    finally:
        figures.plt.close(fig)
