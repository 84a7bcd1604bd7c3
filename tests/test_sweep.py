"""Parameter sweeps: the Python API, the ``sweep`` command, failures, Dask.

Physics checks (each names where its expectation comes from):

- A thermal break lowers Ψ. Replacing concrete by a material of lower
  conductivity cannot raise the thermal conductance L2D of a conduction
  problem with fixed boundary conditions (Thomson's / Dirichlet's minimum
  principle: the conductance is monotone in the conductivity field), and the
  flanking U·l does not change, so Ψ = L2D − U·l must fall. The direction
  matches ISO 14683, whose default Ψ values for balconies are lower with a
  thermal break than without (from memory; common practice).
- A thermal break raises θsi,min and fRsi at the slab: common practice (it
  is what thermal-break elements are fitted for), not a published number.
- Without a break, Ψ of the balcony falls as the insulation gets thicker:
  the slab's path through the insulation plane gets longer. Common-practice
  reasoning, not a theorem or a published value; with the break the trend
  can reverse (the concrete left between the wall and the break grows), so
  it is checked only without.

Demo data: the fictional Tarnwick Yard block (docs/scenario.md).
The Dask test starts its own LocalCluster on 127.0.0.1 and is bounded in time.
"""

import csv
import socket

import pytest

from bridgecalc.cli import main
from bridgecalc.api import load, run
from bridgecalc.sweep import runner as sweep_runner
from bridgecalc.sweep import CSV_FILE, FIGURE_FILE, NOTES_FILE, run_variant, sweep

from conftest import GEOMETRIES

BALCONY = GEOMETRIES / "balcony.py"
THICKNESSES = [120.0, 200.0, -20.0]          # the last one the script refuses
#: Seconds any sweep in this file may take before it is abandoned.
LIMIT_S = 240.0

PSI = "psi [W/(m·K)]"
F_RSI = "f_rsi [-]"


@pytest.fixture(scope="module")
def api_sweep():
    """3 thicknesses × with and without break, on 2 local processes; the rows
    and the progress callback's calls."""
    seen = []
    rows = sweep(BALCONY, {"insulation_thickness_mm": THICKNESSES,
                           "thermal_break": [False, True]},
                 workers=2, progress=seen.append, timeout=LIMIT_S)
    return rows, seen


@pytest.fixture(scope="module")
def api_rows(api_sweep):
    return api_sweep[0]


def read_csv(folder):
    with open(folder / CSV_FILE, encoding="utf-8", newline="") as f:
        return list(csv.DictReader(f))


# --------------------------------------------------------------------------- API

def test_rows_in_variant_order_with_every_parameter(api_rows):
    assert [r.index for r in api_rows] == [0, 1, 2, 3, 4, 5]
    # first varied parameter changes slowest
    assert [(r.params["insulation_thickness_mm"], r.params["thermal_break"])
            for r in api_rows] == [(120.0, False), (120.0, True), (200.0, False),
                                   (200.0, True), (-20.0, False), (-20.0, True)]
    for r in api_rows[:4]:
        assert r.ok, r.status
        assert r.params["slab_thickness_mm"] == 220.0      # the script's default
        assert r.mesh_nodes > 100
        assert r.convergence in ("single mesh", "criterion met", "criterion not met",
                                 "refinement study")


def test_thermal_break_lowers_psi_and_raises_f_rsi(api_rows):
    for without, with_break in (api_rows[0:2], api_rows[2:4]):
        assert with_break.coupling_coefficient < without.coupling_coefficient
        assert with_break.psi < without.psi
        # the flanking element is the same, so L2D and Ψ drop by the same amount
        # (to the mesh-convergence tolerance when Ψ and L2D are each extrapolated)
        assert (without.coupling_coefficient - with_break.coupling_coefficient
                == pytest.approx(without.psi - with_break.psi, rel=1e-2))
        assert with_break.f_rsi > without.f_rsi
        assert with_break.theta_si_min > without.theta_si_min


def test_psi_falls_with_insulation_without_break(api_rows):
    thin, thick = api_rows[0], api_rows[2]
    assert thick.psi < thin.psi


