"""The ``[moisture]`` table of a model: a surface-humidity check against a climate
(model format 1, addition D), and its rules.

Plain data, checked by :func:`check_moisture` wherever it was made (a model
file, an inline climate, a CSV climate file, a geometry script). The rules
take a function that names the place of each value, so a value read from a
climate file is named by its file and line, one given inline by its table.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from ..physics import iso13788
from .checker import Checker, describe, fmt, is_real
from .types import ABSOLUTE_ZERO

#: The keys of a month: inline tables, or the columns of a climate file.
MONTH_KEYS = ("month", "temperature", "relative_humidity")
MONTHS = tuple(range(1, 13))
CRITERIA = tuple(iso13788.CRITICAL_SURFACE_HUMIDITY)


@dataclass(frozen=True)
class ClimateMonth:
    """One month of a climate.

    Attributes
    ----------
    month : int
        1 (January) to 12.
    temperature : float
        Monthly mean exterior temperature θe [°C].
    relative_humidity : float
        Monthly mean exterior relative humidity φe [-], a fraction 0–1.
    environments : tuple of (str, float)
        Monthly temperatures [°C] of unheated environments the climate names
        (a column or key named after the environment); the others keep the
        model's temperature.
    """

    month: int
    temperature: float
    relative_humidity: float
    environments: tuple[tuple[str, float], ...] = ()


@dataclass(frozen=True)
class MoistureCheck:
    """What ``[moisture]`` asks for: ISO 13788's monthly check of the interior
    surface against mould or surface condensation.

    Attributes
    ----------
    climate : tuple of ClimateMonth
        Twelve months, in month order.
    criterion : str
        ``"mould"`` (φsi,crit = 0.8) or ``"condensation"`` (1.0).
    interior_humidity_class : int or None
        1 to 5, ISO 13788 Annex A; or else ...
    interior_relative_humidity : float or None
        ... a fixed interior relative humidity φi [-], 0 < φi < 1.
    interior_temperature : float or None
        θi [°C]; None: the temperature of the interior environment whose
        surface holds θsi,min.
    climate_source : str
        Where the climate came from (a file, or ``"inline"``), for the report;
        not part of the model's content.
    """

    climate: tuple[ClimateMonth, ...]
    criterion: str = "mould"
    interior_humidity_class: int | None = None
    interior_relative_humidity: float | None = None
    interior_temperature: float | None = None
    climate_source: str = field(default="inline", compare=False)

    @property
    def critical_surface_relative_humidity(self) -> float:
        """φsi,crit [-] of the criterion (ISO 13788, from memory)."""
        return iso13788.CRITICAL_SURFACE_HUMIDITY[self.criterion]


def inline_place(index: int | None = None, key: str | None = None) -> str:
    """Where a value of an inline climate is, e.g. ``moisture.climate[3].temperature``
    (the climate as a whole for no index)."""
    if index is None:
        return "moisture.climate"
    return f"moisture.climate[{index}]" + (f".{key}" if key else "")


def check_moisture(check: Checker, moisture, environments=(), place=inline_place) -> None:
    """Every rule of ``[moisture]``.

    Parameters
    ----------
    check : Checker
    moisture : MoistureCheck
    environments : sequence of Environment
        The model's, to check the climate's environment columns against.
    place : callable (index, key) -> str
        Names where month ``index``'s ``key`` was given (for a message).
    """
    if not isinstance(moisture, MoistureCheck):
        check.fail("moisture", f"expected a MoistureCheck, got {describe(moisture)}")
    check.string(moisture.criterion, "moisture.criterion")
    if moisture.criterion not in CRITERIA:
        check.fail("moisture.criterion", f"unknown criterion {moisture.criterion!r}; use "
                                         f"\"mould\" (surface relative humidity 0.8) or "
                                         f"\"condensation\" (1.0)")
    has_class = moisture.interior_humidity_class is not None
    has_fixed = moisture.interior_relative_humidity is not None
    if has_class and has_fixed:
        check.fail("moisture", "give either interior_humidity_class or "
                               "interior_relative_humidity, not both")
    if not has_class and not has_fixed:
        check.fail("moisture.interior_humidity_class",
                   "missing; give interior_humidity_class = 1 to 5 (ISO 13788 Annex A) or a "
                   "fixed interior_relative_humidity (a fraction, 0 to 1)")
    if has_class:
        value = moisture.interior_humidity_class
        if _whole_number(value) not in iso13788.HUMIDITY_CLASSES:
            check.fail("moisture.interior_humidity_class",
                       f"expected a whole number 1 to 5 (ISO 13788 Annex A), got "
                       f"{describe(value)}")
    if has_fixed:
        value = check.number(moisture.interior_relative_humidity,
                             "moisture.interior_relative_humidity")
        _check_fraction(check, value, "moisture.interior_relative_humidity", closed=False)
    if moisture.interior_temperature is not None:
        value = check.number(moisture.interior_temperature, "moisture.interior_temperature")
        if value < ABSOLUTE_ZERO:
            check.fail("moisture.interior_temperature",
                       f"{fmt(value)} °C is below absolute zero ({fmt(ABSOLUTE_ZERO)} °C)")
    check_climate(check, moisture.climate, environments, place)


def check_climate(check: Checker, climate, environments=(), place=inline_place) -> None:
    """Twelve months, each of 1 to 12 once, with finite temperatures and
    relative humidities as fractions 0–1; environment temperatures only for
    the model's unheated environments."""
    if not isinstance(climate, (list, tuple)):
        check.fail(place(), f"expected twelve months, got {describe(climate)}")
    unheated = {e.name for e in environments if e.kind == "unheated"}
    seen: dict[int, int] = {}
    for i, month in enumerate(climate):
        if not isinstance(month, ClimateMonth):
            check.fail(place(i), f"expected a ClimateMonth, got {describe(month)}")
        number = _whole_number(month.month)
        if number not in MONTHS:
            check.fail(place(i, "month"), f"expected a month number 1 to 12, got "
                                          f"{describe(month.month)}")
        if number in seen:
            check.fail(place(i, "month"), f"month {number} is given twice (also at "
                                          f"{place(seen[number])}); give each month once")
        seen[number] = i
        _check_temperature(check, month.temperature, place(i, "temperature"))
        humidity = check.number(month.relative_humidity, place(i, "relative_humidity"))
        _check_fraction(check, humidity, place(i, "relative_humidity"), closed=True)
        for name, value in month.environments:
            if name not in unheated:
                kinds = {e.name: e.kind for e in environments}
                why = (f"the {kinds[name]} environment {name!r} takes its temperature from "
                       f"{'the climate' if kinds[name] == 'exterior' else 'the model'}"
                       if name in kinds else "no environment of the model has that name")
                check.fail(place(i, name), f"unknown column: {why}; a climate may give "
                                           f"monthly temperatures for unheated environments "
                                           f"only ({', '.join(sorted(unheated)) or 'none'})")
            _check_temperature(check, value, place(i, name))
    missing = [m for m in MONTHS if m not in seen]
    if len(climate) != 12 or missing:
        detail = f"; month {', '.join(map(str, missing))} missing" if missing else ""
        check.fail(place(), f"a climate has twelve months, 1 to 12, one each; "
                                       f"got {len(climate)}{detail}")


