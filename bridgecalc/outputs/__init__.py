"""The outputs of a run: results.json, results.csv, field.vtu, the figures and
the report, written whole or not at all.

Modules, each with one job:

``folder``
    the staging folder: a run's files land whole or not at all.
``workers``
    forked worker processes that end with their parent.
``write``
    :func:`write_outputs`: what is written, by which process, in what order.
``results_file``
    results.json text.
``exports``
    field.vtu and results.csv, for other programs.
``figures/``
    the figures, one module per kind, and their files.
``report/``
    the report's content, built once, rendered to report.html and report.pdf.

They read results and never recompute physics. Importing this package does
not import matplotlib or ReportLab: a helper process is forked before they
load.
"""

from .folder import StopRequest, check_replaceable, fresh_folder, staged_folder
from .report import REPORT_FILE, REPORT_PDF_FILE
from .results_file import RESULTS_FILE, results_json
from .workers import end_with_parent
from .write import check_options, write_outputs

__all__ = ("RESULTS_FILE", "REPORT_FILE", "REPORT_PDF_FILE", "StopRequest", "check_options",
           "check_replaceable",
           "end_with_parent", "fresh_folder", "results_json", "staged_folder",
           "write_outputs")
