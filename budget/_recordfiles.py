"""Columns of a record file for fits and records, with the file row of every value.

One call, :func:`read_columns`, is all the fits and records use. It reads data files as
the project's data-file reader does (``datafiles.py``: separators, decimal commas,
encodings, ``.xlsx`` sheets, units in the headers, missing-value markers, comment lines
above the header; declared with the same keys), with one addition for long records: a
plain UTF-8 CSV with decimal points is read at C speed by ``numpy.loadtxt``. Whenever
that fast path meets anything it does not expect (a declared format, a workbook, an empty
or non-numeric cell), the file is read again by ``datafiles.read_table`` cell by cell, so
the message names the file, the row and the column exactly as for any other data file.
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from numpy.typing import NDArray

from ._datafiles import FileFormat, read_table, split_header
from ._errors import BudgetError, InputError, Location, did_you_mean

__all__ = ["Columns", "read_columns"]

_PLAIN = FileFormat()  # nothing declared: the fast path may be tried


@dataclass(frozen=True, slots=True, kw_only=True, eq=False)
class Columns:
    """The chosen columns as float arrays, their header units, and each value's file row."""

    path: str
    values: dict[str, NDArray[np.float64]]
    units: dict[str, str | None]
    rows: NDArray[np.int64]  # 1-based line of the file each value comes from


def read_columns(path: Path, shown: str, names: list[str], where: Location,
                 fmt: FileFormat | None = None) -> Columns:
    """Read ``names`` from the data file at ``path`` (``shown`` is how messages name it)."""
    fmt = fmt or _PLAIN
    if not path.is_file():
        raise InputError(f"expected a record file, found no such file '{shown}'", where)
    try:
        fast = _fast(path, shown, names, where) if fmt == _PLAIN else None
        return fast if fast is not None else _careful(path, shown, names, fmt)
    except InputError:
        raise
    except BudgetError as exc:  # the data file's own message, with its row and column
        raise InputError(str(exc), where) from exc


def _careful(path: Path, shown: str, names: list[str], fmt: FileFormat) -> Columns:
    table = read_table(path, fmt, shown=shown)
    values = {name: table.numbers(name) for name in names}
    return Columns(path=shown, values=values,
                   units={name: table.column(name).unit for name in names},
                   rows=np.array(table.rows, dtype=np.int64))


def _fast(path: Path, shown: str, names: list[str], where: Location) -> Columns | None:
    """Plain UTF-8 CSV with decimal points at C speed; None for anything else."""
    if path.suffix.lower() in (".xlsx", ".xlsm"):
        return None
    try:
        text = path.read_bytes().decode("utf-8-sig")
    except (OSError, UnicodeDecodeError):
        return None
    rows, lines = _content(text)
    if len(lines) < 2 or "," in "".join(lines[1:2]).replace(_separator(lines[0]), ""):
        return None  # no data, or decimal commas: the careful reader decides
    separator = _separator(lines[0])
    header = [split_header(c, shown) for c in next(csv.reader([lines[0]],
                                                              delimiter=separator))]
    found = [h[0] for h in header]
    for name in names:
        if name not in found:
            raise InputError(f"expected a column '{name}' in '{shown}', found "
                             f"{', '.join(found)}{did_you_mean(name, found)}", where)
    columns = [found.index(name) for name in names]
    try:
        table = np.loadtxt(io.StringIO("\n".join(lines[1:])), delimiter=separator,
                           quotechar='"', usecols=columns, ndmin=2, dtype=float)
    except ValueError:
        return None
    if table.shape[0] != len(lines) - 1 or not np.isfinite(table).all():
        return None
    return Columns(path=shown, values={n: table[:, c].copy() for c, n in enumerate(names)},
                   units={n: header[columns[c]][1] for c, n in enumerate(names)},
                   rows=rows[1:])


def _separator(header: str) -> str:
    for separator in (";", "\t", ","):
        if separator in header:
            return separator
    return ","


def _content(text: str) -> tuple[NDArray[np.int64], list[str]]:
    """Blank lines and comment lines above the header dropped, with 1-based line numbers."""
    lines = text.splitlines()
    start = 0
    while start < len(lines) and (not lines[start].strip()
                                  or lines[start].lstrip().startswith("#")):
        start += 1
    # below the header only blank lines are dropped: test the few that might be blank
    blank = {n for n in range(start, len(lines))
             if (not lines[n] or lines[n][0] in " \t\f\v") and not lines[n].strip()}
    if not blank:
        return np.arange(start + 1, len(lines) + 1, dtype=np.int64), lines[start:]
    kept = [n for n in range(start, len(lines)) if n not in blank]
    return np.array(kept, dtype=np.int64) + 1, [lines[n] for n in kept]
