"""Edges of model files and the single-model commands (run, check, explain, compare):
careless or hostile input gives one clean message or an honest warning, never a
traceback, a hang or a silent wrong number."""

from __future__ import annotations

import json
import math

import pytest

_PRODUCT = """\
title = "product of two dimensionless inputs"
[measurands.y]
equation = "a * b"
[inputs.a]
value = 2.0
u = 0.01
[inputs.b]
value = 3.0
u = 0.02
"""


def test_second_order_of_a_plain_product(cli, tmp_path):
    # d(a·b)/da = b is a bare symbol: its value at the estimates used to be a Python float
    # that sympy could not evaluate (a traceback). The exact variance of a product of
    # independent quantities is a²u_b² + b²u_a² + u_a²u_b² (Goodman 1960, JASA 55, 708),
    # which the GUM 5.1.2 higher-order terms reproduce for this bilinear model.
    path = tmp_path / "product.toml"
    path.write_text(_PRODUCT)
    code, stdout, stderr = cli("run", str(path), "--trials", "0", "--second-order", "--json")
    assert code == 0, stderr
    measurand = json.loads(stdout)["measurands"][0]
    exact = 2.0 ** 2 * 0.02 ** 2 + 3.0 ** 2 * 0.01 ** 2 + 0.01 ** 2 * 0.02 ** 2
    assert measurand["u"] == pytest.approx(math.sqrt(exact), rel=1e-12)
    assert measurand["second_order_variance"] == pytest.approx(0.01 ** 2 * 0.02 ** 2)


@pytest.mark.parametrize("second", ["same", "dotted", "hard link"])
def test_one_file_for_two_outputs_is_refused(cli, tmp_path, second):
    # --csv r.out --html r.out used to write both, the table silently replacing the report
    model = tmp_path / "product.toml"
    model.write_text(_PRODUCT)
    target = tmp_path / "r.out"
    other = {"same": target, "dotted": tmp_path / "." / "r.out",
             "hard link": tmp_path / "link.out"}[second]
    if second == "hard link":
        target.write_text("kept\n")
        other.hardlink_to(target)
    code, stdout, stderr = cli("run", str(model), "--trials", "0", "--csv", str(target),
                               "--html", str(other))
    assert code == 1
    assert stderr == (f"error: {target}: expected a different file for each output (--html, "
                      "--csv, --xlsx), found this file named twice\n")
    assert stdout == ""
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(
        {"product.toml", *(["r.out", "link.out"] if second == "hard link" else [])})
    if second == "hard link":
        assert target.read_text() == "kept\n"


@pytest.mark.parametrize("target", ["1e300", "1.7e308"])
def test_explain_with_a_huge_target(cli, tmp_path, target):
    # (target / k)² overflowed: an OverflowError traceback. The u an input would need for
    # U = target follows from u_c² − (c·u)² + (c·u_needed)² = (U/k)² (GUM 5.1.2, 6.2.1).
    path = tmp_path / "product.toml"
    path.write_text(_PRODUCT)
    code, stdout, stderr = cli("explain", str(path), "--trials", "0", "--target", target,
                               "--json")
    assert code == 0, stderr
    measurand = json.loads(stdout)["measurands"][0]
    k = measurand["k"]
    for driver in measurand["drivers"]:
        c = 3.0 if driver["input"] == "a" else 2.0
        rest = measurand["u"] ** 2 - driver["contribution"] ** 2
        wanted = float(target) / k
        assert driver["u_needed"] == pytest.approx(math.sqrt(wanted ** 2 - rest) / c
                                                   if wanted < 1e154 else wanted / c)
        if target == "1e300":
            assert driver["U_reached"] == pytest.approx(1e300)
        else:  # the rerun would scale u by more than the largest double
            assert driver["U_reached"] is None
    code, stdout, stderr = cli("explain", str(path), "--trials", "0", "--target", target)
    assert code == 0 and "u(a) ≤ " in stdout, stderr


