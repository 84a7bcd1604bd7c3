"""results.json: the numbers of a run, format 1 (docs/model-format.md)."""

from __future__ import annotations

import json

RESULTS_FILE = "results.json"


def results_json(result, data=None) -> str:
    """results.json text: deterministic (fixed key order and float repr) and
    valid JSON (no NaN or Infinity; ``run`` refuses non-finite results).

    ``data``: ``result.to_dict()`` when the caller has it already.
    """
    return json.dumps(result.to_dict() if data is None else data, indent=2,
                      ensure_ascii=False, allow_nan=False) + "\n"
