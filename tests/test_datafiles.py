"""Data tables as laboratories keep them (budget/_datafiles.py, datadates.py, workbooks.py):
separators, decimal commas, encodings, units in headers, missing values, dates, xlsx.

Date arithmetic is checked against the standard library's ``datetime``; the length of a
month (1/12 of a Julian year, 30.4375 d) is pint's definition, checked against pint."""

from __future__ import annotations

import sys
from datetime import date, datetime
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from budget._datadates import elapsed, parse_dates
from budget._datafiles import FileFormat, convert, read_table, split_header
from budget._errors import BudgetError, DataFileError, Location, UnitError
from budget._units import parse_unit


def _write(tmp_path: Path, name: str, text: str, encoding: str = "utf-8") -> Path:
    path = tmp_path / name
    path.write_bytes(text.encode(encoding))
    return path


def _error(path: Path, fmt: FileFormat | None = None) -> str:
    with pytest.raises(DataFileError) as caught:
        table = read_table(path, fmt or FileFormat())
        for name in table.names:
            if name != "label":
                table.numbers(name)
    return str(caught.value)


@pytest.mark.parametrize("text", [
    "label,value\nA,1.5\nB,2.25\n",
    "label;value\nA;1,5\nB;2,25\n",
    "label\tvalue\nA\t1,5\nB\t2,25\n",
    "label;value\nA;1.5\nB;2.25\n",
    "label\tvalue\nA\t1.5\nB\t2.25\n",
    "label, value\nA, 1.5\nB, 2.25\n\n\n",
])
def test_separators_and_decimal_marks_are_detected(tmp_path, text):
    table = read_table(_write(tmp_path, "t.csv", text))
    assert table.names == ("label", "value")
    assert table.numbers("value").tolist() == [1.5, 2.25]


def test_decimal_comma_with_comma_separator_tells_how_to_fix(tmp_path):
    path = _write(tmp_path, "t.csv", "label,value\nA,1,5\n")
    assert _error(path) == (
        f"{path}:2: expected 2 fields as in the header, found 3 (decimal commas in a file "
        "separated by ',' split numbers in two: separate the columns by ';' or tab)")


def test_both_decimal_marks_are_ambiguous_and_say_how_to_declare(tmp_path):
    path = _write(tmp_path, "t.csv", "label;value\nA;1,5\nB;2.25\n")
    assert _error(path) == (
        f"{path}: expected either decimal points or decimal commas, found both ('1,5' in "
        "row 2, '2.25' in row 3); declare decimal = \".\" or \",\" for this file")
    table = read_table(path, FileFormat(decimal=","))
    with pytest.raises(DataFileError, match=r"t.csv:3: column 'value': expected a finite "
                       r"number with a decimal comma, found '2.25'"):
        table.numbers("value")


def test_two_separators_in_the_header_must_be_declared(tmp_path):
    path = _write(tmp_path, "t.csv", "label;mass, g\nA;1\n")
    assert _error(path) == (f"{path}:1: expected one column separator in the header, "
                            "found ';' and ','; declare separator = \",\", \";\" or \"tab\" "
                            "for this file")
    assert read_table(path, FileFormat(separator=";")).names == ("label", "mass, g")


@pytest.mark.parametrize("header, name, unit", [
    ("m_c / mg", "m_c", "mg"), ("m_c [mg]", "m_c", "mg"), ("m_c (mg)", "m_c", "mg"),
    ("rho / (kg/m^3)", "rho", "kg/m^3"), ("rho [kg/m^3]", "rho", "kg/m^3"),
    ("w / %", "w", "%"), ("m_c", "m_c", None), ("t_air/degC", "t_air", "degC"),
])
def test_units_in_headers(header, name, unit):
    assert split_header(header, "t.csv") == (name, unit)


def test_a_unit_pint_reads_surprisingly_is_refused_in_a_header():
    with pytest.raises(UnitError) as caught:
        split_header("w / mass %", "t.csv")
    assert str(caught.value) == (
        "t.csv:1: column 'w': expected one unit, or units joined by '*' or '/', found "
        "'mass %': two names side by side, which pint would read as their product; write "
        "'%' (or 'g/g', 'mg/g' for a mass fraction)")


def test_conversion_checks_dimensions_and_handles_celsius():
    where = Location()
    mg, g, pa = (parse_unit(u, where) for u in ("mg", "g", "Pa"))
    assert convert(np.array([524.652]), mg, g, source="r.csv", column="m_c")[0] == \
        pytest.approx(0.524652, rel=1e-15)
    kelvin, celsius = parse_unit("K", where), parse_unit("degC", where)
    assert convert(np.array([294.95]), kelvin, celsius, source="r.csv",
                   column="t_air")[0] == pytest.approx(21.8, abs=1e-12)
    with pytest.raises(DataFileError) as caught:
        convert(np.array([1.0]), pa, g, source="r.csv", column="m_c")
    assert str(caught.value) == ("r.csv: column 'm_c': expected values in 'g' ([mass]) or a "
                                 "unit of the same kind, found 'Pa' ([mass] / [length] / "
                                 "[time] ** 2)")


