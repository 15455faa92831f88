"""The Python API with careless arguments, as a notebook passes them: each is refused with
a BudgetError naming the argument, what was expected and what was found — never a numpy,
attribute or type error from inside, never a silently wrong result."""

from __future__ import annotations

import re
from decimal import Decimal
from typing import Any

import numpy as np
import pytest

import budget
from budget import BudgetError
from budget import distributions as D

A2 = "models/reference/eurachem-a2-naoh.toml"
PURITY = "models/vics-as-25a/coulometric-purity.toml"


@pytest.fixture(scope="module")
def naoh() -> budget.Model:
    return budget.load_model(A2)


@pytest.mark.parametrize("trials, found", [
    ("1000", "str '1000'"), (1000.0, "float 1000.0"), ([1000], "list [1000]"),
    (float("nan"), "float nan"), (True, "bool True"), (-5, "int -5")])
def test_trials_must_be_a_whole_number(naoh: budget.Model, trials: Any, found: str) -> None:
    with pytest.raises(BudgetError, match=f"trials: expected a whole number of trials ≥ 0.*"
                                          f"found {re.escape(found)}"):
        budget.evaluate(naoh, trials=trials, seed=1)
    with pytest.raises(BudgetError, match="trials: expected a whole number"):
        budget.simulate(naoh, trials=trials, seed=1)


def test_numpy_integers_are_whole_numbers(naoh: budget.Model) -> None:
    run = budget.simulate(naoh, trials=np.int64(1000), seed=np.array(7))
    assert (run.trials, run.seed) == (1000, 7) and type(run.seed) is int


@pytest.mark.parametrize("seed", ["1", 1.5, -1, 2 ** 64, True, [1]])
def test_seed_argument_is_checked_as_the_file_key(naoh: budget.Model, seed: Any) -> None:
    with pytest.raises(BudgetError, match="seed: expected a whole-number seed from 0 to "
                                          "2\\*\\*64 - 1"):
        budget.evaluate(naoh, trials=1000, seed=seed)


@pytest.mark.parametrize("workers", ["2", 2.5, 0, -1, 1000])
def test_workers_argument(naoh: budget.Model, workers: Any) -> None:
    with pytest.raises(BudgetError, match="workers: expected None or a whole number of "
                                          "workers from 1 to 256"):
        budget.simulate(naoh, trials=1000, seed=1, workers=workers)


@pytest.mark.parametrize("name, value", [
    ("adaptive", "no"), ("keep_samples", "yes"), ("keep_samples", 1)])
def test_yes_no_arguments_take_booleans_only(naoh: budget.Model, name: str,
                                             value: Any) -> None:
    # adaptive="no" is truthy: it used to start an adaptive run of a million trials
    with pytest.raises(BudgetError, match=f"{name}: expected True"):
        budget.simulate(naoh, trials=1000, seed=1, **{name: value})


def test_second_order_takes_a_boolean(naoh: budget.Model) -> None:
    with pytest.raises(BudgetError, match="second_order: expected True or False, found "
                                          "str 'no'"):
        budget.propagate(naoh, second_order="no")  # type: ignore[arg-type]


def test_progress_must_be_callable(naoh: budget.Model) -> None:
    with pytest.raises(BudgetError, match="progress: expected None or a function"):
        budget.evaluate(naoh, trials=1000, seed=1, progress=5)  # type: ignore[arg-type]


@pytest.mark.parametrize("coverage", [2, 1.0, float("nan"), "0.95"])
def test_simulate_checks_its_coverage(naoh: budget.Model, coverage: Any) -> None:
    # simulate(coverage=2) used to run and report a "200 %" interval
    with pytest.raises(BudgetError, match="coverage: expected a coverage probability in"):
        budget.simulate(naoh, trials=1000, seed=1, coverage=coverage)


@pytest.mark.parametrize("coverage", ["0.95", [0.95], 0.0])
def test_propagate_checks_its_coverage(naoh: budget.Model, coverage: Any) -> None:
    with pytest.raises(BudgetError, match="coverage: expected a coverage probability in"):
        budget.propagate(naoh, coverage=coverage)


@pytest.mark.parametrize("digits", ["a", 0, 7, 2.0])
def test_simulate_checks_its_digits(naoh: budget.Model, digits: Any) -> None:
    with pytest.raises(BudgetError, match="digits: expected a whole number of significant"):
        budget.simulate(naoh, adaptive=True, seed=1, digits=digits)


@pytest.mark.parametrize("function", [budget.evaluate, budget.propagate, budget.simulate])
@pytest.mark.parametrize("model", [A2, None, {"inputs": {}}])
def test_a_model_argument_must_be_a_model(function: Any, model: Any) -> None:
    name = function.__name__
    with pytest.raises(BudgetError, match=f"{name}\\(\\): model: expected a budget.Model "
                                          "\\(budget.load_model\\(path\\) reads one\\)"):
        function(model)


