"""Malformed model files: each gives exactly one ``error:`` line naming the file, the
table and key (and line where it can be found), what was expected and what was found;
exit status 1; no traceback; nothing written."""

from __future__ import annotations

import pytest

# name -> (file content, message after "error: {path}")
CASES = {
    'attribute': (
        'title = "bad"\n[measurands.y]\nequation = "a.real"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ":3: [measurands.y] equation: expected arithmetic only, found an attribute access in 'a.real'"),
    'bad_formula': (
        'title = "bad"\n[measurands.y]\nequation = "M"\nunit = "g/mol"\n[inputs.M]\nformula = "C8H5Kx4"\n',
        ":6: [inputs.M] formula: expected element symbols in formula 'C8H5Kx4', found 'Kx' (did you mean 'K'?)"),
    'bad_name': (
        'title = "bad"\n[measurands.y]\nequation = "a"\nunit = "g"\n[inputs."a b"]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ":5: [inputs.a b] expected a name of letters, digits and '_' not starting with a digit or '__', found 'a b'"),
    'call_not_allowed': (
        'title = "bad"\n[measurands.y]\nequation = "eval(a)"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ":3: [measurands.y] equation: expected a call of one of abs, acos, air_density, asin, atan, cos, exp, log, log10, sin, sqrt, tan, found 'eval(...)'"),
    'caret': (
        'title = "bad"\n[measurands.y]\nequation = "a ^ 2"\nunit = "g^2"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ":3: [measurands.y] equation: '^' is not a power in 'a ^ 2': write '**'"),
    'celsius_product': (
        'title = "bad"\n[measurands.y]\nequation = "a * T"\nunit = "g*K"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n[inputs.T]\nvalue = 20\nunit = "degC"\nu = 0.1\n',
        ":3: [measurands.y] equation: a Celsius temperature may enter only as a difference of two temperatures or as the argument of air_density, found 'a * T'"),
    'comparison': (
        'title = "bad"\n[measurands.y]\nequation = "a > 1"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ":3: [measurands.y] equation: expected arithmetic only, found a comparison in 'a > 1'"),
    'corr_psd': (
        'title = "bad"\n[measurands.y]\nequation = "a + b + c"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n[inputs.b]\nvalue = 1\nunit = "g"\nu = 0.1\n[inputs.c]\nvalue = 1\nunit = "g"\nu = 0.1\n[[correlations]]\nbetween = ["a", "b"]\nr = 0.9\n[[correlations]]\nbetween = ["b", "c"]\nr = 0.9\n[[correlations]]\nbetween = ["a", "c"]\nr = -0.9\n',
        ':17: [correlations] expected a positive semi-definite correlation matrix, found the smallest eigenvalue -0.8; the pairs a-b (0.9), b-c (0.9), a-c (-0.9) cannot hold together'),
    'corr_range': (
        'title = "bad"\n[measurands.y]\nequation = "a + b"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n[inputs.b]\nvalue = 1\nunit = "g"\nu = 0.1\n[[correlations]]\nbetween = ["a", "b"]\nr = 1.5\n',
        ':15: [correlations] r: expected r in [-1, 1] in correlation 1, found 1.5'),
    'corr_unknown': (
        'title = "bad"\n[measurands.y]\nequation = "a"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n[[correlations]]\nbetween = ["a", "bb"]\nr = 0.5\n',
        ":10: [correlations] between: unknown input 'bb' in correlation 1"),
    'cycle': (
        'title = "bad"\n[measurands.y]\nequation = "p"\nunit = "g"\n[definitions]\np = "q + a"\nq = "p * 2"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ':5: [definitions] expected definitions without cycles, found the cycle p -> q -> p'),
    'dimension_measurand': (
        'title = "bad"\n[measurands.y]\nequation = "a"\nunit = "mL"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ":4: [measurands.y] unit: expected the equation to give [length] ** 3 ('mL'), found [mass]"),
    'dimension_sum': (
        'title = "bad"\n[measurands.y]\nequation = "a + t"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n[inputs.t]\nvalue = 1\nunit = "s"\nu = 0.1\n',
        ":3: [measurands.y] equation: expected terms of like dimension in 'a + t', found 'a' in [mass] and 't' in [time]"),
    'division_zero': (
        'title = "bad"\n[measurands.y]\nequation = "a / b"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n[inputs.b]\nvalue = 0\nu = 0.1\n',
        ":3: [measurands.y] equation: expected a finite value at the estimates, found inf (a division by zero or a function outside its domain in 'a / b')"),
    'dunder': (
        'title = "bad"\n[measurands.y]\nequation = "__import__"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ":3: [measurands.y] equation: names starting with '__' are not allowed: '__import__'"),
    'empty': (
        '',
        ': expected a TOML model, found an empty file'),
    'empty_expr': (
        'title = "bad"\n[measurands.y]\nequation = "  "\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ':3: [measurands.y] equation: expected an expression, found an empty string'),
    'function_arg_dim': (
        'title = "bad"\n[measurands.y]\nequation = "exp(a)"\nunit = "1"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ":3: [measurands.y] equation: expected a dimensionless argument of exp() in 'exp(a)', found [mass]"),
    'half_width_normal': (
        'title = "bad"\n[measurands.y]\nequation = "a"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nhalf_width = 0.1\n',
        ":8: [inputs.a] half_width: expected a bounded distribution (rectangular, triangular, arcsine, trapezoidal, curvilinear_trapezoid) for limits or a half-width, found 'normal'"),
    'import': (
        'title = "bad"\n[measurands.y]\nequation = "import os"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ":3: [measurands.y] equation: expected an arithmetic expression, found 'import os' (syntax error at column 1)"),
    'keyword_arg': (
        'title = "bad"\n[measurands.y]\nequation = "sqrt(x=a)"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ":3: [measurands.y] equation: keyword arguments are not allowed: 'sqrt(x=a)'"),
    'lambda': (
        'title = "bad"\n[measurands.y]\nequation = "(lambda: a)()"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ":3: [measurands.y] equation: expected arithmetic only, found a lambda in '(lambda: a)()'"),
    'missing_equation': (
        'title = "t"\n[measurands.y]\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ":2: [measurands.y] expected an 'equation', found none"),
    'missing_title': (
        '[measurands.y]\nequation = "a"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ": title: expected a 'title' string, found none"),
    'negative_u': (
        'title = "bad"\n[measurands.y]\nequation = "a"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = -0.1\n',
        ':8: [inputs.a] u: expected a number > 0, found -0.1'),
    'no_inputs': (
        'title = "t"\n[measurands.y]\nequation = "1"\n',
        ': expected at least one [inputs.NAME] table, found none'),
    'nonfinite': (
        'title = "bad"\n[measurands.y]\nequation = "a"\nunit = "g"\n[inputs.a]\nvalue = nan\nunit = "g"\nu = 0.1\n',
        ':6: [inputs.a] value: expected a finite number, found nan'),
    'observations_short': (
        'title = "bad"\n[measurands.y]\nequation = "a"\nunit = "g"\n[inputs.a]\nobservations = [1.0]\nunit = "g"\n',
        ':6: [inputs.a] observations: expected a list of at least 2 numbers, found a list of length 1'),
    'setting_coverage': (
        'title = "t"\n[settings]\ncoverage = 95\n[measurands.y]\nequation = "a"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ':3: [settings] coverage: expected a coverage probability in [1e-06, 1 - 1e-09] (limits: docs/limits.md), found 95'),
    'string_in_expr': (
        'title = "bad"\n[measurands.y]\nequation = "\'a\'"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ':3: [measurands.y] equation: expected a number, found a string \'a\' in "\'a\'"'),
    'string_number': (
        'title = "bad"\n[measurands.y]\nequation = "a"\nunit = "g"\n[inputs.a]\nvalue = "2.0"\nunit = "g"\nu = 0.1\n',
        ":6: [inputs.a] value: expected a number, found '2.0' (a string)"),
    'subscript': (
        'title = "bad"\n[measurands.y]\nequation = "a[0]"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n',
        ":3: [measurands.y] equation: expected arithmetic only, found a subscript in 'a[0]'"),
    'toml_syntax': (
        'title = "bad"\n[measurands.y\nequation = "a"\n',
        ":2: expected valid TOML, found a syntax error: Expected ']' at the end of a table declaration"),
    'two_statements': (
        'title = "bad"\n[measurands.y]\nequation = "a"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\nhalf_width = 0.2\n',
        ":9: [inputs.a] half_width: expected one way of stating the uncertainty, found both 'u' and 'half_width'"),
    'unknown_constant': (
        'title = "bad"\n[measurands.y]\nequation = "F"\nunit = "C/mol"\n[inputs.F]\nconstant = "Faraday"\n',
        ":6: [inputs.F] constant: expected a built-in constant, one of e, N_A, k_B, h, c, F, R, found 'Faraday' (a string)"),
    'unknown_distribution': (
        'title = "bad"\n[measurands.y]\nequation = "a"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\ndistribution = "rectangle"\nhalf_width = 0.2\n',
        ":8: [inputs.a] distribution: expected a distribution, one of normal, rectangular, triangular, arcsine, trapezoidal, curvilinear_trapezoid, student_t, found 'rectangle' (a string) (did you mean 'rectangular'?)"),
    'unknown_key': (
        'title = "bad"\n[measurands.y]\nequation = "a"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\nsorce = "x"\n',
        ":9: [inputs.a] sorce: expected a key among value, unit, description, source, distribution, dof, reliability, u, expanded, k, level, half_width, beta, inexactness, lower, upper, observations, exact, formula, constant, certificate, stated, found 'sorce' (did you mean 'source'?)"),
    'unknown_name': (
        'title = "bad"\n[measurands.y]\nequation = "a * b_m"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\n[inputs.b_n]\nvalue = 1\nexact = true\n',
        ":3: [measurands.y] equation: unknown quantity 'b_m' in 'a * b_m' (did you mean 'b_n'?)"),
    'unknown_unit': (
        'title = "bad"\n[measurands.y]\nequation = "a"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "gramz"\nu = 0.1\n',
        ":7: [inputs.a] unit: expected a unit that pint understands, found 'gramz' (UndefinedUnitError)"),
    'zero_dof': (
        'title = "bad"\n[measurands.y]\nequation = "a"\nunit = "g"\n[inputs.a]\nvalue = 2.0\nunit = "g"\nu = 0.1\ndof = 0\n',
        ':9: [inputs.a] dof: expected a number > 0, found 0'),
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_malformed_model_file(name, tmp_path, cli, monkeypatch):
    text, message = CASES[name]
    monkeypatch.chdir(tmp_path)
    (tmp_path / f"{name}.toml").write_text(text, encoding="utf-8")
    report = tmp_path / "report.html"
    code, stdout, stderr = cli("run", "--trials", "0", "--html", str(report), f"{name}.toml")
    assert code == 1
    assert stdout == ""
    assert stderr == f"error: {name}.toml{message}\n"
    assert "Traceback" not in stderr
    assert not report.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == [f"{name}.toml"]


def test_binary_file(tmp_path, cli, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "binary.toml").write_bytes(b"\x00\x01\x02PK\x03")
    code, stdout, stderr = cli("check", "binary.toml")
    assert (code, stdout) == (1, "")
    assert stderr == "error: binary.toml: expected a UTF-8 text file, found binary data\n"


def test_undecodable_file(tmp_path, cli, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "latin.toml").write_bytes('title = "caf\xe9"'.encode("latin-1"))
    code, stdout, stderr = cli("check", "latin.toml")
    assert (code, stdout) == (1, "")
    assert stderr == ("error: latin.toml: expected UTF-8 text, found an undecodable byte at "
                      "byte 13\n")


def test_missing_file(tmp_path, cli, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, stdout, stderr = cli("run", "nowhere.toml")
    assert (code, stdout) == (1, "")
    assert stderr == "error: nowhere.toml: expected a model file, found no such file\n"


def test_check_accepts_what_run_computes(cli):
    from conftest import MODELS

    code, stdout, stderr = cli("check", str(MODELS / "reference" / "eurachem-a2-naoh.toml"))
    assert (code, stderr) == (0, "")
    assert stdout.endswith(": 5 inputs, 1 measurand(s), 0 definition(s), 0 correlation(s)\n")


@pytest.mark.parametrize("args, fragment", [
    (["run", "--coverage", "1.5", "x.toml"], "Invalid value for '--coverage'"),
    (["run", "--trials", "-3", "x.toml"], "Invalid value for '--trials'"),
    (["run", "--digits", "0", "x.toml"], "Invalid value for '--digits'"),
    (["run"], "Missing argument 'MODEL.toml'"),
    (["frobnicate"], "No such command 'frobnicate'"),
])
def test_bad_command_line_exits_2(args, fragment, cli):
    code, stdout, stderr = cli(*args)
    assert code == 2
    assert fragment in stderr
