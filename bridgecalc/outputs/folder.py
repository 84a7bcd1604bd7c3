"""The folder of a run: its files land whole or not at all.

Everything is written into a staging folder beside the destination and moved
into place at the end, so a failed or stopped run leaves nothing half-written
(:func:`staged_folder`). A destination holding an earlier run is replaced
whole; one holding anything else is refused (:func:`check_replaceable`). Staging folders of runs killed outright, which could
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


#: The file each output folder carries: the names of the run's files, so that
#: a later run may tell its own folder from one that holds anything else.
RUN_MARKER = ".bridgecalc-run"


def check_replaceable(out_dir) -> None:
    """Refuse, before any work, an ``--out`` a run may not write to.

    A run's folder is replaced whole: it may be missing, empty, or hold an
    earlier run (its :data:`RUN_MARKER` lists every file there), and then
    none of the earlier files survive beside the new ones (no stale figure of
    another model). A folder that holds anything else is the user's, and is
    refused, as are a file and a path through a file.

    Raises
    ------
    BridgecalcError
        Naming the folder and what is in the way.
    """
    out_dir = Path(out_dir)
    for path in (out_dir, *out_dir.parents):
        if not path.exists():
            continue
        if path == out_dir and not path.is_dir():
            raise BridgecalcError(f"--out {out_dir}: exists and is not a folder")
        if not path.is_dir():
            raise BridgecalcError(f"--out {out_dir}: {path} is not a folder")
        break
    if not out_dir.is_dir():
        return
    entries = sorted(p.name for p in out_dir.iterdir())
    if not entries:
        return
    listed = _listed_files(out_dir)
    if listed is None:
        shown = ", ".join(entries[:3]) + (", ..." if len(entries) > 3 else "")
        raise BridgecalcError(
            f"--out {out_dir}: the folder holds files that are not an earlier bridgecalc "
            f"run ({shown}); a run replaces its folder whole, so choose a new or empty "
            f"folder, or move those files away")
    others = [name for name in entries if name != RUN_MARKER and name not in listed]
    if others:
        shown = ", ".join(others[:3]) + (", ..." if len(others) > 3 else "")
        raise BridgecalcError(
            f"--out {out_dir}: the folder holds an earlier run and also {shown}, which the "
            f"run did not write; a run replaces its folder whole, so move those away or "
            f"choose another folder")


def _listed_files(out_dir: Path) -> set | None:
    """The names an earlier run's marker lists, or None when there is no
    readable marker."""
    import json
    marker = out_dir / RUN_MARKER
    try:
        data = json.loads(marker.read_text(encoding="utf-8"))
        files = data["files"]
    except (OSError, ValueError, KeyError, TypeError):
        return None
    if not (isinstance(files, list) and all(isinstance(f, str) for f in files)):
        return None
    return set(files)


@contextlib.contextmanager
def staged_folder(out_dir, stop: StopRequest | None = None, whole: bool = True):
    """A staging folder that replaces ``out_dir`` whole, only if the block succeeds.

    The staging folder is made beside ``out_dir`` (same file system, so the
    move is a rename). On success it becomes ``out_dir``; an earlier run's
    folder there is moved aside first and removed (:func:`check_replaceable`
    refuses any other folder); on any failure the staging folder is removed
    and nothing of the run remains. The folder gets the permissions the
    user's umask gives a new folder (a temporary folder starts as 0700), and
    :data:`RUN_MARKER`, the list of its files.

    Parameters
    ----------
    out_dir : str or Path
    stop : StopRequest, optional
        Once it has recorded a stop, the block counts as failed.
    whole : bool
        Kept for callers that asked for a whole replacement (a schedule's
        folder); every folder is now replaced whole.
    """
    import json
    out_dir = Path(out_dir)
    check_replaceable(out_dir)
    out_dir.parent.mkdir(parents=True, exist_ok=True)
    _remove_abandoned_staging(out_dir)
    prefix = _staging_prefix(out_dir) + f"{os.getpid()}."
    staging = Path(tempfile.mkdtemp(prefix=prefix, dir=out_dir.parent))
    try:
        yield staging
        if stop is not None:
            stop.check()
        files = sorted(p.name for p in staging.iterdir())
        (staging / RUN_MARKER).write_text(json.dumps({"files": files}) + "\n",
                                          encoding="utf-8")
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(staging, 0o777 & ~umask)
        check_replaceable(out_dir)           # as at the start: nothing came in meanwhile
        if out_dir.is_dir() and any(out_dir.iterdir()):
            earlier = Path(tempfile.mkdtemp(prefix=prefix, suffix=".earlier",
                                            dir=out_dir.parent))
            os.replace(out_dir, earlier / "run")
            try:
                os.replace(staging, out_dir)
            except BaseException:
                os.replace(earlier / "run", out_dir)
                raise
            shutil.rmtree(earlier, ignore_errors=True)
        else:
            os.replace(staging, out_dir)
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