def _duplicates(tmp_path, observations: str = "[3.0, 3.1]"):
    path = tmp_path / "duplicates.toml"
    path.write_text(_PRODUCT.replace("value = 3.0\nu = 0.02", f"observations = {observations}"))
    return path


def test_monte_carlo_of_duplicates_says_its_standard_deviation_means_nothing(cli, tmp_path):
    # Two observations give ν = 1: JCGM 101 6.4.9 draws a t distribution with one degree
    # of freedom, which has neither a mean nor a variance (a t distribution has a finite
    # variance only for ν > 2: common knowledge of the t distribution). The Monte Carlo
    # standard deviation then only grows with the trials, and used to be printed (and
    # reported with reported_interval = "monte_carlo") without a word.
    path = _duplicates(tmp_path)
    code, stdout, stderr = cli("run", str(path), "--trials", "20000", "--json")
    assert code == 0, stderr
    warnings = json.loads(stdout)["warnings"]
    assert ("'y': the Monte Carlo mean and standard deviation are not an estimate of "
            "anything: b (ν = 1) is drawn from a t distribution with ν ≤ 2, which has no "
            "finite variance (JCGM 101 6.4.9), so such figures change from run to run and "
            "grow with the trials; the coverage interval remains valid") in warnings
    code, stdout, stderr = cli("run", str(path), "--trials", "20000", "--strict")
    assert code == 3 and stdout == ""
    three = _duplicates(tmp_path, "[3.0, 3.1, 3.05]")  # ν = 2: the mean exists
    code, stdout, stderr = cli("run", str(three), "--trials", "20000", "--json")
    assert any(w.startswith("'y': the Monte Carlo standard deviation is not an estimate")
               for w in json.loads(stdout)["warnings"])
    four = _duplicates(tmp_path, "[3.0, 3.1, 3.05, 3.02]")  # ν = 3: a finite variance
    code, stdout, stderr = cli("run", str(four), "--trials", "20000", "--json")
    assert not any("not an estimate" in w for w in json.loads(stdout)["warnings"])


def test_adaptive_procedure_refuses_an_output_without_variance(cli, tmp_path):
    # the JCGM 101 7.9.4 stopping rule waits for the standard deviation to settle: with
    # ν = 1 it ran to the 2.5e8-trial cap and printed a meaningless mean and u
    path = _duplicates(tmp_path)
    code, stdout, stderr = cli("run", str(path), "--adaptive")
    assert code == 1 and stdout == ""
    assert stderr == (
        f"error: {path}:7: [inputs.b] expected inputs with a finite variance for the adaptive "
        "procedure, found ν = 1: a t distribution with ν ≤ 2 has none, so the Monte Carlo "
        "standard deviation of 'y' never settles (JCGM 101 6.4.9, 7.9); give a fixed number "
        "of trials instead\n")


def test_explain_reads_no_variance_where_there_is_none(cli, tmp_path):
    path = _duplicates(tmp_path)
    code, stdout, stderr = cli("explain", str(path), "--trials", "20000", "--json")
    assert code == 0, stderr
    measurand = json.loads(stdout)["measurands"][0]
    assert measurand["sobol"] == []
    assert measurand["sobol_notes"] == [
        "variance-based indices are not defined: b (ν = 1) is drawn from a t distribution "
        "with ν ≤ 2, so 'y' has no finite variance to apportion"]
    assert not any(r.startswith("nonlinearity") for r in measurand["reasons"])


_EARLIER = """\
title = "earlier"
[measurands.y]
equation = "p * q"
unit = "g"
[inputs.p]
value = 2.0
unit = "g"
u = 0.01
[inputs.q]
value = 3.0
u = 0.02
"""