@pytest.mark.parametrize("encoding", ["utf-8", "utf-8-sig", "utf-16", "cp1252"])
def test_encodings(tmp_path, encoding):
    text = "label;value / µg\nÄrlenmeyer;1,5\nBürette;2,5\n"
    table = read_table(_write(tmp_path, "t.csv", text, encoding))
    assert table.names == ("label", "value")
    assert table.column("value").unit == "µg"
    assert table.column("label").cells == ("Ärlenmeyer", "Bürette")


def test_undecodable_byte_names_its_row(tmp_path):
    path = tmp_path / "t.csv"
    path.write_bytes(b"label;value\nA;1\nB\x81;2\n")  # 0x81 is undefined in Windows-1252
    assert _error(path) == (f"{path}:3: expected UTF-8 or Windows-1252 text, found the "
                            "undecodable byte 0x81; declare the file's encoding (encoding = "
                            "\"utf-8\", \"utf-16\" or \"windows-1252\")")


def test_utf16_without_bom_is_refused_with_advice(tmp_path):
    path = tmp_path / "t.csv"
    path.write_bytes("label,value\nA,1\n".encode("utf-16-le"))
    assert "found NUL bytes: a UTF-16 file without byte-order mark" in _error(path)
    assert read_table(path, FileFormat(encoding="utf-16")).names == ("label", "value")


def test_missing_values_only_where_allowed(tmp_path):
    path = _write(tmp_path, "t.csv", "label,value\nA,1\nB,NA\nC,\n")
    table = read_table(path, FileFormat(missing=("NA",)))
    assert np.isnan(table.numbers("value", allow_missing=True)[1:]).all()
    with pytest.raises(DataFileError) as caught:
        table.numbers("value")
    assert str(caught.value) == (f"{path}:3: column 'value': expected a number, found 'NA' "
                                 "(a missing value is not allowed in this table; remove the "
                                 "row or give the value)")
    undeclared = read_table(path)
    with pytest.raises(DataFileError, match="t.csv:3: column 'value': expected a finite "
                                            "number with a decimal point, found 'NA'"):
        undeclared.numbers("value", allow_missing=True)


def test_iso_dates_give_elapsed_time_as_the_standard_library(tmp_path):
    path = _write(tmp_path, "t.csv", "time,value\n2025-06-30,1\n2026-01-15,2\n"
                                     "2027-06-30T12:00,3\n")
    table = read_table(path)
    assert table.looks_like_dates("time")
    dates = table.dates_of("time")
    days = elapsed(dates, None, parse_unit("d", Location()))
    reference = [(d - datetime(2025, 6, 30)).total_seconds() / 86400 for d in
                 (datetime(2025, 6, 30), datetime(2026, 1, 15), datetime(2027, 6, 30, 12))]
    assert days.tolist() == pytest.approx(reference, abs=1e-12)
    months = elapsed(dates, datetime(2025, 1, 1), parse_unit("month", Location()))
    # pint: month = year / 12, year = 365.25 d (Julian year)
    assert months[0] == pytest.approx((date(2025, 6, 30) - date(2025, 1, 1)).days / 30.4375,
                                      rel=1e-12)


@pytest.mark.parametrize("cells, declared, expected", [
    (["31.12.2025", "01.02.2026"], None, [datetime(2025, 12, 31), datetime(2026, 2, 1)]),
    (["12/31/2025", "02/01/2026"], None, [datetime(2025, 12, 31), datetime(2026, 2, 1)]),
    (["01.02.2026", "03.04.2026"], "day-first", [datetime(2026, 2, 1), datetime(2026, 4, 3)]),
    (["01/02/2026", "03/04/2026"], "month-first",
     [datetime(2026, 1, 2), datetime(2026, 3, 4)]),
])
def test_local_dates_when_unambiguous_or_declared(cells, declared, expected):
    assert parse_dates(cells, declared, lambda i: Location(file="s.csv", line=i + 2),
                       "time") == expected


