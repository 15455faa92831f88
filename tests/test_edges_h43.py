"""The Python API with careless arguments, as a notebook passes them: each is refused with
a BudgetError naming the argument, what was expected and what was found — never a numpy,
attribute or type error from inside, never a silently wrong result."""

from __future__ import annotations

import re
from typing import Any

import numpy as np
import pytest

import budget
from budget import BudgetError

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
