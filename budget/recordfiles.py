"""Columns of a record file (CSV) for fits and records, with the file row of every value.

One call, :func:`read_columns`, is all the fits and records use, so that the project's
general data-file reader can take its place without touching them. It reads UTF-8 (with
or without BOM) CSV with a header row; ``,`` ``;`` or tab separated; ``#`` starts a
comment line. A header may carry its unit as ``name [unit]``, ``name (unit)`` or
``name / unit``. Every value must be a finite number.
"""

from __future__ import annotations

import csv
import io
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from numpy.typing import NDArray

from .errors import InputError, Location, did_you_mean

__all__ = ["Columns", "read_columns"]

_UNIT = re.compile(r"^\s*(.*?)\s*(?:\[(.+)\]|\((.+)\)|/\s*(.+))\s*$")


@dataclass(frozen=True, slots=True, kw_only=True, eq=False)
class Columns:
    """The chosen columns as float arrays, their header units, and each value's file row."""

    path: str
    values: dict[str, NDArray[np.float64]]
    units: dict[str, str | None]
    rows: NDArray[np.int64]  # 1-based line of the file each value comes from


def _split_header(cell: str) -> tuple[str, str | None]:
    found = _UNIT.match(cell)
    if found and found.group(1):
        return found.group(1), next(g for g in found.group(2, 3, 4) if g).strip()
    return cell.strip(), None


def _text(path: Path, shown: str, where: Location) -> str:
    try:
        data = path.read_bytes()
    except FileNotFoundError as exc:
        raise InputError(f"expected a record file, found no such file '{shown}'",
                         where) from exc
    except OSError as exc:
        raise InputError(f"expected a readable record file '{shown}', found "
                         f"{exc.strerror}", where) from exc
    if b"\x00" in data:
        raise InputError(f"expected a CSV text file, found binary data in '{shown}'", where)
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputError(f"expected UTF-8 text in '{shown}', found an undecodable byte at "
                         f"byte {exc.start + 1}", where) from exc


def read_columns(path: Path, shown: str, names: list[str], where: Location) -> Columns:
    """Read ``names`` from the CSV at ``path`` (``shown`` is how messages name it)."""
    rows, lines = _content(_text(path, shown, where))
    if not lines:
        raise InputError(f"expected a header row and data in '{shown}', found an empty file",
                         where)
    dialect = _dialect(lines[0])
    header = [_split_header(c) for c in next(csv.reader([lines[0]], dialect))]
    found = [h[0] for h in header]
    index = {}
    for name in names:
        if name not in found:
            raise InputError(f"expected a column '{name}' in '{shown}', found "
                             f"{', '.join(found)}{did_you_mean(name, found)}", where)
        index[name] = found.index(name)
    table = _fast(lines[1:], dialect, [index[n] for n in names])
    if table is None:  # something to point at: read cell by cell for the message
        table = np.empty((len(lines) - 1, len(names)))
        for r, (number, line) in enumerate(zip(rows[1:], lines[1:])):
            cells = next(csv.reader(io.StringIO(line), dialect))
            for c, name in enumerate(names):
                table[r, c] = _number(cells, index[name], name, int(number), shown, where)
    return Columns(path=shown, values={n: table[:, c].copy() for c, n in enumerate(names)},
                   units={n: header[index[n]][1] for n in names}, rows=rows[1:])


def _content(text: str) -> tuple[NDArray[np.int64], list[str]]:
    """The lines that are neither blank nor comments, with their 1-based line numbers."""
    lines = text.splitlines()
    # only lines starting with a blank, '#' or nothing can be skipped: test those alone
    maybe = [n for n, line in enumerate(lines) if not line or line[0] in "# \t\f\v"]
    skipped = {n for n in maybe if not lines[n].strip() or lines[n].lstrip()[0] == "#"}
    if not skipped:
        return np.arange(1, len(lines) + 1, dtype=np.int64), lines
    kept = [n for n in range(len(lines)) if n not in skipped]
    return np.array(kept, dtype=np.int64) + 1, [lines[n] for n in kept]


def _fast(lines: list[str], dialect: type[csv.Dialect],
          columns: list[int]) -> NDArray[np.float64] | None:
    """All values at C speed, or None when a cell is empty, not a number or not finite."""
    if not lines:
        return np.empty((0, len(columns)))
    try:
        table = np.loadtxt(io.StringIO("\n".join(lines)), delimiter=dialect.delimiter,
                           quotechar='"', usecols=columns, ndmin=2, dtype=float)
    except ValueError:
        return None
    if table.shape[0] != len(lines) or not np.isfinite(table).all():
        return None
    return table


def _dialect(line: str) -> type[csv.Dialect]:
    for separator in (";", "\t", ","):
        if separator in line:
            class Chosen(csv.excel):
                delimiter = separator
            return Chosen
    return csv.excel


def _number(cells: list[str], column: int, name: str, row: int, shown: str,
            where: Location) -> float:
    if column >= len(cells) or not cells[column].strip():
        raise InputError(f"expected a number in column '{name}' of '{shown}' row {row}, "
                         "found an empty cell", where)
    text = cells[column].strip()
    try:
        value = float(text)
    except ValueError:
        raise InputError(f"expected a number in column '{name}' of '{shown}' row {row}, "
                         f"found '{text}'", where) from None
    if not math.isfinite(value):
        raise InputError(f"expected a finite number in column '{name}' of '{shown}' row "
                         f"{row}, found '{text}'", where)
    return value
