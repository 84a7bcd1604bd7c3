"""The one-screen summary of a run, as the command line prints it."""

from __future__ import annotations

from pathlib import Path

from ..results import printed_position
from .report.html import REPORT_FILE
from .verdicts import summary_lines as verdict_lines


def run_summary(result, out_dir) -> str:
    """The one-screen table printed after a run: the numbers, the convergence
    study in words, where the files are, and the caution."""
    hf, st = result.heat_flow_case, result.surface_temperature_case
    model = result.model
    unit = model.length_unit
    lines = [f"{model.name or model.origin}",
             f"  mesh               {result.mesh.node_count} nodes, "
             f"{result.mesh.triangle_count} triangles, {result.element}"]
    if getattr(model, "drawing", None) is not None:
        lines.append(f"  drawing            {model.drawing.file}, read in {model.drawing.unit_text()}")
    if model.dimension_system:
        lines.append(f"  dimensions         {model.dimension_system} (flanking lengths, Ψ)")
    for name, flow in hf.heat_flow.items():
        lines.append(f"  heat flow {name:<9}{flow:12.4f} W/m")
    lines.append(f"  balance            {hf.balance:12.1e}")
    if hf.coupling_coefficient is not None:
        lines.append(f"  L2D                {hf.coupling_coefficient:12.4f} W/(m·K)")
    if len(hf.coupling_coefficients) > 1:
        for c in hf.coupling_coefficients:
            pair = f"{c.between[0]}–{c.between[1]}"
            psi = "" if c.psi is None else f"   Ψ {c.psi:9.4f} W/(m·K)"
            # the whole pair of names: a long one takes a line of its own
            lines.append(f"  L {pair:<16}{c.value:12.4f} W/(m·K){psi}" if len(pair) <= 16 else
                         f"  L {pair}\n  {'':<18}{c.value:12.4f} W/(m·K){psi}")
    for f in hf.flanking:
        # the whole name: a long one takes a line of its own
        label = f"U·l {f.name}"
        lines.append(f"  {label:<19}{f.ul:12.4f} W/(m·K)" if len(label) <= 19 else
                     f"  {label}\n  {'':<19}{f.ul:12.4f} W/(m·K)")
    if hf.psi is not None:
        lines.append(f"  Ψ                  {hf.psi:12.4f} W/(m·K)")
    at = printed_position(model, st.theta_si_min_at)
    lines.append(f"  θsi,min            {st.theta_si_min:12.2f} °C at {at} {unit}")
    if st.f_rsi is not None:
        lines.append(f"  fRsi               {st.f_rsi:12.3f}")
    else:
        weights = ", ".join(f"{name} {g:.3f}" for name, g in st.weighting_factors.items())
        lines.append(f"  g at θsi,min       {weights} ({st.theta_si_min_environment}'s surface)")
    lines.extend(verdict_lines(result))
    for name, value in st.probes.items():
        lines.append(f"  probe {name:<13}{value:12.2f} °C (surface-temperature case)")
    if getattr(result, "convergence", None) is not None:
        lines.extend("  " + line for line in result.convergence.summary_lines())
    lines.append(f"  written to {out_dir}")
    lines.append(f"  report             {Path(out_dir) / REPORT_FILE}")
    lines.append("  Results support, and do not replace, a qualified practitioner's judgement;")
    lines.append("  inputs and criteria must follow the codes in force where the building stands.")
    return "\n".join(lines)
