"""budget._joint: several models with shared inputs as one evaluation."""

from __future__ import annotations

import math

import numpy as np
import pytest

from budget._errors import InputError
from budget._gum import propagate
from budget._joint import Member, join
from budget._model import parse_model
from budget._montecarlo import simulate

FIRST = """
title = "first"
[measurands.y]
equation = "a + s"
unit = "g"
[inputs.a]
value = 10.0
unit = "g"
u = 0.3
[inputs.s]
value = 1.0
unit = "g"
u = 0.4
"""

SECOND = """
title = "second"
[measurands.y]
equation = "b + 2 * s"
unit = "g"
[inputs.b]
value = 9.0
unit = "g"
u = 0.2
[inputs.s]
value = 1000.0
unit = "mg"
u = 400.0
"""


def _joint():  # type: ignore[no-untyped-def]
    members = [Member(name="one", model=parse_model(FIRST)),
               Member(name="two", model=parse_model(SECOND))]
    return join(members, [("s", [("one", "s"), ("two", "s")])])


def test_shared_input_gives_the_covariance_of_a_hand_computation() -> None:
    # hand computation (GUM 5.2.2): y1 = a + s, y2 = b + 2 s (s in g; the second model
    # states it in mg): u1^2 = 0.3^2 + 0.4^2, u2^2 = 0.2^2 + (2 * 0.4)^2,
    # cov = 1 * 2 * 0.4^2
    joint = _joint()
    assert [i.name for i in joint.model.inputs] == ["s", "one:a", "two:b"]
    cov = np.array(propagate(joint.model).output_covariance)
    assert cov[0, 0] == pytest.approx(0.09 + 0.16, rel=1e-12)
    assert cov[1, 1] == pytest.approx(0.04 + 0.64, rel=1e-12)
    assert cov[0, 1] == pytest.approx(2 * 0.16, rel=1e-12)


def test_joint_monte_carlo_draws_the_shared_input_once() -> None:
    # the correlation of the joint samples is the GUM one (linear model), within five
    # standard errors of a sample correlation, (1 - rho^2)/sqrt(M)
    joint = _joint()
    rho = 0.32 / math.sqrt(0.25 * 0.68)
    simulation = simulate(joint.model, trials=200_000, seed=7)
    found = simulation.output_correlation[0][1]
    assert found == pytest.approx(rho, abs=5 * (1 - rho ** 2) / math.sqrt(200_000))


def test_unshared_models_are_independent() -> None:
    members = [Member(name="one", model=parse_model(FIRST)),
               Member(name="two", model=parse_model(SECOND))]
    cov = np.array(propagate(join(members).model).output_covariance)
    assert cov[0, 1] == 0.0


def test_a_shared_input_must_mean_the_same_in_every_model() -> None:
    other = SECOND.replace("u = 400.0", "u = 300.0")
    members = [Member(name="one", model=parse_model(FIRST)),
               Member(name="two", model=parse_model(other))]
    with pytest.raises(InputError) as caught:
        join(members, [("s", [("one", "s"), ("two", "s")])])
    assert str(caught.value) == (
        "<joint>: shared input 's': expected the same estimate, standard uncertainty and "
        "distribution in every model, found 1 ± 0.4 g (normal) and 1000 ± 300 mg (normal) "
        "in 'two'")


def test_unknown_member_and_input_are_named() -> None:
    members = [Member(name="one", model=parse_model(FIRST)),
               Member(name="two", model=parse_model(SECOND))]
    with pytest.raises(InputError, match="unknown member 'tow' \\(did you mean 'two'\\?\\)"):
        join(members, [("s", [("one", "s"), ("tow", "s")])])
    with pytest.raises(InputError, match="found 'ss' \\(did you mean 's'\\?\\)"):
        join(members, [("s", [("one", "s"), ("two", "ss")])])


def test_sets_estimated_together_are_carried_and_merged() -> None:
    # JCGM 100 H.3: the intercept and slope of one line are one set (nu = 9); two models
    # that share both keep ONE set, two that share neither keep two renamed sets
    from conftest import MODELS

    from budget._model import load_model

    model = load_model(MODELS / "reference" / "gum-h3-thermometer.toml")
    members = [Member(name="one", model=model), Member(name="two", model=model)]
    apart = join(members)
    assert sorted(s.inputs for s in apart.model.estimated_together) == [
        ("one:y1", "one:y2"), ("two:y1", "two:y2")]
    shared = join(members, [("y1", [("one", "y1"), ("two", "y1")]),
                            ("y2", [("one", "y2"), ("two", "y2")])])
    assert [s.inputs for s in shared.model.estimated_together] == [("y1", "y2")]
    assert [s.dof for s in shared.model.estimated_together] == [9]
    # every other input is exact: the two corrections are one quantity, cov = variance,
    # and the correlation y1-y2 stated in both models is kept once
    assert shared.model.correlations == (("y1", "y2", -0.93),)
    cov = np.array(propagate(shared.model).output_covariance)
    assert cov[0, 1] == pytest.approx(cov[0, 0], rel=1e-12)


def test_a_shared_name_is_a_plain_name() -> None:
    # a name like 'one:a' would collide with the namespaced inputs
    members = [Member(name="one", model=parse_model(FIRST)),
               Member(name="two", model=parse_model(SECOND))]
    with pytest.raises(InputError) as caught:
        join(members, [("one:a", [("one", "s"), ("two", "s")])])
    assert str(caught.value) == ("<joint>: expected a shared name of letters, digits and '_', "
                                 "found 'one:a'")
