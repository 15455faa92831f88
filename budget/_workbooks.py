"""Excel workbooks (``.xlsx``) read and written through openpyxl, the optional extra.

Reading turns a sheet into text cells (numbers written with ``repr``, so nothing is
rounded; dates as ISO 8601), so that a workbook goes through the same checks as a CSV
file. Writing produces plain sheets of a header row and values, for a quality system.
"""

from __future__ import annotations

from datetime import date, datetime, time
from pathlib import Path
from typing import Any, Sequence

from ._errors import DataFileError, Location

__all__ = ["read_sheet", "write_workbook", "require_openpyxl", "MISSING_EXTRA"]

MISSING_EXTRA = ("reading and writing .xlsx workbooks needs openpyxl, the optional "
                 "'xlsx' extra: pip install openpyxl (or save the sheet as CSV)")


def _openpyxl(shown: str) -> Any:
    try:
        import openpyxl
    except ImportError as exc:
        raise DataFileError(f"expected openpyxl to be installed, found none: {MISSING_EXTRA}",
                            Location(file=shown)) from exc
    return openpyxl


def require_openpyxl(shown: str) -> None:
    """Raise the missing-extra error now, before anything is written."""
    _openpyxl(shown)


def _text(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return str(value)
    if isinstance(value, float):
        return repr(value)
    if isinstance(value, datetime) and value.time() == time(0, 0):
        return value.date().isoformat()  # a date typed in a cell: 2025-05-06
    if isinstance(value, (datetime, date, time)):
        return value.isoformat()
    return str(value)


def read_sheet(path: Path, sheet: str | None, shown: str
               ) -> tuple[str, list[list[str]], list[int]]:
    """The named sheet (default: the first) as text rows with their row numbers."""
    openpyxl = _openpyxl(shown)
    try:
        book = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many unrelated types for a bad file
        raise DataFileError(f"expected an .xlsx workbook, found a file openpyxl cannot read "
                            f"({type(exc).__name__})", Location(file=shown)) from exc
    try:
        names = list(book.sheetnames)
        name = sheet if sheet is not None else names[0]
        if name not in names:
            from ._errors import did_you_mean

            raise DataFileError(f"expected a sheet '{name}'{did_you_mean(name, names)}, found "
                                f"the sheets {', '.join(names)}", Location(file=shown))
        grid: list[list[str]] = []
        rows: list[int] = []
        blank = False  # an empty cell: perhaps a formula without a computed value
        for number, values in enumerate(book[name].iter_rows(values_only=True), start=1):
            cells = [_text(v) for v in values]
            if any(c.strip() for c in cells):
                grid.append(cells)
                rows.append(number)
                blank = blank or not all(c.strip() for c in cells)
    finally:
        book.close()
    if blank:
        _uncomputed_formulas(openpyxl.load_workbook(path, read_only=True), name, grid, rows)
    return f"{shown}[{name}]", grid, rows


def _uncomputed_formulas(book: Any, name: str, grid: list[list[str]], rows: list[int]) -> None:
    """Show a formula whose value the workbook does not hold (a file written by a program
    that does not compute formulas) as its text, '=B2/0', never as an empty cell: it is
    not a missing value, and a table that allows those would leave the row out silently."""
    try:
        where = dict(zip(rows, grid))
        for number, values in enumerate(book[name].iter_rows(values_only=True), start=1):
            cells = where.get(number)
            if cells is None:
                continue
            for k, value in enumerate(values[:len(cells)]):
                if not cells[k].strip() and isinstance(value, str) and value.startswith("="):
                    cells[k] = value
    finally:
        book.close()


def write_workbook(path: str, sheets: Sequence[tuple[str, Sequence[str],
                                                     Sequence[Sequence[Any]]]]) -> bytes:
    """The bytes of a workbook with one sheet per (name, header, rows)."""
    openpyxl = _openpyxl(path)
    import io

    book = openpyxl.Workbook()
    book.remove(book.active)
    for name, header, rows in sheets:
        sheet = book.create_sheet(title=name[:31])
        sheet.append(list(header))
        for row in rows:
            sheet.append([_cell(v) for v in row])
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


def _cell(value: Any) -> Any:
    if isinstance(value, float) and value != value:
        return None
    if isinstance(value, float) and value in (float("inf"), float("-inf")):
        return str(value)
    return value
