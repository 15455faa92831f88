"""Data tables as laboratories keep them: CSV in any common locale, and Excel workbooks.

Method: a table is read as text first (no number is guessed from a cell until its column
is asked for, so a label column may hold anything). The reader accepts

* separators ``,`` ``;`` and tab, detected from the header line (declare ``separator``
  when the header holds more than one of them);
* a decimal point or a decimal comma, detected when the file uses only one of them
  (declare ``decimal`` otherwise; a comma separator implies a decimal point);
* UTF-8 with or without byte-order mark, UTF-16 with byte-order mark, and Windows-1252
  (detected when the file is not UTF-8; declare ``encoding`` to be explicit);
* a unit in the column header: ``m_c / mg``, ``m_c [mg]`` or ``m_c (mg)``;
* missing values as empty cells or declared markers (``missing = ["NA", "-"]``);
* comment lines starting with ``#`` above the header (below it, a row is data);
* dates (ISO 8601, and day-first or month-first forms when the file makes the order
  unambiguous or ``dates`` declares it), turned into elapsed time from an origin;
* ``.xlsx`` workbooks through openpyxl (the optional ``xlsx`` extra), a sheet by name.

Every problem is a :class:`DataFileError` that names the file (and sheet), the row as
the spreadsheet numbers it (the header is row 1) and the column, what was expected and
what was found. The module uses only the standard library's ``csv`` (no pandas).
"""

from __future__ import annotations

import csv
import io
import math
import re
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path
from typing import Any

import numpy as np

from ._errors import DataFileError, Location, did_you_mean
from ._units import UnitInfo, parse_unit

__all__ = ["FileFormat", "Column", "Table", "read_table", "convert", "FORMAT_KEYS",
           "SEPARATORS", "ENCODINGS"]

SEPARATORS = {",": ",", ";": ";", "\t": "\t", "tab": "\t"}
ENCODINGS = {"utf-8": "utf-8-sig", "utf-8-sig": "utf-8-sig", "utf-16": "utf-16",
             "windows-1252": "cp1252", "cp1252": "cp1252"}
DATE_ORDERS = ("iso", "day-first", "month-first")
FORMAT_KEYS = ("separator", "decimal", "encoding", "sheet", "missing", "dates")
_HEADER_UNIT = re.compile(r"^(?P<name>[^/\[\(]*?)\s*(?:/\s*(?P<slash>.+)|\[(?P<square>[^\]]*)\]"
                          r"|\((?P<round>[^)]*)\))\s*$")
_DECIMAL = re.compile(r"^[+-]?(\d+[.,]\d*|[.,]\d+)([eE][+-]?\d+)?$")
_LOCAL_DATE = re.compile(r"^(\d{1,2})([./-])(\d{1,2})\2(\d{4})(?:[ T](\d{1,2}):(\d{2}))?$")


@dataclass(frozen=True, slots=True, kw_only=True)
class FileFormat:
    """What a campaign declares about one data file; ``None`` means: detect it."""

    separator: str | None = None
    decimal: str | None = None
    encoding: str | None = None
    sheet: str | None = None
    missing: tuple[str, ...] = ()
    dates: str | None = None


@dataclass(frozen=True, slots=True, kw_only=True)
class Column:
    """One column: its name without the unit, the unit written in the header, its cells."""

    name: str
    header: str
    unit: str | None
    cells: tuple[str, ...]


