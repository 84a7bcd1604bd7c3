"""report.html: the report's blocks as one self-contained page (figures embedded,
no external resources)."""

from __future__ import annotations

import base64
import html
import re

from .blocks import Figure, Heading, KeyFigures, Para, Report, Table

REPORT_FILE = "report.html"


CSS = """
:root { --ink:#1d2731; --muted:#5f6b73; --rule:#d9d4c7; --paper:#ffffff; --band:#f4f1ea;
        --accent:#9c3d1f; --pass:#23613a; --fail:#9b1c1c; --warn:#7a5200; }
* { box-sizing: border-box; }
body { margin: 0; background: var(--band); color: var(--ink);
       font: 15px/1.45 "DejaVu Sans", "Segoe UI", Helvetica, Arial, sans-serif; }
main { max-width: 62rem; margin: 0 auto; background: var(--paper); padding: 1.6rem 2.2rem 3rem; }
header { border-bottom: 2px solid var(--accent); padding-bottom: .6rem; margin-bottom: 1rem; }
h1 { font-size: 1.45rem; margin: 0 0 .25rem; }
.sub { color: var(--muted); font-size: .85rem; margin: 0; }
h2 { font-size: 1.1rem; margin: 2rem 0 .6rem; padding-bottom: .2rem;
     border-bottom: 1px solid var(--rule); }
.keys { display: grid; grid-template-columns: repeat(auto-fit, minmax(11rem, 1fr));
        gap: .6rem; margin: .6rem 0 1rem; }
.key { border: 1px solid var(--rule); border-top: 3px solid var(--ink); padding: .5rem .7rem; }
.key .label { font-size: .8rem; color: var(--muted); }
.key .value { font-size: 1.5rem; font-weight: bold; font-variant-numeric: tabular-nums; }
.key .unit { font-size: .85rem; margin-left: .25rem; }
.key .note { font-size: .78rem; color: var(--muted); }
p { margin: .5rem 0; }
p.note { color: var(--muted); }
p.pass, p.fail, p.warn, p.caution { padding: .5rem .8rem; border-left: 5px solid; }
p.pass { border-color: var(--pass); background: #edf5ef; }
p.fail { border-color: var(--fail); background: #fbeeee; font-weight: bold; }
p.warn { border-color: var(--warn); background: #fbf4e6; }
p.caution { border-color: var(--ink); background: var(--band); }
table { border-collapse: collapse; width: 100%; margin: .4rem 0 1rem; font-size: .85rem; }
caption { caption-side: bottom; text-align: left; color: var(--muted); font-size: .8rem;
          padding-top: .3rem; }
th, td { padding: .3rem .5rem; border-bottom: 1px solid var(--rule); text-align: left;
         vertical-align: top; }
thead th { border-bottom: 2px solid var(--ink); font-weight: bold; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
figure { margin: 1rem 0 1.6rem; page-break-inside: avoid; }
figure img { width: 100%; height: auto; border: 1px solid var(--rule); }
figcaption { color: var(--muted); font-size: .82rem; margin-top: .3rem; }
nav { font-size: .85rem; margin: .3rem 0 0; }
nav a { color: var(--ink); margin-right: .9rem; }
@media print { body { background: none; } main { padding: 0; max-width: none; } }
"""


#: Runs of this many characters without a space get break opportunities in HTML.
UNBROKEN_RUN = 30


def _breakable(text: str) -> str:
    """``text`` escaped for HTML, with ``<wbr>`` every :data:`UNBROKEN_RUN`
    characters inside longer runs without spaces (a 5000-character name must
    not widen the page); ordinary words are left whole."""
    out = []
    for k, part in enumerate(re.split(rf"(\S{{{UNBROKEN_RUN},}})", text)):
        if k % 2:
            out.append("<wbr>".join(html.escape(part[i:i + UNBROKEN_RUN])
                                    for i in range(0, len(part), UNBROKEN_RUN)))
        else:
            out.append(html.escape(part))
    return "".join(out)


def _html_block(block) -> str:
    e = _breakable
    if isinstance(block, Heading):
        anchor = f' id="{html.escape(block.anchor)}"' if block.anchor else ""
        return f"<h{block.level}{anchor}>{e(block.text)}</h{block.level}>"
    if isinstance(block, Para):
        cls = f' class="{block.tone}"' if block.tone != "normal" else ""
        return f"<p{cls}>{e(block.text)}</p>"
    if isinstance(block, KeyFigures):
        cards = "".join(
            f'<div class="key"><div class="label">{e(label)}</div>'
            f'<div class="value">{e(value)}<span class="unit">{e(unit)}</span></div>'
            f'<div class="note">{e(note)}</div></div>' for label, value, unit, note in block.items)
        return f'<div class="keys">{cards}</div>'
    if isinstance(block, Table):
        head = "".join(f"<th>{e(h)}</th>" for h in block.header)
        def cell(r, i, c):
            text = e(c)
            if (r, i) in block.links:
                text = f'<a href="{html.escape(block.links[r, i])}">{text}</a>'
            return f'<td class="num">{text}</td>' if i in block.numeric else f"<td>{text}</td>"
        body = "".join("<tr>" + "".join(cell(r, i, c) for i, c in enumerate(row)) + "</tr>"
                       for r, row in enumerate(block.rows))
        caption = f"<caption>{e(block.caption)}</caption>" if block.caption else ""
        return f"<table>{caption}<thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"
    if isinstance(block, Figure):
        encoded = base64.b64encode(block.png.read_bytes()).decode("ascii")
        name = html.escape(block.name)
        return (f'<figure id="figure-{name}"><img alt="{name} figure" '
                f'src="data:image/png;base64,{encoded}">'
                f"<figcaption>{e(block.caption)}</figcaption></figure>")
    raise TypeError(f"unknown report block {block!r}")


def render_html(report: Report) -> str:
    """The report as one self-contained HTML page (no external resources)."""
    e = html.escape
    nav = "".join(f'<a href="#{e(b.anchor)}">{e(b.text)}</a>' for b in report.blocks
                  if isinstance(b, Heading) and b.anchor)
    body = "\n".join(_html_block(b) for b in report.blocks)
    return (f'<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
            f'<meta name="viewport" content="width=device-width, initial-scale=1">'
            f"<title>{e(report.title)}</title><style>{CSS}</style></head><body><main>"
            f"<header><h1>{_breakable(report.title)}</h1>"
            f"<p class=\"sub\">{_breakable(report.subtitle)}</p>"
            f"<nav>{nav}</nav></header>\n{body}\n</main></body></html>\n")
