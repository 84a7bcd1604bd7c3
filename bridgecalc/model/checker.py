"""How a broken rule is reported: ``FILE: TABLE[INDEX].KEY: what is wrong``.

One checker object per model or file; the reader and :func:`validate` share it,
so a rule reads the same wherever it is first seen.
"""

from __future__ import annotations

import difflib
import math
import numbers
import re

import numpy as np
import tomli_w

from ..errors import ModelError
from .types import MAX_COORDINATE

_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")


def key_text(name) -> str:
    """A TOML key as written in a file: bare when it can be, else quoted."""
    name = str(name)
    if _BARE_KEY.match(name):
        return name
    return tomli_w.dumps({name: 0}).rsplit(" = ", 1)[0]


def material_where(name) -> str:
    """Location of a material in messages, e.g. ``materials.concrete``."""
    return f"materials.{key_text(name)}"


class Checker:
    """Raises ModelError with ``origin: where: message``."""

    def __init__(self, origin: str, places=()):
        self.origin = origin
        # "regions[3]" -> where a drawing drew it (model format 1, addition C)
        self.places = dict(places)

    def fail(self, where: str, message: str):
        table = where.split(".", 1)[0]
        if table in self.places:
            where = f"{where} ({self.places[table]})"
        prefix = f"{self.origin}: {where}: " if where else f"{self.origin}: "
        raise ModelError(prefix + message)

    # -- types -------------------------------------------------------------

    def number(self, value, where: str, *, minimum=None, strictly=False,
               optional=False) -> float | None:
        """Check a finite real number (booleans are not numbers)."""
        if value is None and optional:
            return None
        if not is_real(value):
            self.fail(where, f"expected a number, got {describe(value)}")
        try:
            value = float(value)
        except OverflowError:            # an integer beyond the range of a float
            self.fail(where, "expected a finite number, got an integer too large "
                             "for a floating-point number")
        if not math.isfinite(value):
            self.fail(where, f"expected a finite number, got {value!r}")
        if minimum is not None:
            if strictly and not value > minimum:
                self.fail(where, f"must be greater than {fmt(minimum)}, got {fmt(value)}")
            if not strictly and not value >= minimum:
                self.fail(where, f"must be {fmt(minimum)} or more, got {fmt(value)}")
        return value

    def string(self, value, where: str, *, optional=False) -> str | None:
        if value is None and optional:
            return None
        if not isinstance(value, str):
            self.fail(where, f"expected a string, got {describe(value)}")
        return value

    def coordinate(self, value, where: str) -> float:
        """Check a coordinate: a finite number within ±:data:`MAX_COORDINATE`."""
        value = self.number(value, where)
        if not abs(value) <= MAX_COORDINATE:
            self.fail(where, f"coordinate {fmt(value)} lies beyond ±{MAX_COORDINATE:.0e} "
                             f"length units; draw the section near the origin")
        return value

    def point(self, value, where: str) -> tuple[float, float]:
        if not is_sequence(value) or len(value) != 2:
            self.fail(where, f"expected a point [x, y], got {describe(value)}")
        return (self.coordinate(value[0], f"{where}[0]"),
                self.coordinate(value[1], f"{where}[1]"))

    def points(self, value, where: str, minimum: int, what: str) -> list[tuple[float, float]]:
        if not is_sequence(value):
            self.fail(where, f"expected a list of [x, y] points, got {describe(value)}")
        if len(value) < minimum:
            self.fail(where, f"{what} needs at least {minimum} points, got {len(value)}")
        return [self.point(p, f"{where}[{k}]") for k, p in enumerate(value)]

    def keys(self, table, allowed, where: str):
        """Reject keys not in ``allowed`` (a typo must not pass silently)."""
        for key in table:
            if key not in allowed:
                hint = difflib.get_close_matches(str(key), allowed, n=1)
                did_you_mean = f"; did you mean {hint[0]!r}?" if hint else ""
                place = f"{where}.{key_text(key)}" if where else key_text(key)
                self.fail(place, f"unknown key{did_you_mean} (allowed here: "
                                 f"{', '.join(allowed)})")


def is_real(value) -> bool:
    return (isinstance(value, numbers.Real)
            and not isinstance(value, (bool, np.bool_)))


def is_sequence(value) -> bool:
    return isinstance(value, (list, tuple, np.ndarray))


def describe(value) -> str:
    if isinstance(value, bool):
        return f"the boolean {str(value).lower()}"
    if isinstance(value, str):
        return f"the string {value!r}"
    if isinstance(value, dict):
        return "a table"
    if is_sequence(value):
        return f"a list of {len(value)} items"
    if value is None:
        return "nothing"
    return f"{type(value).__name__} {value!r}"


def fmt(value: float) -> str:
    return f"{value:g}"


def fmt_point(p) -> str:
    return f"({fmt(p[0])}, {fmt(p[1])})"
