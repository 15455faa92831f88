"""Dates in data files → elapsed time.

Method: ISO 8601 dates (``2025-06-30``, with an optional time of day) are read by the
standard library. The local forms ``D.M.YYYY``, ``D/M/YYYY``, ``M/D/YYYY`` and
``D-M-YYYY`` are read only when the order of day and month is settled: declared
(``dates = "day-first"`` or ``"month-first"``) or shown by the file itself (a first
number above 12 means day-first, a second number above 12 means month-first). A file
whose every date could be read either way is refused with the declaration to add.

Elapsed time is the difference from an origin (declared, or the earliest date) in days,
expressed in the unit asked for through pint's definitions (a month is 1/12 of a
Julian year, 30.4375 days).
"""

from __future__ import annotations

import re
from datetime import datetime
from typing import Callable, Sequence

import numpy as np

from ._errors import DataFileError, Location
from ._units import UnitInfo

__all__ = ["parse_dates", "parse_date", "elapsed"]

_LOCAL = re.compile(r"^(\d{1,2})([./-])(\d{1,2})\2(\d{4})(?:[ T](\d{1,2}):(\d{2})(?::(\d{2}))?)?$")


def parse_date(text: str, order: str | None) -> datetime | None:
    """One date, or ``None`` when the text is no date in the given order."""
    if re.match(r"^\d{4}-\d{2}-\d{2}", text):
        try:
            return datetime.fromisoformat(text).replace(tzinfo=None)
        except ValueError:
            return None
    found = _LOCAL.match(text)
    if not found or order not in ("day-first", "month-first"):
        return None
    first, second, year = int(found.group(1)), int(found.group(3)), int(found.group(4))
    day, month = (first, second) if order == "day-first" else (second, first)
    hour, minute, second = (int(g) if g else 0 for g in found.group(5, 6, 7))
    try:
        return datetime(year, month, day, hour, minute, second)
    except ValueError:
        return None


def _order(cells: Sequence[str | None], declared: str | None, where: Location,
           column: str) -> str | None:
    if declared in ("day-first", "month-first"):
        return declared
    local = [m for c in cells if c and (m := _LOCAL.match(c)) is not None]
    if not local:
        return None
    if declared == "iso":
        return None
    day_first = any(int(m.group(1)) > 12 for m in local)
    month_first = any(int(m.group(3)) > 12 for m in local)
    if day_first and not month_first:
        return "day-first"
    if month_first and not day_first:
        return "month-first"
    example = local[0].group(0)
    state = "contradict each other" if day_first else "could be read either way"
    raise DataFileError(f"column '{column}': expected dates whose order of day and month is "
                        f"clear, found dates such as '{example}' that {state}; declare "
                        "dates = \"day-first\" or \"month-first\" for this file (or write "
                        "ISO 8601 dates, 2025-06-30)", where)


def parse_dates(cells: Sequence[str | None], declared: str | None,
                where: Callable[[int], Location], column: str) -> list[datetime | None]:
    """Every cell as a date (``None`` stays ``None``: a permitted missing value)."""
    first = next((i for i, c in enumerate(cells) if c), 0)
    order = _order(cells, declared, where(first), column)
    made: list[datetime | None] = []
    for index, cell in enumerate(cells):
        if cell is None:
            made.append(None)
            continue
        value = parse_date(cell, order)
        if value is None or (declared == "iso" and _LOCAL.match(cell)):
            form = {"day-first": "a day-first date (31.12.2025)",
                    "month-first": "a month-first date (12/31/2025)"}.get(
                order or "", "an ISO 8601 date (2025-12-31)")
            raise DataFileError(f"column '{column}': expected {form}, found '{cell}'",
                                where(index))
        made.append(value)
    return made


def elapsed(dates: Sequence[datetime | None], origin: datetime | None, unit: UnitInfo
            ) -> np.ndarray:
    """Time since ``origin`` (default: the earliest date) in ``unit``; NaN where missing."""
    present = [d for d in dates if d is not None]
    if origin is None and not present:
        return np.full(len(dates), np.nan)
    start = origin if origin is not None else min(present)
    day = 86400.0 / float(unit.factor)
    return np.array([np.nan if d is None else (d - start).total_seconds() / 86400.0 * day
                     for d in dates])
