"""Worker processes: forked with their job, answering in order, ended with their
parent (Linux prctl(2), PR_SET_PDEATHSIG)."""

import multiprocessing
import os
import subprocess
import sys
from pathlib import Path

import pytest

from bridgecalc.outputs import workers


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


class _Job:
    """A job as write.py's are: methods called by name, state kept on the job."""

    def __init__(self):
        self.unpicklable = lambda: None         # pickle refuses lambdas (Python docs, pickle)
        self.calls = 0

    def count(self):
        self.calls += 1
        return os.getpid(), self.calls

    def fail(self):
        raise ValueError("no such figure")

    def after(self, seconds, value):
        import time
        time.sleep(seconds)
        return value


@pytest.mark.skipif(not workers.can_fork(), reason="forked workers need fork")
def test_a_forked_worker_gets_its_job_at_fork_time_and_answers_in_order():
    """The job reaches the worker by fork, not by pickle (it holds a lambda,
    which pickle refuses); its state lives on the worker's copy; an exception
    comes back with its type, message and the worker's traceback."""
    import pickle
    job = _Job()
    with pytest.raises((pickle.PicklingError, AttributeError)):
        pickle.dumps(job)
    with workers.Worker(job, forked=True) as worker:
        first, second = worker.submit("count"), worker.submit("count")
        failed = worker.submit("fail")
        assert first.result() == (worker.process.pid, 1)
        assert second.result() == (worker.process.pid, 2)
        assert worker.process.pid != os.getpid()
        with pytest.raises(ValueError, match="no such figure") as raised:
            failed.result()
        assert any("in worker process" in note for note in raised.value.__notes__)
        assert worker.submit("count").result()[1] == 3      # the worker goes on
    assert job.calls == 0                                   # the parent's copy is untouched
    assert worker.process.exitcode == 0
    # the same calls in this process
    here = workers.Worker(job, forked=False)
    assert here.submit("count").result() == (os.getpid(), 1)
    with pytest.raises(ValueError, match="no such figure"):
        here.submit("fail")


@pytest.mark.skipif(not workers.can_fork(), reason="forked workers need fork")
def test_forked_tasks_come_back_in_task_order_and_a_failure_ends_them_all():
    """Of two workers, one takes the long first task while the other does the
    rest; the results still follow the tasks. A failing task ends every
    worker and is raised."""
    before = set(multiprocessing.active_children())
    tasks = [(0.3, "a"), (0.0, "b"), (0.0, "c")]
    assert workers.map_forked(_Job(), "after", tasks, 2) == ["a", "b", "c"]
    with pytest.raises(ValueError, match="no such figure"):
        workers.map_forked(_Job(), "fail", [(), ()], 2)
    assert set(multiprocessing.active_children()) <= before


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="prctl is Linux's")
def test_forked_workers_end_when_their_parent_is_killed(tmp_path):
    """The figure and helper processes (workers.Worker) wait for their parent's
    next request; killed outright (SIGKILL), the parent cannot stop them, the
    kernel does (prctl(2), PR_SET_PDEATHSIG)."""
    import signal
    import time
    script = tmp_path / "parent.py"
    script.write_text("""
import os, time
from bridgecalc.outputs.workers import Worker
class Job:
    def pid(self):
        return os.getpid()
if __name__ == "__main__":
    worker = Worker(Job(), forked=True)
    print(worker.submit("pid").result(), flush=True)
    time.sleep(120)
""")
    proc = subprocess.Popen([sys.executable, str(script)], stdout=subprocess.PIPE,
                            stderr=subprocess.DEVNULL, text=True)
    worker = int(proc.stdout.readline())
    os.kill(worker, 0)                            # alive while its parent is
    proc.send_signal(signal.SIGKILL)
    proc.wait(timeout=30)
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline:
        try:
            os.kill(worker, 0)
        except ProcessLookupError:
            return
        # a zombie until init reaps it counts as ended
        status = Path(f"/proc/{worker}/status")
        if status.exists() and "zombie" in status.read_text():
            return
        time.sleep(0.05)
    os.kill(worker, signal.SIGKILL)
    pytest.fail(f"worker {worker} outlived its killed parent")
