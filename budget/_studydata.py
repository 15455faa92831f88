"""The data tables of a campaign in the units the computation needs.

Method: every numeric column is converted from the unit in its header, or else from the
unit declared for it, into the unit the computation works in — a run column into its
model input's unit, homogeneity and stability values into the certified value's unit,
stability times into the study's time unit. A column whose unit has another dimension
is an error naming the file, the column and both units. Missing values are allowed only
where the design permits them (homogeneity replicates, stability points); each excluded
row is kept as an :class:`Exclusion` so every output can list it with its reason.
"""

from __future__ import annotations

from dataclasses import dataclass
import datetime as dt
import re
from datetime import datetime
from pathlib import Path
from typing import Any

import numpy as np

from ._datafiles import FileFormat, Table, convert, read_table
from ._errors import DataFileError, Location
from ._units import UnitInfo, parse_unit

__all__ = ["Exclusion", "Runs", "read_runs", "read_homogeneity", "read_stability",
           "time_words"]


@dataclass(frozen=True, slots=True, kw_only=True)
class Exclusion:
    """A data row left out of a computation, and why."""

    file: str
    row: int
    column: str
    reason: str

    def __str__(self) -> str:
        return f"{self.file}:{self.row}: column '{self.column}': {self.reason}"


@dataclass(frozen=True, slots=True, kw_only=True)
class Runs:
    """The runs table: input columns in their model input's unit, and label columns."""

    source: str
    rows: tuple[int, ...]
    inputs: tuple[tuple[str, np.ndarray], ...]
    labels: tuple[tuple[str, tuple[str, ...]], ...]
    header_units: tuple[tuple[str, str], ...] = ()
    dates: tuple[dt.date, ...] | None = None  # the 'date' column, read like any data date

    def __len__(self) -> int:
        return len(self.rows)

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(name for name, _ in self.inputs)

    def values(self, name: str) -> np.ndarray:
        return dict(self.inputs)[name]

    def label_column(self) -> tuple[str, ...]:
        """The first label column, or the run numbers when there is none."""
        if self.labels:
            return self.labels[0][1]
        return tuple(str(i + 1) for i in range(len(self)))


def _unit(text: str, table: Table, column: str) -> UnitInfo:
    return parse_unit(text, Location(file=table.source, line=1, key=f"column '{column}'"))


def column_in(table: Table, name: str, wanted: str, *, declared: str | None = None,
              allow_missing: bool = False) -> np.ndarray:
    """A numeric column converted into ``wanted`` from its header or declared unit."""
    values = table.numbers(name, allow_missing=allow_missing)
    given_text = table.column(name).unit or declared
    if given_text is None or given_text == wanted:
        return values
    return convert(values, _unit(given_text, table, name), _unit(wanted, table, name),
                   source=table.source, column=name)


def read_runs(path: Path, fmt: FileFormat, model: Any, shown: str) -> Runs:
    """Run columns named like model inputs, converted into those inputs' units."""
    table = read_table(path, fmt, shown=shown)
    inputs = {i.name: i for i in model.inputs}
    run_inputs = [c.name for c in table.columns if c.name in inputs]
    if len(table) < 1:
        raise DataFileError("expected at least 1 data row, found none",
                            Location(file=table.source))
    made = tuple((name, column_in(table, name, inputs[name].unit)) for name in run_inputs)
    labels = tuple((c.name, tuple(s.strip() for s in c.cells)) for c in table.columns
                   if c.name not in inputs)
    units = tuple((c.name, c.unit) for c in table.columns if c.unit and c.name in inputs)
    dates = None
    if table.has("date") and "date" not in inputs:  # ISO, or a declared or clear local form
        dates = tuple(d.date() for d in table.dates_of("date") if d is not None)
    return Runs(source=table.source, rows=table.rows, inputs=made, labels=labels,
                header_units=units, dates=dates)


def read_homogeneity(path: Path, fmt: FileFormat, unit: str, value_unit: str | None,
                     shown: str) -> tuple[tuple[tuple[str, np.ndarray], ...],
                                          tuple[Exclusion, ...], list[str]]:
    """Values per unit (in the certified value's unit); rows with a missing value left out;
    plausibility warnings for single values far from the others (a slip in one cell)."""
    from ._plausibility import study_value_warnings

    table = read_table(path, fmt, shown=shown)
    labels = table.column("unit").cells
    values = column_in(table, "value", unit, declared=value_unit, allow_missing=True)
    groups: dict[str, list[float]] = {}
    excluded = []
    for index, (label, value) in enumerate(zip(labels, values)):
        if table.is_missing(label):
            raise DataFileError("column 'unit': expected the label of a unit, found an "
                                "empty cell", table.where(index))
        if np.isnan(value):
            excluded.append(_missing(table, index, "value", "homogeneity replicate"))
            continue
        groups.setdefault(label.strip(), []).append(float(value))
    kept = ~np.isnan(values)
    slips = study_value_warnings(values[kept], np.asarray(table.rows)[kept].tolist(),
                                 table.source, unit, "homogeneity study")
    return tuple((k, np.array(v)) for k, v in groups.items()), tuple(excluded), slips