def _later(tmp_path, body: str):
    (tmp_path / "earlier.toml").write_text(_EARLIER)
    path = tmp_path / "later.toml"
    path.write_text('title = "later"\n[measurands.z]\nequation = "y * w"\nunit = "g"\n'
                    '[inputs.w]\nvalue = 1.0\nu = 0.1\n' + body)
    return path


@pytest.mark.parametrize("between", ['["y", "w"]', '["v", "w", "y"]'])
def test_a_chained_input_is_refused_in_correlations(cli, tmp_path, between):
    # the chained input is replaced by the earlier model's equation: a coefficient of its
    # own used to reach the correlation matrix under a name no longer there (KeyError)
    path = _later(tmp_path, '[inputs.y]\nresult_of = "earlier.toml"\n[inputs.v]\nvalue = 1\n'
                  f'u = 0.1\n[[correlations]]\nbetween = {between}\nr = 0.5\n')
    path.write_text(path.read_text().replace('"y * w"', '"y * w * v"'))
    code, stdout, stderr = cli("check", str(path))
    assert code == 1 and stdout == ""
    assert stderr == (
        f"error: {path}:14: [correlations] between: expected inputs that are not results "
        "of another model, found 'y' (result_of = 'earlier.toml'): its correlations with "
        'this model come from the inputs it shares (shares = { this_input = "earlier_input" '
        "})\n")


@pytest.mark.parametrize("document, found", [
    ('{"measurands": [{"name": "y", "value": "x", "unit": "g", "u": 0.1, "dof": null}]}',
     'measurands[0].value = "x" (expected a finite number)'),
    ("[1, 2]", "a JSON list instead of an object"),
    ('{"measurands": [{"name": "y", "value": 6.0, "unit": "g", "u": -1, "dof": null}]}',
     "measurands[0].u = -1 (expected a finite number ≥ 0)"),
    ('{"measurands": [{"name": "y", "value": 6.0, "unit": "g", "u": 0.1, "dof": null, '
     '"contributions": [{"input": "p", "estimate": 2, "u": NaN, "sensitivity": 3}]}]}',
     "measurands[0].contributions[0].u = NaN (expected a finite number ≥ 0)"),
    ('{"measurands": [{"name": "y", "value": 6.0, "unit": "g", "u": 0.1, "dof": null, '
     '"contributions": [{"input": "p", "estimate": 2, "u": 0.1, "sensitivity": 3, '
     '"dof": -1}]}]}',
     "measurands[0].contributions[0].dof = -1 (expected a number > 0 or null)"),
    ('{"measurands": [{"name": "y", "value": 1e400, "unit": "g", "u": 0.1, "dof": null}]}',
     "measurands[0].value = Infinity (expected a finite number)"),
])
def test_a_misshapen_saved_result_is_named_by_its_field(cli, tmp_path, document, found):
    # a saved result with a field of the wrong kind leaked Python's own words ("could not
    # convert string to float", "list indices must be integers") or a traceback
    (tmp_path / "saved.json").write_text(document)
    path = _later(tmp_path, '[inputs.y]\nresult_of = "saved.json"\n')
    code, stdout, stderr = cli("check", str(path))
    assert code == 1 and stdout == ""
    assert stderr == (f"error: {path}:9: [inputs.y] result_of: expected a JSON result "
                      "document (schema result.schema.json) in "
                      f"'{tmp_path / 'saved.json'}', found {found}\n")