@dataclass(frozen=True, slots=True, kw_only=True)
class Table:
    """A data table as text, with the row number of every data row for messages."""

    source: str
    columns: tuple[Column, ...]
    rows: tuple[int, ...]
    decimal: str
    missing: tuple[str, ...]
    dates: str | None = None

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(c.name for c in self.columns)

    def __len__(self) -> int:
        return len(self.rows)

    def has(self, name: str) -> bool:
        return name in self.names

    def column(self, name: str) -> Column:
        for column in self.columns:
            if column.name == name:
                return column
        raise DataFileError(f"expected a column '{name}'{did_you_mean(name, self.names)}, "
                            f"found the columns {', '.join(self.names) or 'none'}",
                            Location(file=self.source))

    def where(self, index: int) -> Location:
        return Location(file=self.source, line=self.rows[index])

    def is_missing(self, cell: str) -> bool:
        return cell.strip() == "" or cell.strip() in self.missing

    def numbers(self, name: str, *, allow_missing: bool = False) -> np.ndarray:
        """A column as floats in the unit written (NaN for a missing cell if allowed)."""
        column = self.column(name)
        values = np.empty(len(column.cells))
        for index, cell in enumerate(column.cells):
            values[index] = self._number(column, index, cell, allow_missing)
        return values

    def _number(self, column: Column, index: int, cell: str, allow_missing: bool) -> float:
        text = cell.strip()
        if self.is_missing(text):
            if allow_missing:
                return math.nan
            raise DataFileError(
                f"column '{column.name}': expected a number, found "
                f"{'an empty cell' if not text else repr(text)} (a missing value is not "
                "allowed in this table; remove the row or give the value)", self.where(index))
        wrong = "." if self.decimal == "," else ","
        if wrong in text:
            raise self._not_a_number(column, index, text)
        from ._limits import parse_number

        value = parse_number(text.replace(",", "."))  # strict: no '9_9.99', 'nan', 'inf'
        if value is None:
            raise self._not_a_number(column, index, text)
        return value

    def _not_a_number(self, column: Column, index: int, text: str) -> DataFileError:
        mark = "decimal comma" if self.decimal == "," else "decimal point"
        return DataFileError(f"column '{column.name}': expected a finite number with a "
                             f"{mark}, found '{text}'", self.where(index))

    def dates_of(self, name: str, *, allow_missing: bool = False) -> list[datetime | None]:
        """A column of dates (ISO 8601 or an unambiguous or declared local form)."""
        from ._datadates import parse_dates

        column = self.column(name)
        cells = [None if self.is_missing(c) and allow_missing else c.strip()
                 for c in column.cells]
        return parse_dates(cells, self.dates, lambda i: self.where(i), column.name)

    def looks_like_dates(self, name: str) -> bool:
        cells = [c.strip() for c in self.column(name).cells if not self.is_missing(c)]
        return bool(cells) and all(_is_date_text(c) for c in cells)


def _is_date_text(text: str) -> bool:
    if _LOCAL_DATE.match(text):
        return True
    if re.match(r"^\d{4}-\d{2}-\d{2}", text):
        try:
            datetime.fromisoformat(text)
            return True
        except ValueError:
            return False
    return False


def convert(values: np.ndarray, given: UnitInfo, wanted: UnitInfo, *, source: str,
            column: str) -> np.ndarray:
    """Values in ``given`` expressed in ``wanted``; a dimension mismatch is an error."""
    if given.unit.dims != wanted.unit.dims:
        raise DataFileError(f"column '{column}': expected values in '{wanted.text}' "
                            f"({wanted.describe()}) or a unit of the same kind, found "
                            f"'{given.text}' ({given.describe()})", Location(file=source))
    kelvin = 273.15
    si = values + kelvin if given.offset else values * float(given.factor)
    return si - kelvin if wanted.offset else si / float(wanted.factor)


def split_header(header: str, source: str) -> tuple[str, str | None]:
    """``m_c / mg`` → (``m_c``, ``mg``); a header without a unit → (name, None)."""
    text = header.strip()
    found = _HEADER_UNIT.match(text)
    if not found or not found.group("name").strip():
        return text, None
    unit = next(g for g in (found.group("slash"), found.group("square"),
                            found.group("round")) if g is not None).strip()
    if unit.startswith("(") and unit.endswith(")"):
        unit = unit[1:-1].strip()
    if not unit:
        raise DataFileError(f"column '{text}': expected a unit after the name, found none",
                            Location(file=source, line=1))
    parse_unit(unit, Location(file=source, line=1, key=f"column '{found.group('name')}'"))
    return found.group("name").strip(), unit


def read_table(path: Path, fmt: FileFormat = FileFormat(), *, shown: str | None = None
               ) -> Table:
    """Read a CSV file or an ``.xlsx`` sheet into a :class:`Table` of text cells."""
    shown = shown or str(path)
    if path.suffix.lower() in (".xlsx", ".xlsm"):
        from ._workbooks import read_sheet

        source, grid, rows = read_sheet(path, fmt.sheet, shown)
        return _table(source, grid, rows, ".", fmt)
    if fmt.sheet is not None:
        raise DataFileError(f"expected 'sheet' only for an .xlsx workbook, found a sheet "
                            f"'{fmt.sheet}' declared for a {path.suffix or 'text'} file",
                            Location(file=shown))
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise DataFileError(f"expected a readable data file, found {exc.strerror}",
                            Location(file=shown)) from exc
    text = _decode(raw, fmt.encoding, shown)
    grid, rows = _split(text, fmt.separator, shown)
    decimal = _decimal(grid, rows, fmt.decimal, fmt.separator or _separator(text, None,
                                                                             shown), shown)
    return _table(shown, grid, rows, decimal, fmt)