def test_simulate_refuses_the_budget_of_another_model(naoh: budget.Model) -> None:
    other = budget.propagate(budget.load_model(PURITY))
    with pytest.raises(BudgetError, match="budget: expected the budget of this model"):
        budget.simulate(naoh, other, trials=1000, seed=1)
    with pytest.raises(BudgetError, match="budget: expected None or the budget.Budget"):
        budget.simulate(naoh, "budget", trials=1000, seed=1)  # type: ignore[arg-type]


def test_simulate_refuses_the_budget_before_a_what_if(naoh: budget.Model) -> None:
    # validating the what-if's Monte Carlo against the original budget gave wrong d_low
    before = budget.propagate(naoh)
    halved = naoh.with_uncertainty("V_T", factor=0.5)
    with pytest.raises(BudgetError, match="budget: expected the budget of this model"):
        budget.simulate(halved, before, trials=1000, seed=1)
    budget.simulate(halved, budget.propagate(halved), trials=1000, seed=1)


def test_simulate_refuses_a_budget_at_another_coverage(naoh: budget.Model) -> None:
    with pytest.raises(BudgetError, match="budget: expected the budget at the coverage "
                                          "probability of the simulation \\(0.99\\)"):
        budget.simulate(naoh, budget.propagate(naoh), trials=1000, seed=1, coverage=0.99)
    run = budget.simulate(naoh, budget.propagate(naoh, 0.99), trials=1000, seed=1,
                          coverage=0.99)
    assert run.measurands[0].validation is not None


@pytest.mark.parametrize("name", [0, None, b"c_NaOH"])
def test_lookup_by_something_not_a_name(naoh: budget.Model, name: Any) -> None:
    found = budget.propagate(naoh)
    with pytest.raises(KeyError, match="expected the name of a measurand \\(a string\\), "
                                       "found .*; expected one of c_NaOH") as caught:
        found.measurand(name)
    assert isinstance(caught.value, BudgetError)
    with pytest.raises(BudgetError, match="expected the name of an? input"):
        naoh.input(name)


# budget.lots.propagate_lots: a lots table as a lab has it (a DataFrame with gaps, a column
# typed as text) must never give NaN budgets or a numpy message

def _lots(*args: Any, **kwargs: Any) -> Any:
    from budget.lots import propagate_lots

    return propagate_lots(*args, **kwargs)


@pytest.mark.parametrize("column, found", [
    ([18.6, float("nan")], "nan at lot 2 (position 1)"),
    ([18.6, float("inf")], "inf at lot 2 (position 1)"),
    ([18.6, None], "None at lot 2 (position 1)"),
    ([18.6, "x"], "'x' at lot 2 (position 1)"),
    ([18.6, "18.7"], "'18.7' at lot 2 (position 1)"),
    ([True, 18.6], "True at lot 1 (position 0)")])
def test_lots_refuse_a_cell_that_is_not_a_finite_number(naoh: budget.Model, column: Any,
                                                        found: str) -> None:
    with pytest.raises(BudgetError, match=re.escape(
            f"estimates['V_T']: expected a finite number for every lot, found {found}")):
        _lots(naoh, {"V_T": column})


def test_lots_name_the_row_of_a_dataframe(naoh: budget.Model) -> None:
    import pandas as pd

    table = pd.DataFrame({"V_T": [18.6, None, 18.7], "m_KHP": [0.38, 0.39, 0.40]},
                         index=["A-1", "A-2", "A-3"])
    with pytest.raises(BudgetError, match=re.escape(
            "found nan at lot 2 (position 1, row 'A-2')")):
        _lots(naoh, table)
    fine = _lots(naoh, table.dropna())
    assert fine.estimate.shape == (2, 1) and np.isfinite(fine.expanded_uncertainty).all()


@pytest.mark.parametrize("column", [-0.01, float("nan")])
def test_lots_refuse_a_negative_or_missing_uncertainty(naoh: budget.Model,
                                                       column: float) -> None:
    # a negative u used to be squared away into a plausible-looking U
    with pytest.raises(BudgetError, match=re.escape(
            "uncertainties['V_T']: expected a finite standard uncertainty ≥ 0 for every "
            "lot, found")):
        _lots(naoh, {"V_T": [18.6, 18.7]}, {"V_T": [0.01, column]})


@pytest.mark.parametrize("column", [18.6, "18.6", [[18.6, 18.7]]])
def test_lots_refuse_a_column_that_is_not_one(naoh: budget.Model, column: Any) -> None:
    with pytest.raises(BudgetError, match="estimates\\['V_T'\\]: expected a column of "
                                          "numbers, one per lot"):
        _lots(naoh, {"V_T": column})


def test_lots_refuse_a_table_that_is_not_a_mapping(naoh: budget.Model) -> None:
    with pytest.raises(BudgetError, match="estimates: expected estimates as a mapping of "
                                          "input names to columns"):
        _lots(naoh, [18.6, 18.7])
    with pytest.raises(BudgetError, match="estimates: expected an input of the model, "
                                          "found 3"):
        _lots(naoh, {3: [18.6]})
    with pytest.raises(BudgetError, match="propagate_lots\\(\\): model: expected"):
        _lots(A2, {"V_T": [18.6]})