def test_rows_equal_single_runs(api_rows):
    """A sweep row is the same calculation as ``run`` on the same parameters."""
    row = api_rows[3]
    result = run(load(BALCONY, insulation_thickness_mm=200.0, thermal_break=True))
    assert row.psi == pytest.approx(result.psi, rel=1e-12)
    assert row.f_rsi == pytest.approx(result.f_rsi, rel=1e-12)
    assert row.mesh_nodes == result.mesh.node_count


def test_failing_variants_reported_in_their_rows(api_rows):
    for r in api_rows[4:]:
        assert not r.ok
        assert r.status.startswith("failed: ") and "insulation_thickness_mm" in r.status
        assert r.psi is None and r.f_rsi is None and r.mesh_nodes is None
        assert r.params["insulation_thickness_mm"] == -20.0


def test_unexpected_exception_becomes_a_failed_row():
    """Not only the tool's own errors: anything a variant raises is reported."""
    row = run_variant(str(BALCONY), 7, {"thermal_break": False},
                      run_options={"no_such_option": 1})
    assert row.index == 7 and row.params == {"thermal_break": False}
    assert row.status.startswith("failed: TypeError") and "no_such_option" in row.status


def test_progress_callback_sees_every_variant(api_sweep):
    rows, seen = api_sweep
    assert sorted(r.index for r in seen) == [r.index for r in rows]


# --------------------------------------------------------------------------- CLI

def test_cli_writes_csv_figure_and_notes(api_rows, tmp_path, capsys):
    out = tmp_path / "out"
    code = main(["sweep", str(BALCONY), "--vary", "thermal_break=false,true",
                 "--set", "insulation_thickness_mm=120", "--workers", "2",
                 "--out", str(out)])
    assert code == 0
    rows = read_csv(out)
    assert [r["variant"] for r in rows] == ["0", "1"]
    assert [r["thermal_break"] for r in rows] == ["false", "true"]
    assert all(r["status"] == "ok" for r in rows)
    # same input, same numbers as the API sweep (written in full precision)
    for written, expected in zip(rows, api_rows[0:2]):
        assert float(written[PSI]) == expected.psi
        assert float(written[F_RSI]) == expected.f_rsi
        assert int(written["mesh_nodes"]) == expected.mesh_nodes
    assert (out / FIGURE_FILE).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    notes = (out / NOTES_FILE).read_text(encoding="utf-8")
    assert "dimension system for Ψ: external" in notes
    assert "codes in force" in notes
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]   # no staging left
    printed = capsys.readouterr()
    assert "2 computed, 0 failed" in printed.out


def test_cli_failed_variants_exit_1_and_are_written(tmp_path, capsys):
    out = tmp_path / "out"
    code = main(["sweep", str(BALCONY), "--vary", "insulation_thickness_mm=-20,-30",
                 "--workers", "1", "--out", str(out)])
    assert code == 1
    rows = read_csv(out)
    assert [r["insulation_thickness_mm"] for r in rows] == ["-20.0", "-30.0"]
    for r in rows:
        assert r["status"].startswith("failed: ") and "insulation_thickness_mm" in r["status"]
        assert r[PSI] == "" and r["mesh_nodes"] == ""
    assert (out / FIGURE_FILE).is_file() and (out / NOTES_FILE).is_file()
    printed = capsys.readouterr().out
    assert "0 computed, 2 failed" in printed
    assert "variant 1: failed" in printed


