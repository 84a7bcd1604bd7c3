"""Schedules: a project file's junctions summed to H_TB (model format 1, addition E).

What the checks rest on, outside the code under test:

- H_TB = Σ Ψk·lk over the linear thermal bridges (ISO 14683, ISO 13789, from
  memory; the definition of the quantity): it must equal the sum over
  separate `api.run` calculations of the same junctions, each multiplied by
  its length, to round-off (``math.fsum`` of the same products).
- The error bound is, by the project's definition (docs/model-format.md), the
  sum of each junction's Ψ error estimate (results.json
  ``convergence.psi_error_estimate``) times its length.
- Parallel running must not change a number: the same rows from one local
  worker, two, and a Dask LocalCluster started here on 127.0.0.1.
- Reuse: what a junction's result depends on is its model as built, the
  options and the tool; an unchanged re-run computes nothing, one changed
  script parameter recomputes that row only, a new tool version everything.

Demo data: the fictional Tarnwick Yard block (docs/scenario.md); coarse
tolerances keep the calculations short.
"""

from __future__ import annotations

import csv
import json
import math
import shutil

import pytest
from pypdf import PdfReader

import bridgecalc
from bridgecalc import api
from bridgecalc.cli import main
from bridgecalc.readers import modelfile
from bridgecalc.schedule import run_schedule

from conftest import GEOMETRIES

TOLERANCE = 0.02
LIMIT_S = 300.0

PROJECT = f"""
format = 1
name = "Tarnwick Yard, test block (fictional)"
dimension_system = "external"
tolerance = {TOLERANCE}
f_rsi_min = 0.75

[report]
project = "Tarnwick Yard (fictional)"
reference = "TY-TEST-7"
prepared_by = "A. Modeller (fictional)"
checked_by = "B. Checker (fictional)"
date = "2026-11-30"

[[junctions]]
name = "Balconies, south"
model = "{GEOMETRIES / 'balcony.py'}"
set = {{ thermal_break = true, insulation_thickness_mm = 160.0 }}
length = 36.0
psi_reference = 0.35

[[junctions]]
name = "Wall corners"
model = "{GEOMETRIES / 'wall_corner.py'}"
length = 54.5
"""

#: The keys addition E gives each row of schedule.json.
ROW_KEYS = {"name", "psi", "length", "psi_length", "f_rsi", "criterion_met", "folder"}


def write_project(folder, text=PROJECT, name="project.toml"):
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


def numbers(result):
    """What must not depend on how the junctions were run."""
    return [(r.spec.name, r.outcome.psi, r.outcome.psi_error_estimate, r.outcome.f_rsi,
             r.outcome.theta_si_min, r.outcome.mesh_nodes) for r in result.rows]


@pytest.fixture(scope="module")
def first(tmp_path_factory):
    """The project computed on one local worker."""
    folder = tmp_path_factory.mktemp("schedule")
    project = write_project(folder)
    result = run_schedule(project, folder / "out", workers=1, timeout=LIMIT_S)
    return folder, project, result


def test_h_tb_is_the_sum_of_separate_runs(first):
    folder, project, result = first
    assert result.ok and result.computed == ["Balconies, south", "Wall corners"]
    separate = []
    for script, params, length in (("balcony.py", {"thermal_break": True,
                                                   "insulation_thickness_mm": 160.0}, 36.0),
                                   ("wall_corner.py", {}, 54.5)):
        alone = api.run(api.load(GEOMETRIES / script, **params), tolerance=TOLERANCE)
        separate.append((alone.psi, alone.convergence.psi_error_estimate, length))
    assert result.heat_transfer_coefficient == pytest.approx(
        math.fsum(psi * length for psi, _, length in separate), rel=1e-12, abs=1e-12)
    assert result.error_bound == pytest.approx(
        math.fsum(abs(error) * length for _, error, length in separate), rel=1e-12)
    data = json.loads((folder / "out" / "schedule.json").read_text(encoding="utf-8"))
    assert {"format", "name", "dimension_system", "junctions",
            "heat_transfer_coefficient"} <= set(data)
    assert data["format"] == 1 and data["dimension_system"] == "external"
    assert data["heat_transfer_coefficient"] == result.heat_transfer_coefficient
    for row, (psi, _, length) in zip(data["junctions"], separate):
        assert ROW_KEYS <= set(row)
        assert row["psi"] == pytest.approx(psi, rel=1e-12)
        assert row["psi_length"] == pytest.approx(psi * length, rel=1e-12)
        assert row["length"] == length
    balcony = data["junctions"][0]
    assert balcony["psi_difference"] == pytest.approx(balcony["psi"] - 0.35)
    # fRsi ≥ 0.75 (the project's criterion) decided from the junction's own fRsi
    assert balcony["criterion_met"] == (balcony["f_rsi"] >= 0.75)


