"""Writing a run's outputs whole or not at all.

Everything is written into a temporary folder beside the destination and
moved into place at the end, so a failed run leaves nothing half-written.
"""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from pathlib import Path

from . import figures, report

RESULTS_FILE = "results.json"
FIGURE_FILE = "isotherms.png"
REPORT_FILE = "report.html"


def results_json(result) -> str:
    """results.json text: deterministic (fixed key order and float repr)."""
    return json.dumps(result.to_dict(), indent=2, ensure_ascii=False) + "\n"


def write_outputs(result, out_dir) -> Path:
    """Write results.json, the isotherm figure and the HTML summary.

    Parameters
    ----------
    result : bridgecalc.pipeline.Result
    out_dir : str or Path
        Destination folder; created if missing; files in it with the same
        names are replaced.

    Returns
    -------
    Path
        The destination folder.
    """
    out_dir = Path(out_dir)
    out_dir.parent.mkdir(parents=True, exist_ok=True)
    staging = Path(tempfile.mkdtemp(prefix=f".{out_dir.name}.", dir=out_dir.parent))
    try:
        (staging / RESULTS_FILE).write_text(results_json(result), encoding="utf-8")
        figures.isotherm_figure(result, staging / FIGURE_FILE)
        (staging / REPORT_FILE).write_text(
            report.summary_html(result, staging / FIGURE_FILE), encoding="utf-8")
        if not out_dir.exists():
            os.replace(staging, out_dir)
        else:
            for item in staging.iterdir():
                os.replace(item, out_dir / item.name)
            staging.rmdir()
    except BaseException:
        shutil.rmtree(staging, ignore_errors=True)
        raise
    return out_dir


def fresh_folder(base: Path) -> Path:
    """``base`` if it does not exist yet, else ``base-2``, ``base-3``, ..."""
    if not base.exists():
        return base
    k = 2
    while (candidate := base.with_name(f"{base.name}-{k}")).exists():
        k += 1
    return candidate
