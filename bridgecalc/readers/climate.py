"""The ``[moisture]`` table of a model file and its climate (addition D): read and checked.

The climate is a CSV file named relative to the model file, with the header
``month,temperature,relative_humidity`` (and, optionally, one column per
unheated environment holding its monthly temperature), or an inline array of
twelve tables with the same keys. Every value is checked where it is read:
a message names the model file, ``moisture.climate``, the climate file and
its line, and the column.
"""

from __future__ import annotations

import csv
import io
import os
from pathlib import Path

from ..model.checker import Checker, describe, is_real, key_text
from ..model.moisture import (MONTH_KEYS, ClimateMonth, MoistureCheck, check_climate,
                              inline_place)

MOISTURE_KEYS = ("climate", "interior_humidity_class", "interior_relative_humidity",
                 "interior_temperature", "criterion")


def read_moisture(check: Checker, table, origin: str, environments=()) -> MoistureCheck:
    """``[moisture]`` of a model file read from ``origin`` as a MoistureCheck.

    Parameters
    ----------
    check : Checker
        The model file's.
    table : dict
        The parsed ``[moisture]`` table.
    origin : str
        The model file's path: a climate file is found relative to it.
    environments : sequence of Environment
        The model's, for the climate's environment columns.

    Raises
    ------
    ModelError
        Naming the model file, ``moisture`` and the key (and the climate file
        and its line for a value read from it).
    """
    if not isinstance(table, dict):
        check.fail("moisture", f"expected a table [moisture], got {describe(table)}")
    check.keys(table, MOISTURE_KEYS, "moisture")
    if "climate" not in table:
        check.fail("moisture.climate", "missing; give a climate file (climate = \"FILE.csv\", "
                                       "relative to this model file) or twelve inline "
                                       "tables {month, temperature, relative_humidity}")
    raw = table["climate"]
    if isinstance(raw, str):
        months, source, place = _climate_file(check, raw, origin)
        check_climate(check, months, environments, place)
    elif isinstance(raw, list):
        months, source = _inline_climate(check, raw), "inline"
    else:
        check.fail("moisture.climate", f"expected a file name or an array of twelve tables, "
                                       f"got {describe(raw)}")
    return MoistureCheck(
        tuple(sorted(months, key=_month_order)), table.get("criterion", "mould"),
        table.get("interior_humidity_class"),
        _as_float(table.get("interior_relative_humidity")),
        _as_float(table.get("interior_temperature")), source)


def read_climate(path) -> tuple[ClimateMonth, ...]:
    """The twelve months of a climate file (CSV, see the module docstring), checked,
    in month order: for geometry scripts that build a MoistureCheck themselves.

    Raises
    ------
    ModelError
        Naming the file, its line and the column.
    """
    path = os.fspath(path)
    check = Checker(path)
    months, _, place = _climate_file(check, os.path.basename(path), path)
    check_climate(check, months, (), place)
    return tuple(sorted(months, key=_month_order))


def _month_order(month: ClimateMonth):
    """Months in calendar order (a value that is not a month number sorts last,
    for the rules to name)."""
    return month.month if is_real(month.month) else 99


def _as_float(value):
    return float(value) if is_real(value) and abs(value) < 1e308 else value


def _inline_climate(check: Checker, raw: list) -> list[ClimateMonth]:
    months = []
    for i, item in enumerate(raw):
        if not isinstance(item, dict):
            check.fail(inline_place(i), f"expected a table {{month, temperature, "
                                        f"relative_humidity}}, got {describe(item)}")
        for key in MONTH_KEYS:
            if key not in item:
                check.fail(inline_place(i, key), "missing")
        extra = tuple((name, _as_float(value)) for name, value in item.items()
                      if name not in MONTH_KEYS)
        months.append(ClimateMonth(item["month"], _as_float(item["temperature"]),
                                   _as_float(item["relative_humidity"]), extra))
    return months


def _climate_file(check: Checker, name: str, origin: str):
    """The months of climate file ``name`` (relative to the model file), its path
    as given, and a function naming a value's place in it."""
    path = Path(os.path.dirname(os.path.abspath(origin))) / name
    try:
        text = path.read_bytes().decode("utf-8-sig")
    except FileNotFoundError:
        check.fail("moisture.climate", f"{name}: no such climate file (looked for {path})")
    except IsADirectoryError:
        check.fail("moisture.climate", f"{name}: is a folder, not a climate file")
    except OSError as exc:
        check.fail("moisture.climate", f"{name}: cannot read the climate file "
                                       f"({exc.strerror or exc})")
    except UnicodeDecodeError as exc:
        check.fail("moisture.climate", f"{name}: not a text file in UTF-8 (bad byte at "
                                       f"position {exc.start})")
    rows = [(n, row) for n, row in enumerate(csv.reader(io.StringIO(text)), start=1)
            if any(cell.strip() for cell in row)]
    if not rows:
        check.fail("moisture.climate", f"{name}: the climate file is empty; it needs the "
                                       f"header month,temperature,relative_humidity and "
                                       f"twelve rows")
    header_line, header = rows[0]
    columns = [cell.strip() for cell in header]
    for key in MONTH_KEYS:
        if key not in columns:
            check.fail("moisture.climate", f"{name}, line {header_line}: the header has no "
                                           f"column {key!r}; it must name month, temperature "
                                           f"and relative_humidity (got {','.join(columns)})")
    if len(set(columns)) != len(columns) or "" in columns:
        check.fail("moisture.climate", f"{name}, line {header_line}: every column needs a "
                                       f"name of its own (got {','.join(columns)})")
    lines = [n for n, _ in rows[1:]]

    def place(index: int | None = None, key: str | None = None) -> str:
        line = f", line {lines[index]}" if index is not None and index < len(lines) else ""
        column = f", column {key_text(key)}" if key else ""
        return f"moisture.climate: {name}{line}{column}"

    months = []
    for k, (n, row) in enumerate(rows[1:]):
        if len(row) != len(columns):
            check.fail(place(k), f"expected {len(columns)} values ({','.join(columns)}), "
                                 f"got {len(row)}")
        values = {}
        for column, cell in zip(columns, row):
            cell = cell.strip()
            try:
                values[column] = int(cell) if column == "month" else float(cell)
            except ValueError:
                what = "a whole month number 1 to 12" if column == "month" else "a number"
                check.fail(place(k, column), f"expected {what}, got {cell!r}")
        months.append(ClimateMonth(values["month"], values["temperature"],
                                   values["relative_humidity"],
                                   tuple((c, values[c]) for c in columns
                                         if c not in MONTH_KEYS)))
    return months, name, place


def moisture_text(moisture: MoistureCheck, assignment) -> list[str]:
    """The lines of ``[moisture]`` in a written model file, the climate inline
    (so the file stands on its own); ``assignment(key, value)`` writes one line."""
    climate = [{"month": m.month, "temperature": m.temperature,
                "relative_humidity": m.relative_humidity, **dict(m.environments)}
               for m in moisture.climate]
    out = ["[moisture]", assignment("climate", climate)]
    for key in MOISTURE_KEYS[1:]:
        value = getattr(moisture, key)
        if value is not None:
            out.append(assignment(key, value))
    return out