@pytest.mark.parametrize("coverage", [2, "0.95"])
def test_lots_check_the_coverage(naoh: budget.Model, coverage: Any) -> None:
    with pytest.raises(BudgetError, match="coverage: expected a coverage probability in"):
        _lots(naoh, {"V_T": [18.6]}, coverage=coverage)


def test_a_lot_outside_the_equations_domain_is_named(naoh: budget.Model) -> None:
    # V_T = 0 divides by zero: the lot's y was ∞ and its U NaN, without a word
    with pytest.raises(BudgetError, match=re.escape(
            "[measurands.c_NaOH] equation: expected a finite value at the estimates of "
            "every lot, found inf at lot 3 (position 2)")):
        _lots(naoh, {"V_T": [18.6, 18.7, 0.0]})
    root = budget.parse_model('title = "t"\n[measurands.y]\nequation = "sqrt(x)"\n'
                              '[inputs.x]\nvalue = 4\nu = 0.1\n', "root.toml")
    with pytest.raises(BudgetError, match=re.escape(
            "expected finite sensitivity coefficients at the estimates of every lot, found "
            "none for x at lot 2 (position 1)")):
        _lots(root, {"x": [4.0, 0.0]})


# budget.distributions: a parameter that is not a number is refused when the distribution is
# built; one that is a number of another type is stored as a plain float

@pytest.mark.parametrize("make, message", [
    (lambda: D.Normal("1", 2), "Normal: expected estimate as a number, found str '1'"),
    (lambda: D.Rectangular(1, "a"), "Rectangular: expected half_width as a number, found "
                                    "str 'a'"),
    (lambda: D.StudentT(1, 0.1, "3"), "StudentT: expected dof as a number, found str '3'"),
    (lambda: D.Normal(True, 0.1), "Normal: expected estimate as a number, found bool True"),
    (lambda: D.Triangular([1.0], 0.1), "Triangular: expected estimate as a number, found "
                                       "list [1.0]"),
    (lambda: D.Trapezoidal(1.0, 0.1, None), "Trapezoidal: expected beta as a number, "
                                            "found NoneType None")])
def test_distribution_parameters_must_be_numbers(make: Any, message: str) -> None:
    with pytest.raises(BudgetError, match=re.escape(message)):
        make()


def test_distribution_parameters_become_plain_floats(naoh: budget.Model) -> None:
    from decimal import Decimal
    from fractions import Fraction

    shape = D.Triangular(Decimal("18.64"), np.array(0.03))
    assert (shape.estimate, shape.half_width) == (18.64, 0.03)
    assert type(shape.estimate) is float and type(shape.half_width) is float
    assert D.Normal(Fraction(1, 2), np.float32(0.25)).sd == 0.25
    # a Decimal inside used to reach numpy's sampler: "unsupported operand type(s)"
    changed = naoh.with_distribution("V_T", shape)
    run = budget.simulate(changed, trials=1000, seed=1)
    assert np.isfinite(run.measurands[0].mean)


# the notebook and report pages with long names: a table must not grow past the page, a
# chart label must not run out of its drawing

LONG = "a_very_long_input_name_that_goes_on_and_on_and_on_and_on_and_on_and_on"
LONG_MODEL = (f'title = "<script>x</script> & co"\n[measurands.y]\nequation = "{LONG} * b"\n'
              f'unit = "g/kg"\n[inputs.{LONG}]\nvalue = 2\nu = 0.1\n'
              '[inputs.b]\nvalue = 3\nu = 0.2\nunit = "g/kg"\n')


def test_a_long_name_in_a_chart_is_cut_with_its_whole_name_as_tooltip() -> None:
    from budget._svg import bar_chart

    svg = str(bar_chart([(LONG, 64.0), ("b", 36.0)]))
    shown = re.search(r"</title>([^<]*)…</text>", svg)
    assert shown is not None and LONG.startswith(shown.group(1))
    assert 20 < len(shown.group(1)) < 40  # fits 252 px at 11 px: it ran out on the left
    assert f"<title>{LONG}</title>" in svg
    assert ">b</text>" in svg  # a short name is left alone


def test_long_names_in_tables_may_wrap() -> None:
    model = budget.parse_model(LONG_MODEL, "long.toml")
    result = budget.evaluate(model, trials=0)
    for page in (result._repr_html_(), budget.render_report(result)):
        assert "td var, " in page and "overflow-wrap: anywhere" in page
        assert "<script>x" not in page and "&lt;script&gt;x" in page


# budget.air_density with a lab's slips: h in per cent, p in hPa, t in K

@pytest.mark.parametrize("args, message", [
    (("20", 101325, 0.5), "air_density(): t: expected a finite number, found str '20'"),
    ((20, float("nan"), 0.5), "air_density(): p: expected a finite number, found float nan"),
    ((20, 101325, 50), "air_density(): h: expected a relative humidity as a fraction from 0 "
                       "to 1 (50 % is 0.5), found 50"),
    ((20, -5, 0.5), "air_density(): p: expected a pressure in Pa above 0, found -5"),
    ((20, 101325, 0.5, 2), "air_density(): x_co2: expected a mole fraction from 0 to 1")])
