"""One junction of a schedule: its model built, computed, its outputs written,
and what its row needs from the result.

:func:`build_model` runs in the schedule's own process (the model is needed
to decide whether earlier results can be reused); :func:`compute_junction`
runs in a worker process (local or on a Dask cluster) and returns a small
:class:`JunctionOutcome`, not the result with its fields.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

from ..errors import BridgecalcError, ModelError
from ..model import Model
from ..readers import modelfile
from ..readers import script as scripts
from ..sweep.runner import mesher_lock
from .project import JunctionSpec, Project

#: The fields of an outcome kept in schedule.json, so a later run can reuse it.
OUTCOME_KEYS = ("status", "psi", "psi_error_estimate", "coupling_coefficient", "theta_si_min",
                "f_rsi", "f_rsi_verdict", "moisture", "warnings", "mesh_nodes",
                "converged", "model_name", "model_dimension_system")


@dataclass(frozen=True)
class JunctionOutcome:
    """What a schedule keeps of one junction's calculation.

    Attributes
    ----------
    status : str
        ``"ok"`` or ``"failed: <message>"``.
    psi : float or None
        Ψ [W/(m·K)] the row counts: the model's Ψ with two environments,
        else Ψ_ij of the junction's ``between`` pair.
    psi_error_estimate : float or None
        The convergence study's estimate of the error of that Ψ [W/(m·K)]
        (Richardson extrapolation, :mod:`bridgecalc.study.extrapolation`).
    coupling_coefficient : float or None
        L2D [W/(m·K)] (two environments) or L_ij of the pair.
    theta_si_min : float or None
        [°C].
    f_rsi : float or None
        [-], two environments only.
    f_rsi_verdict : str or None
        Against the project's criterion: ``"passes"``, ``"fails"``, ``"not
        assessed"`` (:mod:`bridgecalc.assessments`); None without a criterion.
    moisture : dict or None
        The ISO 13788 check of results.json (``moisture``) when the model has one.
    warnings : tuple of str
    mesh_nodes : int or None
    converged : bool or None
        The ISO 10211 mesh criterion was met.
    model_name, model_dimension_system : str or None
    """

    status: str
    psi: float | None = None
    psi_error_estimate: float | None = None
    coupling_coefficient: float | None = None
    theta_si_min: float | None = None
    f_rsi: float | None = None
    f_rsi_verdict: str | None = None
    moisture: dict | None = None
    warnings: tuple = ()
    mesh_nodes: int | None = None
    converged: bool | None = None
    model_name: str | None = None
    model_dimension_system: str | None = None

    @property
    def ok(self) -> bool:
        return self.status == "ok"

    def to_dict(self) -> dict:
        out = {key: getattr(self, key) for key in OUTCOME_KEYS}
        out["warnings"] = list(self.warnings)
        return out

    @classmethod
    def from_dict(cls, data: dict) -> "JunctionOutcome":
        fields = {key: data.get(key) for key in OUTCOME_KEYS}
        fields["warnings"] = tuple(fields["warnings"] or ())
        return cls(**fields)


def failed(message: str) -> JunctionOutcome:
    return JunctionOutcome(f"failed: {message}")


def build_model(project: Project, spec: JunctionSpec) -> Model:
    """The junction's model: the file read, or the script run with ``set``;
    the project's ``[report]`` fills what the model's own leaves empty.

    Raises
    ------
    ModelError
        The model is bad (the junction then fails in its row).
    """
    if spec.model.suffix == ".py":
        model = scripts.build(spec.model, spec.params)
    else:
        model = modelfile.read(spec.model)
    if project.report is not None:
        own = model.report
        model = dataclasses.replace(
            model, report=project.report if own is None else own.merged_over(project.report))
    return model


def check_pair(project: Project, spec: JunctionSpec, model: Model) -> None:
    """The project's ``between`` against the model: required with more than two
    environments, and naming two of its environments.

    Raises
    ------
    ModelError
        Naming the project file, ``junctions[i].between``.
    """
    names = [e.name for e in model.environments]
    where = f"{project.origin}: {spec.where}.between"
    if spec.between is None:
        if len(names) > 2:
            raise ModelError(f"{where}: missing; {spec.model_text} has {len(names)} "
                             f"environments ({', '.join(names)}), so say which Ψ_ij this "
                             f"junction counts, e.g. between = [{names[0]!r}, {names[-1]!r}]")
        return
    unknown = [n for n in spec.between if n not in names]
    if unknown:
        raise ModelError(f"{where}: {', '.join(repr(n) for n in unknown)}: not an environment "
                         f"of {spec.model_text} (its environments: {', '.join(names)})")


def no_psi_reason(model: Model, between) -> str | None:
    """Why the model gives no Ψ for the pair (no flanking element counts
    against it), or None when it does."""
    if not model.flanking:
        return (f"{model.origin}: the model has no flanking elements, so it gives L2D but "
                f"no Ψ; add [[flanking]] elements to count it in H_TB")
    if between is not None and len(model.environments) > 2:
        pair = set(between)
        if not any(f.between is not None and set(f.between) == pair for f in model.flanking):
            return (f"{model.origin}: no flanking element is between {between[0]!r} and "
                    f"{between[1]!r}, so the model gives no Ψ for that pair")
    return None


def _pair_value(mapping: dict, between):
    for pair, value in mapping.items():
        if set(pair) == set(between):
            return value
    return None


def outcome_of(result, between) -> JunctionOutcome:
    """What the row needs of an assessed result (:func:`bridgecalc.api.run`
    with the criterion): Ψ of the pair with its error estimate, fRsi and its
    verdict, the moisture check when there is one."""
    study = result.convergence
    several = len(result.model.environments) > 2
    if several:
        coupling = next(c for c in result.coupling_coefficients
                        if set(c.between) == set(between))
        psi, coupling_value = coupling.psi, coupling.value
        extrapolation = None if study is None else _pair_value(study.pair_psi, between)
    else:
        psi, coupling_value = result.psi, result.coupling_coefficient
        extrapolation = None if study is None else study.psi
    error = None if extrapolation is None else extrapolation.error_estimate
    if error is not None and not math.isfinite(error):
        error = None
    data = result.to_dict()
    verdict = data["surface_temperature_case"].get("f_rsi_verdict")
    moisture = data.get("moisture")
    if moisture is not None:
        moisture = {key: moisture.get(key) for key in
                    ("criterion", "f_rsi_required", "critical_month", "passes")}
    return JunctionOutcome(
        "ok", psi, None if error is None else abs(error), coupling_value,
        result.theta_si_min, result.f_rsi, verdict, moisture,
        tuple(result.warnings), result.mesh.node_count,
        None if study is None else bool(study.criterion_met),
        result.model.name, result.model.dimension_system)


def compute_junction(model: Model, between, options: dict, folder: str) -> JunctionOutcome:
    """Compute one junction and write its complete outputs into ``folder``.

    Runs in a worker process. ``options``: ``tolerance`` and ``max_nodes`` for
    :func:`bridgecalc.api.run` (None for their defaults), ``f_rsi_min`` for
    the outputs. A failure becomes a ``failed:`` outcome; nothing is left in
    ``folder`` then.
    """
    from .. import api
    run_options = {k: options[k] for k in ("tolerance", "max_nodes", "f_rsi_min")
                   if options.get(k) is not None}
    try:
        with mesher_lock():
            result = api.run(model, **run_options)
        outcome = outcome_of(result, between)
        if outcome.psi is None:
            return failed(no_psi_reason(model, between) or "no Ψ was computed")
        # one process per junction: its figures are drawn here, not in forks
        api.write_outputs(result, folder, f_rsi_min=options.get("f_rsi_min"), workers=1)
    except BridgecalcError as exc:
        return failed(str(exc))
    except Exception as exc:        # a bug or a library failure: report it, go on
        return failed(f"{type(exc).__name__}: {exc}")
    return outcome
