"""Edges at the ends of double precision and of the Python API: an underflow or an
overflow is told as such, never as a stationary point or a division by zero; careless
arguments and empty tables are refused by name."""

from __future__ import annotations

import math
import re
from typing import Any

import numpy as np
import pytest

import budget
from budget import BudgetError, parse_model, propagate

from conftest import MODELS

_A2 = MODELS / "reference" / "eurachem-a2-naoh.toml"


def _model(equation: str, **inputs: tuple[float, float]) -> str:
    text = f'title = "t"\n[measurands.y]\nequation = "{equation}"\n'
    for name, (value, u) in inputs.items():
        text += f"[inputs.{name}]\nvalue = {value!r}\nu = {u!r}\n"
    return text


# 1. underflow: c·u(x) = 1e-402 is 0 in double precision, not a stationary point

_UNDERFLOWS = {
    # y = a·b: y = 1e-400 and each c·u = 1e-402 are below the smallest double
    "product": _model("a * b", a=(1e-200, 1e-202), b=(1e-200, 1e-202)),
    # y = a·b·c: the sensitivities b·c, a·c, a·b are 1e-400 (underflow inside the sweep)
    "sensitivities": _model("a * b * c", a=(1e-200, 1e-202), b=(1e-200, 1e-202),
                            c=(1e-200, 1e-202)),
    # y = a/c = 1e-300 is fine, but ∂y/∂c = -a/c² = -1e-400 is not: u(c)·c = 1e-302 lost
    "one derivative": _model("a / c", a=(1e-200, 1e-202), c=(1e100, 1e98)),
}


@pytest.mark.parametrize("case", sorted(_UNDERFLOWS))
def test_underflow_is_told_as_such(case: str) -> None:
    result = propagate(parse_model(_UNDERFLOWS[case], "tiny.toml"))
    warnings = " ".join(result.warnings)
    assert "'y': floating-point underflow at the estimates" in warnings
    assert "rescale the units" in warnings
    # never the stationary-point reading of u_c = 0
    assert "zero to first order" not in warnings
    if result.measurands[0].combined_uncertainty == 0.0:
        assert "u_c = 0 here is not a stationary point" in warnings


def test_underflow_reaches_the_command_line(cli, tmp_path) -> None:
    path = tmp_path / "tiny.toml"
    path.write_text(_UNDERFLOWS["product"])
    code, _, stderr = cli("run", str(path), "--trials", "0")
    assert code == 0
    assert stderr.count("warning: 'y': floating-point underflow") == 1


def test_scaled_models_and_true_stationary_points_keep_their_warnings() -> None:
    # the same product in units 1e200 times larger: y = 1, nothing underflows
    plain = propagate(parse_model(_model("a * b", a=(1.0, 0.01), b=(1.0, 0.01))))
    assert plain.warnings == ()
    assert plain.measurands[0].combined_uncertainty == pytest.approx(math.sqrt(2) * 0.01)
    # contributions of 1e-200 are still representable: no warning (docs/limits.md)
    small = propagate(parse_model(_model("a + b", a=(0.0, 1e-200), b=(0.0, 1e-200))))
    assert small.warnings == ()
    # y = a² at a = 0: a true stationary point (dy/da = 2a = 0)
    flat = propagate(parse_model(_model("a ** 2", a=(0.0, 0.1))))
    assert any("zero to first order" in w for w in flat.warnings)
    assert not any("underflow" in w for w in flat.warnings)


def test_a_negligible_underflowed_contribution_is_not_warned() -> None:
    # c·u(b) = 1e-200·1e-202 underflows, but beside c·u(a) = 1 it is 10⁻⁴⁰² of u_c
    result = propagate(parse_model(_model("a + b * 1e-200", a=(1.0, 1.0), b=(1.0, 1e-202))))
    assert result.warnings == ()
    assert result.measurands[0].combined_uncertainty == 1.0


def test_underflow_is_named_for_its_own_measurand() -> None:
    text = _UNDERFLOWS["product"] + '[measurands.z]\nequation = "a + b"\n'
    warnings = propagate(parse_model(text)).warnings
    assert any(w.startswith("'y': floating-point underflow") for w in warnings)
    assert not any(w.startswith("'z'") for w in warnings)


