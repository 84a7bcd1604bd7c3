"""The command line: run, check, demo, --set, and bad input (exit 2, nothing written)."""

import json
import subprocess
import sys
import textwrap

import pytest

from bridgecalc.cli import main

from conftest import GEOMETRIES

GOOD = textwrap.dedent("""\
    format = 1
    name = "Plate"
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
    [[probes]]
    name = "A"
    at = [0, 1000]
    """)


def write(tmp_path, text, name="detail.toml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_run_writes_results(tmp_path, capsys):
    model = write(tmp_path, GOOD)
    out = tmp_path / "out"
    assert main(["run", str(model), "--out", str(out)]) == 0
    data = json.loads((out / "results.json").read_text())
    assert data["name"] == "Plate" and data["length_unit"] == "mm"
    hf = data["heat_flow_case"]
    assert hf["psi"] == pytest.approx(hf["coupling_coefficient"] - 0.2 * 2.0, abs=1e-12)
    # a steel plate through the insulation is a real thermal bridge
    assert hf["psi"] > 0.05
    assert (out / "report.html").exists()
    printed = capsys.readouterr().out
    assert "Ψ" in printed and "fRsi" in printed and "practitioner" in printed


def test_default_out_is_a_new_folder_named_after_the_model(tmp_path, monkeypatch):
    model = write(tmp_path, GOOD)
    monkeypatch.chdir(tmp_path)
    assert main(["run", str(model)]) == 0
    assert (tmp_path / "detail" / "results.json").exists()
    assert main(["run", str(model)]) == 0
    assert (tmp_path / "detail-2" / "results.json").exists()


def test_run_script_with_set(tmp_path):
    out = tmp_path / "b"
    assert main(["run", str(GEOMETRIES / "balcony.py"), "--out", str(out),
                 "--set", "thermal_break=false"]) == 0
    without = json.loads((out / "results.json").read_text())["heat_flow_case"]["psi"]
    assert main(["run", str(GEOMETRIES / "balcony.py"), "--out", str(out),
                 "--set", "thermal_break=true"]) == 0
    with_break = json.loads((out / "results.json").read_text())["heat_flow_case"]["psi"]
    # a structural thermal break lowers Ψ (ISO 14683 defaults; common practice)
    assert with_break < without


BAD_MODELS = {
    "unknown format": (GOOD.replace("format = 1", "format = 7"), "format"),
    "missing length_unit": (GOOD.replace('length_unit = "mm"\n', ""), "length_unit"),
    "unknown length_unit": (GOOD.replace('length_unit = "mm"', 'length_unit = "ft"'),
                            "length_unit"),
    "unknown key": (GOOD.replace("conductivity = 2.3", "conductivity = 2.3\nconductivty = 2"),
                    "conductivty"),
    "undefined material": (GOOD.replace('material = "steel"', 'material = "stele"'),
                           "regions[2].material"),
    "self-intersecting polygon": (GOOD.replace(
        "rectangle = [200, 995, 360, 1005]",
        "polygon = [[200, 995], [360, 1005], [360, 995], [200, 1005]]"), "regions[2]"),
    "degenerate polygon": (GOOD.replace(
        "rectangle = [200, 995, 360, 1005]", "polygon = [[200, 995], [360, 995], [300, 995]]"),
        "regions[2]"),
    "non-finite number": (GOOD.replace("conductivity = 50.0", "conductivity = nan"),
                          "materials.steel.conductivity"),
    "conductivity <= 0": (GOOD.replace("conductivity = 50.0", "conductivity = 0"),
                          "materials.steel.conductivity"),
    "negative resistance": (GOOD.replace("resistance = 0.04", "resistance = -0.04"),
                            "surfaces[1].resistance"),
    "undefined environment": (GOOD.replace('environment = "outside"', 'environment = "out"'),
                              "surfaces[1].environment"),
    "path on no outline edge": (GOOD.replace("path = [[360, 0], [360, 2000]]",
                                             "path = [[100, 0], [100, 2000]]"),
                                "surfaces[1].path"),
    "two surfaces on one edge": (GOOD.replace("path = [[360, 0], [360, 2000]]",
                                              "path = [[0, 0], [0, 2000]]"), "surfaces[1]"),
    # addition A: an exterior environment is needed only when no two are at
    # different temperatures; an interior one always
    "no interior environment": (GOOD.replace('kind = "interior"', 'kind = "exterior"'),
                                "environments"),
    "all environments at one temperature": (GOOD.replace('temperature = 0.0',
                                                         'temperature = 20.0'),
                                            "environments[1].temperature"),
    "no exterior and one temperature": (GOOD.replace('kind = "exterior"', 'kind = "unheated"')
                                        .replace('temperature = 0.0', 'temperature = 20.0'),
                                        "environments"),
    "no surface faces the interior": (GOOD.replace('environment = "inside"',
                                                   'environment = "outside"'), "surfaces"),
    "temperatures 1e-12 K apart": (GOOD.replace("temperature = 0.0",
                                                "temperature = 19.999999999999"),
                                   "environments"),
    "probe outside the solid": (GOOD.replace("at = [0, 1000]", "at = [-50, 1000]"),
                                "probes[0].at"),
    "pieces no surface touches": (GOOD + textwrap.dedent("""\
        [[regions]]
        material = "steel"
        rectangle = [1000, 0, 1100, 100]
        """), "regions"),
    # two vertices 1e-5 mm apart, under the tolerance of 1e-6 x 2000 mm: the mesher
    # crashed on it with a traceback
    "polygon edge shorter than the tolerance": (GOOD.replace(
        "rectangle = [200, 995, 360, 1005]",
        "polygon = [[200, 995], [360, 995], [360, 1005], [200.00001, 1005], [200, 1005]]"),
        "regions[2].polygon"),
    "not TOML": ("this is [not toml", "TOML"),
    "empty file": ("", "empty"),
}


@pytest.mark.parametrize("case", list(BAD_MODELS))
def test_bad_model_exit_2_nothing_written(tmp_path, capsys, case):
    text, where = BAD_MODELS[case]
    model = write(tmp_path, text)
    out = tmp_path / "out"
    assert main(["run", str(model), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ")
    assert "detail.toml" in err, err
    assert where.lower() in err.lower(), err
    assert "Traceback" not in err
    assert not out.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["detail.toml"]


def test_a_model_without_exterior_surface_runs_with_warnings(tmp_path, capsys):
    """Like the format's own example (one interior surface): exit 0, but the warning
    reaches stderr, results.json and the report, and no fRsi verdict is given."""
    model = write(tmp_path, GOOD.replace('environment = "outside"', 'environment = "inside"'))
    out = tmp_path / "out"
    assert main(["run", str(model), "--out", str(out), "--f-rsi-min", "0.75"]) == 0
    err = capsys.readouterr().err
    assert err.startswith("warning: ") and "no surface faces an exterior environment" in err
    data = json.loads((out / "results.json").read_text(encoding="utf-8"))
    assert "no surface faces an exterior environment ('outside')" in data["warnings"][0]
    page = (out / "report.html").read_text(encoding="utf-8")
    assert "NOT ASSESSED against the criterion" in page and "PASS" not in page
    assert "not assessed" in (out / "results.csv").read_text(encoding="utf-8")


def test_a_result_that_is_not_finite_is_refused(tmp_path, capsys):
    # U = 1e308 over 2 m gave Ψ = −inf, written to results.json as invalid JSON
    model = write(tmp_path, GOOD.replace("u_value = 0.2", "u_value = 1e308"))
    out = tmp_path / "out"
    assert main(["run", str(model), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and "not a finite number (Ψ = -inf)" in err
    assert not out.exists()


def test_heat_flows_that_do_not_balance_are_a_warning(tmp_path, capsys):
    """λ = 1e30 against 0.035 is beyond double precision: the solve returns a field
    whose heat flows do not balance (ISO 10211 asks the sum of flows to be zero)."""
    model = write(tmp_path, GOOD.replace("conductivity = 2.3", "conductivity = 1e30"))
    out = tmp_path / "out"
    assert main(["run", str(model), "--out", str(out), "--f-rsi-min", "0.75"]) == 0
    err = capsys.readouterr().err
    assert "warning: " in err and "the heat flows do not balance" in err
    data = json.loads((out / "results.json").read_text(encoding="utf-8"))
    assert data["heat_flow_case"]["balance"] > 1e-6
    assert any("do not balance" in w for w in data["warnings"])
    # no "guaranteed" interval from a solve whose round-off is that large
    assert "coupling_coefficient_bounds" not in data["convergence"]
    assert "do not balance" in data["convergence"]["bounds_unavailable"]
    assert data["convergence"]["error_estimates_guaranteed"] is False


@pytest.mark.parametrize("argv, needle", [
    (["run", "missing.toml"], "missing.toml"),
    (["run", "{script}", "--set", "no_such_parameter=1"], "no_such_parameter"),
    (["run", "{script}", "--set", "thermal_break=maybe"], "thermal_break"),
    (["run", "{script}", "--set", "insulation_thickness_mm=-10"], "insulation_thickness_mm"),
    (["run", "{model}", "--set", "x=1"], "--set"),
    (["run", "{model}", "--refine", "0"], "--refine"),
])
def test_bad_arguments_exit_2(tmp_path, capsys, monkeypatch, argv, needle):
    monkeypatch.chdir(tmp_path)
    model = write(tmp_path, GOOD)
    argv = [a.format(script=GEOMETRIES / "balcony.py", model=model) for a in argv]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and needle in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["detail.toml"]


@pytest.mark.parametrize("script, needle", [
    ("import sys\nsys.exit(3)\n", "failed to load: it called sys.exit(3)"),
    ("import sys\nPARAMETERS = {}\n\ndef build(**params):\n    sys.exit('bye')\n",
     "build() failed: it called sys.exit('bye')"),
], ids=["at-import", "in-build"])
def test_script_calling_sys_exit_exit_2(tmp_path, capsys, script, needle):
    # sys.exit in a geometry script ended bridgecalc with the script's code (3, 1)
    path = write(tmp_path, script, name="exits.py")
    assert main(["run", str(path), "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"error: {path}: ") and needle in err, err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["exits.py"]


@pytest.mark.parametrize("out, needle", [
    ("taken", "--out {out}: exists and is not a folder"),
    ("taken/results", "--out {out}: {tmp}/taken is not a folder"),
], ids=["a-file", "in-a-file"])
def test_out_that_is_a_file_exit_2_before_any_work(tmp_path, capsys, monkeypatch, out, needle):
    # the run computed everything, then failed naming its staging folder
    # (".taken.x1y2z3/mesh.png: Not a directory")
    import bridgecalc.api
    model = write(tmp_path, GOOD)
    (tmp_path / "taken").write_text("a file in the way\n", encoding="utf-8")

    def no_run(*args, **kwargs):
        raise AssertionError("computed although the output folder cannot be written")
    monkeypatch.setattr(bridgecalc.api, "run", no_run)
    out = tmp_path / out
    assert main(["run", str(model), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err == "error: " + needle.format(out=out, tmp=tmp_path) + "\n", err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["detail.toml", "taken"]
    assert (tmp_path / "taken").read_text(encoding="utf-8") == "a file in the way\n"


@pytest.mark.parametrize("name, needle", [
    ("detail.toml", "is a folder, not a model file"),
    ("junction.py", "is a folder, not a geometry script"),     # said "no such geometry script"
])
def test_folder_as_model_exit_2(tmp_path, capsys, name, needle):
    folder = tmp_path / name
    folder.mkdir()
    assert main(["run", str(folder), "--out", str(tmp_path / "o")]) == 2
    assert capsys.readouterr().err == f"error: {folder}: {needle}\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == [name]


def test_three_temperatures_need_between_exit_2(tmp_path, capsys):
    """Addition A: with environments at more than two temperatures, a flanking
    element must say which pair it separates."""
    text = GOOD + textwrap.dedent("""\
        [[environments]]
        name = "stair"
        temperature = 10.0
        kind = "interior"
        """)
    model = write(tmp_path, text)
    assert main(["run", str(model), "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert f"error: {model}: flanking[0].between: missing" in err
    assert not (tmp_path / "o").exists()


def test_check_prints_table_and_passes(capsys):
    assert main(["check"]) == 0
    out = capsys.readouterr().out
    for word in ("case", "source", "value", "reference", "deviation", "tolerance", "pass",
                 "iso10211-case2", "ISO 10211"):
        assert word in out
    assert " 0 failed" in out


def test_demo_writes_report(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert main(["demo"]) == 0
    out = capsys.readouterr().out
    report = tmp_path / "bridgecalc-demo" / "report.html"
    assert report.exists() and "practitioner" in report.read_text(encoding="utf-8")
    assert out.count(str(report)) == 1          # where the report is, said once


def test_the_process_ends_at_once_with_its_output_whole(geometries, tmp_path, capsys):
    """``python -m bridgecalc`` ends without the interpreter's slow teardown
    (cli.console): what it printed to a pipe is all there, and its exit code
    is main's; the same text as main() prints in this process."""
    done = subprocess.run([sys.executable, "-m", "bridgecalc", "parameters",
                           str(geometries / "balcony.py")], cwd=tmp_path,
                          capture_output=True, text=True)
    assert main(["parameters", str(geometries / "balcony.py")]) == 0
    assert done.returncode == 0 and done.stdout == capsys.readouterr().out
    assert done.stdout.count("\n") == 9        # the header and the 7 parameters


def test_python_dash_m(tmp_path):
    done = subprocess.run([sys.executable, "-m", "bridgecalc", "run", "nothing.toml"],
                          cwd=tmp_path, capture_output=True, text=True)
    assert done.returncode == 2 and done.stderr.startswith("error: ")


def test_help_names_the_shipped_junction_library(capsys):
    """--help says where the geometry scripts are: the package's own folder,
    so it holds after a plain `pip install .` too."""
    from bridgecalc.api import geometries_folder
    with pytest.raises(SystemExit) as stop:
        main(["--help"])
    assert stop.value.code == 0
    out = " ".join(capsys.readouterr().out.split())
    assert "junction library" in out and "slab_edge" in out
    assert (geometries_folder() / "slab_edge.py").is_file()


def test_parameters_lists_a_scripts_parameters_with_units_and_defaults(geometries, capsys):
    """Every entry of the script's own PARAMETERS, with its default and the
    unit its name or comment gives (geometries/balcony.py)."""
    import importlib.util
    spec = importlib.util.spec_from_file_location("balcony_script", geometries / "balcony.py")
    script = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(script)
    assert main(["parameters", str(geometries / "balcony.py")]) == 0
    lines = capsys.readouterr().out.splitlines()
    rows = {line.split()[0]: line.split() for line in lines[2:]}
    assert set(rows) == set(script.PARAMETERS)
    assert rows["wall_thickness_mm"][1:3] == ["240", "mm"]
    assert rows["break_conductivity_w_mk"][1:3] == ["0.15", "W/(m·K)"]
    assert rows["thermal_break"][1] == "true"
    assert main(["parameters", str(geometries / "nothing.py")]) == 2
    assert capsys.readouterr().err.startswith("error: ")


def test_summary_names_the_report_and_keeps_long_flanking_names(geometries, tmp_path, capsys):
    import dataclasses
    from bridgecalc import api
    model = api.load(geometries / "slab_edge.py")
    name = "external wall, masonry and EPS, both storeys"
    model = dataclasses.replace(model, flanking=[dataclasses.replace(model.flanking[0],
                                                                      name=name)])
    result = api.run(model, refinement=None)
    text = api.summary(result, tmp_path / "out")
    assert f"U·l {name}" in text
    assert str(tmp_path / "out" / "report.html") in text