@pytest.mark.parametrize("document, found", [
    ('{"measurands": [{"name": "y", "value": 6.0, "u": 0.1, "unit": "g", "dof": null, '
     '"k": 2, "U": 0.2, "contributions": "x"}]}',
     'measurands[0].contributions = "x" (expected a list)'),
    ('{"measurands": [{"name": "y", "value": 6.0, "u": 0.1, "unit": "g", "dof": null, '
     '"k": 2, "U": 0.2, "contributions": []}, {"name": "y", "value": 6.0, "u": 0.1, '
     '"unit": "g", "dof": null, "k": 2, "U": 0.2, "contributions": []}]}',
     'measurands[1].name = "y" a second time'),
    ('{"measurands": [{"name": "y", "value": 6.0, "u": NaN, "unit": "g", "dof": null, '
     '"k": 2, "U": 0.2, "contributions": []}]}',
     "measurands[0].u = NaN (expected a finite number ≥ 0)"),
    ('{"measurands": []}', "measurands = [] (expected a list of measurands)"),
])
def test_compare_names_the_bad_field_of_a_saved_result(cli, tmp_path, document, found):
    # "string indices must be integers" leaked; NaN and a repeated measurand went through
    (tmp_path / "earlier.toml").write_text(_EARLIER)
    bad = tmp_path / "bad.json"
    bad.write_text(document)
    code, stdout, stderr = cli("compare", str(tmp_path / "earlier.toml"), str(bad))
    assert code == 1 and stdout == ""
    assert stderr == (f"error: {bad}: expected a JSON result document (schema "
                      f"result.schema.json), found {found}\n")


@pytest.mark.parametrize("equation, found", [
    ("a / (b - 3)", "expected a finite value at the estimates, found inf (a division by "
                    "zero or a function outside its domain in 'a / (b - 3)')"),
    ("a * log(b - 5)", "expected a finite value at the estimates, found nan (a division by "
                       "zero or a function outside its domain in 'a * log(b - 5)')"),
])
def test_check_refuses_what_run_refuses_at_the_estimates(cli, tmp_path, equation, found):
    # check said "ok" for a file whose equation cannot be evaluated at its own estimates
    path = tmp_path / "model.toml"
    path.write_text(_PRODUCT.replace('"a * b"', f'"{equation}"'))
    for command in ("check", "run"):
        code, stdout, stderr = cli(command, str(path), *(["--trials", "0"] if command ==
                                                         "run" else []))
        assert code == 1 and stdout == ""
        assert stderr == f"error: {path}:3: [measurands.y] equation: {found}\n"


@pytest.mark.parametrize("statement, key, found", [
    ('distribution = "rectangular"\nlower = -1.7e308\nupper = 1.7e308', "upper",
     "x = 0, a = 1.7e+308"),
    ('value = 0\ndistribution = "rectangular"\nhalf_width = 1.7e308', "half_width",
     "x = 0, a = 1.7e+308"),
    ('value = 0\ndistribution = "rectangular"\nu = 1.5e308', "u", "x = 0, a = inf"),
    ('value = 1e308\ndistribution = "triangular"\nhalf_width = 1e308', "half_width",
     "x = 1e+308, a = 1e+308"),
])
def test_bounded_limits_beyond_the_largest_double(cli, tmp_path, statement, key, found):
    # the width of [-1.7e308, 1.7e308] overflowed: "error: Rectangular: expected half_width
    # ≥ 0 and finite, found inf" without file, table or key; a half-width of 1.7e308 was
    # read and every Monte Carlo draw overflowed ("the distributions reach outside the
    # equations' domain" for the equation y = a)
    path = tmp_path / "wide.toml"
    path.write_text(f'title = "wide"\n[measurands.y]\nequation = "a"\n[inputs.a]\n{statement}\n')
    line = 5 + statement.split("\n").index(next(s for s in statement.split("\n")
                                                 if s.startswith(key + " ")))
    code, stdout, stderr = cli("check", str(path))
    assert code == 1 and stdout == ""
    assert stderr == (f"error: {path}:{line}: [inputs.a] {key}: expected limits x ± a and a "
                      f"width 2a within ±1.8e308 (limits: docs/limits.md), found {found}\n")