def test_outputs_of_the_schedule_and_of_each_junction(first):
    folder, _, result = first
    out = folder / "out"
    for name in ("schedule.json", "schedule.csv", "schedule.html", "schedule.pdf"):
        assert (out / name).is_file(), name
    with open(out / "schedule.csv", encoding="utf-8", newline="") as f:
        rows = list(csv.DictReader(f))
    assert [r["junction"] for r in rows] == ["Balconies, south", "Wall corners",
                                             "H_TB = Σ Ψ·l"]
    assert float(rows[-1]["psi_length [W/K]"]) == result.heat_transfer_coefficient
    html = (out / "schedule.html").read_text(encoding="utf-8")
    for text in ("TY-TEST-7", "external", "Share", "B. Checker (fictional)",
                 'href="01-balconies-south/report.html"', "codes in force"):
        assert text in html, text
    for row in result.rows:
        junction = out / row.spec.folder
        for name in ("results.json", "report.html", "report.pdf", "temperature.png",
                     "field.vtu"):
            assert (junction / name).is_file(), (junction, name)
        # the project's [report] fills the junction report's title block
        assert "TY-TEST-7" in (junction / "report.html").read_text(encoding="utf-8")
    meta = PdfReader(out / "01-balconies-south" / "report.pdf").metadata
    assert meta["/CreationDate"].startswith("D:20261130")
    meta = PdfReader(out / "schedule.pdf").metadata
    assert meta.title == "Tarnwick Yard, test block (fictional)"
    assert meta["/CreationDate"].startswith("D:20261130")
    assert not [p for p in out.parent.iterdir() if p.name.startswith(".out.")]


def test_two_workers_and_a_dask_cluster_give_the_same_rows(first, tmp_path):
    _, project, result = first
    two = run_schedule(project, tmp_path / "two", workers=2, timeout=LIMIT_S)
    assert numbers(two) == numbers(result)
    assert two.heat_transfer_coefficient == result.heat_transfer_coefficient
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None,
                                  protocol="tcp") as cluster:
        dask = run_schedule(project, tmp_path / "dask", scheduler=cluster.scheduler_address,
                            timeout=LIMIT_S)
    assert numbers(dask) == numbers(result)
    assert dask.heat_transfer_coefficient == result.heat_transfer_coefficient
    assert (tmp_path / "dask" / "02-wall-corners" / "report.pdf").is_file()


def test_reuse_only_what_did_not_change(first, tmp_path, monkeypatch):
    folder, _, result = first
    out = tmp_path / "out"
    shutil.copytree(folder / "out", out)
    project = write_project(tmp_path)
    chart = (out / "schedule_shares.png").read_bytes()
    again = run_schedule(project, out, workers=1, timeout=LIMIT_S)
    assert (out / "schedule_shares.png").read_bytes() == chart
    assert again.computed == [] and again.reused == ["Balconies, south", "Wall corners"]
    assert numbers(again) == numbers(result)
    assert "Reused from the previous run" in (out / "schedule.html").read_text(encoding="utf-8")
    # one script parameter changed: that row only, and a different Ψ
    write_project(tmp_path, PROJECT.replace("insulation_thickness_mm = 160.0",
                                            "insulation_thickness_mm = 200.0"))
    changed = run_schedule(project, out, workers=1, timeout=LIMIT_S)
    assert changed.computed == ["Balconies, south"] and changed.reused == ["Wall corners"]
    assert changed.rows[0].outcome.psi != result.rows[0].outcome.psi
    assert changed.rows[1].outcome == result.rows[1].outcome
    data = json.loads((out / "schedule.json").read_text(encoding="utf-8"))
    assert [r["reused"] for r in data["junctions"]] == [False, True]
    # a new version of the tool: everything again
    monkeypatch.setattr(bridgecalc, "__version__", "99.0.0")
    renewed = run_schedule(project, out, workers=1, timeout=LIMIT_S)
    assert renewed.reused == [] and renewed.computed == ["Balconies, south", "Wall corners"]


