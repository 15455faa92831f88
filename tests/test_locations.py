"""Engine errors carry the place in the input that caused them (file, table, key) wherever
the input has one; the messages keep the form "<file>: [table] key: expected …, found …".
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

from budget._analysis import evaluate
from budget._combination import combine
from budget._errors import BudgetError, InputError, Location, PropagationError
from budget._gum import propagate
from budget._joint import Member, join
from budget._model import parse_model

ROOT = Path(__file__).resolve().parent.parent / "budget"

PAIR = """title = "pair"
[measurands.y]
equation = "a + b"
[inputs.a]
value = 1.0
u = 0.1
[inputs.b]
value = 2.0
u = 0.1
[[correlations]]
between = ["a", "b"]
r = {r}
"""


def test_combination_errors_name_the_table_that_chose_the_results() -> None:
    where = Location(file="c.toml", table="combination", key="methods")
    with pytest.raises(PropagationError) as caught:
        combine([1.0, 1.1], [[1.0, 1.0], [1.0, 1.0]], "weighted", where=where)
    assert str(caught.value) == (
        "c.toml: [combination] methods: the covariance matrix of the results is not "
        "positive definite (two results fully correlated, or a result without "
        "uncertainty); the weighted mean is not defined")
    with pytest.raises(PropagationError) as bare:  # the pure function alone: no place
        combine([1.0, 1.1], [[1.0, 1.0], [1.0, 1.0]])
    assert bare.value.location is None


def test_intercomparison_gives_its_campaign_table_to_combine() -> None:
    source = (ROOT / "_intercomparison.py").read_text(encoding="utf-8")
    assert "combine(x[chosen], sub, plan.rule, where=where)" in source
    assert 'table="combination"' in source


def test_joint_correlation_conflicts_name_the_shared_table() -> None:
    members = [Member(name="one", model=parse_model(PAIR.format(r=0.5), "one.toml")),
               Member(name="two", model=parse_model(PAIR.format(r=0.2), "two.toml"))]
    where = Location(file="campaign.toml", table="shared")
    with pytest.raises(BudgetError) as caught:
        join(members, [("a", [("one", "a"), ("two", "a")]),
                       ("b", [("one", "b"), ("two", "b")])], where=where)
    assert str(caught.value) == ("campaign.toml: [shared] expected one correlation between "
                                 "the shared inputs 'a' and 'b', found 0.5 and 0.2")


def test_a_coverage_argument_out_of_range_names_the_file() -> None:
    model = parse_model(PAIR.format(r=0.0), "m.toml")
    with pytest.raises(InputError) as caught:
        propagate(model, coverage=1.5)
    assert str(caught.value) == ("m.toml: coverage: expected a coverage probability in "
                                 "[1e-06, 1 - 1e-09] (limits: docs/limits.md), found 1.5")


def test_a_non_finite_higher_order_derivative_names_the_equation() -> None:
    # f = x^1.5 at x = 0: f' = 0 is finite, f'' = 0.75/√x is not (the GUM 5.1.2 note's
    # higher-order terms need it)
    text = ('title = "t"\n[measurands.y]\nequation = "x ** 1.5"\n'
            '[inputs.x]\nvalue = 0.0\nu = 0.1\n')
    with pytest.raises(PropagationError) as caught:
        evaluate(parse_model(text, "m.toml"), trials=0, second_order=True)
    message = str(caught.value)
    assert message.startswith("m.toml:3: [measurands.y] equation: expected higher-order "
                              "derivatives finite at the estimates, found ")


def test_monte_carlo_errors_name_the_file_and_the_key() -> None:
    from budget._montecarlo import simulate

    model = parse_model(PAIR.format(r=0.0), "m.toml")
    with pytest.raises(BudgetError) as caught:
        simulate(model, trials=5)
    assert str(caught.value) == ("m.toml: trials: expected at least 20 trials for a 95 % "
                                 "interval, found 5")
    stated = parse_model(PAIR.format(r=0.0) + "[settings]\ntrials = 5\n", "m.toml")
    with pytest.raises(BudgetError) as caught:
        simulate(stated)
    assert str(caught.value).startswith("m.toml: [settings] trials: expected at least 20 ")
    domain = parse_model('title = "d"\n[measurands.y]\nequation = "sqrt(x)"\n'
                         '[inputs.x]\nvalue = 0.1\nu = 1\n', "d.toml")
    with pytest.raises(BudgetError) as caught:
        simulate(domain, trials=100_000)
    assert str(caught.value).startswith("d.toml: ")
    assert caught.value.location == Location(file="d.toml")


def test_an_adaptive_coverage_beyond_the_limit_names_the_setting() -> None:
    from budget._montecarlo import simulate

    model = parse_model(PAIR.format(r=0.0) + "[settings]\ncoverage = 0.99999999\n", "m.toml")
    with pytest.raises(BudgetError) as caught:
        simulate(model, adaptive=True)
    assert str(caught.value).startswith("m.toml: [settings] coverage: expected a coverage "
                                        "probability whose adaptive batches fit the limit")


def test_no_engine_message_spells_its_file_by_hand() -> None:
    """A place is a Location (so the CLI, the JSON and the tests see it), never a
    ``f"{model.source}: …"`` prefix written into the message."""
    found = []
    for path in sorted(ROOT.glob("*.py")):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if (isinstance(node, ast.Raise) and isinstance(node.exc, ast.Call)
                    and node.exc.args and isinstance(node.exc.args[0], ast.JoinedStr)):
                head = node.exc.args[0].values[0]
                if isinstance(head, ast.FormattedValue) and "source" in ast.unparse(head):
                    found.append(f"{path.name}:{node.lineno}")
    assert not found, found
