"""--out: a folder holding an earlier run is replaced whole, never mixed with
another model's stale files; a folder holding anything else is refused
(exit 2, nothing written)."""

import json

import pytest

from bridgecalc import outputs
from bridgecalc.cli import main
from bridgecalc.errors import BridgecalcError
from bridgecalc.outputs.folder import RUN_MARKER

from conftest import GEOMETRIES


def staged(out, files):
    with outputs.staged_folder(out) as staging:
        for name, text in files.items():
            (staging / name).write_text(text)


def test_an_earlier_run_is_replaced_whole(tmp_path):
    out = tmp_path / "out"
    staged(out, {"results.json": "{}", "temperature_detail.png": "old"})
    assert json.loads((out / RUN_MARKER).read_text())["files"] == [
        "results.json", "temperature_detail.png"]
    staged(out, {"results.json": "{\"new\": 1}"})
    assert sorted(p.name for p in out.iterdir()) == [RUN_MARKER, "results.json"]
    assert (out / "results.json").read_text() == "{\"new\": 1}"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]      # nothing left beside


def test_an_empty_folder_is_used(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    staged(out, {"results.json": "{}"})
    assert (out / "results.json").exists()


@pytest.mark.parametrize("content", ["user file", "earlier run and a user file",
                                     "unreadable marker"])
def test_a_folder_holding_anything_else_is_refused_and_kept(tmp_path, content):
    out = tmp_path / "out"
    if content == "user file":
        out.mkdir()
        (out / "notes.txt").write_text("mine")
    else:
        staged(out, {"results.json": "{}"})
        if content == "earlier run and a user file":
            (out / "notes.txt").write_text("mine")
        else:
            (out / RUN_MARKER).write_text("not json")
    before = sorted(p.name for p in out.iterdir())
    with pytest.raises(BridgecalcError, match=r"--out .*out: the folder holds"):
        staged(out, {"results.json": "{}"})
    assert sorted(p.name for p in out.iterdir()) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_the_command_line_refuses_a_foreign_folder_before_any_work(tmp_path, capsys):
    out = tmp_path / "out"
    out.mkdir()
    (out / "drawing.dxf").write_text("0\nEOF\n")
    code = main(["run", str(GEOMETRIES / "slab_edge.py"), "--out", str(out)])
    assert code == 2
    err = capsys.readouterr().err
    assert err.startswith(f"error: --out {out}: the folder holds files that are not an "
                          f"earlier bridgecalc run (drawing.dxf)")
    assert sorted(p.name for p in out.iterdir()) == ["drawing.dxf"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]