def test_ambiguous_local_dates_say_how_to_declare():
    with pytest.raises(DataFileError) as caught:
        parse_dates(["01/02/2026", "03/04/2026"], None,
                    lambda i: Location(file="s.csv", line=i + 2), "time")
    assert str(caught.value) == (
        "s.csv:2: column 'time': expected dates whose order of day and month is clear, found "
        "dates such as '01/02/2026' that could be read either way; declare dates = "
        "\"day-first\" or \"month-first\" for this file (or write ISO 8601 dates, 2025-06-30)")


def test_an_impossible_date_names_its_row():
    with pytest.raises(DataFileError, match=r"s.csv:3: column 'time': expected a day-first "
                                            r"date \(31.12.2025\), found '31.02.2026'"):
        parse_dates(["31.12.2025", "31.02.2026"], None,
                    lambda i: Location(file="s.csv", line=i + 2), "time")


def _workbook(path: Path, rows: list[list[object]], sheet: str = "Runs") -> None:
    import openpyxl

    book = openpyxl.Workbook()
    book.active.title = "Notes"
    book.active.append(["written by hand"])
    data = book.create_sheet(sheet)
    for row in rows:
        data.append(row)
    book.save(path)


def test_xlsx_round_trip(tmp_path):
    path = tmp_path / "book.xlsx"
    _workbook(path, [["label", "m_c / mg", "date"], ["D1", 524.652, datetime(2025, 5, 6)],
                     ["D2", 501.407, datetime(2025, 5, 7)]])
    table = read_table(path, FileFormat(sheet="Runs"))
    assert table.source == f"{path}[Runs]"
    assert table.column("m_c").unit == "mg"
    assert table.numbers("m_c").tolist() == [524.652, 501.407]
    assert table.column("date").cells == ("2025-05-06", "2025-05-07")
    assert table.dates_of("date") == [datetime(2025, 5, 6), datetime(2025, 5, 7)]
    with pytest.raises(DataFileError) as caught:
        read_table(path, FileFormat(sheet="runs"))
    assert str(caught.value) == (f"{path}: expected a sheet 'runs' (did you mean 'Runs'?), "
                                 "found the sheets Notes, Runs")


def test_xlsx_without_openpyxl_names_the_extra(tmp_path, monkeypatch):
    path = tmp_path / "book.xlsx"
    _workbook(path, [["label", "value"], ["A", 1.0]])
    monkeypatch.setitem(sys.modules, "openpyxl", None)
    with pytest.raises(DataFileError) as caught:
        read_table(path)
    assert str(caught.value) == (
        f"{path}: expected openpyxl to be installed, found none: reading and writing .xlsx "
        "workbooks needs openpyxl, the optional 'xlsx' extra: pip install openpyxl (or save "
        "the sheet as CSV)")


def test_comments_above_the_header_only(tmp_path):
    path = _write(tmp_path, "t.csv", "# lab notes\n# more\nlabel,value\n#7,1.5\nB,2\n")
    table = read_table(path)
    assert table.column("label").cells == ("#7", "B")
    assert table.rows == (4, 5)



_CELLS = st.sampled_from(["1", "2,5", "3.25", "", "NA", "-", "x", "2025-06-30", "31.12.2025",
                          "01/02/2026", "1e999", "nan", "µ", '"a;b"', "m / mg", "t [d]",
                          "w / mass %", "#", " ", "\t"])
_SEPARATORS = st.sampled_from([",", ";", "\t", "|"])


@settings(max_examples=150, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(rows=st.lists(st.lists(_CELLS, min_size=1, max_size=4), min_size=0, max_size=6),
       separator=_SEPARATORS, encoding=st.sampled_from(["utf-8", "utf-16", "cp1252"]),
       junk=st.binary(max_size=8))
def test_any_table_reads_or_fails_with_a_budget_error(tmp_path, rows, separator, encoding,
                                                      junk):
    text = "\n".join(separator.join(row) for row in rows)
    try:
        data = text.encode(encoding) + junk
    except UnicodeEncodeError:
        data = text.encode("utf-8") + junk
    path = tmp_path / "t.csv"
    path.write_bytes(data)
    try:
        table = read_table(path, FileFormat(missing=("NA", "-")))
        for name in table.names:
            table.numbers(name, allow_missing=True)
            if table.looks_like_dates(name):
                table.dates_of(name, allow_missing=True)
    except BudgetError:
        pass


def test_record_files_read_decimal_commas_and_windows_1252(tmp_path):
    from budget._recordfiles import read_columns

    path = tmp_path / "r.csv"
    path.write_bytes("# Strom über die Zeit\nt [s];I / mA\n0;1,5\n1;1,25\n".encode("cp1252"))
    columns = read_columns(path, "r.csv", ["t", "I"], Location(file="m.toml"))
    assert columns.values["I"].tolist() == [1.5, 1.25]
    assert columns.units == {"t": "s", "I": "mA"}