def _table(source: str, grid: list[list[str]], rows: list[int], decimal: str,
           fmt: FileFormat) -> Table:
    if not grid:
        raise DataFileError("expected a header row and data rows, found an empty table",
                            Location(file=source))
    _check_characters(source, grid, rows)
    header, body, numbers = grid[0], grid[1:], rows[1:]
    columns = []
    seen: set[str] = set()
    for position, title in enumerate(header):
        name, unit = split_header(title, source)
        if not name:
            raise DataFileError(f"expected a name for column {position + 1} of the header, "
                                "found an empty cell", Location(file=source, line=rows[0]))
        if name in seen:
            raise DataFileError(f"expected each column name once, found '{name}' twice",
                                Location(file=source, line=rows[0]))
        seen.add(name)
        cells = tuple(row[position] if position < len(row) else "" for row in body)
        columns.append(Column(name=name, header=title.strip(), unit=unit, cells=cells))
    return Table(source=source, columns=tuple(columns), rows=tuple(numbers), decimal=decimal,
                 missing=tuple(m.strip() for m in fmt.missing), dates=fmt.dates)


def _check_characters(source: str, grid: list[list[str]], rows: list[int]) -> None:
    """No control characters or bidirectional overrides in any cell (a label 'U-0‮09'
    shows as another unit in a report); tabs and line breaks inside quoted cells pass."""
    from ._limits import character_name, control_character, terminal_text

    for number, row in zip(rows, grid):
        if control_character("".join(row), "\t\n\r") is None:
            continue
        for position, cell in enumerate(row):
            at = control_character(cell, "\t\n\r")
            if at is not None:
                column = grid[0][position].strip() if position < len(grid[0]) else ""
                name = f"column '{terminal_text(column)}'" if column and number != rows[0] \
                    else f"column {position + 1}"
                raise DataFileError(f"{name}: expected text without control characters, "
                                    f"found {character_name(cell[at])} at position {at + 1}",
                                    Location(file=source, line=number))


def _decode(raw: bytes, declared: str | None, shown: str) -> str:
    if declared is not None:
        return _decode_as(raw, ENCODINGS[declared.lower()], shown)
    if raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        return _decode_as(raw, "utf-16", shown)
    if b"\x00" in raw:
        raise DataFileError("expected a text file (UTF-8, UTF-16 with byte-order mark or "
                            "Windows-1252), found NUL bytes: a UTF-16 file without "
                            "byte-order mark or a binary file; save it as UTF-8 CSV",
                            Location(file=shown))
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        return _decode_as(raw, "cp1252", shown)


def _decode_as(raw: bytes, codec: str, shown: str) -> str:
    try:
        return raw.decode(codec)
    except UnicodeDecodeError as exc:
        row = raw[:exc.start].count(b"\n") + 1
        name = {"utf-8-sig": "UTF-8", "cp1252": "UTF-8 or Windows-1252",
                "utf-16": "UTF-16"}[codec]
        raise DataFileError(f"expected {name} text, found the undecodable byte "
                            f"0x{raw[exc.start]:02x}; declare the file's encoding "
                            f"(encoding = \"utf-8\", \"utf-16\" or \"windows-1252\")",
                            Location(file=shown, line=row)) from exc


def _separator(text: str, declared: str | None, shown: str) -> str:
    if declared is not None:
        return SEPARATORS[declared]
    header = next((line for line in text.splitlines()  # comment lines above it skipped
                   if line.strip() and not line.lstrip().startswith("#")), "")
    present = [s for s in ("\t", ";", ",") if s in _outside_quotes(header)]
    if len(present) > 1:
        names = " and ".join({"\t": "tab", ";": "';'", ",": "','"}[s] for s in present)
        raise DataFileError(f"expected one column separator in the header, found {names}; "
                            "declare separator = \",\", \";\" or \"tab\" for this file",
                            Location(file=shown, line=1))
    return present[0] if present else ","


def _outside_quotes(line: str) -> str:
    return re.sub(r'"[^"]*"', "", line)


