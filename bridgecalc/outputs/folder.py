"""The folder of a run: its files land whole or not at all.

Everything is written into a staging folder beside the destination and moved
into place at the end, so a failed or stopped run leaves nothing half-written
(:func:`staged_folder`). Staging folders of runs killed outright, which could
not remove their own, are removed by the next run to the same destination.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import socket
import tempfile
from glob import escape as glob_escape
from pathlib import Path

from ..errors import BridgecalcError


class StopRequest:
    """A stop asked for by a termination signal, for a run to honour.

    The command line makes one per run, installs it as its SIGTERM handler
    and passes it down to :func:`staged_folder` (through ``write_outputs``).
    Called as a handler it records the exit status, 128 + the signal number
    (the shell's convention), and raises SystemExit at once. Python ignores
    an exception raised inside an at-fork callback, so a signal arriving
    while a worker process is forked would be lost: a staged folder is
    therefore never put in place once a stop is recorded, and the command
    line exits with the recorded status however the run ended.

    Attributes
    ----------
    status : int or None
        The exit status asked for, or None while no stop was asked for.
    """

    def __init__(self):
        self.status: int | None = None

    def __call__(self, signum, frame):
        self.status = 128 + signum
        raise SystemExit(self.status)

    def check(self) -> None:
        """Raise SystemExit with the recorded status, if a stop was asked for."""
        if self.status is not None:
            raise SystemExit(self.status)


@contextlib.contextmanager
def staged_folder(out_dir, stop: StopRequest | None = None, whole: bool = False):
    """A staging folder whose files land in ``out_dir`` only if the block succeeds.

    The staging folder is made beside ``out_dir`` (same file system, so the
    move is a rename). On success it becomes ``out_dir``, or, when that exists,
    its files replace those of the same names there; on any failure it is
    removed and nothing of the run remains. The folder gets the permissions
    the user's umask gives a new folder (a temporary folder starts as 0700).

    Parameters
    ----------
    out_dir : str or Path
    stop : StopRequest, optional
        Once it has recorded a stop, the block counts as failed.
    whole : bool
        Replace an existing ``out_dir`` as a whole (a schedule's folder, whose
        junction folders are replaced with it) instead of file by file.
    """
    out_dir = Path(out_dir)
    out_dir.parent.mkdir(parents=True, exist_ok=True)
    _remove_abandoned_staging(out_dir)
    staging = Path(tempfile.mkdtemp(prefix=_staging_prefix(out_dir) + f"{os.getpid()}.",
                                    dir=out_dir.parent))
    try:
        yield staging
        if stop is not None:
            stop.check()
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(staging, 0o777 & ~umask)
        if not out_dir.exists():
            os.replace(staging, out_dir)
        elif whole:
            # the old folder steps aside under a staging name (removed by a
            # later run if this one is killed now), the new one takes its place
            old = staging.with_name(staging.name + ".replaced")
            os.replace(out_dir, old)
            try:
                os.replace(staging, out_dir)
            except BaseException:
                os.replace(old, out_dir)
                raise
            shutil.rmtree(old, ignore_errors=True)
        else:
            items = sorted(staging.iterdir())
            # every file must be able to replace its namesake before any does
            for item in items:
                if (out_dir / item.name).is_dir():
                    raise BridgecalcError(f"--out {out_dir}: {out_dir / item.name} is a "
                                          f"folder, so the run's {item.name} cannot replace "
                                          f"it; move it away or choose another --out")
            for item in items:
                os.replace(item, out_dir / item.name)
            staging.rmdir()
    except BaseException:
        shutil.rmtree(staging, ignore_errors=True)
        raise


def _staging_prefix(out_dir: Path) -> str:
    """Start of the names of staging folders for ``out_dir`` made on this
    machine; the process id and a random part follow."""
    host = "".join(c if c.isalnum() or c == "-" else "_" for c in socket.gethostname())
    return f".{out_dir.name}.{host or 'host'}."


def _remove_abandoned_staging(out_dir: Path) -> None:
    """Remove staging folders for ``out_dir`` left by runs killed outright
    (SIGKILL, out of memory), which could not remove their own: those made on
    this machine by a process that no longer exists. Folders of live
    processes, and of other machines sharing the file system, are kept."""
    prefix = _staging_prefix(out_dir)
    for folder in out_dir.parent.glob(glob_escape(prefix) + "*"):
        pid_text = folder.name[len(prefix):].split(".", 1)[0]
        if not (folder.is_dir() and not folder.is_symlink() and pid_text.isdigit()):
            continue
        try:
            os.kill(int(pid_text), 0)
        except ProcessLookupError:
            shutil.rmtree(folder, ignore_errors=True)
        except (PermissionError, OverflowError, OSError):
            pass                       # alive under another user, or not a pid here


def fresh_folder(base: Path) -> Path:
    """``base`` if it does not exist yet, else ``base-2``, ``base-3``, ..."""
    if not base.exists():
        return base
    k = 2
    while (candidate := base.with_name(f"{base.name}-{k}")).exists():
        k += 1
    return candidate