def _whole_number(value) -> int | None:
    """``value`` as an int when it is a finite whole number, else None."""
    if not is_real(value):
        return None
    try:
        number = float(value)
    except OverflowError:
        return None
    return int(number) if math.isfinite(number) and number.is_integer() else None


def _check_temperature(check: Checker, value, where: str) -> float:
    value = check.number(value, where)
    if value < ABSOLUTE_ZERO:
        check.fail(where, f"{fmt(value)} °C is below absolute zero ({fmt(ABSOLUTE_ZERO)} °C)")
    return value


def _check_fraction(check: Checker, value: float, where: str, closed: bool) -> None:
    """A relative humidity as a fraction: 0 < φ ≤ 1 (``closed``) or 0 < φ < 1."""
    inside = 0.0 < value <= 1.0 if closed else 0.0 < value < 1.0
    if inside:
        return
    if value == 0.0:
        check.fail(where, "a relative humidity of 0 leaves no vapour to assess; give the "
                          "monthly mean as a fraction above 0, up to 1")
    span = "0 to 1" if closed else "between 0 and 1 (exclusive)"
    if 1.0 < value <= 100.0:
        check.fail(where, f"{fmt(value)} looks like a percentage; give relative humidity as "
                          f"a fraction {span} ({fmt(value / 100)} for {fmt(value)} %)")
    check.fail(where, f"a relative humidity is a fraction {span}, got {fmt(value)}")