# 2. overflow at the estimates: not "a division by zero or a function outside its domain"

@pytest.mark.parametrize("equation, found", [
    ("a * b", "found inf ('a * b' overflows"),
    ("exp(a)", "found inf ('exp(a)' overflows"),
    ("-a * b", "found -inf ('-a * b' overflows"),
    ("1 / (b - b)", "found inf (a division by zero or a function outside its domain in "
                    "'1 / (b - b)')"),
    ("log(a - a)", "found -inf (a division by zero or a function outside its domain"),
    ("sqrt(-a)", "found nan (a division by zero or a function outside its domain")])
def test_overflow_at_the_estimates_is_named(cli, tmp_path, equation: str, found: str) -> None:
    path = tmp_path / "huge.toml"
    path.write_text(_model(equation, a=(1e200, 1e198), b=(1e200, 1.0)))
    code, stdout, stderr = cli("run", str(path), "--trials", "0")
    assert code == 1 and stdout == ""
    assert stderr.startswith(f"error: {path}:3: [measurands.y] equation: expected a finite "
                             "value at the estimates, ")
    assert found in stderr
    assert ("overflows" in found) == ("rescale the units" in stderr)


def test_overflowing_sensitivity_is_named(cli, tmp_path) -> None:
    # y = 1/a = 1e160 is finite; dy/da = -1/a² = -1e320 is not
    path = tmp_path / "huge.toml"
    path.write_text(_model("1 / a", a=(1e-160, 1e-162)))
    code, _, stderr = cli("check", str(path))
    assert code == 1
    assert stderr == (f"error: {path}:3: [measurands.y] equation: expected finite sensitivity "
                      "coefficients at the estimates, found none for a (the derivative of "
                      "'1 / a' overflows: a result beyond ±1.8e308 from finite numbers; "
                      "rescale the units so that the numbers stay within about 1e±300)\n")


def test_overflow_of_one_measurand_beside_a_division_by_zero_of_another() -> None:
    text = _model("a * a", a=(1e200, 1.0), b=(0.0, 1.0)) + '[measurands.z]\nequation = "1 / b"\n'
    with pytest.raises(BudgetError, match=re.escape("found inf ('a * a' overflows")):
        propagate(parse_model(text))
    text = _model("a", a=(1e200, 1.0), b=(0.0, 1.0)) + (
        '[measurands.z]\nequation = "1 / b"\n[measurands.w]\nequation = "a * a"\n')
    with pytest.raises(BudgetError, match=re.escape("found inf (a division by zero")):
        propagate(parse_model(text))


# 4. combine takes numbers, not bools

@pytest.mark.parametrize("values, covariance, message", [
    ([True, 2], [[1, 0], [0, 1]], "expected values as numbers, found bool True"),
    ([1, np.bool_(False)], [[1, 0], [0, 1]], "expected values as numbers, found bool np.False_"),
    ([1, 2], [[1, False], [0, 1]], "expected covariance as numbers, found bool False"),
    ([1.0], [[True]], "expected covariance as numbers, found bool True"),
    (np.array([True, False]), [[1, 0], [0, 1]], "expected values as numbers, found ndarray")])
def test_combine_refuses_bools(values: Any, covariance: Any, message: str) -> None:
    with pytest.raises(BudgetError, match=re.escape(message)):
        budget.combine(values, covariance)


def test_combine_still_takes_mixed_numbers() -> None:
    # a list mixing ints, floats and numpy scalars, a covariance of arrays and lists
    combined = budget.combine([1, np.float64(2.0)], [np.array([1, 0]), [0, 1]])
    assert combined.estimate == 1.5
    assert combined.standard_uncertainty == pytest.approx(math.sqrt(0.5))


def test_expanded_uncertainty_beyond_the_range_is_an_error(cli, tmp_path) -> None:
    # u_c = 1e308 is a double, U = 1.96e308 is not: the line read "y = (0 ± 0)", JSON null
    path = tmp_path / "huge.toml"
    path.write_text(_model("a", a=(0.0, 1e308)))
    code, stdout, stderr = cli("run", str(path), "--trials", "0")
    assert code == 1 and stdout == ""
    assert stderr == (f"error: {path}:3: [measurands.y] equation: the expanded uncertainty "
                      "U = k·u_c of 'y' overflows: beyond the floating-point range (±1.8e308) "
                      "with k = 1.96 and u_c = 1e+308; rescale the units\n")


