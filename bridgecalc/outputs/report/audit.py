"""The report's first block: what the model audit found, before any number.

Read from results.json's content (``audit``, :func:`bridgecalc.audit.audit`);
nothing is recomputed here.
"""

from __future__ import annotations

from .blocks import Heading, Para, Table


def audit_texts(data: dict) -> set[str]:
    """The lines of ``warnings`` that are audit findings (shown by :func:`audit_blocks`)."""
    return {finding["text"] for finding in data.get("audit", ())}


def audit_blocks(data: dict, point_text) -> list:
    """A heading, a caution and a table of the findings; nothing without findings.

    Parameters
    ----------
    data : dict
        results.json's content.
    point_text : callable
        Formats a position [length_unit] as the report prints positions.
    """
    findings = data.get("audit", ())
    if not findings:
        return []
    unit = data["length_unit"]
    count = len(findings)
    rows = [[f["rule"], point_text(f["at"]), f["message"], f["action"]] for f in findings]
    return [
        Heading(2, "Model audit", "audit"),
        Para(f"The audit of the model before it was solved found {count} "
             f"thing{'s' if count > 1 else ''} that may be a slip in the model (a gap, a "
             f"surface that stops short, a layer in the wrong unit). Each can give a "
             f"plausible but wrong Ψ or fRsi: check each against the drawing before using "
             f"the numbers below, and correct the model or confirm it is meant "
             f"(bridgecalc run --strict refuses a model with findings).", "warn"),
        Table(["rule", f"at [{unit}]", "what", "what to do"], rows,
              "Findings of the model audit, in the model's coordinates.",
              widths=(1.2, 1.0, 3.2, 2.4)),
    ]