def test_air_density_refuses_impossible_arguments(args: Any, message: str) -> None:
    # h = 50 (meant as 50 %) used to give 0.73 kg/m³ without a word
    with pytest.raises(BudgetError, match=re.escape(message)):
        budget.air_density(*args)


def test_air_density_warns_outside_the_range_of_the_equation() -> None:
    with pytest.warns(UserWarning, match="pressure 1013.25 Pa is outside the range of "
                                         "validity 600 hPa to 1100 hPa"):
        budget.air_density(20, 1013.25, 0.5)  # hPa for Pa: 0.0068 kg/m³
    with pytest.warns(UserWarning, match="temperature 293.15 °C"), \
            pytest.raises(BudgetError, match="gives a density above 0, found -0.0"):
        budget.air_density(293.15, 101325, 0.5)  # kelvin for °C: a negative density
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error")
        # CIPM-2007 check value of references.md section 7 (as tests/test_chemistry.py):
        # 20 °C, 101 325 Pa, h = 0.5: 1.199314 kg/m³; numpy and Decimal arguments alike
        assert budget.air_density(np.float64(20), Decimal("101325"), 0.5) == \
            pytest.approx(1.199314, abs=1e-6)


# functions that take a result, a certification or a campaign: the wrong object (a model, a
# path, a budget) is named, not an AttributeError from inside

@pytest.mark.parametrize("call, message", [
    (lambda m: budget.explain(m), "explain(): result: expected a budget.Result "
                                  "(budget.evaluate(model) gives one), found a budget.Model"),
    (lambda m: budget.result_document(m), "result_document(): result: expected a "
                                          "budget.Result"),
    (lambda m: budget.render_report(budget.propagate(m)), "render_report(): result: expected "
                                                          "a budget.Result (budget.evaluate("
                                                          "model) gives one), found a "
                                                          "budget.Budget"),
    (lambda m: budget.certify("models/vics-as-25a/campaign.toml"),
     "certify(): campaign: expected a budget.Campaign (budget.load_campaign(path) gives "
     "one), found str 'models/vics-as-25a/campaign.toml'"),
    (lambda m: budget.certification_document(m), "certification_document(): cert: expected "
                                                 "a budget.Certification"),
    (lambda m: budget.render_certification_report(None), "render_certification_report(): "
                                                         "cert: expected a budget."
                                                         "Certification")])
def test_the_wrong_object_is_named(naoh: budget.Model, call: Any, message: str) -> None:
    with pytest.raises(BudgetError, match=re.escape(message)):
        call(naoh)


@pytest.mark.parametrize("target", ["x", -1, 0, float("nan"), float("inf")])
def test_explain_target_is_a_positive_number(naoh: budget.Model, target: Any) -> None:
    # a negative or NaN target used to be accepted and silently ignored
    result = budget.evaluate(naoh, trials=0)
    with pytest.raises(BudgetError, match="explain\\(\\): target: expected a positive finite "
                                          "number"):
        budget.explain(result, target=target)


def test_compare_budgets_takes_a_model_and_its_what_if(naoh: budget.Model) -> None:
    # the documented use, "a model file and its what-if", used to be a TypeError
    halved = naoh.with_uncertainty("V_T", factor=0.5)
    difference = budget.compare_budgets(naoh, halved)
    assert difference.after.label.endswith("(what-if: u(V_T) × 0.5)")
    change = difference.measurand("c_NaOH")
    assert change.after.combined_uncertainty < change.before.combined_uncertainty
    # not the same budget, though from the same file: no "same model file" note
    assert not any("same model file" in note for note in difference.notes)
    same = budget.compare_budgets(budget.evaluate(naoh, trials=0), A2)
    assert any("same model file" in note for note in same.notes)
    with pytest.raises(BudgetError, match="compare_budgets\\(\\): before: expected a model "
                                          "file or a saved JSON result document"):
        budget.compare_budgets(None, A2)


# combine, join, load_model's overrides, paths and the batch: careless arguments

@pytest.mark.parametrize("values, covariance, message", [
    (["1", "2"], [[1, 0], [0, 1]], "expected values as numbers, found list ['1', '2']"),
    ([1.0, None], [[1, 0], [0, 1]], "expected values as numbers, found NoneType None"),
    ({"a": 1.0}, [[1]], "expected values as numbers, found dict {'a': 1.0}"),
    ([1.0, 2.0], [[1, 0], [0]], "expected covariance as numbers, found list"),
    ([[1.0, 2.0]], [[1, 0], [0, 1]], "expected the values as a list of at least one number, "
                                     "found an array of shape (1, 2)"),
    ([], [], "expected the values as a list of at least one number, found an array of "
             "shape (0,)")])
def test_combine_takes_numbers_only(values: Any, covariance: Any, message: str) -> None:
    # ["1", "2"] used to be converted silently; a dict was a TypeError from numpy
    with pytest.raises(BudgetError, match=re.escape(message)):
        budget.combine(values, covariance)


def test_combine_takes_exact_numbers() -> None:
    from fractions import Fraction

    assert budget.combine([Fraction(1), Decimal("2")], [[1, 0], [0, 1]]).estimate == 1.5