@pytest.mark.parametrize("unit, word, meaning, meant", [
    ("gr", "gr", "grain (64.8 mg)", "g"),  # pint's grain: 64.79891 mg (NIST SP 811 B.8)
    ("Mg", "Mg", "megagram (10⁶ g)", "mg"),
    ("Mmol/L", "Mmol", "megamole", "mmol"),
])
def test_a_look_alike_unit_is_named(cli, tmp_path, unit, word, meaning, meant):
    # 'gr' for gram was silently read as grains (a factor 0.0648); 'Mg' for mg as 10⁹ mg
    path = tmp_path / "slip.toml"
    path.write_text(_PRODUCT.replace("value = 2.0\n", f'value = 2.0\nunit = "{unit}"\n')
                    .replace('equation = "a * b"', f'equation = "a * b"\nunit = "{unit}"'))
    code, stdout, stderr = cli("check", str(path))
    assert code == 0, stderr
    assert stderr.splitlines() == [
        f"warning: plausibility: {owner} has the unit '{unit}', where '{word}' is the "
        f"{meaning}; if '{meant}' was meant, it is a unit slip"
        for owner in ("input 'a'", "measurand 'y'")]
    code, stdout, stderr = cli("check", str(path), "--strict")
    assert code == 3
    path.write_text(path.read_text().replace(f'"{unit}"', f'"{unit.replace(word, meant)}"'))
    code, stdout, stderr = cli("check", str(path))
    assert code == 0 and stderr == ""


@pytest.mark.parametrize("command", ["run", "explain"])
def test_adaptive_and_trials_together_are_a_bad_command_line(cli, tmp_path, command):
    # --adaptive --trials 0 ran the adaptive procedure: "0 = none" silently overruled
    path = tmp_path / "product.toml"
    path.write_text(_PRODUCT)
    code, stdout, stderr = cli(command, str(path), "--adaptive", "--trials", "0")
    assert code == 2 and stdout == ""
    assert stderr.endswith("Error: --adaptive chooses the number of trials itself: give "
                           "either --adaptive or --trials, found both (--trials 0)\n")


@pytest.mark.parametrize("option, name, suffix, owner", [
    ("--xlsx", "b.csv", ".csv", "--csv"), ("--csv", "b.xlsx", ".xlsx", "--xlsx"),
    ("--xlsx", "b.HTML", ".HTML", "--html"), ("--html", "b.xlsx", ".xlsx", "--xlsx")])
def test_an_output_named_with_another_outputs_suffix(cli, tmp_path, option, name, suffix,
                                                     owner):
    # --xlsx b.csv wrote a zip archive into a .csv file, --csv b.xlsx text into a workbook
    path = tmp_path / "product.toml"
    path.write_text(_PRODUCT)
    code, stdout, stderr = cli("run", str(path), "--trials", "0", option,
                               str(tmp_path / name))
    assert code == 2 and stdout == ""
    kind = {"--html": "an HTML page", "--csv": "a CSV table", "--xlsx": "an .xlsx workbook"}
    assert stderr.endswith(f"Error: {option} writes {kind[option]}: expected a file name "
                           f"without the suffix {suffix} of {owner}, found "
                           f"'{tmp_path / name}'\n")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["product.toml"]


@pytest.mark.parametrize("name", ["lambda", "in", "None"])
def test_a_reserved_word_is_refused_as_a_name(cli, tmp_path, name):
    # [inputs.lambda] (a wavelength, a conductivity) was accepted, then every equation
    # naming it failed with "expected an arithmetic expression … (syntax error at column 8)"
    path = tmp_path / "reserved.toml"
    path.write_text(f'title = "reserved"\n[measurands.y]\nequation = "{name} * 2"\n'
                    f"[inputs.{name}]\nvalue = 1.0\nu = 0.1\n")
    code, stdout, stderr = cli("check", str(path))
    assert code == 1 and stdout == ""
    assert stderr == (f"error: {path}:4: [inputs.{name}] expected a name that is not a "
                      "reserved word of the expression syntax, found "
                      f"'{name}' (write for example '{name}_')\n")


