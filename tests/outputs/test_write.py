"""write_outputs: every file of a run, written whole or not at all.

The expected file set is the one docs/model-format.md and the README list for
a run; the option limits are the definitions of the quantities (a temperature
factor lies between 0 and 1; an isotherm step is a positive temperature
difference).
"""

import json

import pytest

from bridgecalc.cli import main
from bridgecalc.errors import BridgecalcError
from bridgecalc.outputs import workers, write
from bridgecalc.outputs.folder import RUN_MARKER

from hand_stamp import HAND_STAMP

@pytest.fixture(scope="module")
def written(demo, tmp_path_factory):
    out = tmp_path_factory.mktemp("report") / "demo"
    write.write_outputs(demo, out, f_rsi_min=0.75, dimension_system="external",
                          stamp=HAND_STAMP)
    return out


def test_every_output_file_is_written(written):
    names = {p.name for p in written.iterdir()}
    expected = {"results.json", "results.csv", "field.vtu", "report.html", "report.pdf"}
    expected |= {f"{n}.png" for n in ("materials", "mesh", "temperature", "heat_flux",
                                      "surface_temperature")}
    # the demo's junction is small in its section: its close views are in the
    # same figures, beside the whole (tests/outputs/test_figure_readability.py)
    assert names == expected | {RUN_MARKER}
    assert sorted(json.loads((written / RUN_MARKER).read_text())["files"]) == sorted(expected)
    assert not [p for p in written.parent.iterdir() if p.name.startswith(".")]


def test_vector_figures_on_request(demo, tmp_path):
    """--vector-figures adds an SVG and a PDF of every figure, and report.pdf
    then carries the figures' vector pages (their text is text in it)."""
    out = tmp_path / "vector"
    write.write_outputs(demo, out, stamp=HAND_STAMP, workers=1, vector_figures=True)
    names = {p.name for p in out.iterdir()}
    for stem in ("materials", "mesh", "temperature", "heat_flux", "surface_temperature"):
        assert {f"{stem}.png", f"{stem}.svg", f"{stem}.pdf"} <= names
    assert "θsi,min" in (out / "temperature.svg").read_text(encoding="utf-8")


def test_bad_options_write_nothing(demo, tmp_path):
    with pytest.raises(BridgecalcError, match="--f-rsi-min"):
        write.write_outputs(demo, tmp_path / "x", f_rsi_min=1.5, stamp=HAND_STAMP)
    with pytest.raises(BridgecalcError, match="--isotherm-step"):
        write.write_outputs(demo, tmp_path / "x", isotherm_step=0, stamp=HAND_STAMP)
    assert not any(tmp_path.iterdir())


def test_cli_rejects_a_bad_criterion_with_exit_2(geometries, tmp_path, capsys):
    out = tmp_path / "out"
    code = main(["run", str(geometries / "slab_edge.py"), "--out", str(out),
                 "--f-rsi-min", "75"])
    assert code == 2
    assert "--f-rsi-min" in capsys.readouterr().err
    assert not out.exists()


def test_an_isotherm_step_too_fine_is_refused_before_solving(geometries, tmp_path, capsys,
                                                              monkeypatch):
    # 1e-9 K over θi − θe = 20 K asked for 2e10 isotherms (a 140 GiB array)
    import bridgecalc.api
    monkeypatch.setattr(bridgecalc.api, "_run", lambda *a: pytest.fail("solved"))
    out = tmp_path / "out"
    assert main(["run", str(geometries / "slab_edge.py"), "--out", str(out),
                 "--isotherm-step", "1e-9"]) == 2
    err = capsys.readouterr().err
    assert "--isotherm-step" in err and "at least 0.1 K" in err
    assert not out.exists()


def test_an_out_folder_holding_a_folder_of_an_output_name_gets_nothing(demo, tmp_path):
    out = tmp_path / "out"
    (out / "results.json").mkdir(parents=True)
    (out / "notes.txt").write_text("mine", encoding="utf-8")
    with pytest.raises(BridgecalcError, match="holds files that are not an earlier"):
        write.write_outputs(demo, out, stamp=HAND_STAMP, workers=1)
    assert sorted(p.name for p in out.iterdir()) == ["notes.txt", "results.json"]
    assert not any((out / "results.json").iterdir())
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_a_failure_while_writing_leaves_nothing(demo, tmp_path, monkeypatch):
    def broken(*_, **__):
        raise RuntimeError("disk full")
    # results.json is already in the staging folder when drawing fails
    monkeypatch.setattr(write, "draw_figures", broken)
    with pytest.raises(RuntimeError):
        write.write_outputs(demo, tmp_path / "out", stamp=HAND_STAMP, workers=1)
    assert list(tmp_path.iterdir()) == []


def test_a_figure_failing_in_a_worker_process_leaves_nothing(demo, tmp_path, monkeypatch):
    from bridgecalc.outputs import figures
    if not workers.can_fork():
        pytest.skip("figure workers need fork")
    real = figures.build_figure

    def broken(name, *args, **kwargs):
        if name == "mesh":
            raise RuntimeError("mesh figure broke")
        return real(name, *args, **kwargs)
    # forked workers inherit the patched module; the helper process is running too
    monkeypatch.setattr(figures, "build_figure", broken)
    with pytest.raises(RuntimeError, match="mesh figure broke"):
        write.write_outputs(demo, tmp_path / "out", stamp=HAND_STAMP, workers=2)
    assert list(tmp_path.iterdir()) == []