@pytest.mark.parametrize("members, shared, message", [
    ([], [], "expected members as a list of at least one budget.Member, found []"),
    ("ab", [], "expected members as a list of at least one budget.Member, found 'ab'"),
    (["a"], [], "expected each member as budget.Member(name=…, model=…), found str 'a'"),
    ([("a", A2)], [], "expected each member as budget.Member"),
    (None, [], "expected members as a list")])
def test_join_names_what_is_wrong_with_its_members(members: Any, shared: Any,
                                                   message: str) -> None:
    with pytest.raises(BudgetError, match=re.escape(message)):
        budget.join(members, shared)


def test_join_checks_each_member_and_shared_set(naoh: budget.Model) -> None:
    with pytest.raises(BudgetError, match=re.escape(
            "member 'a': expected a budget.Model (budget.load_model(path) reads one), "
            "found str")):
        budget.join([budget.Member(name="a", model=A2)])  # type: ignore[arg-type]
    with pytest.raises(BudgetError, match="expected a member name without ':', found 'a:b'"):
        budget.join([budget.Member(name="a:b", model=naoh)])
    pair = [budget.Member(name="a", model=naoh), budget.Member(name="b", model=naoh)]
    with pytest.raises(BudgetError, match=re.escape(
            "expected each shared set as (name, [(member, input), …]), found ('M', 'a')")):
        budget.join(pair, [("M", "a")])  # type: ignore[list-item]


@pytest.mark.parametrize("overrides, message", [
    ({"trial": 5}, "trial: expected a setting to override, one of coverage_probability, "
                   "trials, seed, digits, atomic_weights, reported_interval, found 'trial' "
                   "(did you mean 'trials'?)"),
    ({"trials": "x"}, "trials: expected a whole number ≥ 0 or \"adaptive\", found 'x'"),
    ({"seed": -1}, "seed: expected a whole-number seed from 0 to 2**64 - 1, found -1"),
    ({"coverage": 2}, "coverage: expected a coverage probability in [1e-06, 1 - 1e-09]")])
def test_load_model_overrides_are_checked(overrides: dict[str, Any], message: str) -> None:
    # trials="x" and seed=-1 used to be stored in the settings as given
    with pytest.raises(BudgetError, match=re.escape(f"{A2}: {message}")):
        budget.load_model(A2, **overrides)


def test_load_model_overrides_take_evaluates_word_for_coverage() -> None:
    assert budget.load_model(A2, coverage=0.99).settings.coverage_probability == 0.99
    assert budget.load_model(A2, trials=2000, seed=None).settings.trials == 2000


@pytest.mark.parametrize("call, message", [
    (lambda: budget.load_model(None), "<argument>: path: expected the path of a model file "
                                      "(a string or a pathlib.Path), found NoneType None"),
    (lambda: budget.load_campaign(3.5), "<argument>: path: expected the path of a campaign "
                                        "file (a string or a pathlib.Path), found float 3.5"),
    (lambda: budget.parse_model(None), "parse_model(): text: expected text as a string, "
                                       "found NoneType None"),
    (lambda: budget.parse_model("x", 5), "parse_model(): name: expected name as a string")])
def test_a_path_or_text_that_is_not_one(call: Any, message: str) -> None:
    with pytest.raises(BudgetError, match=re.escape(message)):
        call()


@pytest.mark.parametrize("keywords, message", [
    ({"workers": "2"}, "certify_folder(): workers: expected None or a whole number of "
                       "workers from 1 to 256, found str '2'"),
    ({"trials": "x"}, "certify_folder(): trials: expected a whole number of trials ≥ 0"),
    ({"seed": -1}, "certify_folder(): seed: expected a whole-number seed"),
    ({"folder": None}, "<argument>: folder: expected the path of a folder of campaign files")])
def test_certify_folder_checks_its_arguments(keywords: dict[str, Any], message: str) -> None:
    from budget.batch import certify_folder

    # trials="x" used to fail every campaign one by one, as if each file were wrong
    arguments = {"folder": "models/vics-as-25a", **keywords}
    with pytest.raises(BudgetError, match=re.escape(message)):
        certify_folder(**arguments)


# summary(digits) of every result, as --digits: a whole number from 1 to 6

@pytest.mark.parametrize("digits", [0, -1, "2", 2.5, None, True, 7])
def test_summary_digits_are_checked(naoh: budget.Model, digits: Any) -> None:
    # 0 was "Format specifier missing precision", "2" a TypeError from the formatter
    result = budget.evaluate(naoh, trials=1000, seed=1)
    assert result.simulation is not None
    shown = [result.budget, result.budget.measurands[0], result.simulation,
             result.simulation.measurands[0], budget.explain(result)[0],
             budget.compare_budgets(naoh, naoh)]
    for item in shown:
        with pytest.raises(BudgetError, match="summary\\(\\): digits: expected a whole number "
                                              "of significant digits from 1 to 6"):
            item.summary(digits)
    assert all(item.summary(3) for item in shown)


