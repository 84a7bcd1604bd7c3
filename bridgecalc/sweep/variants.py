"""The variants of a sweep: ``--vary`` values parsed against a script's
parameters, every combination of them, and the row each variant gives."""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

from ..errors import BridgecalcError
from ..readers import script as scripts


CSV_FILE = "sweep.csv"
FIGURE_FILE = "sweep.png"
NOTES_FILE = "sweep.txt"

RESULT_COLUMNS = ("psi [W/(m·K)]", "coupling_coefficient [W/(m·K)]",
                  "theta_si_min [°C]", "f_rsi [-]", "status", "convergence",
                  "mesh_nodes")

CAUTION = ("Results support, and do not replace, a qualified practitioner's "
           "judgement; inputs and criteria must follow the codes in force where "
           "the building stands. A sweep shows trends of one modelled junction: "
           "check the variant you build on with its own full calculation and report.")


@dataclass(frozen=True)
class VariantResult:
    """One row of a sweep.

    Attributes
    ----------
    index : int
        Position in the sweep, from 0, in the order the combinations are formed
        (the first varied parameter changes slowest).
    params : dict
        Every parameter of the script for this variant (defaults filled in).
    status : str
        ``"ok"`` or ``"failed: <message>"``.
    psi : float or None
        Ψ [W/(m·K)]; None when the model has no flanking elements or the
        variant failed.
    coupling_coefficient : float or None
        L2D [W/(m·K)].
    theta_si_min : float or None
        θsi,min [°C].
    f_rsi : float or None
        fRsi [-].
    convergence : str
        ``"single mesh"`` when no mesh-refinement study was run, else
        ``"criterion met"`` or ``"criterion not met"``; empty for a failure.
    mesh_nodes : int or None
        Nodes of the (final) mesh.
    couplings : tuple of ((str, str), float, float or None)
        With more than one pair of environments: each pair, its L_ij and
        Ψ_ij [W/(m·K)] (None without flanking elements naming it).
    weighting_factors : tuple of (str, float)
        With more than two temperatures: g_j at θsi,min [-] per environment.
    dimension_system : str or None
        The model's.
    moisture : (str, int or None, float or None) or None
        With an ISO 13788 check (the model's ``[moisture]``): its verdict, the
        critical month and the fRsi it requires [-].
    """

    index: int
    params: dict
    status: str
    psi: float | None = None
    coupling_coefficient: float | None = None
    theta_si_min: float | None = None
    f_rsi: float | None = None
    convergence: str = ""
    mesh_nodes: int | None = None
    couplings: tuple = ()
    weighting_factors: tuple = ()
    dimension_system: str | None = None
    moisture: tuple | None = None

    @property
    def ok(self) -> bool:
        """The variant was computed."""
        return self.status == "ok"


def script_parameter(module, name: str, option: str, origin):
    """The default of parameter ``name``; an error naming the option if unknown."""
    if name not in module.PARAMETERS:
        known = ", ".join(sorted(module.PARAMETERS))
        raise BridgecalcError(f"{origin}: {option} {name}: no such parameter "
                              f"(parameters: {known})")
    return module.PARAMETERS[name]


def parse_vary(module, items, origin) -> dict[str, list]:
    """``--vary`` options -> ``{name: [values, ...]}``, in the order given.

    Each item is ``NAME=START:STOP:COUNT`` (COUNT values evenly spaced from
    START to STOP, both included; numeric parameters only) or
    ``NAME=A,B,C`` (explicit values, e.g. ``thermal_break=false,true``).
    Values are read as the type of the script's default
    (:func:`bridgecalc.readers.script.parse_value`).

    Parameters
    ----------
    module : module
        The geometry script (:func:`bridgecalc.readers.script.load_module`).
    items : list of str
    origin : str or Path
        Named in messages (the script path).

    Raises
    ------
    BridgecalcError
        Malformed item, unknown or repeated parameter, COUNT < 1, a range
        for a boolean or text parameter, a value of the wrong type.
    """
    vary: dict[str, list] = {}
    for item in items or ():
        name, sep, text = item.partition("=")
        name, text = name.strip(), text.strip()
        if not sep or not name or not text:
            raise BridgecalcError(f"{origin}: --vary {item!r}: expected "
                                  f"NAME=START:STOP:COUNT or NAME=A,B,C")
        default = script_parameter(module, name, "--vary", origin)
        if name in vary:
            raise BridgecalcError(f"{origin}: --vary {name}: given more than once")
        if ":" in text:
            vary[name] = _parse_range(name, text, default, origin)
        else:
            vary[name] = [_parse_one(name, piece, default, origin)
                          for piece in text.split(",")]
    return vary


def _parse_one(name, text, default, origin):
    text = text.strip()
    if not text:
        raise BridgecalcError(f"{origin}: --vary {name}: empty value in the list")
    try:
        return scripts.parse_value(text, default)
    except ValueError as exc:
        raise BridgecalcError(f"{origin}: --vary {name}={text}: {exc}") from None


def _parse_range(name, text, default, origin) -> list:
    where = f"{origin}: --vary {name}={text}"
    if isinstance(default, bool) or not isinstance(default, (int, float)):
        kind = "true/false" if isinstance(default, bool) else "text"
        raise BridgecalcError(f"{where}: START:STOP:COUNT needs a numeric parameter; "
                              f"{name} is {kind}, list the values instead (A,B,...)")
    parts = text.split(":")
    if len(parts) != 3:
        raise BridgecalcError(f"{where}: expected START:STOP:COUNT")
    try:
        start, stop = (float(scripts.parse_value(part, default)) for part in parts[:2])
    except ValueError:
        raise BridgecalcError(f"{where}: START and STOP must be numbers") from None
    try:
        count = int(parts[2])
    except ValueError:
        raise BridgecalcError(f"{where}: COUNT must be a whole number") from None
    if not (math.isfinite(start) and math.isfinite(stop)):
        raise BridgecalcError(f"{where}: START and STOP must be finite")
    if count < 1:
        raise BridgecalcError(f"{where}: COUNT must be at least 1, got {count}")
    if count == 1 and start != stop:
        raise BridgecalcError(f"{where}: COUNT 1 gives one value; "
                              f"START and STOP must then be equal")
    step = (stop - start) / (count - 1) if count > 1 else 0.0
    values = [start + k * step for k in range(count - 1)] + [stop]
    if isinstance(default, int) and all(v == int(v) for v in values):
        return [int(v) for v in values]
    return values


def variants(vary: dict, base_params: dict | None = None) -> list[dict]:
    """Every combination of the varied values over ``base_params``.

    The first varied parameter changes slowest (like nested loops written in
    the order given).
    """
    names = list(vary)
    base = dict(base_params or {})
    return [{**base, **dict(zip(names, combo))}
            for combo in itertools.product(*(vary[n] for n in names))]
