"""Command line: argument parsing and nothing else.

Every command is a call a user could make from Python: the functions of
:mod:`bridgecalc.api` (``load``, ``run``, ``write_outputs``, ...).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import __version__, api
from .errors import BridgecalcError

def _library_note() -> str:
    """Where the shipped geometry scripts are, for the help texts."""
    folder = api.geometries_folder()
    names = sorted(p.stem for p in folder.glob("*.py") if p.stem != "__init__")
    return f"shipped geometry scripts (the junction library): {', '.join(names)}, in {folder}"


def _parser() -> argparse.ArgumentParser:
    library = _library_note()
    parser = argparse.ArgumentParser(
        prog="bridgecalc",
        description="Two-dimensional thermal bridge calculations to ISO 10211: coupling "
                    "coefficients between any number of environments, linear thermal "
                    "transmittance Ψ and temperature factor fRsi.",
        epilog=library)
    parser.add_argument("--version", action="version", version=f"bridgecalc {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    run = sub.add_parser("run", help="compute one model file or geometry script",
                         epilog=library)
    run.add_argument("model", metavar="MODEL", help="model file (.toml) or geometry script (.py)")
    run.add_argument("--out", metavar="DIR", help="output folder (default: a new folder "
                     "named after the model, in the current folder); one holding an earlier "
                     "run is replaced whole, one holding anything else is refused")
    run.add_argument("--set", dest="assignments", metavar="NAME=VALUE", action="append",
                     default=[], help="geometry script parameter (repeatable)")
    run.add_argument("--element", choices=("P1", "P2"), default="P1",
                     help="finite element: linear P1 (default) or quadratic P2")
    run.add_argument("--refine", type=float, default=1.0, metavar="FACTOR",
                     help="divide all target element sizes of the first mesh of the "
                          "convergence study by FACTOR (default 1)")
    run.add_argument("--tolerance", type=float, default=None, metavar="REL",
                     help="target estimated relative error of Ψ and L2D of the "
                          "mesh-convergence study (default 0.001, i.e. 0.1 %%)")
    run.add_argument("--max-nodes", dest="max_nodes", type=int, default=None, metavar="N",
                     help="node budget of the mesh-convergence study (default 250000)")
    _report_options(run)
    _strict_option(run)

    export = sub.add_parser(
        "export", help="write a model as a self-contained model file or a DXF drawing",
        description="Write the model a model file, drawing or geometry script describes: "
                    "to OUT.toml as a self-contained model file (every region a polygon, "
                    "every surface a path), or to OUT.dxf as a drawing with one layer per "
                    "material (closed polylines, hatched) and one per surface, together "
                    "with OUT.toml, the model file that reads it. Existing files of those "
                    "names are replaced, except the model's own.",
        epilog=library)
    export.add_argument("model", metavar="MODEL", help="model file (.toml) or geometry "
                        "script (.py)")
    export.add_argument("--to", required=True, metavar="OUT.toml|OUT.dxf",
                        help="file to write")
    export.add_argument("--set", dest="assignments", metavar="NAME=VALUE", action="append",
                        default=[], help="geometry script parameter (repeatable)")

    sub.add_parser("check", help="run the built-in validation cases against their "
                   "published references")
    parameters = sub.add_parser(
        "parameters", help="list a geometry script's parameters with units and defaults",
        description="List the parameters a geometry script takes (set them with --set "
                    "NAME=VALUE on run and sweep), each with its default, unit and note.",
        epilog=library)
    parameters.add_argument("script", metavar="SCRIPT", help="geometry script (.py)")
    demo = sub.add_parser("demo", help="compute the shipped demo junction")
    demo.add_argument("--out", metavar="DIR", help="output folder (default: a new "
                      "folder bridgecalc-demo in the current folder)")
    _report_options(demo)
    _strict_option(demo)

    sweep = sub.add_parser(
        "sweep", help="compute every combination of geometry script parameters",
        description="Run every combination of the --vary values through a geometry "
                    "script; write sweep.csv, sweep.png and sweep.txt. Exit 0 when every "
                    "variant was computed, 1 when some failed (each reported in its "
                    "row), 2 on bad input (nothing written).",
        epilog=library)
    sweep.add_argument("script", metavar="SCRIPT", help="geometry script (.py)")
    sweep.add_argument("--vary", action="append", required=True,
                       metavar="NAME=START:STOP:COUNT|NAME=A,B,...",
                       help="parameter to vary: COUNT evenly spaced values from START "
                            "to STOP, or a list of values (repeatable)")
    sweep.add_argument("--set", dest="assignments", metavar="NAME=VALUE", action="append",
                       default=[], help="fixed parameter for every variant (repeatable)")
    sweep.add_argument("--out", metavar="DIR", help="output folder (default: a new "
                       "folder named after the script + '-sweep', in the current folder)")
    sweep.add_argument("--workers", type=int, metavar="N",
                       help="local worker processes (default: the cores available)")
    sweep.add_argument("--scheduler", metavar="ADDRESS",
                       help="run on the Dask distributed scheduler at ADDRESS "
                            "(tcp://host:port) instead of local processes")
    schedule = sub.add_parser(
        "schedule", help="compute a building's junctions from a project file and sum "
                         "H_TB = Σ Ψ·l",
        description="Compute every junction of a project file (a model or geometry script "
                    "with its length in the building), reuse those unchanged since the last "
                    "run into the same folder, and write schedule.json, schedule.csv, "
                    "schedule.html, schedule.pdf and one folder per junction. Exit 0 when "
                    "every junction was computed, 1 when some failed (each reported in its "
                    "row, no total), 2 on bad input (nothing written).",
        epilog=library)
    schedule.add_argument("project", metavar="PROJECT", help="project file (.toml)")
    schedule.add_argument("--out", metavar="DIR", help="output folder, replaced as a whole "
                          "(default: PROJECT's name + '-schedule', in the current folder; "
                          "running again there reuses the junctions that did not change)")
    schedule.add_argument("--workers", type=int, metavar="N",
                          help="local worker processes (default: the cores available)")
    schedule.add_argument("--scheduler", metavar="ADDRESS",
                          help="run on the Dask distributed scheduler at ADDRESS "
                               "(tcp://host:port) instead of local processes; its workers "
                               "must see the project and the output folder at the same paths")
    return parser


def _report_options(parser) -> None:
    """Options of the figures and the report, shared by run and demo."""
    parser.add_argument("--f-rsi-min", type=float, metavar="F",
                        help="temperature factor criterion for the report's pass/fail "
                             "(set by the rules where the building stands; none by default)")
    parser.add_argument("--isotherm-step", type=float, metavar="K",
                        help="temperature step between isotherms in the figure [K] "
                             "(default: about a tenth of θi − θe)")
    parser.add_argument("--vector-figures", action="store_true",
                        help="write each figure as SVG and PDF too, for editing or "
                             "printing at any scale (default: PNG only, at 200 dpi)")


def _strict_option(parser) -> None:
    parser.add_argument("--strict", action="store_true",
                        help="treat warnings (the model audit's findings: gaps, stray "
                             "adiabatic edges, surfaces that stop short, ...) as errors: "
                             "exit 2 and write nothing")


def _run_and_write(model, out_dir: Path, element="P1", refine=1.0, args=None, stop=None) -> Path:
    f_rsi_min = getattr(args, "f_rsi_min", None)
    isotherm_step = getattr(args, "isotherm_step", None)
    api.check_options(f_rsi_min, isotherm_step, model)   # bad options: exit 2 before any work
    tolerance = getattr(args, "tolerance", None)
    max_nodes = getattr(args, "max_nodes", None)
    result = api.run(model, None, element, refine=refine, f_rsi_min=f_rsi_min,
                     tolerance=api.DEFAULT_TOLERANCE if tolerance is None else tolerance,
                     max_nodes=api.DEFAULT_MAX_NODES if max_nodes is None else max_nodes,
                     strict=getattr(args, "strict", False))
    api.write_outputs(result, out_dir, f_rsi_min=f_rsi_min, isotherm_step=isotherm_step,
                      stop=stop, vector_figures=getattr(args, "vector_figures", False))
    print(api.summary(result, out_dir))
    for warning in result.warnings:
        print(f"warning: {warning}", file=sys.stderr)
    return out_dir


def check_out_folder(out_dir: Path) -> None:
    """Refuse, before any work, an output folder a run may not replace
    (:func:`bridgecalc.api.check_out_folder`)."""
    api.check_out_folder(out_dir)


def command_run(args, stop=None) -> int:
    if not args.refine > 0:
        raise BridgecalcError(f"--refine must be a positive number, got {args.refine:g}")
    if args.tolerance is not None and not (args.tolerance > 0 and args.tolerance < 1):
        raise BridgecalcError(f"--tolerance must be a positive number below 1 (a relative "
                              f"error, e.g. 0.001 for 0.1 %), got {args.tolerance:g}")
    if args.max_nodes is not None and args.max_nodes < 100:
        raise BridgecalcError(f"--max-nodes must be a whole number of at least 100, "
                              f"got {args.max_nodes}")
    source = Path(args.model)
    if not source.exists():
        raise BridgecalcError(f"{source}: no such file")
    model = api.load(source, args.assignments)
    _print_model_warnings(model)
    out_dir = Path(args.out) if args.out else api.fresh_folder(Path.cwd() / source.stem)
    check_out_folder(out_dir)
    _run_and_write(model, out_dir, args.element, args.refine, args, stop)
    return 0


def command_demo(args, stop=None) -> int:
    model = api.demo_model()
    out_dir = Path(args.out) if args.out else api.fresh_folder(Path.cwd() / "bridgecalc-demo")
    check_out_folder(out_dir)
    _run_and_write(model, out_dir, args=args, stop=stop)     # its summary names the report
    return 0


def command_export(args, stop=None) -> int:
    source = Path(args.model)
    if not source.exists():
        raise BridgecalcError(f"{source}: no such file")
    model = api.load(source, args.assignments)
    _print_model_warnings(model)
    for path in api.export(model, args.to):
        print(f"wrote {path}")
    return 0


def _print_model_warnings(model) -> None:
    """What reading the model found that may be a slip (a drawing's units)."""
    drawing = getattr(model, "drawing", None)
    for warning in drawing.warnings if drawing is not None else ():
        print(f"warning: {warning}", file=sys.stderr)


def command_parameters(args, stop=None) -> int:
    source = Path(args.script)
    if source.suffix != ".py":
        raise BridgecalcError(f"{source}: parameters are those of a geometry script (.py)")
    rows = api.script_parameters(source)
    table = [("parameter", "default", "unit", "note")] + [
        (name, str(default).lower() if isinstance(default, bool) else f"{default:g}"
         if isinstance(default, float) else str(default), unit, note)
        for name, default, unit, note in rows]
    widths = [max(len(r[k]) for r in table) for k in range(3)]
    print(f"{source.name}: {len(rows)} parameters; set them with --set NAME=VALUE")
    for row in table:
        print("  " + "  ".join(c.ljust(w) for c, w in zip(row[:3], widths)) + "  " + row[3])
    return 0


def command_check(args, stop=None) -> int:
    rows = api.check()
    print(api.format_checks(rows))
    return 0 if all(r.passed for r in rows) else 1


def command_sweep(args, stop=None) -> int:
    """Exit 0 if every variant was computed, 1 if some failed."""
    import time

    source = Path(args.script)
    vary, fixed = api.sweep_plan(source, args.vary, args.assignments)
    if args.workers is not None and args.workers < 1:
        raise BridgecalcError(f"--workers must be at least 1, got {args.workers}")
    out_dir = Path(args.out) if args.out else api.fresh_folder(Path.cwd()
                                                               / f"{source.stem}-sweep")
    check_out_folder(out_dir)
    start = time.perf_counter()
    rows = api.sweep(source, vary, fixed, workers=args.workers, scheduler=args.scheduler,
                     progress=True)
    api.write_sweep(rows, out_dir, source, vary, fixed, stop=stop)
    print(api.sweep_summary(rows, out_dir, time.perf_counter() - start))
    return 0 if all(r.ok for r in rows) else 1


def command_schedule(args, stop=None) -> int:
    """Exit 0 if every junction was computed, 1 if some failed."""
    source = Path(args.project)
    if args.workers is not None and args.workers < 1:
        raise BridgecalcError(f"--workers must be at least 1, got {args.workers}")
    out_dir = Path(args.out) if args.out else Path.cwd() / f"{source.stem}-schedule"
    result = api.schedule(source, out_dir, workers=args.workers, scheduler=args.scheduler,
                          progress=True, stop=stop)
    print(api.schedule_summary(result))
    for warning in result.warnings:
        print(f"warning: {warning}", file=sys.stderr)
    return 0 if result.ok else 1


def main(argv=None) -> int:
    """Entry point of the ``bridgecalc`` command."""
    import signal
    import threading

    args = _parser().parse_args(argv)
    # SIGTERM as SystemExit, so a run being written removes its staging folder
    stop = api.stop_request()
    previous = None
    if threading.current_thread() is threading.main_thread():
        previous = signal.signal(signal.SIGTERM, stop)
    try:
        return {"run": command_run, "demo": command_demo, "check": command_check,
                "sweep": command_sweep, "export": command_export,
                "schedule": command_schedule,
                "parameters": command_parameters}[args.command](args, stop)
    except BridgecalcError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    except OSError as exc:
        print(f"error: {exc.filename or ''}: {exc.strerror or exc}", file=sys.stderr)
        return 2
    finally:
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)
        stop.check()                      # the exception was swallowed somewhere


def console(argv=None) -> None:
    """The ``bridgecalc`` command as a process: :func:`main`, then the exit.

    After a run, matplotlib, SciPy and the result's arrays are loaded; the
    interpreter's orderly shutdown tears them down one by one, some 0.2 to
    0.4 s after every file is written and closed. When :func:`main` has
    returned, its output is flushed and nothing else of the process is
    still going (no other thread, no child process), the process ends at
    once with :func:`main`'s exit code (``os._exit``); otherwise, and on any
    exception, it ends the ordinary way.
    """
    code = main(argv)
    processes = sys.modules.get("multiprocessing")
    try:
        sys.stdout.flush()
        sys.stderr.flush()
    except (OSError, ValueError):                 # a closed or broken stream
        sys.exit(code)
    import threading
    if threading.active_count() == 1 and not (processes and processes.active_children()):
        import os
        os._exit(code)
    sys.exit(code)


if __name__ == "__main__":
    console()
