"""[fits.NAME] and [records.NAME] tables in model files: inputs, sets, and bad records.

Every bad record gives one ``error:`` line naming the model file, the table and key, the
record file and its row where there is one; exit status 1; no traceback.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from budget._gum import propagate
from budget._model import load_model

_LINE = "x,y\n" + "".join(f"{x},{1.0 + 0.5 * x + 0.01 * (-1) ** x}\n" for x in range(8))
_MODEL = 'title = "t"\n[measurands.y]\nequation = "{equation}"\n{tables}'


def _write(tmp_path, tables: str, data: str = _LINE, equation: str = "c_b0 + c_b1") -> str:
    (tmp_path / "data.csv").write_text(data, encoding="utf-8")
    path = tmp_path / "m.toml"
    path.write_text(_MODEL.format(equation=equation, tables=tables), encoding="utf-8")
    return str(path)


def test_fit_coefficients_are_a_set_with_the_fits_covariance(tmp_path):
    path = _write(tmp_path, '[fits.c]\nfile = "data.csv"\nx = "x"\ny = "y"\n')
    model = load_model(path)
    b0, b1 = model.input("c_b0"), model.input("c_b1")
    assert (b0.dof, b1.dof, b0.type) == (6.0, 6.0, "A")
    assert [s.inputs for s in model.estimated_together] == [("c_b0", "c_b1")]
    # reference: numpy.polyfit with cov=True (scaled by the residual variance, ν = n − 2)
    x = np.arange(8.0)
    y = 1.0 + 0.5 * x + 0.01 * (-1.0) ** x
    (slope, intercept), cov = np.polyfit(x, y, 1, cov=True)
    assert b0.estimate == pytest.approx(intercept, rel=1e-10)
    assert b1.standard_uncertainty == pytest.approx(np.sqrt(cov[0, 0]), rel=1e-8)
    u = np.sqrt(cov[0, 0] + cov[1, 1] + 2 * cov[0, 1])
    assert propagate(model).measurand("y").combined_uncertainty == pytest.approx(u, rel=1e-8)


_BAD = {
    "missing file": ('[fits.c]\nfile = "nope.csv"\nx = "x"\ny = "y"\n', _LINE,
                     ":5: [fits.c] file: expected a record file, found no such file "
                     "'nope.csv'"),
    "unknown column": ('[fits.c]\nfile = "data.csv"\nx = "xx"\ny = "y"\n', _LINE,
                       ":5: [fits.c] file: expected a column 'xx' in 'data.csv', found x, y "
                       "(did you mean 'x'?)"),
    "not a number": ('[fits.c]\nfile = "data.csv"\nx = "x"\ny = "y"\n',
                     "x,y\n0,1\n1,2\n2,abc\n3,4\n",
                     ":5: [fits.c] file: data.csv:4: column 'y': expected a finite number "
                     "with a decimal point, found 'abc'"),
    "not finite": ('[fits.c]\nfile = "data.csv"\nx = "x"\ny = "y"\n',
                   "x,y\n0,1\n1,nan\n2,3\n3,4\n",
                   ":5: [fits.c] file: data.csv:3: column 'y': expected a finite number "
                   "with a decimal point, found 'nan'"),
    "too few points": ('[fits.c]\nfile = "data.csv"\nx = "x"\ny = "y"\n', "x,y\n0,1\n1,2\n",
                       ":5: [fits.c] file: expected at least 3 points for a straight line (2 "
                       "coefficients and at least one degree of freedom), found 2"),
    "time not increasing": (
        '[records.c]\nkind = "drift"\nfile = "data.csv"\nx = "x"\ny = "y"\n'
        'before = [0, 3]\ngive = "rate"\n',
        "x,y\n0,1\n1,2\n1,3\n3,4\n",
        ":6: [records.c] file: expected x to increase from row to row in 'data.csv', found 1 "
        "at row 4 after 1 at row 3"),
    "window outside": (
        '[records.c]\nkind = "charge"\nfile = "data.csv"\nx = "x"\ny = "y"\n'
        'window = [0, 20]\n', _LINE,
        ":9: [records.c] window: expected window [0, 20] inside the data of 'data.csv' (x "
        "from 0 to 7), found it outside"),
    "negative current for the logarithm": (
        '[records.c]\nkind = "charge"\nfile = "data.csv"\nx = "x"\ny = "y"\n'
        'background = "exponential"\nbackground_window = [2, 7]\n',
        "x,y\n0,5\n1,3\n2,2\n3,1\n4,-0.2\n5,0.3\n6,0.2\n7,0.1\n",
        ":10: [records.c] background_window: expected currents > 0 in background_window of "
        "'data.csv' for the exponential fit (its starting values take a logarithm), found "
        "-0.2 at row 6"),
    "fit does not converge": (
        '[records.c]\nkind = "charge"\nfile = "data.csv"\nx = "x"\ny = "y"\n'
        'background = "exponential"\nbackground_window = [0, 7]\n',
        "x,y\n0,1\n1,1.001\n2,1\n3,1.001\n4,1\n5,1.001\n6,1\n7,1.001\n",
        ":10: [records.c] background_window: expected the exponential fit to converge, found "
        "the best decay constant at the edge of its search range (τ = 0.14): the readings do "
        "not decay exponentially (background_window of 'data.csv', rows 2–9)"),
    "unknown key": ('[records.c]\nkind = "drift"\nfile = "data.csv"\nx = "x"\ny = "y"\n'
                    'befor = [0, 3]\n', _LINE,
                    ":9: [records.c] befor: expected a key among file, kind, x, y, x_unit, "
                    "y_unit, description, separator, decimal, encoding, sheet, missing, "
                    "dates, before, after, titration_time, give, found 'befor' (did you "
                    "mean 'before'?)"),
    "unit slip": ('[fits.c]\nfile = "data.csv"\nx = "t"\ny = "y"\nx_unit = "s"\n',
                  "t [min],y\n0,1\n1,2\n2,3.1\n",
                  ":8: [fits.c] x_unit: expected column 't' of 'data.csv' in x_unit 's', "
                  "found the header unit 'min'"),
}


@pytest.mark.parametrize("case", sorted(_BAD))
def test_bad_record_gives_one_error_line(case, tmp_path, cli):
    tables, data, message = _BAD[case]
    path = _write(tmp_path, tables, data, "c" if "records" in tables else "c_b0 + c_b1")
    code, stdout, stderr = cli("check", path)
    assert code == 1 and stdout == ""
    lines = stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in stderr
    assert lines[0] == f"error: {path}{message}"


def test_report_shows_each_fit_with_its_residuals():
    from budget._analysis import evaluate
    from budget._report import render_report
    from conftest import MODELS

    model = load_model(MODELS / "vics-as-25a" / "coulometric-purity-records.toml")
    html = render_report(evaluate(model, trials=2000, seed=1))
    assert "Inputs from fits and records" in html
    for label in ("records.Q_post: first segment", "records.Q_post: second segment",
                  "records.Q_pre_ep: cubic around the steepest reading"):
        assert f'aria-label="{label}, data, fit and residuals"' in html
    assert html.count(">residual<") == 3  # one residual panel per fit


def test_chart_of_a_long_record_draws_a_bounded_number_of_points():
    from budget._fitchart import POINTS, fit_chart
    from budget._fits import polynomial

    x = np.linspace(0.0, 1.0, 100_000)
    fit = polynomial(x, 2.0 * x + np.sin(40 * x) * 1e-3, 1)
    svg = str(fit_chart(fit, x_label="t / s", y_label="i / mA", label="long"))
    assert svg.count("<circle") <= 2 * (POINTS + 1)


def test_csv_reader_keeps_file_rows_through_comments_blanks_and_separators(tmp_path):
    from budget._errors import Location
    from budget._recordfiles import read_columns

    text = "# a comment\n\n t / s ;\"i (mA)\";note\n0;1.5e0;a\n\n1;2;b\n2;\"3\";c\n"
    path = tmp_path / "r.csv"
    for content in (text, text.replace(".", ",")):  # decimal commas: the careful reader
        path.write_text(content, encoding="utf-8")
        columns = read_columns(path, "r.csv", ["t", "i"], Location(file="m.toml"))
        assert columns.units == {"t": "s", "i": "mA"}
        assert columns.values["i"].tolist() == [1.5, 2.0, 3.0]
        assert columns.rows.tolist() == [4, 6, 7]


def test_the_fast_and_the_careful_reader_agree_on_a_long_record(tmp_path, monkeypatch):
    # the file is read at C speed (numpy.loadtxt); the cell-by-cell reader gives the same
    from budget._errors import Location
    from budget._recordfiles import read_columns

    rng = np.random.default_rng(0)
    values = rng.normal(size=(5000, 2))
    lines = ["x,y"] + [f"{float(a)!r},{float(b)!r}" for a, b in values]
    path = tmp_path / "long.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    fast = read_columns(path, "long.csv", ["x", "y"], Location())
    assert np.array_equal(fast.values["x"], values[:, 0])
    assert np.array_equal(fast.values["y"], values[:, 1])
    assert fast.rows[0] == 2 and fast.rows[-1] == 5001
    import budget._recordfiles as recordfiles

    monkeypatch.setattr(recordfiles, "_fast", lambda *args: None)
    careful = read_columns(path, "long.csv", ["x", "y"], Location())
    assert np.array_equal(careful.values["x"], fast.values["x"])
    assert np.array_equal(careful.rows, fast.rows)


def test_charge_with_line_background_and_calibrations_as_separate_inputs(tmp_path):
    # Q = cal·time·(∫i dt − ∫(b0 + b1 t) dt) + rule; reference: scipy trapezoid and numpy
    # polyfit (the background line integrated over the window by hand)
    from scipy.integrate import trapezoid

    t = np.arange(0.0, 101.0)
    i = np.where(t < 60, 2.0, 0.0) + 0.01 + 1e-4 * t + 1e-4 * np.cos(3 * t)
    data = "t [s],i [mA]\n" + "".join(f"{a:g},{float(b)!r}\n" for a, b in zip(t, i))
    path = _write(tmp_path, '[records.Q]\nkind = "charge"\nfile = "data.csv"\nx = "t"\n'
                  'y = "i"\nwindow = [0, 70]\nbackground = "line"\n'
                  'background_window = [70, 100]\ncurrent_u_relative = 1e-4\n'
                  'time_u_relative = 1e-6\n', data, "Q")
    model = load_model(path)
    names = {item.name for item in model.inputs}
    assert names == {"Q_int", "Q_bg", "Q_cal", "Q_time", "Q_rule"}
    assert model.input("Q_int").estimate == pytest.approx(trapezoid(i[:71], t[:71]))
    b1, b0 = np.polyfit(t[70:], i[70:], 1)
    assert model.input("Q_bg").estimate == pytest.approx(b0 * 70 + b1 * 70 ** 2 / 2,
                                                         rel=1e-9)
    assert (model.input("Q_bg").dof, model.input("Q_bg").type) == (29.0, "A")
    assert model.input("Q_int").unit == "mA*s"
    budget = propagate(model).measurand("y")
    assert budget.estimate == pytest.approx(model.input("Q_int").estimate
                                            - model.input("Q_bg").estimate
                                            + model.input("Q_rule").estimate, rel=1e-12)
    assert model.input("Q_rule").distribution.name == "rectangular"


def test_weighted_fit_reports_chi_squared_and_scaled_covariance_sets_dof(tmp_path):
    data = "x,y,u\n" + "".join(f"{x},{2 + 0.3 * x + 0.05 * (-1) ** x},0.01\n"
                              for x in range(10))
    tables = '[fits.c]\nfile = "data.csv"\nx = "x"\ny = "y"\nu_y = "u"\n'
    stated = load_model(_write(tmp_path, tables, data))
    assert stated.input("c_b0").dof == math.inf
    notes = stated.records[0].notes
    assert any("NOT consistent with the stated uncertainties" in n for n in notes), notes
    assert any(w.startswith("[fits.c]: χ² = ") and "exceeds its 95 % limit 15.51 for ν = 8"
               in w for w in stated.warnings), stated.warnings
    scaled = load_model(_write(tmp_path, tables + 'covariance = "scaled"\n', data))
    assert scaled.input("c_b0").dof == 8.0
    assert not any("χ²" in w for w in scaled.warnings)
    assert scaled.input("c_b0").standard_uncertainty > stated.input("c_b0").standard_uncertainty


def test_drift_correction_is_rate_times_titration_time(tmp_path):
    t = np.concatenate([np.arange(0.0, 100.0, 10.0), np.arange(200.0, 300.0, 10.0)])
    q = np.where(t < 150, 1.0, 3.0) + 0.002 * t + 0.001 * np.sin(t)
    data = "t [s],q [mC]\n" + "".join(f"{a:g},{float(b)!r}\n" for a, b in zip(t, q))
    tables = ('[records.D]\nkind = "drift"\nfile = "data.csv"\nx = "t"\ny = "q"\n'
              'before = [0, 90]\nafter = [200, 290]\ntitration_time = 120\n')
    model = load_model(_write(tmp_path, tables, data, "D"))
    rate = load_model(_write(tmp_path, tables.replace("titration_time = 120\n",
                                                      'give = "rate"\n'), data, "D"))
    assert model.input("D").unit == "mC" and rate.input("D").unit == "mC/s"
    assert model.input("D").estimate == pytest.approx(120 * rate.input("D").estimate)
    assert model.input("D").standard_uncertainty == pytest.approx(
        120 * rate.input("D").standard_uncertainty)
    assert model.input("D").dof == len(t) - 3


_HOSTILE = ['"x"', "-1", "0", "1e308", "[1]", "[2, 1]", "[[0, 1]]", "true", "{}", "nan",
            "[nan, 1]", '["a", "b"]', "[-1e308, 1e308]", '""', "[[0, 1], [1]]"]


@pytest.mark.parametrize("name", ["vics-as-25a/coulometric-purity-records.toml",
                                  "velmora/controlled-potential-dichromate-record.toml",
                                  "velmora/water-coulometric-iodine-drift-record.toml",
                                  "reference/gum-h3-thermometer-fit.toml",
                                  "reference/york-pearson-line.toml"])
def test_hostile_values_in_fit_and_record_tables_give_budget_errors_only(name, tmp_path):
    # every key of every [fits]/[records] table replaced by hostile values: a BudgetError
    # or a result, never another exception (robustness, in the spirit of tests/test_fuzz.py)
    import re
    import shutil

    from budget._errors import BudgetError
    from conftest import MODELS

    source = MODELS / name
    shutil.copytree(source.parent, tmp_path / "m")
    text = source.read_text(encoding="utf-8")
    regions = [m.span() for m in re.finditer(r"^\[(?:records|fits)\.[^\]]+\]\n(?:(?!\[).*\n)*",
                                             text, re.M)]
    for start, end in regions:
        for key in re.findall(r"^(\w+) = ", text[start:end], re.M):
            for value in _HOSTILE:
                table = re.sub(rf"^{key} = .*$", f"{key} = {value}", text[start:end],
                               count=1, flags=re.M)
                path = tmp_path / "m" / "hostile.toml"
                path.write_text(text[:start] + table + text[end:], encoding="utf-8")
                try:
                    propagate(load_model(path))
                except BudgetError:
                    pass


@pytest.mark.parametrize("low, high, ticks", [
    (-0.0993, 2.513, [0.0, 0.5, 1.0, 1.5, 2.0, 2.5]),
    (394.0, 1010.0, [400.0, 500.0, 600.0, 700.0, 800.0, 900.0, 1000.0]),
    (-0.0073, 0.0073, [-0.005, 0.0, 0.005]),
])
def test_chart_ticks_are_round_numbers_inside_the_range(low, high, ticks):
    from budget._fitchart import nice_ticks

    assert nice_ticks(low, high) == pytest.approx(ticks)


def test_json_document_lists_each_fit_with_its_covariance():
    import json

    from budget._analysis import evaluate
    from budget._document import result_document
    from conftest import MODELS

    model = load_model(MODELS / "reference" / "gum-h3-thermometer-fit.toml")
    document = result_document(evaluate(model, trials=0))
    (record,) = document["records"]
    assert (record["table"], record["produces"]) == ("fits.line", ["y1", "y2"])
    (fit,) = record["fits"]
    assert fit["dof"] == 9 and fit["points"] == 11
    # GUM H.3.3 [M✓C]: r = −0.930, u(y1) = 0.0029 °C, u(y2) = 0.00067; their rounding
    # allows 2.5 % on the product (0.5/29 + 0.5/67 + 0.5/930)
    assert fit["covariance"][0][1] == pytest.approx(-0.930 * 0.0029 * 0.00067, rel=0.026)
    json.dumps(document, allow_nan=False)
    typed = result_document(evaluate(load_model(MODELS / "reference" /
                                                "gum-h1-end-gauge.toml"), trials=0))
    assert typed["records"] is None


def test_demo_determination_from_records_agrees_with_its_typed_in_run():
    from conftest import MODELS

    # the demo's D1 from its raw records (coulometric-purity-records.toml) and as the
    # typed-in numbers the campaign certifies from (coulometric-purity.toml, whose
    # estimates are D1's row of determinations.csv): the same determination, so the two
    # values must agree well within either u_c (the records were generated from D1's
    # numbers, models/generate_records.py)
    records = propagate(load_model(MODELS / "vics-as-25a" / "coulometric-purity-records.toml"))
    typed = propagate(load_model(MODELS / "vics-as-25a" / "coulometric-purity.toml"))
    a, b = records.measurand("w"), typed.measurand("w")
    assert abs(a.estimate - b.estimate) < 0.1 * min(a.combined_uncertainty,
                                                    b.combined_uncertainty)
    assert a.combined_uncertainty == pytest.approx(b.combined_uncertainty, rel=0.1)
