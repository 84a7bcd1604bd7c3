"""Every output speaks N environments (model format 1, addition A): the
summary, results.json, results.csv and couplings.csv, field.vtu (one unit
field per environment), the report, and the sweep table.

References: the results' own numbers (the outputs must carry them unchanged),
Σ g_j = 1 at every node (the constant field), and the contract's keys.
"""

from __future__ import annotations

import csv
import io
import json
import textwrap

import numpy as np
import pytest

import reference_grid
from bridgecalc.cli import main


@pytest.fixture(scope="module")
def three_run(tmp_path_factory):
    """The room over a garage (tests/reference_grid.py) through the command line."""
    folder = tmp_path_factory.mktemp("three")
    model = folder / "three.toml"
    model.write_text(reference_grid.three_environment_case(), encoding="utf-8")
    out = folder / "out"
    assert main(["run", str(model), "--out", str(out), "--tolerance", "0.01",
                 "--f-rsi-min", "0.75"]) == 0
    return out


def test_results_and_tables_of_three_environments(three_run):
    data = json.loads((three_run / "results.json").read_text(encoding="utf-8"))
    couplings = data["heat_flow_case"]["coupling_coefficients"]
    assert len(couplings) == 3
    rows = list(csv.DictReader(io.StringIO(
        (three_run / "couplings.csv").read_text(encoding="utf-8"))))
    assert [(r["environment_i"], r["environment_j"]) for r in rows] == [
        tuple(c["between"]) for c in couplings]
    for r, c in zip(rows, couplings):
        assert float(r["coupling_coefficient_W_per_mK"]) == c["value"]
        assert float(r["psi_W_per_mK"]) == c["psi"]
        assert float(r["error_estimate_W_per_mK"]) > 0
    (row,) = csv.DictReader(io.StringIO((three_run / "results.csv").read_text(encoding="utf-8")))
    assert row["coupling_coefficient_W_per_mK"] == row["f_rsi"] == row["theta_i_C"] == ""
    assert row["f_rsi_verdict"] == "not assessed"
    assert float(row["theta_si_min_C"]) == data["surface_temperature_case"]["theta_si_min"]


def test_field_has_one_unit_field_per_environment(three_run):
    """field.vtu: g_room + g_garage + g_outside = 1 at every node, and Σ g_j θ_j
    is the surface-temperature field."""
    import meshio
    mesh = meshio.read(three_run / "field.vtu")
    g = {name[2:]: mesh.point_data[name] for name in mesh.point_data if name.startswith("g_")}
    assert set(g) == {"room", "garage", "outside"}
    assert np.abs(sum(g.values()) - 1.0).max() < 1e-9
    theta = 20.0 * g["room"] + 5.0 * g["garage"] - 5.0 * g["outside"]
    assert np.abs(theta - mesh.point_data["temperature_surface_temperature_case"]).max() < 1e-9


def test_report_shows_the_couplings_and_weighting_factors(three_run):
    page = (three_run / "report.html").read_text(encoding="utf-8")
    assert "Coupling coefficients (ISO 10211)" in page
    assert "Temperature weighting factors at θsi,min" in page
    assert "room–garage" in page and "garage–outside" in page
    assert "NOT ASSESSED" in page and "fRsi is not defined" in page
    assert "θi − θe" not in page.split("Inputs", 1)[1].split("Materials", 1)[0]


def test_summary_lists_every_pair_and_g(tmp_path, capsys):
    model = tmp_path / "three.toml"
    model.write_text(reference_grid.three_environment_case(), encoding="utf-8")
    assert main(["run", str(model), "--out", str(tmp_path / "out"),
                 "--tolerance", "0.01"]) == 0
    out = capsys.readouterr().out
    for pair in ("room–garage", "room–outside", "garage–outside"):
        assert f"L {pair}" in out
    assert "g at θsi,min       room 0." in out and "fRsi" not in out


SCRIPT = textwrap.dedent('''\
    """A fictional room over a garage whose temperature is a parameter."""
    import sys
    sys.path.insert(0, {tests!r})
    import reference_grid
    from bridgecalc.readers.modelfile import loads

    PARAMETERS = {{"garage_temperature_C": 5.0}}


    def build(garage_temperature_C=5.0):
        text = reference_grid.three_environment_case().replace(
            "temperature = 5.0", f"temperature = {{float(garage_temperature_C)}}")
        return loads(text, "room over garage")
    ''')


def test_sweep_table_has_a_column_per_pair(tmp_path, monkeypatch):
    from conftest import ROOT
    script = tmp_path / "garage.py"
    script.write_text(SCRIPT.format(tests=str(ROOT / "tests")), encoding="utf-8")
    monkeypatch.chdir(tmp_path)
    out = tmp_path / "sweep"
    assert main(["sweep", str(script), "--vary", "garage_temperature_C=0,10",
                 "--workers", "1", "--out", str(out)]) == 0
    rows = list(csv.DictReader(io.StringIO((out / "sweep.csv").read_text(encoding="utf-8"))))
    assert len(rows) == 2
    for pair in ("room|garage", "room|outside", "garage|outside"):
        assert float(rows[0][f"L[{pair}] [W/(m·K)]"]) > 0
        # the couplings do not depend on the temperatures (superposition)
        assert rows[0][f"L[{pair}] [W/(m·K)]"] == rows[1][f"L[{pair}] [W/(m·K)]"]
    g = [float(rows[0][f"g[{e}] at theta_si_min [-]"]) for e in ("room", "garage", "outside")]
    assert sum(g) == pytest.approx(1.0, abs=1e-9)
    assert float(rows[1]["theta_si_min [°C]"]) > float(rows[0]["theta_si_min [°C]"])
    assert "L[i|j], psi[i|j]" in (out / "sweep.txt").read_text(encoding="utf-8")


def test_summary_keeps_long_environment_names_whole():
    """A pair of long environment names is printed whole (on a line of its
    own), not cut to the column's width."""
    from bridgecalc import api
    from bridgecalc.readers.modelfile import loads
    long = "unheated garage under the east wing"
    text = reference_grid.three_environment_case().replace('"garage"', f'"{long}"')
    result = api.run(loads(text, "long names"), refinement=None)
    out = api.summary(result, "out")
    assert f"L room–{long}" in out and f"L {long}–outside" in out