def test_certification_summary_digits_are_checked() -> None:
    cert = budget.certify(budget.load_campaign("models/vics-as-25a/campaign.toml"), trials=0)
    with pytest.raises(BudgetError, match="summary\\(\\): digits: expected a whole number"):
        cert.summary(0)
    assert cert.summary() == cert.summary(None)


def test_a_constant_measurand_leaves_no_numpy_warning_and_a_unit_diagonal() -> None:
    import warnings

    model = budget.parse_model('title = "t"\n[measurands.y]\nequation = "a"\n'
                               '[measurands.z]\nequation = "3"\n'
                               '[inputs.a]\nvalue = 1\nu = 0.1\n', "const.toml")
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # numpy's "invalid value encountered in divide"
        kept = budget.simulate(model, trials=1000, seed=1)
    streamed = budget.simulate(model, trials=1000, seed=1, keep_samples=False)
    gum = budget.propagate(model)
    assert kept.output_correlation == streamed.output_correlation == gum.output_correlation
    assert kept.output_correlation == ((1.0, 0.0), (0.0, 1.0))


def test_reprs_write_no_unit_1_after_a_number() -> None:
    # "y = 1.00 1" reads as two numbers; the tables and reports already leave "1" out
    model = budget.parse_model('title = "t"\n[measurands.y]\nequation = "a"\n'
                               '[inputs.a]\nvalue = 1\nu = 0.1\n', "ratio.toml")
    result = budget.evaluate(model, trials=1000, seed=1)
    assert result.simulation is not None
    assert repr(result.budget.measurands[0]).startswith("<MeasurandBudget y: y = 1.00, u_c")
    assert re.search(r", y = [0-9.]+, u = ", repr(result.simulation.measurands[0]))
    assert repr(budget.compare_budgets(model, model)).endswith("u 0.1 → 0.1>")
    ugg = budget.parse_model('title = "t"\n[measurands.y]\nequation = "a"\nunit = "ug/g"\n'
                             '[inputs.a]\nvalue = 1\nu = 0.1\nunit = "ug/g"\n', "ugg.toml")
    assert "y = 1.00 µg/g," in repr(budget.propagate(ugg).measurands[0])


def test_scaling_an_exact_input_is_refused_not_recorded() -> None:
    # factor=2 on an exact input changed nothing but was recorded as a what-if
    model = budget.load_model(PURITY)
    assert model.input("t_air").standard_uncertainty == 0.0
    with pytest.raises(BudgetError, match=re.escape(
            "<what-if>: [inputs.t_air] factor: expected an input with an uncertainty to "
            "scale, found an exact one (× 2 would change nothing")):
        model.with_uncertainty("t_air", factor=2)
    assert model.with_uncertainty("t_air", factor=1).input("t_air").standard_uncertainty == 0


def test_joint_lookups_name_what_is_there(naoh: budget.Model) -> None:
    # a bare KeyError ('z', 'c_NaOH') before
    joint = budget.join([budget.Member(name="a", model=naoh),
                         budget.Member(name="b", model=naoh)],
                        [("M", [("a", "M_KHP"), ("b", "M_KHP")])])
    assert joint.measurand_index("b", "c_NaOH") == 1 and joint.input_name("b", "M_KHP") == "M"
    with pytest.raises(KeyError, match=re.escape(
            "no measurand 'c_naoh' of member 'a' (did you mean 'a:c_NaOH'?); expected one "
            "of a:c_NaOH, b:c_NaOH")) as caught:
        joint.measurand_index("a", "c_naoh")
    assert isinstance(caught.value, BudgetError)
    with pytest.raises(BudgetError, match="no input 'V_t' of member 'a'"):
        joint.input_name("a", "V_t")


def test_certify_checks_the_reported_interval_argument() -> None:
    # "bogus" with Monte Carlo trials stated the shortest interval under the name "bogus"
    campaign = budget.load_campaign("models/vics-as-25a/campaign.toml")
    with pytest.raises(BudgetError, match=re.escape(
            "certify(): reported_interval: expected one of gum, monte_carlo, "
            "monte_carlo_shortest, found 'bogus'")):
        budget.certify(campaign, trials=1000, seed=1, reported_interval="bogus")


@pytest.mark.parametrize("keywords, message", [
    ({"leading": "3"}, "explain(): leading: expected a whole number from 1 to 1,000, found "
                       "str '3'"),
    ({"sobol_trials": 10 ** 9}, "explain(): sobol_trials: expected a whole number from 2 to "
                                "10,000,000, found int 1000000000"),
    ({"sobol_trials": 1000.0}, "explain(): sobol_trials: expected a whole number")])
def test_explain_counts_are_checked(naoh: budget.Model, keywords: dict[str, Any],
                                    message: str) -> None:
    # leading="3" was a TypeError in slicing; 10**9 draws would exhaust memory
    result = budget.evaluate(naoh, trials=1000, seed=1)
    with pytest.raises(BudgetError, match=re.escape(message)):
        budget.explain(result, **keywords)


