"""The report's blocks of the ISO 13788 check: the verdict, the monthly table and
its cautions (model format 1, addition D).

Read from results.json's ``moisture``; nothing here recomputes physics.
"""

from __future__ import annotations

from ..verdicts import MOISTURE_CAUTION, MONTH_NAMES
from .blocks import Heading, KeyFigures, Para, Table
from .numbers import n_text


def key_figure(key: KeyFigures, data: dict) -> None:
    """The check's headline: the required fRsi and the verdict."""
    moisture = data.get("moisture")
    if not moisture or moisture["critical_month"] is None:
        return
    key.items.append(("fRsi required", n_text(moisture["f_rsi_required"], 3), "",
                      f"ISO 13788 {moisture['criterion']}, "
                      f"{MONTH_NAMES[moisture['critical_month'] - 1]}: {moisture['verdict']}"))


def verdict(moisture: dict) -> Para:
    """The verdict in words, with the critical month."""
    what = (f"ISO 13788 monthly check against {moisture['criterion']} (surface relative "
            f"humidity {moisture['critical_surface_relative_humidity']:g}), "
            f"{moisture['interior_humidity']}, climate {moisture['climate']}")
    month = moisture["critical_month"]
    if month is None:
        return Para(f"PASS of the {what}: no month has an exterior colder than the interior, "
                    f"so none sets a requirement.", "pass")
    numbers = (f"the junction's fRsi {n_text(moisture['f_rsi'], 3)} against "
               f"{n_text(moisture['f_rsi_required'], 3)} required in the critical month, "
               f"{MONTH_NAMES[month - 1]} (month {month})")
    if moisture["verdict"] == "passes":
        return Para(f"PASS of the {what}: {numbers}. {MOISTURE_CAUTION}", "pass")
    if moisture["verdict"] == "fails":
        return Para(f"FAIL of the {what}: {numbers}. Under these conditions the coldest "
                    f"interior surface is at risk; revise the detail or have it assessed by "
                    f"a qualified practitioner. {MOISTURE_CAUTION}", "fail")
    return Para(f"NOT ASSESSED: the {what} cannot be judged on a result with warnings "
                f"(see above).", "fail")


def moisture_blocks(data: dict) -> list:
    """Heading, verdict, monthly table and caution, or nothing without the check."""
    moisture = data.get("moisture")
    if not moisture:
        return []
    several = any("f_rsi" in m for m in moisture["months"]) and (
        "f_rsi" not in data["surface_temperature_case"])
    rows = []
    for m in moisture["months"]:
        mark = " ◀ critical" if m["month"] == moisture["critical_month"] else ""
        rows.append([f"{MONTH_NAMES[m['month'] - 1]}{mark}", n_text(m["exterior_temperature"], 1),
                     n_text(m["exterior_relative_humidity"], 2),
                     n_text(m["exterior_vapour_pressure"], 0),
                     n_text(m["interior_vapour_pressure"], 0),
                     n_text(m["minimum_surface_temperature"], 2),
                     n_text(m.get("f_rsi_required"), 3) if "f_rsi_required" in m else "none"]
                    + ([n_text(m.get("f_rsi"), 3)] if several else []))
    header = ["month", "θe [°C]", "φe [-]", "pe [Pa]", "pi [Pa]", "θsi,min [°C]",
              "fRsi,min [-]"] + (["fRsi of the junction [-]"] if several else [])
    caption = (f"Monthly values (ISO 13788 clause 5, from memory): pe = φe·psat(θe); pi = pe "
               f"+ 1.10·Δp of the humidity class (Δp falling linearly to zero at θe = 20 °C) "
               f"or φi·psat(θi); psat(θsi,min) = pi/{moisture['critical_surface_relative_humidity']:g}; "
               f"fRsi,min = (θsi,min − θe)/(θi − θe); none where θe ≥ θi.")
    if several:
        caption += (" With more than two environments each month's fRsi of the junction is "
                    "(θsi − θe)/(θi − θe) with every environment at that month's temperature.")
    blocks = [Heading(2, "Surface humidity (ISO 13788)", "moisture"), verdict(moisture),
              Table(header, rows, caption, tuple(range(1, len(header))),
                    (1.9, 0.9, 0.8, 0.9, 0.9, 1.1, 1.1) + ((1.3,) if several else ()))]
    blocks.append(Para("The climate, the interior humidity and the criterion are the user's "
                       "inputs; the requirement that applies is set by the codes in force where "
                       "the building stands.", "caution"))
    return blocks
