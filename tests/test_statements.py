"""Every way of stating an uncertainty (../shared/spec/model-format.md) gives the standard
uncertainty, degrees of freedom and Monte Carlo distribution the GUM and JCGM 101 say."""

from __future__ import annotations

import math

import pytest

from budget._errors import BudgetError

from conftest import model


def _input(body: str):
    return model(f"""
        title = "statement"
        [measurands.y]
        equation = "x"
        [inputs.x]
        {body}
    """).input("x")


@pytest.mark.parametrize("body, u, dof, shape", [
    ("value = 1\nu = 0.3", 0.3, math.inf, "normal"),
    # GUM 7.2.1 / 4.3.3: U = k u
    ("value = 1\nexpanded = 0.6\nk = 2", 0.3, math.inf, "normal"),
    # GUM 4.3.4: a 95 % statement, normal: u = U / 1.960 [M✓C: scipy.stats.norm]
    ("value = 1\nexpanded = 0.588\nlevel = 0.95", 0.588 / 1.959963984540054, math.inf,
     "normal"),
    # JCGM 101 6.4.9.7: U_p, level and nu: k = t_p(nu) = 2.570582 for nu = 5 [C: scipy]
    ("value = 1\nexpanded = 1\nlevel = 0.95\ndof = 5", 1 / 2.5705818366147395, 5.0,
     "student_t"),  # budget._special's t quantile agrees with scipy to 1e-9
    # GUM 4.3.7: rectangular a / sqrt 3
    ('value = 1\ndistribution = "rectangular"\nhalf_width = 0.3', 0.3 / math.sqrt(3),
     math.inf, "rectangular"),
    ('distribution = "triangular"\nlower = 0.7\nupper = 1.3', 0.3 / math.sqrt(6), math.inf,
     "triangular"),
    ('value = 1\ndistribution = "arcsine"\nhalf_width = 0.3', 0.3 / math.sqrt(2), math.inf,
     "arcsine"),
    # JCGM 101 6.4.4: trapezoid a sqrt((1 + beta^2)/6)
    ('value = 1\ndistribution = "trapezoidal"\nhalf_width = 0.3\nbeta = 0.5',
     0.3 * math.sqrt(1.25 / 6), math.inf, "trapezoidal"),
    # JCGM 101 6.4.3: u^2 = a^2/3 + d^2/9
    ('value = 1\ndistribution = "curvilinear_trapezoid"\nhalf_width = 0.3\ninexactness = 0.06',
     math.sqrt(0.09 / 3 + 0.0036 / 9), math.inf, "curvilinear_trapezoid"),
    # a rectangular stated by its standard uncertainty
    ('value = 1\ndistribution = "rectangular"\nu = 0.2', 0.2, math.inf, "rectangular"),
    ('value = 1\ndistribution = "student_t"\nu = 0.2\ndof = 4', 0.2, 4.0, "student_t"),
    # GUM G.4.2: reliability 25 % gives nu = 8; a finite nu is drawn as a t with that nu
    # (JCGM 101 6.4.9; issue 10 regression: it was drawn as a plain normal)
    ("value = 1\nu = 0.3\nreliability = 0.25", 0.3, 8.0, "student_t"),
    ("value = 1\nu = 0.3\ndof = 6", 0.3, 6.0, "student_t"),
    ("value = 1\nexact = true", 0.0, math.inf, "exact"),
    ('constant = "N_A"', 0.0, math.inf, "exact"),
])
def test_ways_of_stating_the_uncertainty(body, u, dof, shape):
    item = _input(body)
    assert item.standard_uncertainty == pytest.approx(u, rel=1e-9)
    assert item.dof == pytest.approx(dof) if math.isfinite(dof) else math.isinf(item.dof)
    assert item.distribution.name == shape


def test_observations_are_type_a():
    # GUM 4.2: mean, s/sqrt(n), nu = n - 1
    item = _input("observations = [10.1, 10.3, 9.9, 10.0, 10.2]")
    assert item.type == "A"
    assert item.estimate == pytest.approx(10.1)
    assert item.standard_uncertainty == pytest.approx(0.158113883 / math.sqrt(5), rel=1e-8)
    assert item.dof == 4


def test_constant_in_another_unit():
    # F = 96 485.332 123 31 C/mol exactly (SI 2019) = 96.485 332 123 31 kC/mol
    item = _input('constant = "F"\nunit = "kC/mol"')
    assert item.estimate == pytest.approx(96.48533212331001, rel=1e-15)


@pytest.mark.parametrize("body, message", [
    ('value = 1\nexpanded = 0.6', "expanded: expected exactly one of 'k' or 'level' with "
                                  "'expanded', found neither"),
    ('value = 1\nu = 0.3\ndof = 4\nreliability = 0.2',
     "reliability: expected either 'dof' or 'reliability', found both"),
    ('distribution = "rectangular"\nlower = 2\nupper = 1',
     "upper: expected 'upper' > 'lower', found lower = 2, upper = 1"),
    ('value = 1.2\ndistribution = "rectangular"\nlower = 0\nupper = 2',
     "value: expected 'value' at the midpoint 1 of [lower, upper] (asymmetric limits are "
     "not supported), found 1.2"),
    ('value = 1\ndistribution = "trapezoidal"\nhalf_width = 1\nbeta = 1.5',
     "beta: expected a number in [0, 1], found 1.5"),
    ('value = 1\ndistribution = "student_t"\nu = 0.2', "expected 'dof' for a student_t "
                                                        "distribution, found none"),
    ('observations = [1, 1, 1]', "observations: expected observations that are not all "
                                 "equal, found 3 times 1"),
    ('value = 1\nexact = false', "exact: expected exact = true, found false (a boolean)"),
    ('formula = "H2O"\nunit = "g"', "unit: expected a unit of [mass] / [substance], found "
                                     "'g' ([mass])"),
])
def test_statement_errors(body, message):
    with pytest.raises(BudgetError) as caught:
        _input(body)
    assert str(caught.value).split("[inputs.x] ", 1)[1] == message
