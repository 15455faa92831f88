"""Limits and edges (issue 17): every request beyond a documented limit is one clean
``BudgetError`` naming the limit, refused before the work starts; numbers at the edges of
the floating-point range give representable results or a clean refusal.

The limits themselves are the project's own choices, documented in docs/limits.md; the
numeric checks compare against plain arithmetic (no outside reference is needed to know
that u_c of y = a with u(a) = 1e200 is 1e200)."""

from __future__ import annotations

import math
import os
import subprocess
import sys
from fractions import Fraction

import pytest

from budget._analysis import evaluate
from budget._errors import BudgetError, InputError, SimulationError
from budget._gum import propagate
from budget._model import parse_model

from conftest import ROOT

HEAD = ('title = "t"\n[measurands.y]\nequation = "{eq}"\n[inputs.a]\nvalue = 2.0\n'
        'unit = "{unit}"\nu = 0.1\n')
LIMITS = "(limits: docs/limits.md)"


def text(eq: str = "a", unit: str = "g", extra: str = "") -> str:
    return HEAD.format(eq=eq, unit=unit) + extra


NESTED = ": [measurands.y] equation: expected an expression nested at most 100 deep " \
    "(brackets, powers, function calls and signs; limits: docs/limits.md), found deeper nesting"
EXPRESSION = ":3: [measurands.y] equation: "
CASES = {
    "comment": (text("a * 2 # - a"), EXPRESSION + "expected only names, numbers, + - * / ** "
                "and parentheses, found U+0023 NUMBER SIGN at column 7 (comments are not part "
                "of an expression)"),
    "semicolon": (text("a; a"), EXPRESSION + "expected only names, numbers, + - * / ** and "
                  "parentheses, found U+003B SEMICOLON at column 2"),
    "backslash": (text("a \\\\ a"), EXPRESSION + "expected only names, numbers, + - * / ** and "
                  "parentheses, found U+005C REVERSE SOLIDUS at column 3"),
    "non_ascii": (text("a * \u00b5"), EXPRESSION + "expected only names, numbers, + - * / ** "
                  "and parentheses, found U+00B5 MICRO SIGN at column 5"),
    "escape": (text("a\\u001b[2J"), EXPRESSION + "expected text without control characters, "
               "found U+001B ESCAPE at position 2"),
    "tower": (text("**".join(["a"] * 500), unit="1"), ":3" + NESTED),
    "signs": (text("-" * 150 + "a"), ":3" + NESTED),
    "huge_power": (text("a * 10**10**10"), EXPRESSION + "expected an exponent of at most 1000 "
                   f"in size {LIMITS}, found '10**10**10' with an exponent of 1e+10"),
    "tower_of_nines": (text("a * 9**9**9"), EXPRESSION + "expected an exponent of at most "
                       f"1000 in size {LIMITS}, found '9**9**9' with an exponent of 3.87e+08"),
    "float_exponent": (text("a ** 1e308", unit="1"), EXPRESSION + "expected an exponent of at "
                       f"most 1000 in size {LIMITS}, found 'a ** 1e308' with an exponent of "
                       "1e+308"),
    "exact_digits": (text("a * (10**100)**100"), EXPRESSION + "expected exact numbers of at "
                     f"most 1000 digits {LIMITS}, found '(10**100)**100' of about 10000 digits"),
    "long_number": (text("a * " + "9" * 5000), EXPRESSION + "expected numbers of at most 100 "
                    f"digits {LIMITS}, found one of 5000 digits"),
    "number_of_101_digits": (text("a * 1_" + "0" * 99), EXPRESSION + "expected numbers of "
                             f"at most 100 digits {LIMITS}, found one of 101 digits"),
    "overflowing_literal": (text("a * 1e400"), EXPRESSION + "expected a finite number, found "
                            "'1e400' (beyond the floating-point range of ±1.8e308)"),
    "irrational_exponent": (text("a ** sqrt(2)", unit="m"), EXPRESSION + "expected a rational "
                            "exponent (at most 1000 in size, denominator at most 10**6) for a "
                            "quantity in [length], found 'sqrt(2)'"),
    "long_unit": (text(unit="m*" * 50000 + "m"), ":6: [inputs.a] unit: expected a unit of at "
                  f"most 200 characters {LIMITS}, found one of 100,001"),
    "unit_overflow": (text(unit="Yg**20"), ":6: [inputs.a] unit: expected a unit whose size in "
                      "SI base units is a floating-point number, found 'Yg**20' (out of range)"),
    "huge_integer": (text(extra="[inputs.b]\nvalue = 1" + "0" * 400 + "\nu = 1\n"),
                     ":9: [inputs.b] value: expected a number within ±1.8e308, found an "
                     "integer of 401 digits"),
    "level_tiny": (text(extra="[inputs.b]\nvalue = 1\nexpanded = 1\nlevel = 1e-17\n"),
                   ":11: [inputs.b] level: expected a coverage probability 'level' in "
                   f"[1e-06, 1 - 1e-09] {LIMITS}, found 1e-17"),
    "level_one": (text(extra="[inputs.b]\nvalue = 1\nexpanded = 1\nlevel = 0.9999999999999999\n"),
                  ":11: [inputs.b] level: expected a coverage probability 'level' in "
                  f"[1e-06, 1 - 1e-09] {LIMITS}, found 0.9999999999999999"),
    "reliability_tiny": (text(extra="[inputs.b]\nvalue = 1\nu = 1\nreliability = 1e-200\n"),
                         ":11: [inputs.b] reliability: expected a reliability of at least "
                         "1e-100 (then ν = 1/(2 r²) is a finite number; limits: "
                         "docs/limits.md), found 1e-200"),
    "observation_huge_int": (text(extra="[inputs.b]\nobservations = [1, 1" + "0" * 400 + "]\n"),
                             ":9: [inputs.b] observations: expected finite numbers within "
                             "±1.8e308, found an integer of 401 digits at position 2"),
    "digits_1000": (text(extra="[settings]\ndigits = 1000\n"), ":9: [settings] digits: "
                    "expected a whole number of significant digits from 1 to 6, found 1000"),
    "trials_huge": (text(extra="[settings]\ntrials = 1000000000000\n"), ":9: [settings] "
                    "trials: expected at most 250,000,000 Monte Carlo trials (a run that "
                    "long keeps about 1 byte per trial for its intervals; limits: "
                    "docs/limits.md; use the adaptive procedure to stop when the results are "
                    "stable), found 1,000,000,000,000"),
    "seed_huge": (text(extra="[settings]\nseed = 1" + "0" * 30 + "\n"), ":9: [settings] seed: "
                  "expected a whole-number seed from 0 to 2**64 - 1, found a whole number of "
                  "31 digits"),
    "coverage_one": (text(extra="[settings]\ncoverage = 0.9999999999999999\n"),
                     ":9: [settings] coverage: expected a coverage probability in "
                     f"[1e-06, 1 - 1e-09] {LIMITS}, found 0.9999999999999999"),
    "title_newline": ('title = "t\\nerror: forged"\n' + text()[12:], ":1: title: expected "
                      "text without control characters, found U+000A LINE FEED at position 2"),
    "unit_escape": (text(unit="g\\u001b]0;x\\u0007"), ":6: [inputs.a] unit: expected text "
                    "without control characters, found U+001B ESCAPE at position 2"),
    "toml_nesting": (text(extra="[settings]\nx = " + "[" * 20000 + "]" * 20000 + "\n"),
                     ": expected TOML nested at most a few hundred levels deep (limits: "
                     "docs/limits.md), found deeper nesting"),
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_limit_is_one_clean_error(name: str) -> None:
    source, message = CASES[name]
    with pytest.raises(BudgetError) as caught:
        parse_model(source, name=f"{name}.toml")
    assert str(caught.value) == f"{name}.toml{message}"


def test_a_root_that_is_not_1_1000_keeps_its_exponent() -> None:
    model = parse_model(text("a ** (1/1001)", unit="m"), name="root.toml")
    assert model.measurands[0].unit == "m**(1/1001)"
    # the unit text reads back as the same unit (pint parses it)
    from budget._units import parse_unit
    from budget._errors import Location

    assert parse_unit("m**(1/1001)", Location()).unit.dims == (("[length]",
                                                                 Fraction(1, 1001)),)


def test_representable_inputs_give_representable_uncertainties() -> None:
    # plain arithmetic: y = a + b with u(a) = u(b) = 1e200 gives u_c = √2·1e200
    for u in (1e200, 1e-200):
        source = ('title = "t"\n[measurands.y]\nequation = "a + b"\n[inputs.a]\nvalue = 0\n'
                  f'u = {u!r}\n[inputs.b]\nvalue = 0\nu = {u!r}\n')
        budget = propagate(parse_model(source)).measurands[0]
        assert budget.combined_uncertainty == pytest.approx(math.sqrt(2) * u, rel=1e-12)
        assert budget.contributions[0].share == pytest.approx(50.0)


def test_extreme_observations_give_a_finite_type_a_uncertainty() -> None:
    source = text(extra="[inputs.b]\nobservations = [1e308, -1e308]\n")
    b = parse_model(source).input("b")
    # mean 0, s = √2·1e308, u = s/√2 = 1e308 (plain arithmetic)
    assert b.estimate == 0.0 and b.standard_uncertainty == pytest.approx(1e308, rel=1e-12)


def test_unresolved_monte_carlo_spread_is_never_validated() -> None:
    source = ('title = "t"\n[measurands.y]\nequation = "a"\n[inputs.a]\nvalue = 1e17\nu = 1\n')
    result = evaluate(parse_model(source), trials=10_000, seed=1)
    validation = result.simulation.measurands[0].validation
    assert validation.validated is False
    assert validation.reason.startswith("the spread is not resolved in double precision")
    assert any("cannot validate" in w for w in result.warnings)


def test_trials_beyond_the_limit_are_refused_before_any_allocation() -> None:
    model = parse_model(text())
    with pytest.raises(InputError, match="expected at most 250,000,000 Monte Carlo trials"):
        evaluate(model, trials=10 ** 12)


def test_runs_that_keep_every_value_are_refused_beyond_their_limit() -> None:
    """p ≤ ½ keeps every value (its shortest interval needs half of them): 8 bytes each,
    so such a run is refused above MAX_KEPT_VALUES before anything is allocated."""
    model = parse_model(text())
    with pytest.raises(InputError) as caught:
        evaluate(model, trials=150_000_000, coverage=0.5)
    assert "expected at most 100,000,000 Monte Carlo values for a run that keeps every one" \
        in str(caught.value)
    assert str(caught.value).endswith("found 150,000,000 trials × 1 measurand")


def test_adaptive_batches_beyond_the_cap_are_refused() -> None:
    model = parse_model(text())
    with pytest.raises(SimulationError) as caught:
        evaluate(model, adaptive=True, coverage=0.999999)
    assert str(caught.value).startswith(
        "<string>: coverage: expected a coverage probability whose adaptive batches fit the "
        "limit of 20,000,000 "
        "trials (p below 0.99999; JCGM 101 7.9 asks for batches of 100/(1 - p) = "
        "100,000,000 trials here), found 0.999999")


def test_device_files_are_read_within_the_size_limit(cli) -> None:
    code, stdout, stderr = cli("check", "/dev/zero")
    assert (code, stdout) == (1, "")
    assert stderr == ("error: /dev/zero: expected a model file of at most 16 MiB (limits: "
                      "docs/limits.md), found a larger file\n")


@pytest.mark.parametrize("args, message", [
    (["run", "--coverage", "nan"], "Invalid value for '--coverage': expected a coverage "
     "probability in [1e-6, 1 - 1e-9], found 'nan'"),
    (["run", "--coverage", "1e-300"], "Invalid value for '--coverage': expected a coverage "
     "probability in [1e-6, 1 - 1e-9], found '1e-300'"),
    (["explain", "--target", "nan"], "Invalid value for '--target': expected a positive "
     "finite number, found 'nan'"),
    (["run", "--trials", str(10 ** 12)], "Invalid value for '--trials': 1000000000000 is not "
     "in the range 0<=x<=250000000."),
])
def test_bad_numbers_on_the_command_line_exit_2(cli, args, message) -> None:
    model = ROOT / "models/reference/eurachem-a2-naoh.toml"
    code, stdout, stderr = cli(*args, str(model))
    assert (code, stdout) == (2, "")
    assert stderr.splitlines()[-1] == f"Error: {message}"


def test_ctrl_c_exits_130_without_a_traceback(cli, monkeypatch) -> None:
    import budget._analysis

    def interrupted(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(budget._analysis, "evaluate", interrupted)
    code, stdout, stderr = cli("run", str(ROOT / "models/reference/eurachem-a2-naoh.toml"))
    assert (code, stdout, stderr) == (130, "", "error: interrupted\n")


def test_closed_standard_output_is_an_error() -> None:
    model = ROOT / "models/reference/eurachem-a2-naoh.toml"
    for closing in ("", "import os; os.close(1); "):  # closed before or after start-up
        done = subprocess.run(
            [sys.executable, "-c", closing + "from budget._cli import main; main()", "check",
             str(model)], preexec_fn=None if closing else (lambda: os.close(1)),
            stderr=subprocess.PIPE, text=True, timeout=60)
        assert done.returncode == 1
        assert done.stderr in ("error: standard output is closed; the result could not be "
                               "written\n",
                               "error: could not write the output: Bad file descriptor\n")


def test_second_order_beyond_the_limit_is_refused_before_differentiating() -> None:
    names = [f"x{i}" for i in range(60)]
    source = ('title = "t"\n[measurands.y]\nequation = "' + " * ".join(names) + '"\n'
              + "".join(f"[inputs.{n}]\nvalue = 1.5\nu = 0.01\n" for n in names))
    with pytest.raises(BudgetError) as caught:
        propagate(parse_model(source, name="product.toml"), second_order=True)
    assert str(caught.value) == (
        "product.toml: expected at most 20 inputs with an uncertainty for the second-order "
        "terms (they need N² second and N³ third derivatives; limits: docs/limits.md), found 60")


def test_formula_counts_are_bounded() -> None:
    source = 'title = "t"\n[measurands.y]\nequation = "M"\n[inputs.M]\nformula = "C' + \
        "9" * 5000 + '"\n'
    with pytest.raises(BudgetError) as caught:
        parse_model(source, name="formula.toml")
    assert str(caught.value) == ("formula.toml:5: [inputs.M] formula: expected a formula of "
                                 "at most 1000 characters (limits: docs/limits.md), found 5001")
    source = source.replace("9" * 5000, "9" * 50)
    with pytest.raises(BudgetError) as caught:
        parse_model(source, name="formula.toml")
    assert str(caught.value) == ("formula.toml:5: [inputs.M] formula: expected counts of at "
                                 "most 9 digits in a formula (limits: docs/limits.md), found "
                                 "one of 50 digits")


def test_a_full_device_on_standard_output_is_an_error() -> None:
    model = ROOT / "models/reference/eurachem-a2-naoh.toml"
    with open("/dev/full", "w") as full:
        done = subprocess.run([sys.executable, "-m", "budget", "run", "--json", "--trials",
                               "0", str(model)], stdout=full, stderr=subprocess.PIPE,
                              text=True, timeout=60)
    assert done.returncode == 1
    assert done.stderr == "error: could not write the output: No space left on device\n"


def test_numpy_runtime_warnings_never_reach_standard_error(cli, tmp_path) -> None:
    # log of an input whose distribution reaches below zero in a few trials: numpy warns
    # "invalid value encountered in log"; the non-finite trials are counted and reported
    model = tmp_path / "log.toml"
    model.write_text('title = "t"\n[measurands.y]\nequation = "log(a)"\n[inputs.a]\n'
                     'value = 1\nu = 0.33\n', encoding="utf-8")
    code, stdout, stderr = cli("run", "--trials", "100000", str(model))
    assert code in (0, 1) and "RuntimeWarning" not in stderr
    assert all(line.startswith(("warning:", "error:")) for line in stderr.splitlines())


def test_control_characters_from_data_are_escaped_on_the_terminal(cli, tmp_path) -> None:
    import shutil

    folder = tmp_path / "batch"
    shutil.copytree(ROOT / "models" / "vics-as-25a", folder)
    (folder / "homogeneity.csv").write_text(
        "unit,value\nA\x1b[31m,99.98\nA\x1b[31m,99.99\nB\x07,99.98\nB\x07,99.97\n",
        encoding="utf-8")
    code, stdout, stderr = cli("certify", "--trials", "0", str(folder / "campaign.toml"))
    assert "\x1b" not in stdout + stderr and "\x07" not in stdout + stderr


def test_a_value_is_never_shown_with_more_digits_than_a_double_holds() -> None:
    from budget._formatting import format_pair

    # 17 significant digits: the precision of an IEEE 754 double (common practice)
    assert format_pair(1.0, 1e-200) == ("1.0000000000000000E+0", "1.0E-200")
    assert format_pair(123456.789, 1e-30)[0] == "123456.78900000000"


@pytest.mark.parametrize("options, message", [
    ({"coverage": math.nan}, "api.toml: coverage: expected a coverage probability in [1e-06, "
     "1 - 1e-09] (limits: docs/limits.md), found nan"),
    ({"digits": 1000}, "api.toml: digits: expected a whole number of significant digits from "
     "1 to 6, found 1000"),
])
def test_the_python_api_checks_the_same_limits(options, message) -> None:
    with pytest.raises(InputError) as caught:
        evaluate(parse_model(text(), name="api.toml"), trials=0, **options)
    assert str(caught.value) == message


def test_unreadable_inputs_are_one_error_line(cli, tmp_path) -> None:
    fifo = tmp_path / "model.toml"
    os.mkfifo(fifo)  # no writer: read as empty, never a hang
    for path, found in ((tmp_path, "expected a readable model file, found Is a directory"),
                        (fifo, "expected a TOML model, found an empty file")):
        code, stdout, stderr = cli("check", str(path))
        assert (code, stdout, stderr) == (1, "", f"error: {path}: {found}\n")


def test_a_key_with_a_control_character_is_named_in_its_table() -> None:
    source = text() + '[inputs."b\\u001b"]\nvalue = 1\nu = 1\n'
    with pytest.raises(BudgetError) as caught:
        parse_model(source, name="key.toml")
    assert str(caught.value) == ("key.toml: [inputs] b\\x1b: expected text without control "
                                 "characters, found U+001B ESCAPE at position 2")


def test_compare_with_huge_contributions_is_valid_json(cli, tmp_path) -> None:
    # found by the fuzzer: the squared contribution 1.5e200 overflowed in compare
    model = tmp_path / "huge.toml"
    model.write_text('title = "t"\n[measurands.y]\nequation = "a * b"\n[inputs.a]\n'
                     'value = 1.5\nu = 1e200\n[inputs.b]\nvalue = 1.5\nu = 0.1\n',
                     encoding="utf-8")
    code, stdout, stderr = cli("compare", "--json", str(model), str(model))
    assert code in (0, 1) and "Traceback" not in stderr
    if code == 0:
        import json

        json.loads(stdout, parse_constant=lambda name: pytest.fail(f"JSON holds {name}"))
    code, _, stderr = cli("compare", "--html", "/dev/null", str(model), str(model))
    assert (code, stderr) == (1, "error: /dev/null: expected a regular file or a new name "
                                 "for the output, found a character device\n")


def test_a_number_of_100_digits_is_read() -> None:
    """The limit's boundary: 100 characters of a number (digits and '_') are allowed."""
    from budget._model import parse_model

    model = parse_model(text("a * 1" + "0" * 99 + " / 1" + "0" * 99))
    assert model.measurands[0].equation.startswith("a * 1000")