def test_long_names_wrap_in_the_comparison_and_explanation_tables() -> None:
    model = budget.parse_model(LONG_MODEL, "long.toml")
    difference = budget.compare_budgets(model, model.with_uncertainty(LONG, factor=0.5))
    explained = budget.explain(budget.evaluate(model, trials=1000, seed=1))[0]
    for page in (difference._repr_html_(), explained._repr_html_()):
        assert f'<td class="long">{LONG}</td>' in page and "td.long" in page
    # and the dimensionless unit is not written after a number in "what changed"
    assert "u 0.1 → 0.05 (× 0.5)" in difference.summary()


def test_a_model_shows_itself_in_one_line_even_when_deep(naoh: budget.Model) -> None:
    # a chain of 400 definitions made repr(model) a RecursionError; a model of 3000 inputs
    # printed a megabyte of dataclass fields into the notebook
    chain = "".join(f'd{i} = "d{i - 1} * x"\n' for i in range(1, 401))
    deep = budget.parse_model('title = "t"\n[measurands.y]\nequation = "d400"\n'
                              f'[definitions]\nd0 = "x"\n{chain}'
                              '[inputs.x]\nvalue = 1\nu = 0.1\n', "deep.toml")
    assert repr(deep) == "<Model 't' (deep.toml): y from 1 inputs>"
    assert "graph" not in repr(deep.measurands[0]) and repr(deep.definitions)
    assert repr(naoh.with_uncertainty("V_T", factor=0.5)).endswith(
        "c_NaOH from 5 inputs; what-if: u(V_T) × 0.5>")


def test_a_t_distribution_with_infinite_dof_is_refused(naoh: budget.Model) -> None:
    # StudentT(…, dof=inf) was accepted, and numpy drew NaN in every Monte Carlo trial
    with pytest.raises(BudgetError, match=re.escape(
            "StudentT: expected a finite dof (a t distribution with ν = ∞ is "
            "Normal(estimate, sd)), found inf")):
        D.StudentT(18.64, 0.01, float("inf"))
    changed = naoh.with_distribution("V_T", D.StudentT(18.64, 0.01, 1e6))
    assert np.isfinite(budget.simulate(changed, trials=1000, seed=1).measurands[0].mean)


@pytest.mark.parametrize("function", ["batch_rows", "batch_document"])
def test_batch_documents_take_a_batch(function: str) -> None:
    import budget.batch

    with pytest.raises(BudgetError, match=re.escape(
            f"{function}(): batch: expected a budget.batch.Batch "
            "(budget.batch.certify_folder(folder) gives one), found str 'x'")):
        getattr(budget.batch, function)("x")


def test_what_ifs_take_any_real_number(naoh: budget.Model) -> None:
    from fractions import Fraction

    # np.float32 and Decimal were refused as "not a finite number", a Fraction a TypeError
    assert naoh.with_uncertainty("V_T", u=np.float32(0.01)).input("V_T") \
        .standard_uncertainty == pytest.approx(0.01, rel=1e-7)
    assert naoh.with_value("V_T", Decimal("18.6")).input("V_T").estimate == 18.6
    halved = naoh.with_uncertainty("V_T", factor=Fraction(1, 2))
    assert halved.changes == ("u(V_T) × 0.5",)
    assert naoh.with_value("V_T", Fraction(37, 2)).changes == ("V_T = 18.5",)
    with pytest.raises(BudgetError, match="value: expected a finite number, found '18'"):
        naoh.with_value("V_T", "18")


def test_atomic_weight_sum_takes_numbers_only() -> None:
    with pytest.raises(BudgetError, match=re.escape(
            "AtomicWeightSum: expected numbers, found ('1', 12.0, 0.1, 1.0)")):
        D.AtomicWeightSum(("1",), (12.0,), (0.1,))  # type: ignore[arg-type]


@pytest.mark.parametrize("function", [budget.evaluate, budget.simulate])
def test_trials_and_adaptive_together_are_refused(naoh: budget.Model, function: Any) -> None:
    # trials=1000 was ignored without a word when adaptive=True, as --trials with --adaptive
    # is refused on the command line
    with pytest.raises(BudgetError, match=re.escape(
            "trials: expected either trials=… or adaptive=True, found both (trials = 1000)")):
        function(naoh, trials=1000, adaptive=True, seed=1)


def test_a_coverage_may_be_a_numpy_scalar_or_a_fraction(naoh: budget.Model) -> None:
    from fractions import Fraction

    # np.float32(0.95) was refused as "not a coverage probability"
    for p in (np.float32(0.95), Fraction(19, 20), np.float64(0.95)):
        found = budget.propagate(naoh, coverage=p).measurands[0]
        assert found.coverage_probability == pytest.approx(0.95, rel=1e-7)
    from budget.lots import propagate_lots

    lots = propagate_lots(naoh, {"V_T": [18.64]}, coverage=np.float32(0.95))
    assert lots.coverage_factor[0, 0] == pytest.approx(1.96, abs=0.01)


def test_a_long_word_in_a_title_wraps() -> None:
    title = "T" + "x" * 300
    model = budget.parse_model(f'title = "{title}"\n[measurands.y]\nequation = "a"\n'
                               '[inputs.a]\nvalue = 1\nu = 0.1\n', "t.toml")
    result = budget.evaluate(model, trials=0)
    for page in (result._repr_html_(), budget.render_report(result)):
        assert "overflow-wrap: break-word" in page and title in page


