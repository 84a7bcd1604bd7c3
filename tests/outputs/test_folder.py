"""The staging folder: a run's files land whole or not at all, also when the
run is stopped by a signal (POSIX: exit status 128 + signal number) or
killed outright."""

import os
import subprocess
import sys

import pytest

from bridgecalc import outputs


def test_staging_folders_of_killed_runs_are_removed(tmp_path):
    """A run killed outright leaves its staging folder; the next run to the
    same --out removes it, when it was made on this machine by a process
    that no longer exists, and keeps those of live processes and of other
    machines (a shared file system)."""
    done = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True, check=True)
    dead = int(done.stdout)                        # exited: no such process now
    out = tmp_path / "out"
    prefix = outputs.folder._staging_prefix(out)
    abandoned = tmp_path / f"{prefix}{dead}.abc123"
    live = tmp_path / f"{prefix}{os.getpid()}.def456"
    elsewhere = tmp_path / f".out.other-machine.{dead}.ghi789"
    for folder in (abandoned, live, elsewhere):
        folder.mkdir()
        (folder / "results.json").write_text("{}")
    with outputs.staged_folder(out) as staging:
        assert staging.name.startswith(f"{prefix}{os.getpid()}.")
        (staging / "results.csv").write_text("a\n")
    assert not abandoned.exists()
    assert live.exists() and elsewhere.exists()
    assert (out / "results.csv").read_text() == "a\n"


@pytest.mark.skipif(os.name != "posix", reason="POSIX signals")
def test_a_terminated_run_leaves_no_staging_folder(geometries, tmp_path):
    """SIGTERM while the outputs are written: the staging folder goes (gmsh had
    replaced Python's SIGTERM handler, so the process died leaving it)."""
    import signal
    import sys
    import time
    proc = subprocess.Popen([sys.executable, "-m", "bridgecalc", "run",
                             str(geometries / "ground_floor.py"), "--out",
                             str(tmp_path / "out")],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.monotonic() + 120
    while not list(tmp_path.glob(".out.*")) and proc.poll() is None:
        assert time.monotonic() < deadline
        time.sleep(0.02)
    assert proc.poll() is None, "finished before its outputs could be interrupted"
    proc.send_signal(signal.SIGTERM)
    assert proc.wait(timeout=120) == 128 + signal.SIGTERM
    assert list(tmp_path.iterdir()) == []


def test_a_stop_recorded_while_writing_puts_nothing_in_place(tmp_path):
    """A SIGTERM whose SystemExit was lost (raised inside an at-fork callback,
    where Python ignores it) is still honoured: the folder is not put in place
    and the run exits with 128 + 15 (POSIX shells' status for a signal)."""
    import signal
    stop = outputs.StopRequest()
    with pytest.raises(SystemExit) as stopped:
        with outputs.staged_folder(tmp_path / "out", stop) as staging:
            (staging / "results.json").write_text("{}")
            stop.status = 128 + signal.SIGTERM          # what the handler records
    assert stopped.value.code == 143
    assert list(tmp_path.iterdir()) == []


@pytest.mark.skipif(os.name != "posix", reason="POSIX signals")
def test_the_stop_request_is_the_sigterm_handler():
    """Installed as the SIGTERM handler, it records 128 + 15 and raises
    SystemExit at once (POSIX shells' exit status for a signal)."""
    import signal
    stop = outputs.StopRequest()
    previous = signal.signal(signal.SIGTERM, stop)
    try:
        with pytest.raises(SystemExit) as stopped:
            signal.raise_signal(signal.SIGTERM)
    finally:
        signal.signal(signal.SIGTERM, previous)
    assert stopped.value.code == 143 and stop.status == 143
    with pytest.raises(SystemExit):
        stop.check()
    outputs.StopRequest().check()                   # no stop asked for: nothing raised