def test_compare_writes_no_unit_one_and_brackets_a_compound_square(cli, tmp_path):
    # a dimensionless measurand read "U 0.098 → 0.13 1" (0.131 at a glance) and the
    # variance of a quantity in 1/L as "+… 1/L²" (per square litre) instead of (1/L)²
    before = tmp_path / "a.toml"
    before.write_text(_PRODUCT + '[measurands.c]\nequation = "a * b / V"\nunit = "1/L"\n'
                      '[inputs.V]\nvalue = 100.0\nunit = "mL"\nu = 0.1\n')
    after = tmp_path / "b.toml"
    after.write_text(before.read_text().replace("u = 0.02", "u = 0.03")
                     .replace("u = 0.1\n", "u = 0.3\n"))
    code, stdout, stderr = cli("compare", str(before), str(after))
    assert code == 0, stderr
    lines = stdout.splitlines()
    assert "y: U 0.098 → 0.13 (+34 %); u_c 0.050 → 0.067 (+34 %); k 1.96 → 1.96" in lines
    assert "  u_c² changed by +0.002; the largest causes:" in lines
    assert any(line.startswith("  u_c² changed by ") and line.endswith(
        " (1/L)²; the largest causes:") for line in lines)
    assert not any(" 1²" in line or "1/L²" in line for line in lines)
    page = tmp_path / "c.html"
    code, _, _ = cli("compare", str(before), str(after), "--html", str(page))
    text = page.read_text()
    assert "change of (c·u)² / (1/L)²" in text and "/ 1²" not in text


def test_validation_warning_writes_no_unit_one(cli, tmp_path):
    # "does not validate the GUM result at 0.0005 1 (d_low …" read as 0.00051
    path = tmp_path / "product.toml"
    path.write_text(_PRODUCT)
    code, stdout, stderr = cli("run", str(path), "--trials", "1000", "--json")
    warning = next(w for w in json.loads(stdout)["warnings"] if "does not validate" in w)
    assert warning.startswith("'y': Monte Carlo does not validate the GUM result at 0.0005 "
                              "(d_low = ")


@pytest.mark.parametrize("statement, key, why", [
    ("u = 0.1\nbeta = 0.5", "beta", "to a normal distribution"),
    ('distribution = "student_t"\nu = 0.1\ndof = 4\ninexactness = 0.01', "inexactness",
     "to a student_t distribution"),
    ("expanded = 0.2\nk = 2\nbeta = 0.5", "beta", "to an expanded uncertainty 'expanded'"),
])
def test_a_width_key_of_a_bounded_shape_is_not_ignored(cli, tmp_path, statement, key, why):
    # beta = 0.5 beside a normal u was read and silently ignored
    path = tmp_path / "ignored.toml"
    path.write_text('title = "ignored"\n[measurands.y]\nequation = "b"\n[inputs.b]\n'
                    f"value = 3.0\n{statement}\n")
    line = 6 + statement.split("\n").index(next(s for s in statement.split("\n")
                                                 if s.startswith(key + " ")))
    code, stdout, stderr = cli("check", str(path))
    assert code == 1 and stdout == ""
    assert stderr == f"error: {path}:{line}: [inputs.b] {key}: '{key}' does not apply {why}\n"


@pytest.mark.parametrize("table, line", [("[inputs.b]", 5), ("[measurands.y]", 3)])
def test_free_text_must_be_text(cli, tmp_path, table, line):
    # description = 5 or source = ["a"] was accepted and shown as Python prints it
    text = ('title = "text"\n[measurands.y]\nequation = "b"\n[inputs.b]\nvalue = 3.0\n'
            "u = 0.2\n")
    path = tmp_path / "text.toml"
    path.write_text(text.replace(f"{table}\n", f"{table}\ndescription = 5\n"))
    code, stdout, stderr = cli("check", str(path))
    assert code == 1 and stdout == ""
    assert stderr == (f"error: {path}:{line}: {table} description: expected a text string, "
                      "found 5\n")
