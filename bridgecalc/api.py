"""What a user calls, from Python or through the command line.

A Python session reads like the command line::

    model = load("detail.toml")
    result = run(model)
    result.psi, result.coupling_coefficients
    write_outputs(result, "detail-results")

The path a model takes: :mod:`bridgecalc.readers` → :mod:`bridgecalc.model`
(validated) → :mod:`bridgecalc.mesh` → :mod:`bridgecalc.solve` (one unit
solution per environment) → :mod:`bridgecalc.study` (refined until every
coupling coefficient is mesh-independent) → :mod:`bridgecalc.results` →
:mod:`bridgecalc.outputs`.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path
from types import MappingProxyType

import dataclasses

from .assessments import assess as assess_result
from .audit import audit, audit_texts
from .errors import BridgecalcError, ModelError
from .mesh import MeshOptions, build_mesh
from .model import Model
from .model import rules as model_rules
from .readers import read
from .readers import script as scripts
from .results import Result, build_result, flanking_sums
from .solve.cases import solve_cases
from .solve.linsolve import one_blas_thread
from .study.convergence import DEFAULT_MAX_NODES, DEFAULT_TOLERANCE, FIRST_MESH, converge

#: The shipped geometry script the demo computes, and its parameters: the
#: scenario's balcony slab without its thermal break, so that Ψ and the coldest
#: interior point both come from the junction (docs/scenario.md).
DEMO_SCRIPT = "balcony.py"
DEMO_PARAMETERS = MappingProxyType({"thermal_break": False})


def load(path, settings=(), **params) -> Model:
    """Read a model file (``.toml``) or build a geometry script (``.py``).

    Parameters
    ----------
    path : str or Path
    settings : sequence of str
        ``NAME=VALUE`` parameters of a geometry script, as on the command
        line (``--set``); each value is read as the type of its default.
    **params
        Geometry script parameters overriding its defaults.

    Raises
    ------
    ModelError
        When the file cannot be read or breaks a rule of the format.
    """
    path = Path(path)
    if settings:
        if path.suffix != ".py":
            raise ModelError(f"{path}: --set applies to geometry scripts only, not model files")
        module = scripts.load_module(path)
        return scripts.build(path, {**scripts.parse_assignments(module, settings, path),
                                    **params}, module)
    return read(path, **params)


def export(model: Model, to) -> list[Path]:
    """Write a model as a self-contained model file (``.toml``: regions as
    polygons, surfaces as paths) or as a DXF drawing with the model file that
    reads it (``.dxf``: one layer per material and per surface); see
    :func:`bridgecalc.readers.export.export`.

    Returns
    -------
    list of Path
        The files written.
    """
    from .readers.export import export as write_model
    return write_model(model, to)


def script_parameters(path) -> list:
    """A geometry script's parameters as (name, default, unit, note), in its order
    (:func:`bridgecalc.readers.script.parameter_table`)."""
    return scripts.parameter_table(path)


def geometries_folder() -> Path:
    """The junction library (geometry scripts) shipped with the package."""
    return Path(str(resources.files("bridgecalc.geometries")))


def demo_model() -> Model:
    """The shipped demo junction: a balcony slab through the wall's insulation,
    without a thermal break (:data:`DEMO_SCRIPT`, :data:`DEMO_PARAMETERS`)."""
    return load(geometries_folder() / DEMO_SCRIPT, **DEMO_PARAMETERS)


def run(model: Model, mesh_options: MeshOptions | None = None, element: str = "P1", *,
        tolerance: float = DEFAULT_TOLERANCE, max_nodes: int = DEFAULT_MAX_NODES,
        refinement: str | None = "adaptive", refine: float = 1.0,
        f_rsi_min: float | None = None, strict: bool = False) -> Result:
    """Mesh and solve a model until the answer no longer depends on the mesh.

    Parameters
    ----------
    model : Model
    mesh_options : MeshOptions, optional
        Options of the first mesh of the study.
    element : str
        ``"P1"`` (default) or ``"P2"``.
    tolerance : float
        Target estimated relative error of every coupling coefficient and Ψ
        [-] (default 1e-3).
    max_nodes : int
        Node budget of the convergence study [-].
    refinement : str or None
        ``"adaptive"`` (default; P2 studies refine uniformly), ``"uniform"``,
        ``"interval"`` (refine by the guaranteed bounds' gap and stop when
        their intervals are narrower than the tolerance; P1), or None for one
        mesh without a study (``convergence`` is then None).
    refine : float
        Divides every element size of the study's first mesh (when no
        ``mesh_options`` are given) [-]; the command line's ``--refine``.
    f_rsi_min : float, optional
        A temperature-factor criterion [-] to give a verdict on (``--f-rsi-min``).
    strict : bool
        Refuse, as errors, what would otherwise be warnings: the audit's
        findings (:func:`bridgecalc.audit.audit`, checked before meshing) and
        the run's own (an unfaced environment, heat flows that do not
        balance); the command line's ``--strict``.

    Returns
    -------
    Result
        Fields and heat flows of the finest mesh; the coupling coefficients,
        Ψ and L2D are the study's best (extrapolated) estimates (see
        :mod:`bridgecalc.study.convergence`); ``assessment`` holds the
        verdicts (:func:`assess`).
        Its ``warnings`` carry the audit's findings, each with its place and
        what to do.

    Raises
    ------
    ModelError
        For a model that breaks a rule, or, with ``strict``, one with warnings.
    """
    if not (isinstance(refine, (int, float)) and refine > 0):
        raise BridgecalcError(f"--refine must be a positive number, got {refine!r}")
    if mesh_options is None and refine != 1.0:
        mesh_options = dataclasses.replace(FIRST_MESH, refinement=refine)
    with one_blas_thread():
        result = assess_result(_run(model, mesh_options, element, tolerance, max_nodes,
                                    refinement, strict), f_rsi_min)
    if strict:
        _refuse_warnings(model, result.warnings)
    return result


def assess(result: Result, f_rsi_min: float | None = None) -> Result:
    """``result`` with its verdicts against ``f_rsi_min`` [-] and the model's
    ``[moisture]`` check (:func:`bridgecalc.assessments.assess`)."""
    return assess_result(result, f_rsi_min)


def _run(model, mesh_options, element, tolerance, max_nodes, refinement, strict) -> Result:
    model_rules.validate(model)
    unfaced = model_rules.unfaced_sides(model)   # these fail before meshing
    if "interior" in unfaced:
        raise ModelError(unfaced["interior"])
    sides = model_rules.two_temperature_sides(model)
    if sides is not None:
        model_rules.check_temperature_difference(model, *sides)
    findings = audit(model)
    texts = audit_texts(model, findings)
    warnings = list(unfaced.values()) + texts
    if strict:
        _refuse_warnings(model, warnings)
    entries = [{**f.to_dict(), "text": text} for f, text in zip(findings, texts)]
    if refinement is None:
        cases = solve_cases(model, build_mesh(model, mesh_options), element)
        return build_result(cases, None, element, warnings, entries)
    outcome = converge(model, mesh_options, element, tolerance, max_nodes, refinement,
                       flanking_sums(model))
    return build_result(outcome.cases, outcome.study, element, warnings, entries)


def _refuse_warnings(model: Model, warnings) -> None:
    """``--strict``: every warning is an error."""
    if warnings:
        lines = "\n".join(f"  - {w}" for w in warnings)
        raise ModelError(f"{model.origin}: --strict: {len(warnings)} "
                         f"warning{'s' if len(warnings) > 1 else ''} refused, nothing "
                         f"written:\n{lines}")


def check() -> list:
    """Run the built-in validation cases against their references and keep
    their stamp for this build's reports.

    Returns
    -------
    list of bridgecalc.validation.CheckRow
    """
    from .validation import run_checks
    from .validation.stamp import save, stamp_from_rows
    rows = run_checks()
    save(stamp_from_rows(rows))
    return rows


def format_checks(rows) -> str:
    """The validation cases as the table ``bridgecalc check`` prints."""
    from .validation import format_table
    return format_table(rows)


def write_outputs(result: Result, out_dir, *, f_rsi_min=None, isotherm_step=None, stop=None,
                  workers=None, vector_figures=False):
    """Write results.json, the exports, the figures (PNG; with ``vector_figures``
    SVG and PDF too) and the report into ``out_dir``, whole or not at all (see
    :func:`bridgecalc.outputs.write_outputs`)."""
    from .outputs import write_outputs as write
    return write(result, out_dir, f_rsi_min=f_rsi_min, isotherm_step=isotherm_step,
                 dimension_system=result.model.dimension_system, stop=stop, workers=workers,
                 vector_figures=vector_figures)


def check_options(f_rsi_min=None, isotherm_step=None, model=None) -> None:
    """Refuse output options that cannot be honoured, before anything is computed."""
    from .outputs import check_options as check_output_options
    check_output_options(f_rsi_min, isotherm_step, model)


def summary(result: Result, out_dir) -> str:
    """The one-screen summary of a run."""
    from .outputs.summary import run_summary
    return run_summary(result, out_dir)


def sweep_plan(script, vary_items, settings=()) -> tuple[dict, dict]:
    """The varied and the fixed parameters of a sweep, from ``NAME=...`` texts.

    Raises
    ------
    BridgecalcError
        For a script that is not one, or values it cannot take.
    """
    from .sweep import parse_vary
    script = Path(script)
    if script.suffix != ".py":
        raise BridgecalcError(f"{script}: sweep needs a geometry script (.py)")
    module = scripts.load_module(script)
    return (parse_vary(module, vary_items, script),
            scripts.parse_assignments(module, settings, script))


def sweep(script, vary: dict, fixed: dict | None = None, *, workers=None, scheduler=None,
          progress=False) -> list:
    """Every combination of ``vary`` through the script (:func:`bridgecalc.sweep.sweep`)."""
    from .sweep import sweep as run_sweep
    return run_sweep(script, vary, workers=workers, scheduler=scheduler, base_params=fixed,
                     progress=progress)


def write_sweep(rows, out_dir, script, vary=None, fixed=None, stop=None):
    """sweep.csv, sweep.png and sweep.txt, whole or not at all."""
    from .sweep import write_sweep as write
    return write(rows, out_dir, script, vary, fixed, stop=stop)


def sweep_summary(rows, out_dir, seconds=None) -> str:
    """The lines printed after a sweep."""
    from .sweep import summary as sweep_lines
    return sweep_lines(rows, out_dir, seconds)


def schedule(project, out_dir, *, workers=None, scheduler=None, progress=False, stop=None,
             tolerance=None, timeout=None):
    """A building's junctions from a project file, summed to H_TB, written into
    ``out_dir`` (:func:`bridgecalc.schedule.run_schedule`).

    Returns
    -------
    bridgecalc.schedule.ScheduleResult
        ``heat_transfer_coefficient`` (H_TB [W/K], None when a junction
        failed), ``error_bound`` [W/K], ``rows``.
    """
    from .schedule import run_schedule
    return run_schedule(project, out_dir, workers=workers, scheduler=scheduler,
                        progress=progress, stop=stop, tolerance=tolerance, timeout=timeout)


def schedule_summary(result) -> str:
    """The lines printed after a schedule."""
    from .schedule import summary as schedule_lines
    return schedule_lines(result)


def fresh_folder(base) -> Path:
    """``base``, or ``base-2``, ``base-3``, ... : the first that does not exist."""
    from .outputs import fresh_folder as first_free
    return first_free(Path(base))


def check_out_folder(out_dir) -> None:
    """Refuse, before any work, an output folder a run may not replace: a
    file, a path through a file, or a folder holding anything but an earlier
    run (:func:`bridgecalc.outputs.check_replaceable`).

    Raises
    ------
    BridgecalcError
    """
    from .outputs import check_replaceable
    check_replaceable(Path(out_dir))


def stop_request():
    """An object that, installed as a signal handler, stops a run being written
    without leaving anything behind (:class:`bridgecalc.outputs.StopRequest`)."""
    from .outputs import StopRequest
    return StopRequest()


def report_file() -> str:
    """The name of the HTML report in an output folder."""
    from .outputs import REPORT_FILE
    return REPORT_FILE
