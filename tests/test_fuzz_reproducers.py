"""What fuzzing found, kept as regular tests (issue 13): deeply nested TOML,
surface resistances too small for the arithmetic, inverted rectangles."""

import json

import pytest

from bridgecalc import api
from bridgecalc.cli import main
from bridgecalc.errors import ModelError
from bridgecalc.model import Region, validate
from bridgecalc.readers import modelfile

SQUARE = """\
format = 1
length_unit = "m"

[materials.m]
conductivity = 1.0

[[regions]]
material = "m"
rectangle = [0, 0, 1, 1]

[[environments]]
name = "in"
temperature = 20.0
kind = "interior"

[[environments]]
name = "out"
temperature = 0.0
kind = "exterior"

[[surfaces]]
environment = "in"
resistance = 0.13
path = [[0, 0], [0, 1]]

[[surfaces]]
environment = "out"
resistance = RSE
path = [[1, 0], [1, 1]]
"""

#: A plane wall 1 m thick of λ = 1 W/(m·K) between Rsi = 0.13 and Rse = 0 over
#: 1 m of height: L2D = 1 m / (0.13 + 1.0) m²·K/W (ISO 6946, 6.7.1: resistances
#: of plane layers in series; analytic).
L2D_HELD = 1.0 / 1.13


@pytest.mark.parametrize("depth", [1000, 5000])
@pytest.mark.parametrize("kind", ["array", "inline table"])
def test_deeply_nested_toml_is_refused_naming_the_file(depth, kind, tmp_path, capsys):
    value = "[" * depth + "]" * depth if kind == "array" else "{a=" * depth + "1" + "}" * depth
    path = tmp_path / "deep.toml"
    path.write_text(f'format = 1\nlength_unit = "mm"\nx = {value}\n', encoding="utf-8")
    with pytest.raises(ModelError, match=r"deep\.toml: .*nested too deeply"):
        modelfile.read(path)
    assert main(["run", str(path), "--out", str(tmp_path / "out")]) == 2
    assert capsys.readouterr().err.startswith(f"error: {path}: ")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["deep.toml"]


@pytest.mark.parametrize("resistance", ["1e-308", "1e-300", "1e-200", "1e-30", "1e-10"])
def test_tiny_surface_resistances_hold_the_surface_temperature(resistance):
    """Every resistance at or below 1e-9 m²·K/W is the held temperature of
    R = 0: the same L2D as the analytic wall, balanced, with a warning saying
    so; no hang, no overflow."""
    model = modelfile.loads(SQUARE.replace("RSE", resistance), "square.toml")
    result = api.run(model, tolerance=0.01)
    assert result.coupling_coefficient == pytest.approx(L2D_HELD, rel=1e-6)
    assert result.heat_flow_case.balance < 1e-9
    (warning,) = result.warnings
    assert "surfaces[1].resistance" in warning and "holds the surface" in warning


def test_the_smallest_float_as_a_resistance_runs_through_the_command_line(tmp_path, capsys):
    """5e-324 (1/R overflows) ended in 'Factor is exactly singular', exit 1."""
    path = tmp_path / "square.toml"
    path.write_text(SQUARE.replace("RSE", "5e-324"), encoding="utf-8")
    out = tmp_path / "out"
    assert main(["run", str(path), "--out", str(out), "--tolerance", "0.01"]) == 0
    data = json.loads((out / "results.json").read_text(encoding="utf-8"))
    assert data["heat_flow_case"]["coupling_coefficient"] == pytest.approx(L2D_HELD, rel=1e-6)
    assert "surfaces[1].resistance = 4.94066e-324" in capsys.readouterr().err


def test_a_resistance_above_the_held_limit_is_a_resistance():
    """1e-6 m²·K/W is a resistance, not a held temperature; its L2D lies
    below the held one by the series formula 1 / (1.13 + 1e-6)."""
    model = modelfile.loads(SQUARE.replace("RSE", "1e-6"), "square.toml")
    result = api.run(model, tolerance=0.01)
    assert result.coupling_coefficient == pytest.approx(1 / (1.13 + 1e-6), rel=1e-7)


@pytest.mark.parametrize("rectangle, message", [
    ("[1, 0, 0, 1]", r"x1 \(0\) must be greater than x0 \(1\)"),
    ("[0, 1, 1, 0]", r"y1 \(0\) must be greater than y0 \(1\)"),
    ("[0, 0, 0, 1]", r"x1 \(0\) must be greater than x0 \(0\)"),
])
def test_an_inverted_rectangle_is_refused(rectangle, message):
    text = SQUARE.replace("RSE", "0.04").replace("rectangle = [0, 0, 1, 1]",
                                                 f"rectangle = {rectangle}")
    with pytest.raises(ModelError, match=r"square\.toml: regions\[0\]\.rectangle: " + message):
        modelfile.loads(text, "square.toml")


def test_an_inverted_rectangle_built_in_memory_is_refused():
    model = modelfile.loads(SQUARE.replace("RSE", "0.04"), "square.toml")
    model.regions[0] = Region.rectangle("m", 1.0, 0.0, 0.0, 1.0)
    with pytest.raises(ModelError, match=r"x1 \(0\) must be greater than x0 \(1\)"):
        validate(model)
    with pytest.raises(ModelError, match="must be greater"):
        api.run(model)


def test_deeply_nested_project_file_is_refused_naming_the_file(tmp_path, capsys):
    """A project file goes through the same TOML reading as a model file: nesting
    thousands deep is refused with exit 2, not a RecursionError traceback."""
    path = tmp_path / "deep-project.toml"
    path.write_text("format = 1\nx = " + "[" * 5000 + "]" * 5000 + "\n", encoding="utf-8")
    assert main(["schedule", str(path), "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"error: {path}: ") and "nested too deeply" in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["deep-project.toml"]
