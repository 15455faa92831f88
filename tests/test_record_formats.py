"""Records and fits read from files as laboratories keep them reach the same numbers.

A current–time record and a calibration table are written three ways in ``tmp_path``: a
plain CSV (read at C speed), a CSV with semicolons and decimal commas (a European
spreadsheet's export, read by the careful reader of ``datafiles.py``) and an ``.xlsx``
workbook written with openpyxl (numbers as numbers, a header with units, a second sheet
chosen by ``sheet``). Every generated input must be the same, to the last bit where the
numbers are the same binary values (the readings carry 9 decimals, so every writer
here stores them exactly).
"""

from __future__ import annotations

import numpy as np
import pytest

from budget._model import load_model

openpyxl = pytest.importorskip("openpyxl")

_T = np.arange(0.0, 201.0, 0.5)
# readings to 9 decimals, as an instrument writes them: openpyxl stores a float with 16
# significant digits, so a value needing 17 would not come back bit for bit
_I = np.round(3.0 * np.exp(-_T / 40.0) + 0.02 + 1e-3 * np.sin(7.0 * _T), 9)
_X = np.arange(1.0, 11.0)
_Y = np.round(0.3 + 1.7 * _X + 0.01 * np.cos(5.0 * _X), 9)

_TABLES = """title = "formats"
[measurands.w]
equation = "Q * (c_b0 + c_b1)"

[records.Q]
kind = "charge"
file = "{record}"
x = "t"
y = "i"
background = "exponential"
background_window = [120, 200]
current_u = 0.001
{extra}
[fits.c]
file = "{line}"
x = "x"
y = "y"
{extra}"""


def _plain(path, header, columns):
    rows = [",".join(repr(float(v)) for v in row) for row in zip(*columns)]
    path.write_text(",".join(header) + "\n" + "\n".join(rows) + "\n", encoding="utf-8")


def _european(path, header, columns):
    # semicolons, decimal commas, a comment line above the header, Windows line ends
    rows = [";".join(repr(float(v)).replace(".", ",") for v in row)
            for row in zip(*columns)]
    text = "# exported from the lab's spreadsheet\r\n" + ";".join(header) + "\r\n"
    path.write_bytes((text + "\r\n".join(rows) + "\r\n").encode("utf-8"))


def _workbook(path, header, columns):
    book = openpyxl.Workbook()
    book.active.title = "notes"
    book.active.append(["this sheet is not the data"])
    sheet = book.create_sheet("data")
    sheet.append(list(header))
    for row in zip(*columns):
        sheet.append([float(v) for v in row])
    book.save(path)


def _model(tmp_path, suffix, writer, extra=""):
    folder = tmp_path / suffix.strip(".").replace("-", "_")
    folder.mkdir()
    record, line = f"record{suffix.split('-')[0]}", f"line{suffix.split('-')[0]}"
    writer(folder / record, ("t [s]", "i [mA]"), (_T, _I))
    writer(folder / line, ("x", "y"), (_X, _Y))
    path = folder / "m.toml"
    path.write_text(_TABLES.format(record=record, line=line, extra=extra), encoding="utf-8")
    return load_model(str(path))


def _generated(model):
    return {item.name: (item.estimate, item.standard_uncertainty, item.dof, item.unit)
            for item in model.inputs}


def test_semicolon_decimal_comma_csv_gives_the_same_record_and_fit(tmp_path):
    plain = _model(tmp_path, ".csv", _plain)
    european = _model(tmp_path, ".csv-eu", _european)
    assert set(_generated(plain)) == {"Q_int", "Q_bg", "Q_res", "Q_rule", "c_b0", "c_b1"}
    assert _generated(european) == _generated(plain)
    assert european.correlations == plain.correlations
    declared = _model(tmp_path, ".csv-declared", _european,
                      extra='separator = ";"\ndecimal = ","\n')
    assert _generated(declared) == _generated(plain)


def test_xlsx_workbook_gives_the_same_record_and_fit(tmp_path):
    plain = _model(tmp_path, ".csv", _plain)
    book = _model(tmp_path, ".xlsx", _workbook, extra='sheet = "data"\n')
    assert _generated(book) == _generated(plain)
    assert book.correlations == plain.correlations
    assert [view.file for view in book.records] == ["line.xlsx", "record.xlsx"]


@pytest.mark.parametrize("page", ["README.md", "docs/model-format.md", "docs/records.md"])
def test_every_fit_and_record_key_is_documented(page):
    # every key the readers accept is named, in backticks (`key` or `key = …`), on the
    # user's pages
    import re
    from pathlib import Path

    from budget._recordinputs import FIT_KEYS, RECORD_KEYS

    text = (Path(__file__).resolve().parent.parent / page).read_text(encoding="utf-8")
    missing = [key for key in dict.fromkeys(FIT_KEYS + RECORD_KEYS)
               if not re.search(f"`{key}( = [^`]*)?`", text)]
    assert not missing, f"{page} does not name {missing}"
