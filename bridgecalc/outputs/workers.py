"""Worker processes of the outputs: forked, and ended with their parent."""

from __future__ import annotations

import multiprocessing
import os
import sys
from concurrent.futures import Future, ProcessPoolExecutor


def end_with_parent(parent: int) -> None:
    """Process-pool initializer: this worker ends when process ``parent`` does.

    A pool's workers wait on a queue the parent feeds; killed outright
    (SIGKILL, out-of-memory), the parent cannot stop them and they would wait
    for ever. On Linux the kernel sends them SIGKILL when it dies
    (prctl PR_SET_PDEATHSIG); a parent already gone before that ends the
    worker at once. Elsewhere nothing changes.
    """
    if sys.platform.startswith("linux"):
        import ctypes
        import signal
        try:
            libc = ctypes.CDLL(None, use_errno=True)
            libc.prctl(1, int(signal.SIGKILL), 0, 0, 0)      # 1: PR_SET_PDEATHSIG
        except (OSError, AttributeError):                    # pragma: no cover
            return
    if os.getppid() != parent:
        os._exit(1)


def fork_pool(workers: int) -> ProcessPoolExecutor:
    """A pool of ``workers`` forked processes that end with this one."""
    return ProcessPoolExecutor(max_workers=workers,
                               mp_context=multiprocessing.get_context("fork"),
                               initializer=end_with_parent, initargs=(os.getpid(),))


def can_fork() -> bool:
    """True where worker processes can be forked (Linux)."""
    return sys.platform.startswith("linux") and "fork" in multiprocessing.get_all_start_methods()


def default_workers() -> int:
    """Figure processes: 2 where forking is available and there is more than one core."""
    return 2 if (can_fork() and (os.cpu_count() or 1) > 1) else 1


class Helper:
    """One forked process for the files other than figures, or this process.

    Forked before matplotlib is imported, it writes field.vtu and results.csv
    and loads the PDF libraries while this process imports matplotlib, and
    lays out report.pdf while the figures are drawn. Calls run in order.
    """

    def __init__(self, forked: bool):
        self.pool = None
        if forked:
            self.pool = fork_pool(1)

    def submit(self, fn, *args):
        if self.pool is not None:
            return self.pool.submit(fn, *args)
        done: Future = Future()
        done.set_result(fn(*args))
        return done

    def close(self):
        if self.pool is not None:
            self.pool.shutdown(wait=True, cancel_futures=True)