# 3. Monte Carlo moments of values near the top of double precision

@pytest.mark.filterwarnings("error")  # nor does numpy's overflow warning escape
def test_monte_carlo_mean_of_values_near_the_top_of_the_range() -> None:
    # a block of 65,536 values of 1.6e308 sums to ∞: the mean was ∞ and u was 0; for a
    # normal input the mean and standard deviation of the draws estimate x and u
    model = parse_model(_model("a", a=(1.6e308, 1e306)))
    found = budget.simulate(model, trials=100_000, seed=1).measurands[0]
    assert found.mean == pytest.approx(1.6e308, rel=1e-4)
    assert found.standard_uncertainty == pytest.approx(1e306, rel=0.02)
    assert found.interval[0] == pytest.approx(1.6e308 - 1.96e306, rel=1e-4)


@pytest.mark.filterwarnings("error")
@pytest.mark.parametrize("value, u", [(0.0, 1e200), (1e304, 1e302)])
def test_unrepresentable_running_moments_are_refused(value: float, u: float) -> None:
    # a run that keeps no values has only its running sums: n·u² beyond ±1.8e308 gave
    # u = ∞ (printed 0) and a "validated" GUM result
    model = parse_model(_model("a", a=(value, u)), "wide.toml")
    with pytest.raises(BudgetError, match=re.escape(
            "wide.toml:3: [measurands.y] equation: expected a Monte Carlo mean and standard "
            "deviation within ±1.8e308, found ")) as caught:
        budget.simulate(model, trials=100_000, seed=1, keep_samples=False)
    assert "rescale the units, or give at most 10⁷ trials" in str(caught.value)
    # kept, the same run is recomputed in scaled units: u is right
    kept = budget.simulate(model, trials=100_000, seed=1).measurands[0]
    assert kept.standard_uncertainty == pytest.approx(u, rel=0.02)


# 5. an empty lots table

@pytest.mark.parametrize("estimates, uncertainties, key", [
    ({"V_T": []}, None, "estimates"),
    ({"V_T": np.array([]), "m_KHP": []}, None, "estimates"),
    ({}, {"V_T": []}, "uncertainties")])
def test_a_table_of_no_lots_is_refused(estimates: Any, uncertainties: Any, key: str) -> None:
    from budget.lots import propagate_lots

    # it gave arrays of 0 rows without a word: a filter that kept nothing went unnoticed
    with pytest.raises(BudgetError, match=re.escape(
            f"eurachem-a2-naoh.toml: {key}: expected at least one lot (one value per lot in "
            "each column), found columns of 0 values")):
        propagate_lots(budget.load_model(_A2), estimates, uncertainties)


def test_a_data_frame_of_no_rows_is_refused() -> None:
    pd = pytest.importorskip("pandas")
    from budget.lots import propagate_lots

    table = pd.DataFrame({"V_T": [18.64, 19.2]})
    with pytest.raises(BudgetError, match="estimates: expected at least one lot"):
        propagate_lots(budget.load_model(_A2), table[table["V_T"] > 100])


# 6. LotBudgets and Batch in a notebook

def test_lot_budgets_show_themselves() -> None:
    from budget.lots import propagate_lots
    from test_notebook import _check_html

    model = budget.load_model(_A2)
    lots = propagate_lots(model, {"V_T": [18.64, 19.21, 18.20]})
    assert repr(lots) == "<LotBudgets of c_NaOH: 3 lots, 5 inputs>"
    text = lots._repr_html_()
    assert text.lstrip().startswith('<div class="budget-nb">')
    _check_html(text)
    # each lot's row holds the numbers propagate gives for that lot
    one = propagate(model.with_value("V_T", 19.21)).measurands[0]
    from budget._notebook import short

    value, u = short(one.estimate, one.combined_uncertainty)
    expanded = short(one.estimate, one.expanded_uncertainty)[1]
    assert (f"<td>2</td><td>c_NaOH</td><td>{value}</td><td>{u}</td><td>∞</td>"
            f"<td>{one.coverage_factor:.3g}</td><td>{expanded}</td>") in text
    assert "Linear (GUM) budgets of 3 lots, 5 inputs" in text


