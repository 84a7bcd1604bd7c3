"""The short HTML summary: numbers, figure, cautions. Reads results only."""

from __future__ import annotations

import base64
import html
from pathlib import Path

from .results import CAUTION


def _row(label, value, unit=""):
    return (f"<tr><th>{html.escape(label)}</th><td>{html.escape(value)}</td>"
            f"<td>{html.escape(unit)}</td></tr>")


def summary_html(result, figure_png: Path | None = None) -> str:
    """A self-contained HTML page with the headline numbers and the figure."""
    data = result.to_dict()
    hf, st = data["heat_flow_case"], data["surface_temperature_case"]
    unit = data["length_unit"]
    rows = [_row("L2D, thermal coupling coefficient", f"{hf['coupling_coefficient']:.4f}",
                 "W/(m·K)")]
    for f in hf["flanking"]:
        rows.append(_row(f"U·l, {f['name']}", f"{f['ul']:.4f}",
                         f"W/(m·K)  (U = {f['u_value']:.4f} W/(m²·K), l = {f['length']:g} {unit})"))
    if "psi" in hf:
        rows.append(_row("Ψ, linear thermal transmittance", f"{hf['psi']:.4f}", "W/(m·K)"))
    at = ", ".join(f"{c:g}" for c in st["theta_si_min_at"])
    rows += [
        _row("θsi,min, lowest interior surface temperature", f"{st['theta_si_min']:.2f}",
             f"°C at ({at}) {unit}"),
        _row("fRsi, temperature factor", f"{st['f_rsi']:.3f}", "-"),
    ]
    for name, value in hf["heat_flow"].items():
        rows.append(_row(f"heat flow from {name}", f"{value:.4f}", "W/m"))
    rows.append(_row("heat-flow balance", f"{hf['balance']:.1e}", "-"))
    mesh = data["mesh"]
    rows.append(_row("mesh", f"{mesh['nodes']} nodes, {mesh['triangles']} triangles",
                     mesh["element"]))
    image = ""
    if figure_png is not None:
        encoded = base64.b64encode(Path(figure_png).read_bytes()).decode("ascii")
        image = (f'<figure><img alt="isotherms" src="data:image/png;base64,{encoded}">'
                 f"<figcaption>Temperatures with the surface resistances for surface "
                 f"temperature; the ring marks θsi,min.</figcaption></figure>")
    title = html.escape(data["name"] or "junction")
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{title}</title>
<style>
body {{ font-family: sans-serif; max-width: 60em; margin: 2em auto; color: #222; }}
table {{ border-collapse: collapse; }} th, td {{ padding: .25em .8em; text-align: left;
border-bottom: 1px solid #ccc; }} img {{ max-width: 100%; }}
.caution {{ border-left: 4px solid #b35c00; padding: .5em 1em; background: #fff6ec; }}
</style></head><body>
<h1>{title}</h1>
<p>Two-dimensional steady conduction to ISO 10211; interior {data['temperatures']['interior']:g} °C,
exterior {data['temperatures']['exterior']:g} °C.</p>
<table>{''.join(rows)}</table>
{image}
<p class="caution">{html.escape(CAUTION)}</p>
</body></html>
"""