def _closed_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.mark.parametrize("args, named", [
    (["--vary", "no_such_mm=1,2"], "no_such_mm"),
    (["--vary", "slab_thickness_mm=100:200:0"], "COUNT must be at least 1"),
    (["--vary", "slab_thickness_mm=100:200:x"], "COUNT"),
    (["--vary", "slab_thickness_mm=100:200"], "START:STOP:COUNT"),
    (["--vary", "slab_thickness_mm=a:200:3"], "START and STOP"),
    (["--vary", "slab_thickness_mm=100:200:1"], "COUNT 1"),
    (["--vary", "thermal_break=0:1:2"], "thermal_break"),
    (["--vary", "thermal_break=false,maybe"], "thermal_break=maybe"),
    (["--vary", "slab_thickness_mm=200,thick"], "slab_thickness_mm=thick"),
    (["--vary", "slab_thickness_mm=200,,220"], "empty value"),
    (["--vary", "slab_thickness_mm"], "NAME=START:STOP:COUNT"),
    (["--vary", "slab_thickness_mm=1,2", "--vary", "slab_thickness_mm=3"],
     "more than once"),
    (["--vary", "slab_thickness_mm=1,2", "--set", "slab_thickness_mm=3"],
     "both varied and fixed"),
    (["--vary", "slab_thickness_mm=1,2", "--set", "colour=red"], "colour"),
    (["--vary", "slab_thickness_mm=1,2", "--workers", "0"], "--workers"),
])
def test_bad_options_exit_2_nothing_written(args, named, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    code = main(["sweep", str(BALCONY), *args, "--out", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert code == 2
    assert err.startswith("error: ") and named in err
    assert list(tmp_path.iterdir()) == []


def test_bad_script_exit_2(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert main(["sweep", str(tmp_path / "missing.py"), "--vary", "a=1"]) == 2
    assert "missing.py" in capsys.readouterr().err
    model = tmp_path / "detail.toml"
    model.write_text("format = 1\n", encoding="utf-8")
    assert main(["sweep", str(model), "--vary", "a=1"]) == 2
    assert "geometry script" in capsys.readouterr().err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["detail.toml"]


def test_out_is_a_file_exit_2(tmp_path, capsys):
    target = tmp_path / "taken"
    target.write_text("not a folder", encoding="utf-8")
    code = main(["sweep", str(BALCONY), "--vary", "thermal_break=false,true",
                 "--out", str(target)])
    assert code == 2 and "taken" in capsys.readouterr().err
    assert target.read_text(encoding="utf-8") == "not a folder"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["taken"]


def test_unreachable_scheduler_exit_2(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    monkeypatch.setattr(sweep_runner, "CONNECT_TIMEOUT_S", 1.0)
    address = f"tcp://127.0.0.1:{_closed_port()}"
    code = main(["sweep", str(BALCONY), "--vary", "thermal_break=false,true",
                 "--scheduler", address])
    err = capsys.readouterr().err
    assert code == 2
    assert err.startswith("error: --scheduler") and address in err
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- Dask

def test_dask_local_cluster_gives_the_same_rows(api_rows):
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None,
                                  protocol="tcp") as cluster:
        rows = sweep(BALCONY, {"thermal_break": [False, True]},
                     base_params={"insulation_thickness_mm": 120.0},
                     scheduler=cluster.scheduler_address, timeout=LIMIT_S)
    assert [r.index for r in rows] == [0, 1]
    for got, expected in zip(rows, api_rows[0:2]):
        assert got.ok, got.status
        assert got.params == expected.params
        assert got.psi == expected.psi
        assert got.coupling_coefficient == expected.coupling_coefficient
        assert got.theta_si_min == expected.theta_si_min
        assert got.f_rsi == expected.f_rsi
        assert got.mesh_nodes == expected.mesh_nodes


def test_the_figure_reads_values_as_they_are_and_does_not_blow_up_noise():
    """A sweep whose fRsi moved by 4e-5 (mesh noise, below the 0.001 it is
    read to) drew it over the whole panel under an offset label
    "1e−5+9.521e−1", as if it fell steeply. Value axes are now plain numbers,
    spanning at least what each quantity is read to; a real change in Ψ keeps
    its own scale."""
    from bridgecalc.sweep import sweep_figure
    from bridgecalc.sweep.table import LEAST_SPAN
    from bridgecalc.sweep.variants import VariantResult
    from bridgecalc.outputs import figures
    rows = [VariantResult(k, {"t": t}, "ok", psi=0.004 - 0.0001 * t, coupling_coefficient=0.5,
                          theta_si_min=19.04, f_rsi=0.95221 - 5e-7 * t)
            for k, t in enumerate(range(0, 81, 20))]
    fig = sweep_figure(rows, ["t"])
    try:
        fig.canvas.draw()
        psi_ax, f_ax = fig.axes[0], fig.axes[1]
        for ax in (psi_ax, f_ax):
            assert ax.yaxis.get_offset_text().get_text() == ""
        lo, hi = f_ax.get_ylim()
        assert hi - lo >= LEAST_SPAN["fRsi"] and lo < 0.95217 and hi > 0.95221
        lo, hi = psi_ax.get_ylim()
        assert hi - lo < 0.012                       # Ψ's own change (0.008) sets it
        labels = [t.get_text() for t in f_ax.get_yticklabels()]
        assert any(label.startswith("0.95") for label in labels), labels
    finally:
        figures.plt.close(fig)