def test_a_failing_junction_gives_no_total_and_exit_1(first, tmp_path, capsys):
    folder, _, _ = first
    out = tmp_path / "out"
    shutil.copytree(folder / "out", out)            # the good junction is reused from it
    broken = tmp_path / "broken.toml"
    broken.write_text('format = 1\nlength_unit = "mm"\n[materials.a]\nconductivity = -1\n',
                      encoding="utf-8")
    readme = (GEOMETRIES.parent / "README.md").read_text(encoding="utf-8")
    plate = readme.split("<!-- file: plate.toml -->\n```toml\n", 1)[1].split("```", 1)[0]
    climate = ", ".join(f"{{ month = {m}, temperature = {t}, relative_humidity = 0.85 }}"
                        for m, t in zip(range(1, 13), (-1, 0, 3, 6, 10, 13, 15, 15, 12, 8,
                                                       4, 1)))
    (tmp_path / "plate.toml").write_text(
        plate + f'\n[moisture]\nclimate = [{climate}]\ninterior_humidity_class = 3\n'
                'criterion = "mould"\n', encoding="utf-8")
    text = PROJECT.replace('dimension_system = "external"', 'dimension_system = "internal"')
    text = text.split("[[junctions]]\nname = \"Wall corners\"")[0] + (
        '[[junctions]]\nname = "Broken"\nmodel = "broken.toml"\nlength = 3.0\n\n'
        '[[junctions]]\nname = "Plate"\nmodel = "plate.toml"\nlength = 2.0\n')
    project = write_project(tmp_path, text)
    assert main(["schedule", str(project), "--out", str(out), "--workers", "1"]) == 1
    captured = capsys.readouterr()
    data = json.loads((out / "schedule.json").read_text(encoding="utf-8"))
    assert "heat_transfer_coefficient" not in data
    good, bad, plate_row = data["junctions"]
    assert good["psi"] is not None and good["reused"] is True
    assert bad["psi"] is None and "broken.toml" in bad["error"]
    assert data["failed"] == ["Broken"]
    # the ISO 13788 verdict of the junction's own results.json, carried to its row
    own = json.loads((out / plate_row["folder"] / "results.json").read_text(encoding="utf-8"))
    assert plate_row["moisture_passes"] is own["moisture"]["passes"]
    assert plate_row["reused"] is False and plate_row["psi"] is not None
    html = (out / "schedule.html").read_text(encoding="utf-8")
    assert ("passes (mould" if own["moisture"]["passes"] else "FAILS (mould") in html
    assert "no total" in captured.out
    assert "schedule: 1/1 junctions done" in captured.err          # the progress bar
    # the model states external dimensions, the project internal ones
    assert "junctions[0].model" in captured.err and "internal" in captured.err


BAD_PROJECTS = [
    ("model = \"{balcony}\"", "model = \"missing.py\"", "junctions[0].model", "missing.py"),
    ("length = 36.0", "length = -36.0", "junctions[0].length", "negative"),
    ("length = 36.0\n", "\n", "junctions[0].length", "missing"),
    ("length = 36.0", "length = \"36 m\"", "junctions[0].length", "length = 36"),
    ("length = 36.0", "length = \"3600 cm\"", "junctions[0].length", "length = 36"),
    ("name = \"Wall corners\"", "name = \"Balconies, south\"", "junctions[1].name",
     "junctions[0]"),
    ("thermal_break = true", "thermal_brake = true", "junctions[0].set.thermal_brake",
     "no parameter"),
    ("thermal_break = true", "thermal_break = 1", "junctions[0].set.thermal_break",
     "true or false"),
    ("dimension_system = \"external\"", "dimension_system = \"outside\"",
     "dimension_system", "unknown dimension system"),
    ("length = 54.5", "length = 54.5\nbetween = [\"inside\", \"garage\"]",
     "junctions[1].between", "garage"),
    ("[[junctions]]\nname = \"Wall", "[[junction]]\nname = \"Wall", "junction",
     "unknown key"),
]


@pytest.mark.parametrize("old, new, where, needle", BAD_PROJECTS,
                         ids=[case[2] + ":" + case[3] for case in BAD_PROJECTS])