def _missing(table: Table, index: int, column: str, what: str) -> Exclusion:
    cell = table.column(column).cells[index].strip()
    shown = f"'{cell}'" if cell else "an empty cell"
    return Exclusion(file=table.source, row=table.rows[index], column=column,
                     reason=f"{what} left out: missing value ({shown})")


@dataclass(frozen=True, slots=True, kw_only=True)
class StabilityData:
    times: np.ndarray
    values: np.ndarray
    time_unit: str
    excluded: tuple[Exclusion, ...]
    dates: bool
    slips: tuple[str, ...] = ()  # plausibility: single values far from the others


def read_stability(path: Path, fmt: FileFormat, unit: str, value_unit: str | None,
                   time_unit: str | None, origin: datetime | None, shown: str, *,
                   date_unit: str | None = None) -> StabilityData:
    """Times (numbers or dates) in the study's time unit and values in ``unit``.

    Numeric times are in ``time_unit`` (declared) or else the header's unit; dates become
    elapsed time in ``date_unit`` (the declared unit, or the shelf life's).
    """
    table = read_table(path, fmt, shown=shown)
    name = "time" if table.has("time") or not table.has("date") else "date"
    values = column_in(table, "value", unit, declared=value_unit, allow_missing=True)
    times, used_unit, dated = _times(table, name, time_unit, origin, date_unit)
    excluded = []
    keep = np.ones(len(table), dtype=bool)
    for index in range(len(table)):
        for column, array in ((name, times), ("value", values)):
            if np.isnan(array[index]) and keep[index]:
                keep[index] = False
                excluded.append(_missing(table, index, column, "stability point"))
    from ._plausibility import study_value_warnings

    slips = study_value_warnings(values[keep], np.asarray(table.rows)[keep].tolist(),
                                 table.source, unit, "stability study")
    return StabilityData(times=times[keep], values=values[keep], time_unit=used_unit,
                         excluded=tuple(excluded), dates=dated, slips=tuple(slips))


def _times(table: Table, name: str, time_unit: str | None, origin: datetime | None,
           date_unit: str | None) -> tuple[np.ndarray, str, bool]:
    column = table.column(name)
    if column.unit is None and not table.looks_like_dates(name):
        _not_a_date(table, name)  # a 'date' column, or a column of dates but one
    if column.unit is None and table.looks_like_dates(name):
        from ._datadates import elapsed

        if date_unit is None:
            raise DataFileError(f"column '{name}': expected a declared time_unit (for example "
                                "\"month\") to turn dates into elapsed time, found none",
                                Location(file=table.source))
        dates = table.dates_of(name, allow_missing=True)
        return elapsed(dates, origin, _time_unit(date_unit, table, name)), date_unit, True
    if origin is not None:
        raise DataFileError(f"column '{name}': expected dates when time_origin is declared, "
                            "found numbers", Location(file=table.source))
    wanted = time_unit or column.unit or ""
    if wanted:
        _time_unit(wanted, table, name)
        return column_in(table, name, wanted, allow_missing=True), wanted, False
    return table.numbers(name, allow_missing=True), "", False


def _not_a_date(table: Table, name: str) -> None:
    """Refuse a cell that is no date in a column that must hold dates: the ``date`` column,
    or a column whose other cells are dates. Read as a number instead, a spreadsheet's day
    number (45662 for 2025-01-05) would be an elapsed time in months, silently."""
    from ._datafiles import _is_date_text

    cells = table.column(name).cells
    present = [(i, c.strip()) for i, c in enumerate(cells) if not table.is_missing(c)]
    if name != "date" and not any(_is_date_text(c) for _, c in present):
        return
    index, cell = next(((i, c) for i, c in present if not _is_date_text(c)), (-1, ""))
    if index < 0:
        return
    hint = ""
    if name == "date" and re.fullmatch(r"[0-9]+(\.[0-9]*)?", cell):
        hint = (" (a spreadsheet's day number? format the cells as dates; elapsed times go "
                "in a column 'time')")
    raise DataFileError(f"column '{name}': expected a date (ISO 8601 such as 2025-06-30, or "
                        f"31.12.2025), found '{cell}'{hint}", table.where(index))


def _time_unit(text: str, table: Table, name: str) -> UnitInfo:
    unit = _unit(text, table, name)
    if unit.offset or unit.unit.dims != parse_unit("s", Location()).unit.dims:
        raise DataFileError(f"column '{name}': expected a time unit (such as month, d, year), "
                            f"found '{text}' ({unit.describe()})", Location(file=table.source))
    return unit


_WORDS = {"d": "day", "day": "day", "days": "day", "month": "month", "months": "month",
          "a": "year", "year": "year", "years": "year", "week": "week", "weeks": "week",
          "h": "hour", "hour": "hour", "s": "second", "min": "minute"}


def time_words(unit: str, amount: float | None = None) -> str:
    """``month`` → ``month`` (or ``36 months`` with an amount); '' → 'time unit(s)'."""
    word = _WORDS.get(unit.strip(), unit.strip()) or "time unit"
    if amount is None:
        return word
    plural = word if amount == 1 or word not in _WORDS.values() and word != "time unit" \
        else word + "s"
    return f"{amount:g} {plural}"
