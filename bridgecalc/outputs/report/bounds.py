"""The report's paragraph on the guaranteed intervals of L2D, Ψ and L_ij
(model-format.md, addition G), next to the extrapolated value and its
estimate. Read from results.json's ``convergence``; nothing is recomputed.
"""

from __future__ import annotations

from .blocks import Para
from .numbers import g_text


def _interval(pair) -> str:
    lower, upper = pair
    return (f"[{lower:.6g}, {upper:.6g}] W/(m·K)".replace("-", "−")
            + f" (width {g_text(float(f'{upper - lower:.2g}'))})")


def bounds_blocks(convergence: dict) -> list:
    """One paragraph: the intervals, or why there are none."""
    if "coupling_coefficients_bounds" not in convergence:
        note = convergence.get("bounds_unavailable")
        return [Para(f"No guaranteed bounds: {note}.", "normal")] if note else []
    parts = []
    if "coupling_coefficient_bounds" in convergence:
        parts.append("L2D " + _interval(convergence["coupling_coefficient_bounds"]))
        if "psi_bounds" in convergence:
            parts.append("Ψ " + _interval(convergence["psi_bounds"]))
    entries = convergence["coupling_coefficients_bounds"]
    if "coupling_coefficient_bounds" not in convergence or len(entries) > 1:
        for entry in entries:
            name = "–".join(entry["between"])
            parts.append(f"L {name} " + _interval(entry["bounds"]))
            if "psi_bounds" in entry:
                parts.append(f"Ψ {name} " + _interval(entry["psi_bounds"]))
    return [Para("Guaranteed bounds on the finest mesh: " + "; ".join(parts) + ". They hold "
                 "for the exact solution of the model as drawn (its geometry, conductivities "
                 "and surface resistances), to round-off: the Galerkin energy bounds it from "
                 "above, the complementary energy of an equilibrated heat flux from below. "
                 "They do not cover the model's own simplifications, nor the input data.",
                 "normal")]
