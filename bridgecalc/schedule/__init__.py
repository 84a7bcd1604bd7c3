"""A building's thermal bridges: the schedule from junctions to H_TB.

A project file (model format 1, addition E) lists a building's junctions,
each a model file or geometry script with its length in the building;
:func:`run_schedule` computes them (in parallel on local processes or a Dask
cluster, through :func:`bridgecalc.sweep.runner.run_calls`), reuses those
whose model, options and tool did not change since the last run into the
same folder, and writes schedule.json, schedule.csv, schedule.html,
schedule.pdf and one folder per junction with its complete outputs::

    from bridgecalc.schedule import run_schedule
    result = run_schedule("block-c.toml", "block-c-schedule", workers=2)
    result.heat_transfer_coefficient, result.error_bound      # W/K

Modules: ``project`` (the project file, checked), ``junction`` (one
junction built, computed, its row's numbers), ``reuse`` (what a result
depends on; carrying results over), ``rows`` (rows, H_TB, schedule.json and
schedule.csv), ``report`` (schedule.html and schedule.pdf), ``run`` (all of
it, written whole or not at all).
"""

from .junction import JunctionOutcome, compute_junction
from .project import JunctionSpec, Project, read_project
from .reuse import SCHEDULE_FILE, model_digest, reuse_key
from .rows import CSV_FILE, JunctionRow, ScheduleResult
from .report import HTML_FILE, PDF_FILE
from .run import SCHEDULE_FILES, check_schedule_folder, run_schedule, summary

__all__ = ("CSV_FILE", "HTML_FILE", "JunctionOutcome", "JunctionRow", "JunctionSpec", "PDF_FILE",
           "Project", "SCHEDULE_FILE", "SCHEDULE_FILES", "ScheduleResult",
           "check_schedule_folder", "compute_junction", "model_digest", "read_project",
           "reuse_key", "run_schedule", "summary")
