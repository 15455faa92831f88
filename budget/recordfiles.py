"""Columns of a record file for fits and records, with the file row of every value.

One call, :func:`read_columns`, is all the fits and records use. The file is read by the
project's data-file reader (``datafiles.py``): CSV separated by ``,`` ``;`` or tab, with a
decimal point or comma, in UTF-8 (with or without BOM), UTF-16 with BOM or Windows-1252,
or an ``.xlsx`` workbook; ``#`` starts a comment line. A header may carry its unit as
``name [unit]``, ``name (unit)`` or ``name / unit``. Every value must be a finite number.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from numpy.typing import NDArray

from .errors import InputError, Location, did_you_mean

__all__ = ["Columns", "read_columns"]

@dataclass(frozen=True, slots=True, kw_only=True, eq=False)
class Columns:
    """The chosen columns as float arrays, their header units, and each value's file row."""

    path: str
    values: dict[str, NDArray[np.float64]]
    units: dict[str, str | None]
    rows: NDArray[np.int64]  # 1-based line of the file each value comes from


def read_columns(path: Path, shown: str, names: list[str], where: Location) -> Columns:
    """Read ``names`` from the table at ``path`` (``shown`` is how messages name it).

    The table is read by the project's data-file reader (``datafiles.py``): CSV with any
    of the usual separators, decimal marks and encodings, or an ``.xlsx`` workbook.
    """
    from .datafiles import FileFormat, read_table

    if not path.is_file():
        raise InputError(f"expected a record file, found no such file '{shown}'", where)
    table = read_table(path, FileFormat(), shown=shown)
    found = list(table.names)
    for name in names:
        if name not in found:
            raise InputError(f"expected a column '{name}' in '{shown}', found "
                             f"{', '.join(found)}{did_you_mean(name, found)}", where)
    values = {}
    for name in names:
        cells = table.column(name).cells
        values[name] = np.array([_number(cells[i], table.decimal, name, table.rows[i], shown,
                                         where) for i in range(len(cells))])
    return Columns(path=shown, values=values,
                   units={n: table.column(n).unit for n in names},
                   rows=np.array(table.rows, dtype=np.int64))


def _number(cell: str, decimal: str, name: str, row: int, shown: str,
            where: Location) -> float:
    text = cell.strip()
    if not text:
        raise InputError(f"expected a number in column '{name}' of '{shown}' row {row}, "
                         "found an empty cell", where)
    wrong = "." if decimal == "," else ","
    try:
        if wrong in text:
            raise ValueError(text)
        value = float(text.replace(",", "."))
    except ValueError:
        raise InputError(f"expected a number in column '{name}' of '{shown}' row {row}, "
                         f"found '{text}'", where) from None
    if not math.isfinite(value):
        raise InputError(f"expected a finite number in column '{name}' of '{shown}' row "
                         f"{row}, found '{text}'", where)
    return value
