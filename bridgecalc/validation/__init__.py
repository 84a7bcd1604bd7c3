"""The built-in validation cases against published and analytic references
(``cases``), and the stamp that reports carry of their results for this build
(``stamp``)."""

from .cases import CheckRow, format_table, run_checks

__all__ = ("CheckRow", "format_table", "run_checks")