def test_bad_project_exit_2_naming_file_table_key(tmp_path, capsys, old, new, where, needle):
    old = old.replace("{balcony}", str(GEOMETRIES / "balcony.py"))
    assert old in PROJECT
    project = write_project(tmp_path, PROJECT.replace(old, new, 1))
    out = tmp_path / "out"
    assert main(["schedule", str(project), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and str(project) in err, err
    assert where in err and needle in err, err
    assert "Traceback" not in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["project.toml"]


def test_a_folder_that_is_not_a_schedule_is_not_replaced(tmp_path, capsys):
    project = write_project(tmp_path)
    out = tmp_path / "mine"
    out.mkdir()
    (out / "notes.txt").write_text("keep me", encoding="utf-8")
    assert main(["schedule", str(project), "--out", str(out)]) == 2
    assert "schedule.json" in capsys.readouterr().err
    assert (out / "notes.txt").read_text(encoding="utf-8") == "keep me"


def test_report_table_in_a_model_file_reads_writes_and_is_checked(tmp_path):
    """Addition F: [report] read, written back the same, a bad date named."""
    text = (GEOMETRIES.parent / "README.md").read_text(encoding="utf-8")
    model_text = text.split("<!-- file: plate.toml -->\n```toml\n", 1)[1].split("```", 1)[0]
    with_block = model_text + ('\n[report]\nproject = "Block C, fictional"\n'
                               'reference = "TB-07"\ndate = 2026-12-02\n')
    model = modelfile.loads(with_block, "plate.toml")
    assert model.report.project == "Block C, fictional" and model.report.date == "2026-12-02"
    assert modelfile.loads(modelfile.dumps(model)).report == model.report
    with pytest.raises(bridgecalc.ModelError, match=r"plate\.toml: report\.date: .*ISO 8601"):
        modelfile.loads(model_text + '\n[report]\ndate = "2/12/2026"\n', "plate.toml")
    with pytest.raises(bridgecalc.ModelError, match=r"report\.checked: unknown key"):
        modelfile.loads(model_text + '\n[report]\nchecked = "B"\n', "plate.toml")


def test_a_pdf_carries_its_reports_title_and_date_and_stays_deterministic(tmp_path):
    """ReportLab's invariant mode dates a file 1 January 2000 (946684800 s,
    reportlab.lib.utils.TimeStamp); the report's own date must replace it,
    and the same report must still give the same bytes."""
    import datetime as dt

    from bridgecalc.model.title_block import report_date
    from bridgecalc.outputs.report import blocks, pdf
    report = blocks.Report("Block C, fictional", "subtitle", [blocks.Para("text")],
                           "2026-12-02")
    pdf.write_pdf(report, tmp_path / "a.pdf")
    pdf.write_pdf(report, tmp_path / "b.pdf")
    assert (tmp_path / "a.pdf").read_bytes() == (tmp_path / "b.pdf").read_bytes()
    meta = PdfReader(tmp_path / "a.pdf").metadata
    assert meta.title == "Block C, fictional"
    assert meta.creation_date.date() == dt.date(2026, 12, 2)
    assert meta.modification_date.date() == dt.date(2026, 12, 2)
    assert report_date(None) == dt.date.today().isoformat()


def test_more_than_two_environments_count_the_pair_named_by_between(tmp_path, capsys):
    """Ψ_ij of the pair the project names, as the junction's own results.json
    gives it (ISO 10211 coupling coefficients, addition A); without
    `between`, exit 2 naming the key."""
    docs = (GEOMETRIES.parent / "docs" / "model-format.md").read_text(encoding="utf-8")
    garage = docs.split("<!-- file: garage.toml -->\n```toml\n", 1)[1].split("```", 1)[0]
    (tmp_path / "garage.toml").write_text(garage, encoding="utf-8")
    text = ('format = 1\nname = "Garage wing"\ndimension_system = "internal"\n'
            f'tolerance = {TOLERANCE}\n\n[[junctions]]\nname = "Floor over the garage"\n'
            'model = "garage.toml"\nlength = 10.0\n')
    project = write_project(tmp_path, text)
    assert main(["schedule", str(project), "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert "junctions[0].between: missing" in err and "garage" in err
    write_project(tmp_path, text + 'between = ["garage", "room"]\n')
    result = run_schedule(project, tmp_path / "out", workers=1, timeout=LIMIT_S)
    own = json.loads((tmp_path / "out" / result.rows[0].spec.folder / "results.json")
                     .read_text(encoding="utf-8"))
    pair = next(c for c in own["heat_flow_case"]["coupling_coefficients"]
                if set(c["between"]) == {"room", "garage"})
    assert result.rows[0].outcome.psi == pair["psi"]
    assert result.heat_transfer_coefficient == pytest.approx(10.0 * pair["psi"], rel=1e-12)
    assert result.rows[0].outcome.psi_error_estimate > 0


def test_the_share_chart_keeps_its_labels_off_the_junction_names(first):
    """A negative Ψ·l (a wall corner) had its label printed left of its bar,
    over the junction's name at the axis. Labels now sit right of the zero
    line and of positive bars, inside the figure, and print Ψ·l as the table
    does (three decimals)."""
    from bridgecalc.schedule.report import share_chart
    _, _, result = first
    fig = share_chart(result)
    try:
        fig.canvas.draw()
        renderer = fig.canvas.get_renderer()
        ax = fig.axes[0]
        names = [t.get_window_extent(renderer) for t in ax.get_yticklabels()]
        labels = [t for t in ax.texts if "W/K" in t.get_text()]
        assert len(labels) == len([r for r in result.rows if r.ok])
        for text in labels:
            box = text.get_window_extent(renderer)
            assert not any(box.overlaps(name) for name in names), text.get_text()
            assert fig.bbox.x0 <= box.x0 and box.x1 <= fig.bbox.x1, text.get_text()
            value = text.get_text().split(" W/K")[0].replace("−", "-")
            assert len(value.split(".")[1]) == 3, text.get_text()
    finally:
        from bridgecalc.outputs import figures
        figures.plt.close(fig)