def test_a_joint_or_result_for_a_model_points_at_its_model(naoh: budget.Model) -> None:
    joint = budget.join([budget.Member(name="a", model=naoh)])
    with pytest.raises(BudgetError, match=re.escape(
            "evaluate(): model: expected a budget.Model (budget.load_model(path) reads one), "
            "found a budget.Joint (its .model is one)")):
        budget.evaluate(joint, trials=0)  # type: ignore[arg-type]
    assert budget.evaluate(joint.model, trials=0).budget.measurands[0].name == "a:c_NaOH"


def test_a_huge_u_is_named_as_u_not_as_a_factor(naoh: budget.Model) -> None:
    # u=1e308 was refused as "factor: expected a finite number, found inf"
    with pytest.raises(BudgetError, match=re.escape(
            "<what-if>: [inputs.V_T] u: expected a standard uncertainty whose widths are "
            "finite numbers, found 1e+308 (inf times the present 0.013)")):
        naoh.with_uncertainty("V_T", u=1e308)


@pytest.mark.parametrize("call, message", [
    (lambda m: budget.evaluate(m, trial=1000), "evaluate(): expected one of the arguments "
                                               "model, coverage, trials"),
    (lambda m: budget.evaluate(m, 1000), "evaluate(): expected at most 1 positional argument "
                                         "(give the others by name: coverage=…, trials=…"),
    (lambda m: budget.simulate(m, trails=1000), "simulate(): expected one of the arguments"),
    (lambda m: budget.propagate(m, 0.95, True), "propagate(): expected at most 2 positional "
                                                "arguments (give the others by name: "
                                                "second_order=…), found 3"),
    (lambda m: budget.explain(budget.evaluate(m, trials=0), tagret=1.0),
     "explain(): expected one of the arguments result, target, leading, sobol_trials, found "
     "'tagret' (did you mean 'target'?)")])
def test_a_misspelt_keyword_is_named_with_a_suggestion(naoh: budget.Model, call: Any,
                                                       message: str) -> None:
    # Python's own TypeError before; now a BudgetError (and still a TypeError)
    with pytest.raises(BudgetError, match=re.escape(message)) as caught:
        call(naoh)
    assert isinstance(caught.value, TypeError)


def test_the_closest_keyword_is_suggested(naoh: budget.Model) -> None:
    with pytest.raises(BudgetError, match=re.escape("found 'trial' (did you mean 'trials'?)")):
        budget.evaluate(naoh, trial=1000)  # type: ignore[call-arg]


def test_what_if_keywords_are_checked(naoh: budget.Model) -> None:
    with pytest.raises(BudgetError, match=re.escape(
            "with_uncertainty(): expected one of the arguments name, u, factor, found 'U' "
            "(did you mean 'u'?)")):
        naoh.with_uncertainty("V_T", U=0.1)  # type: ignore[call-arg]
    with pytest.raises(BudgetError, match=re.escape(
            "with_uncertainty(): expected at most 1 positional argument (give the others by "
            "name: u=…, factor=…), found 2")):
        naoh.with_uncertainty("V_T", 0.1)  # type: ignore[misc]


def test_a_progress_function_of_one_argument_is_refused_before_the_run(
        naoh: budget.Model) -> None:
    # it failed inside the Monte Carlo workers with Python's TypeError
    with pytest.raises(BudgetError, match="progress: expected a function f\\(done, total\\) "
                                          "of two arguments"):
        budget.evaluate(naoh, trials=1000, seed=1, progress=lambda done: None)
    seen: list[tuple[int, int]] = []
    budget.evaluate(naoh, trials=1000, seed=1, progress=lambda d, t: seen.append((d, t)))
    assert seen and seen[-1] == (1000, 1000)


def test_load_campaign_checks_allow_outside() -> None:
    # allow_outside="no" is truthy: it allowed files outside the folder tree
    with pytest.raises(BudgetError, match=re.escape(
            "load_campaign(): allow_outside: expected True or False, found str 'no'")):
        budget.load_campaign("models/vics-as-25a/campaign.toml", allow_outside="no")
    with pytest.raises(BudgetError, match="did you mean 'allow_outside'"):
        budget.load_campaign("models/vics-as-25a/campaign.toml", allow_outsid=True)


def test_simulate_refuses_the_budget_before_a_change_of_dof(naoh: budget.Model) -> None:
    # same estimate and u, but ν = 3: the original budget's k = 1.96 is not this model's
    before = budget.propagate(naoh)
    t3 = naoh.with_distribution("V_T", D.StudentT(18.64, 0.013, 3))
    with pytest.raises(BudgetError, match="budget: expected the budget of this model"):
        budget.simulate(t3, before, trials=1000, seed=1)


def test_a_budget_at_the_float32_of_the_coverage_is_the_same(naoh: budget.Model) -> None:
    gum = budget.propagate(naoh, coverage=np.float32(0.95))
    run = budget.simulate(naoh, gum, trials=1000, seed=1, coverage=0.95)
    assert run.measurands[0].validation is not None