def test_many_lots_show_the_first_hundred() -> None:
    from budget.lots import propagate_lots

    lots = propagate_lots(budget.load_model(_A2), {"V_T": np.linspace(18.0, 19.0, 250)})
    assert repr(lots) == "<LotBudgets of c_NaOH: 250 lots, 5 inputs>"
    text = lots._repr_html_()
    assert text.count("<tr>") == 1 + 100  # the header and the first 100 lots
    assert "the first 100 of 250 lots are shown" in text


def test_a_batch_shows_itself(tmp_path) -> None:
    import shutil

    from budget.batch import certify_folder
    from test_notebook import _check_html

    demo = _A2.parent.parent / "vics-as-25a"
    for name in ("good", "broken"):
        shutil.copytree(demo, tmp_path / name,
                        ignore=shutil.ignore_patterns("campaign-methods.toml"))
    (tmp_path / "broken" / "determinations.csv").write_text("nonsense\n")
    batch = certify_folder(tmp_path, trials=0, workers=1)
    assert repr(batch) == (f"<Batch of 2 campaign(s) under {batch.folder}: 1 certified, "
                           "1 failed>")
    text = batch._repr_html_()
    assert text.lstrip().startswith('<div class="budget-nb">')
    checker = _check_html(text)
    assert checker.tags.count("tr") == 3 and "svg" in checker.tags
    assert "good/campaign.toml" in text and "failed: " in text
    assert "2 campaign(s): 1 certified, 1 failed." in text


# 7. the line of an input named by an error found after reading

def test_an_overflowing_contribution_names_the_line_of_its_input(cli, tmp_path) -> None:
    # c = a = 1e200 and u(b) = 1e200: c·u(b) = 1e400; "[inputs.b]" came without its line
    path = tmp_path / "huge.toml"
    path.write_text(_model("a * b", a=(1e200, 1.0), b=(1.0, 1e200)))
    code, _, stderr = cli("run", str(path), "--trials", "0")
    assert code == 1
    assert stderr == (f"error: {path}:7: [inputs.b] the contribution c·u(x) of 'b' to 'y' "
                      "overflows: beyond the floating-point range (±1.8e308); rescale the "
                      "units\n")


def test_inputs_keep_the_line_of_their_table() -> None:
    model = parse_model(_model("a * b", a=(1.0, 0.1), b=(2.0, 0.1)), "m.toml")
    assert [i.line for i in model.inputs] == [4, 7]
    # a what-if keeps it: the input is still the one written there
    assert model.with_uncertainty("b", factor=2.0).input("b").line == 7


@pytest.mark.parametrize("equation, columns, cause", [
    ("a * b", {"a": [1.0, 1e200], "b": [1.0, 1e200]},
     "found inf at lot 2 (position 1) ('a * b' overflows: a result beyond ±1.8e308"),
    ("a / b", {"b": [1.0, 0.0]},
     "found inf at lot 2 (position 1) (a division by zero or a function outside its domain "
     "in 'a / b')"),
    ("a / b", {"b": [1.0, 1e-160]},
     "found none for b at lot 2 (position 1) (the derivative of 'a / b' overflows")])
def test_many_lots_tell_an_overflow_from_a_division_by_zero(equation: str, columns: Any,
                                                           cause: str) -> None:
    from budget.lots import propagate_lots

    model = parse_model(_model(equation, a=(1.0, 0.1), b=(1.0, 0.1)), "m.toml")
    with pytest.raises(BudgetError, match=re.escape(cause)):
        propagate_lots(model, columns)


def test_a_coverage_from_the_file_is_named_as_the_file_s_setting(cli, tmp_path) -> None:
    # the file's coverage reached simulate as an argument: "m.toml: coverage: …" without
    # the table that holds it
    path = tmp_path / "m.toml"
    path.write_text(_model("a", a=(1.0, 1.0)) + '[settings]\ntrials = "adaptive"\n'
                    "coverage = 0.9999999\n")
    code, _, stderr = cli("run", str(path))
    assert code == 1
    assert stderr.startswith(f"error: {path}: [settings] coverage: expected a coverage "
                             "probability whose adaptive batches fit the limit")
