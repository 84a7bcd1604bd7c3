"""Parameter sweeps: one geometry script, many variants, one table.

A sweep runs every combination of the values given for some of a geometry
script's parameters through the one path (:func:`bridgecalc.api.load`,
:func:`bridgecalc.api.run`) and collects Ψ, L2D, θsi,min and fRsi per
variant::

    from bridgecalc.sweep import sweep, write_sweep
    rows = sweep("geometries/balcony.py",
                 {"insulation_thickness_mm": [100.0, 160.0, 220.0],
                  "thermal_break": [False, True]})
    write_sweep(rows, "balcony-sweep", script="geometries/balcony.py")

Variants run in parallel on local processes (one gmsh per process: gmsh is a
process-global library) or, with ``scheduler=ADDRESS``, on a Dask distributed
cluster. A variant that fails (the script refuses a value, the mesh or the
solve fails) is reported in its row; the others complete. Rows come back in
variant order whatever order the variants finish in, so the same input gives
the same table.

Code that calls :func:`sweep` with local processes must be importable without
side effects (``if __name__ == "__main__":`` in a script), because workers are
started with the ``spawn`` method and import the caller's main module.
"""

from .runner import Progress, default_workers, run_calls, run_variant, sweep
from .table import csv_text, notes_text, summary, sweep_figure, write_sweep
from .variants import (CSV_FILE, FIGURE_FILE, NOTES_FILE, RESULT_COLUMNS, VariantResult,
                       parse_vary, variants)

__all__ = ("CSV_FILE", "FIGURE_FILE", "NOTES_FILE", "Progress", "RESULT_COLUMNS", "VariantResult",
           "csv_text", "default_workers", "notes_text", "parse_vary", "run_calls", "run_variant",
           "summary",
           "sweep", "sweep_figure", "variants", "write_sweep")
