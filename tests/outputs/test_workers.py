"""Worker processes end with their parent (Linux prctl(2), PR_SET_PDEATHSIG)."""

import os
import subprocess
import sys
from pathlib import Path

import pytest


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="prctl is Linux's")
def test_workers_end_when_their_parent_is_killed(tmp_path):
    """A pool's workers wait on the parent's queue for ever once the parent is
    killed outright (SIGKILL cannot be caught); with outputs.end_with_parent as
    initializer the kernel ends them with it. Both start methods the package
    uses (fork for figures, spawn for sweeps)."""
    import signal
    import time
    parent_code = """
import multiprocessing, os, sys, time
from concurrent.futures import ProcessPoolExecutor
from bridgecalc.outputs import end_with_parent
if __name__ == "__main__":
    context = multiprocessing.get_context(sys.argv[1])
    pool = ProcessPoolExecutor(1, mp_context=context, initializer=end_with_parent,
                               initargs=(os.getpid(),))
    print(pool.submit(os.getpid).result(), flush=True)
    time.sleep(120)
"""
    script = tmp_path / "parent.py"
    script.write_text(parent_code)
    for method in ("fork", "spawn"):
        proc = subprocess.Popen([sys.executable, str(script), method], stdout=subprocess.PIPE,
                                stderr=subprocess.DEVNULL, text=True)
        worker = int(proc.stdout.readline())
        os.kill(worker, 0)                        # alive while its parent is
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=30)
        deadline = time.monotonic() + 30
        while time.monotonic() < deadline:
            try:
                os.kill(worker, 0)
            except ProcessLookupError:
                break
            # a zombie until init reaps it counts as ended
            status = Path(f"/proc/{worker}/status")
            if status.exists() and "zombie" in status.read_text():
                break
            time.sleep(0.05)
        else:
            os.kill(worker, signal.SIGKILL)
            pytest.fail(f"{method} worker {worker} outlived its killed parent")
