"""The validation stamp: results of ``bridgecalc check``, cached per tool build.

Running the built-in validation cases takes seconds, so their outcome is kept
in a user cache folder under a key made of the tool version, a fingerprint of
the package's own source files and the versions of the numerical libraries
it solves with. A report shows the stamp of the code that produced it: when
any of these change, the checks run again.

Cache folder: ``$BRIDGECALC_CACHE_DIR``, else ``$XDG_CACHE_HOME/bridgecalc``,
else ``~/.cache/bridgecalc``. A cache that cannot be written is not an
error: the checks then run every time.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import json
import os
import tempfile
from dataclasses import asdict, dataclass, field
from importlib import metadata
from pathlib import Path

from .. import __version__

STAMP_FORMAT = 1
LIBRARIES = ("numpy", "scipy", "scikit-fem", "gmsh")


@dataclass
class CaseSummary:
    """Outcome of one validation case.

    Attributes
    ----------
    case : str
    source : str
        The published or analytic reference it compares against.
    passed, failed : int
        Compared quantities within / outside their tolerance.
    """

    case: str
    source: str
    passed: int
    failed: int


@dataclass
class Stamp:
    """What the report shows as its validation stamp.

    Attributes
    ----------
    version : str
        bridgecalc version the checks ran with.
    fingerprint : str
        First 16 hex digits of the cache key (version, sources, libraries).
    checked_at : str
        When the checks ran, ISO 8601, UTC, to the second.
    passed, failed : int
        Compared quantities over all cases.
    cases : list of CaseSummary
    from_cache : bool
        True when this run reused an earlier run's results.
    """

    version: str
    fingerprint: str
    checked_at: str
    passed: int
    failed: int
    cases: list[CaseSummary] = field(default_factory=list)
    from_cache: bool = False

    @property
    def all_passed(self) -> bool:
        return self.failed == 0 and self.passed > 0


def cache_folder() -> Path:
    """Where stamps are kept (see the module docstring)."""
    if os.environ.get("BRIDGECALC_CACHE_DIR"):
        return Path(os.environ["BRIDGECALC_CACHE_DIR"])
    if os.environ.get("XDG_CACHE_HOME"):
        return Path(os.environ["XDG_CACHE_HOME"]) / "bridgecalc"
    return Path.home() / ".cache" / "bridgecalc"


def cache_key() -> str:
    """SHA-256 over the version, the package's .py files and the solver libraries."""
    digest = hashlib.sha256()
    digest.update(f"bridgecalc {__version__}\n".encode())
    package = Path(__file__).resolve().parent.parent
    for path in sorted(package.rglob("*.py")):
        name = path.relative_to(package).as_posix()
        digest.update(name.encode() + b"\0" + path.read_bytes() + b"\0")
    for name in LIBRARIES:
        try:
            version = metadata.version(name)
        except metadata.PackageNotFoundError:
            version = "absent"
        digest.update(f"{name} {version}\n".encode())
    return digest.hexdigest()


def stamp_from_rows(rows, when: _dt.datetime | None = None) -> Stamp:
    """Summarise :func:`bridgecalc.validation.run_checks` rows as a stamp."""
    when = when or _dt.datetime.now(_dt.timezone.utc)
    cases: dict[str, CaseSummary] = {}
    for row in rows:
        summary = cases.setdefault(row.case, CaseSummary(row.case, row.source, 0, 0))
        if row.passed:
            summary.passed += 1
        else:
            summary.failed += 1
    passed = sum(c.passed for c in cases.values())
    failed = sum(c.failed for c in cases.values())
    return Stamp(__version__, cache_key()[:16],
                 when.astimezone(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"),
                 passed, failed, list(cases.values()))


def _cache_file(key: str) -> Path:
    return cache_folder() / f"check-{__version__}-{key[:16]}.json"


def load_cached() -> Stamp | None:
    """The cached stamp of this build, or None."""
    path = _cache_file(cache_key())
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if data.get("format") != STAMP_FORMAT:
        return None
    try:
        cases = [CaseSummary(**c) for c in data["cases"]]
        return Stamp(data["version"], data["fingerprint"], data["checked_at"],
                     int(data["passed"]), int(data["failed"]), cases, from_cache=True)
    except (KeyError, TypeError):
        return None


def save(stamp: Stamp) -> bool:
    """Keep ``stamp`` in the cache, atomically; False if the folder is not writable."""
    data = asdict(stamp)
    data.pop("from_cache")
    data["format"] = STAMP_FORMAT
    path = _cache_file(cache_key())
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=".check-", dir=path.parent)
        with os.fdopen(fd, "w", encoding="utf-8") as handle:
            json.dump(data, handle, indent=1, ensure_ascii=False)
        os.replace(tmp, path)
    except OSError:
        return False
    return True


def current_stamp(run_checks=None) -> Stamp:
    """The cached stamp of this build, or run the checks now and cache them.

    Parameters
    ----------
    run_checks : callable, optional
        Returns check rows; default :func:`bridgecalc.validation.run_checks`.
    """
    cached = load_cached()
    if cached is not None:
        return cached
    if run_checks is None:
        from .cases import run_checks
    stamp = stamp_from_rows(run_checks())
    save(stamp)
    return stamp
