"""[fits.NAME] and [records.NAME] tables in model files: inputs, sets, and bad records.

Every bad record gives one ``error:`` line naming the model file, the table and key, the
record file and its row where there is one; exit status 1; no traceback.
"""

from __future__ import annotations

import numpy as np
import pytest

from budget.gum import propagate
from budget.model import load_model

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
                     ":5: [fits.c] file: expected a number in column 'y' of 'data.csv' row "
                     "4, found 'abc'"),
    "not finite": ('[fits.c]\nfile = "data.csv"\nx = "x"\ny = "y"\n',
                   "x,y\n0,1\n1,nan\n2,3\n3,4\n",
                   ":5: [fits.c] file: expected a finite number in column 'y' of 'data.csv' "
                   "row 3, found 'nan'"),
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
                    ":9: [records.c] befor: unknown key 'befor' (did you mean 'before'?); "
                    "expected one of file, kind, x, y, x_unit, y_unit, description, before, "
                    "after, titration_time, give"),
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
    from budget.analysis import evaluate
    from budget.report import render_report
    from conftest import MODELS

    model = load_model(MODELS / "vics-as-25a" / "coulometric-purity-records.toml")
    html = render_report(evaluate(model, trials=2000, seed=1))
    assert "Inputs from fits and records" in html
    for label in ("records.Q_post: first segment", "records.Q_post: second segment",
                  "records.Q_pre_ep: cubic around the steepest reading"):
        assert f'aria-label="{label}, data, fit and residuals"' in html
    assert html.count(">residual<") == 3  # one residual panel per fit


def test_chart_of_a_long_record_draws_a_bounded_number_of_points():
    from budget.fitchart import POINTS, fit_chart
    from budget.fits import polynomial

    x = np.linspace(0.0, 1.0, 100_000)
    fit = polynomial(x, 2.0 * x + np.sin(40 * x) * 1e-3, 1)
    svg = str(fit_chart(fit, x_label="t / s", y_label="i / mA", label="long"))
    assert svg.count("<circle") <= 2 * (POINTS + 1)


def test_csv_reader_keeps_file_rows_through_comments_blanks_and_separators(tmp_path):
    from budget.errors import Location
    from budget.recordfiles import read_columns

    text = "# a comment\n\n t / s ;\"i (mA)\";note\n0;1,5e0;a\n# inside\n\n1;2;b\n2;\"3\";c\n"
    path = tmp_path / "r.csv"
    path.write_text(text.replace("1,5e0", "1.5e0"), encoding="utf-8")
    columns = read_columns(path, "r.csv", ["t", "i"], Location(file="m.toml"))
    assert columns.units == {"t": "s", "i": "mA"}
    assert columns.values["i"].tolist() == [1.5, 2.0, 3.0]
    assert columns.rows.tolist() == [4, 7, 8]


def test_the_fast_and_the_careful_reader_agree_on_a_long_record(tmp_path, monkeypatch):
    # the file is read at C speed (numpy.loadtxt); the cell-by-cell reader gives the same
    from budget.errors import Location
    from budget.recordfiles import read_columns

    rng = np.random.default_rng(0)
    values = rng.normal(size=(5000, 2))
    lines = ["x,y"] + [f"{float(a)!r},{float(b)!r}" for a, b in values]
    path = tmp_path / "long.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    fast = read_columns(path, "long.csv", ["x", "y"], Location())
    assert np.array_equal(fast.values["x"], values[:, 0])
    assert np.array_equal(fast.values["y"], values[:, 1])
    assert fast.rows[0] == 2 and fast.rows[-1] == 5001
    import budget.recordfiles as recordfiles

    monkeypatch.setattr(recordfiles, "_fast", lambda *args: None)
    careful = read_columns(path, "long.csv", ["x", "y"], Location())
    assert np.array_equal(careful.values["x"], fast.values["x"])
    assert np.array_equal(careful.rows, fast.rows)
