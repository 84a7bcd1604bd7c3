"""Worker processes of the outputs: forked with their job, ended with their parent.

A :class:`Worker` is a process forked with a job object as its argument: the
child gets its own copy of the job by the fork itself, so nothing large is
pickled (a result holds its mesh and fields). The parent then names methods
of the job to call, in order, over a pipe; only the method names, their
small arguments and the return values cross it. Whatever a job keeps
between calls stays on its own copy, in its own process: no module of the
package holds state for it.

Without fork (or asked not to), a :class:`Worker` runs the same calls in
this process, so callers have one way to write the work either way.
"""

from __future__ import annotations

import gc
import multiprocessing
import os
import sys
import traceback
from collections import deque
from multiprocessing.connection import wait


def end_with_parent(parent: int) -> None:
    """Make this worker process end when process ``parent`` does.

    A worker waits for its parent's next request; killed outright (SIGKILL,
    out-of-memory), the parent cannot stop it and it would wait for ever. On
    Linux the kernel sends it SIGKILL when the parent dies (prctl(2),
    PR_SET_PDEATHSIG); a parent already gone before that ends the worker at
    once. Elsewhere nothing changes. Also usable as a process-pool
    initializer (``initargs=(os.getpid(),)``).
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


def can_fork() -> bool:
    """True where worker processes can be forked (Linux)."""
    return sys.platform.startswith("linux") and "fork" in multiprocessing.get_all_start_methods()


def default_workers() -> int:
    """Figure processes: 2 where forking is available and there is more than one core."""
    return 2 if (can_fork() and (os.cpu_count() or 1) > 1) else 1


def _serve(job, connection, parent: int) -> None:
    """The forked process: call the job's methods the parent names, in order,
    until it sends None or goes away. An exception is sent back, with its
    traceback as text, for the parent to raise."""
    end_with_parent(parent)
    while True:
        try:
            request = connection.recv()
        except EOFError:
            return
        if request is None:
            return
        method, args = request
        try:
            reply = (True, getattr(job, method)(*args), "")
        except Exception as error:
            reply = (False, error, traceback.format_exc())
        try:
            connection.send(reply)
        except Exception as failure:        # the answer or the error does not pickle
            connection.send((False, RuntimeError(f"{method}: {reply[1]!r} could not be sent "
                                                 f"back ({failure})"), reply[2]))


class Reply:
    """The answer to one call: :meth:`result` waits for it."""

    def __init__(self, worker: "Worker | None" = None):
        self._worker = worker
        self._done = worker is None
        self._value = None
        self._error: BaseException | None = None

    def result(self):
        """The call's return value; raises the exception the call raised."""
        while not self._done:
            self._worker.receive()
        if self._error is not None:
            raise self._error
        return self._value

    def _set(self, ok: bool, value, text: str = "") -> None:
        self._done = True
        if ok:
            self._value = value
        else:
            if text:
                value.add_note(f"in worker process:\n{text.rstrip()}")
            self._error = value


class Worker:
    """One process serving calls on ``job``: forked, or this process.

    Parameters
    ----------
    job : object
        Its methods are what the worker can be asked to do; a forked worker
        gets a copy of it at fork time.
    forked : bool
        Fork a process (where :func:`can_fork`); otherwise each call runs
        here, at once, when submitted.
    """

    def __init__(self, job, forked: bool):
        self.job = job
        self.process = None
        self.connection = None
        self._pending: deque[Reply] = deque()
        if forked:
            context = multiprocessing.get_context("fork")
            self.connection, child = context.Pipe()
            self.process = context.Process(target=_serve, args=(job, child, os.getpid()),
                                           daemon=True)
            # Python's advice for fork without exec: objects of this process set
            # aside (gc.freeze) are left alone by the child's garbage collector,
            # which then neither walks them nor copies their memory pages on
            # write. Here they come back at once; only the child keeps them aside.
            gc.freeze()
            try:
                self.process.start()
            finally:
                gc.unfreeze()
            child.close()

    def submit(self, method: str, *args) -> Reply:
        """Call ``job.method(*args)``: in the worker, after the calls before it."""
        if self.process is None:
            reply = Reply()
            reply._set(True, getattr(self.job, method)(*args))
            return reply
        reply = Reply(self)
        self.connection.send((method, args))
        self._pending.append(reply)
        return reply

    def receive(self) -> None:
        """Wait for the answer to the oldest call still open."""
        try:
            answer = self.connection.recv()
        except EOFError:
            self.process.join(1.0)
            answer = (False, RuntimeError(f"worker process {self.process.pid} ended without "
                                          f"answering (exit code {self.process.exitcode})"), "")
        self._pending.popleft()._set(*answer)

    def close(self) -> None:
        """Let the forked process finish its calls and end; wait for it."""
        if self.process is not None:
            try:
                self.connection.send(None)
            except OSError:                 # it has ended already
                pass
            self.connection.close()
            self.process.join()

    def kill(self) -> None:
        """End the forked process now, whatever it is doing, and wait for it."""
        if self.process is not None:
            self.process.kill()
            self.process.join()
            self.connection.close()

    def __enter__(self):
        return self

    def __exit__(self, kind, error, trace):
        # on a failure here, nothing the worker still does is wanted: the
        # staging folder is about to be removed, so it must not write on
        if kind is None:
            self.close()
        else:
            self.kill()


def map_forked(job, method: str, tasks, processes: int) -> list:
    """``job.method(*task)`` for every task, in ``processes`` forked workers.

    Each worker takes the next task as soon as it is free, so tasks listed
    from the most work to the least finish close together. A failure ends
    every worker and is raised here.

    Returns
    -------
    list
        The return values, in the order of ``tasks``.
    """
    tasks = list(tasks)
    results = [None] * len(tasks)
    queue = iter(enumerate(tasks))
    workers = [Worker(job, forked=True) for _ in range(max(1, min(processes, len(tasks))))]
    try:
        open_calls = {}          # connection -> (worker, task index, reply)

        def give(worker):
            item = next(queue, None)
            if item is not None:
                index, task = item
                open_calls[worker.connection] = (worker, index, worker.submit(method, *task))

        for worker in workers:
            give(worker)
        while open_calls:
            for connection in wait(list(open_calls)):
                worker, index, reply = open_calls.pop(connection)
                results[index] = reply.result()
                give(worker)
    except BaseException:
        for worker in workers:
            worker.kill()
        raise
    for worker in workers:
        worker.close()
    return results