def _split(text: str, declared: str | None, shown: str) -> tuple[list[list[str]], list[int]]:
    separator = _separator(text, declared, shown)
    grid: list[list[str]] = []
    rows: list[int] = []
    # newline=None: line ends \n, \r\n and a lone \r (Excel's "CSV (Macintosh)") alike
    reader = csv.reader(io.StringIO(text, newline=None), delimiter=separator,
                        skipinitialspace=True)
    while True:
        start = reader.line_num + 1  # the line the next record starts on
        try:
            fields = next(reader)
        except StopIteration:
            break
        except csv.Error as exc:
            raise _csv_error(exc, shown, start) from exc
        if not any(f.strip() for f in fields) or not grid and fields[0].startswith("#"):
            continue  # blank lines anywhere, comment lines above the header
        if not grid and fields:
            fields[0] = fields[0].lstrip("\ufeff")
        grid.append(fields)
        rows.append(reader.line_num)
    _check_widths(grid, rows, separator, shown)
    return grid, rows


def _csv_error(exc: csv.Error, shown: str, line: int) -> DataFileError:
    """The csv module's complaint in the project's words (its text is Python's)."""
    if "field larger than field limit" in str(exc):
        return DataFileError(f"expected cells of at most {csv.field_size_limit()} "
                             "characters, found a longer one in the row that starts here (a "
                             "quote \" without its closing quote, for one, makes the rest of "
                             "the file one cell)", Location(file=shown, line=line))
    return DataFileError(f"expected CSV text, found a row the csv reader refuses ({exc})",
                         Location(file=shown, line=line))


def _check_widths(grid: list[list[str]], rows: list[int], separator: str, shown: str) -> None:
    if not grid:
        return
    width = len(grid[0])
    for fields, row in zip(grid[1:], rows[1:]):
        if len(fields) > width and not any(f.strip() for f in fields[width:]):
            del fields[width:]
        if len(fields) != width:
            hint = (" (decimal commas in a file separated by ',' split numbers in two: "
                    "separate the columns by ';' or tab)") if separator == "," else ""
            raise DataFileError(f"expected {width} fields as in the header, found "
                                f"{len(fields)}{hint}", Location(file=shown, line=row))


def _decimal(grid: list[list[str]], rows: list[int], declared: str | None,
             separator: str, shown: str) -> str:
    if declared is not None:
        if declared == "," and separator == ",":
            raise DataFileError("expected a decimal comma only with ';' or tab separators, "
                                "found ',' as separator too", Location(file=shown))
        return declared
    first: dict[str, tuple[int, str]] = {}
    for fields, row in zip(grid[1:], rows[1:]):
        for cell in fields:
            text = cell.strip()
            if _DECIMAL.match(text):
                mark = "," if "," in text else "."
                first.setdefault(mark, (row, text))
    if "," in first and "." in first:
        (row_c, cell_c), (row_p, cell_p) = first[","], first["."]
        raise DataFileError(f"expected either decimal points or decimal commas, found both "
                            f"('{cell_c}' in row {row_c}, '{cell_p}' in row {row_p}); declare "
                            "decimal = \".\" or \",\" for this file", Location(file=shown))
    return "," if "," in first else "."


def parse_declared_format(data: dict[str, Any], fail: Any) -> FileFormat:
    """The format keys of a campaign table → :class:`FileFormat` (``fail(msg, key)``)."""
    made: dict[str, Any] = {}
    if "separator" in data:
        made["separator"] = _choice(data, "separator", tuple(SEPARATORS), fail)
    if "decimal" in data:
        made["decimal"] = _choice(data, "decimal", (".", ","), fail)
    if "encoding" in data:
        made["encoding"] = _choice(data, "encoding", tuple(ENCODINGS), fail, fold=True)
    if "dates" in data:
        made["dates"] = _choice(data, "dates", DATE_ORDERS, fail)
    if "sheet" in data:
        if not isinstance(data["sheet"], str) or not data["sheet"].strip():
            raise fail(f"expected a sheet name, found {data['sheet']!r}", "sheet")
        made["sheet"] = data["sheet"].strip()
    if "missing" in data:
        markers = data["missing"]
        if isinstance(markers, str):
            markers = [markers]
        if not isinstance(markers, list) or not all(isinstance(m, str) for m in markers):
            raise fail(f"expected a list of missing-value markers such as [\"NA\", \"-\"], "
                       f"found {data['missing']!r}", "missing")
        made["missing"] = tuple(markers)
    return FileFormat(**made)


def _choice(data: dict[str, Any], key: str, allowed: tuple[str, ...], fail: Any,
            fold: bool = False) -> str:
    value = data[key]
    probe = value.lower() if fold and isinstance(value, str) else value
    if probe not in allowed:
        shown = ", ".join(repr(a) for a in allowed)
        raise fail(f"expected one of {shown}, found {value!r}", key)
    return str(probe)
