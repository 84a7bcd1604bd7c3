"""The report's blocks for models with more than two environments: the
coupling coefficients L_ij with Ψ_ij, the weighting factors g at θsi,min,
and the coupling coefficients level by level of the refinement study
(ISO 10211: with more than two environments, L_ij and g replace L2D and fRsi).

Read from results.json's content; nothing here recomputes physics.
"""

from __future__ import annotations

from ..exports import coupling_entries
from .blocks import KeyFigures, Para, Table
from .numbers import g_text, n_text

#: Key figures list at most this many coupling coefficients; the table has all.
KEY_COUPLINGS = 6


def pair_text(between) -> str:
    """``room–garage``: a pair of environments in words."""
    return "–".join(between)


def key_figures(key: KeyFigures, data: dict, system: str | None) -> None:
    """The headline L_ij and Ψ_ij of a model with several pairs."""
    for c in data["heat_flow_case"]["coupling_coefficients"][:KEY_COUPLINGS]:
        key.items.append((f"L {pair_text(c['between'])}", n_text(c["value"]), "W/(m·K)",
                          "coupling coefficient"))
        if "psi" in c:
            key.items.append((f"Ψ {pair_text(c['between'])}", n_text(c["psi"]), "W/(m·K)",
                              f"{system} dimensions" if system else
                              "dimension system not stated"))


def weighting_factor_note(data: dict) -> str:
    """g at θsi,min in words, for the key figures."""
    st = data["surface_temperature_case"]
    return ", ".join(f"{name} {g:.3f}"
                     for name, g in st["temperature_weighting_factors"].items())


def coupling_table(data: dict) -> Table:
    """Every L_ij with its estimated error, Σ U·l and Ψ_ij of the pairs named."""
    rows = [[pair_text(e["between"]), n_text(e["value"]),
             "–" if e["error"] is None else g_text(float(f"{e['error']:.2g}")),
             n_text(e["ul"]), n_text(e["psi"]), ", ".join(e["flanking"]) or "none"]
            for e in coupling_entries(data)]
    guaranteed = bool((data.get("convergence") or {}).get("error_estimates_guaranteed"))
    return Table(["environments i–j", "L_ij [W/(m·K)]",
                  "± at most" if guaranteed else "± estimate", "Σ U·l [W/(m·K)]",
                  "Ψ_ij [W/(m·K)]", "flanking elements"], rows,
                 "Coupling coefficients (ISO 10211): L_ij is the heat flow from i to j per "
                 "kelvin of θi − θj, from one solution per environment at 1 °C with the others "
                 "at 0 °C; Ψ_ij = L_ij − Σ U·l over the flanking elements that name the pair. "
                 + ("The error is guaranteed by the bounds below (the exact value of the model "
                    "as drawn lies within it)." if guaranteed else
                    "The estimate is the refinement study's (an estimate, not a bound)."),
                 (1, 2, 3, 4), (2.2, 1.3, 1.0, 1.3, 1.3, 3.0))


def weighting_table(data: dict, environments) -> Table:
    """g_j at θsi,min, with each environment's kind and temperature."""
    st = data["surface_temperature_case"]
    rows = [[e.name, e.kind, g_text(e.temperature),
             f"{st['temperature_weighting_factors'][e.name]:.4f}"] for e in environments]
    return Table(["environment", "kind", "θ [°C]", "g at θsi,min [-]"], rows,
                 "Temperature weighting factors at θsi,min (surface-temperature case): "
                 "θsi,min = Σ g_j θ_j, Σ g_j = 1 (ISO 10211). They take the place of fRsi "
                 "with more than two temperatures: a climate gives each θ_j, and with it the "
                 "surface temperature to check against a criterion.", (2, 3), (3, 2, 1.5, 2))


def no_f_rsi_verdict(f_rsi_min: float) -> Para:
    """Why a criterion on fRsi is not assessed with more than two temperatures."""
    return Para(
        f"NOT ASSESSED against the criterion given for this run (fRsi ≥ {g_text(f_rsi_min)}): "
        f"with more than two environment temperatures fRsi is not defined (ISO 10211); "
        f"assess θsi,min = Σ g_j θ_j with the weighting factors below for the design "
        f"temperatures that apply.", "warn")


def convergence_table(convergence: dict) -> Table:
    """The refinement study's levels with every L_ij."""
    levels = convergence.get("levels", [])
    pairs = [tuple(c["between"]) for c in (levels[0]["coupling_coefficients"] if levels else [])]
    rows = []
    for k, level in enumerate(levels):
        values = {tuple(c["between"]): c["value"] for c in level["coupling_coefficients"]}
        rows.append([str(k + 1), str(level.get("nodes", "")),
                     *(n_text(values.get(p)) for p in pairs),
                     n_text(level.get("theta_si_min"), 3)])
    return Table(["level", "nodes", *(f"L {pair_text(p)} [W/(m·K)]" for p in pairs),
                  "θsi,min [°C]"], rows, "Mesh refinement study.",
                 tuple(range(len(pairs) + 3)))
