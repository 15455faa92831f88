"""The law of propagation against independent tools: the general-purpose `uncertainties`
package (linear propagation with correlations), finite differences, and invariants
checked by Hypothesis."""

from __future__ import annotations

import math

import numpy as np
import pytest
import uncertainties
from hypothesis import given, settings, strategies as st
from uncertainties import umath

from budget._errors import PropagationError
from budget._evaluation import symbolic_sensitivities
from budget._gum import propagate
from budget._model import parse_model

from conftest import model

_NONLINEAR = """
    title = "nonlinear, correlated"
    [measurands.y]
    equation = "a * exp(b / c) / sqrt(c) + log(a) * sin(b)"
    [measurands.z]
    equation = "a ** 2 / b - atan(c)"
    [inputs.a]
    value = 2.5
    u = 0.1
    [inputs.b]
    value = 0.7
    distribution = "rectangular"
    half_width = 0.05
    [inputs.c]
    value = 1.3
    u = 0.04
    [[correlations]]
    between = ["a", "b"]
    r = 0.6
    [[correlations]]
    between = ["b", "c"]
    r = -0.3
"""


def test_against_the_uncertainties_package_with_correlations():
    # uncertainties.correlated_values propagates linearly with the same covariance
    m = model(_NONLINEAR)
    budget = propagate(m)
    u = np.array([0.1, 0.05 / math.sqrt(3), 0.04])
    r = np.array([[1, 0.6, 0], [0.6, 1, -0.3], [0, -0.3, 1]])
    a, b, c = uncertainties.correlated_values([2.5, 0.7, 1.3], np.outer(u, u) * r)
    y = a * umath.exp(b / c) / umath.sqrt(c) + umath.log(a) * umath.sin(b)
    z = a ** 2 / b - umath.atan(c)
    assert budget.measurand("y").estimate == pytest.approx(y.nominal_value, rel=1e-14)
    assert budget.measurand("y").combined_uncertainty == pytest.approx(y.std_dev, rel=1e-12)
    assert budget.measurand("z").combined_uncertainty == pytest.approx(z.std_dev, rel=1e-12)
    covariance = uncertainties.covariance_matrix([y, z])
    assert budget.output_covariance[0][1] == pytest.approx(covariance[0][1], rel=1e-12)
    assert budget.output_correlation[0][1] == pytest.approx(
        uncertainties.correlation_matrix([y, z])[0][1], rel=1e-12)


def test_sensitivities_against_finite_differences_and_sympy():
    # reverse-mode coefficients vs central differences (step 1e-6 relative) and vs
    # sympy.diff evaluated at the estimates
    m = model(_NONLINEAR)
    budget = propagate(m).measurand("y")
    f = lambda a, b, c: a * math.exp(b / c) / math.sqrt(c) + math.log(a) * math.sin(b)  # noqa
    point = {"a": 2.5, "b": 0.7, "c": 1.3}
    symbolic = symbolic_sensitivities(m, "y")
    for item in budget.contributions:
        h = 1e-6 * point[item.input]
        up, down = dict(point), dict(point)
        up[item.input] += h
        down[item.input] -= h
        numeric = (f(**up) - f(**down)) / (2 * h)
        assert item.sensitivity == pytest.approx(numeric, rel=1e-7)
        exact = float(symbolic[item.input].subs({i.symbol: i.estimate for i in m.inputs}))
        assert item.sensitivity == pytest.approx(exact, rel=1e-13)


def test_correlation_terms_are_listed_and_shares_add_up():
    budget = propagate(model(_NONLINEAR)).measurand("y")
    assert [t.inputs for t in budget.correlation_terms] == [("a", "b"), ("b", "c")]
    total = sum(c.share for c in budget.contributions) + sum(t.share for t in
                                                             budget.correlation_terms)
    assert total == pytest.approx(100.0)
    assert "infinite degrees of freedom" in budget.dof_rule


def test_zero_first_order_uncertainty_does_not_break():
    # y = x^2 at x = 0: c = 0, so u_c = 0 to first order; the GUM 5.1.2 second-order term
    # is 1/2 (d2f/dx2)^2 u^4 = 2 u^4 [C]
    m = model("""
        title = "zero"
        [measurands.y]
        equation = "x ** 2"
        [inputs.x]
        value = 0
        u = 0.1
    """)
    budget = propagate(m).measurand("y")
    assert budget.combined_uncertainty == 0.0
    assert math.isinf(budget.dof)
    assert [c.share for c in budget.contributions] == [0.0]
    assert budget.expanded_uncertainty == 0.0
    assert propagate(m).warnings == ("'y': the combined standard uncertainty is zero to "
                                     "first order (try the second-order terms or Monte Carlo)",)
    second = propagate(m, second_order=True).measurand("y")
    assert second.combined_uncertainty == pytest.approx(math.sqrt(2 * 0.1 ** 4))


def test_second_order_is_refused_for_correlated_inputs():
    budget = propagate(model(_NONLINEAR), second_order=True)
    assert budget.measurand("y").second_order_variance is None
    assert budget.warnings[0] == ("second-order terms not added: the GUM 5.1.2 higher-order "
                                  "terms hold for uncorrelated inputs only")


def test_division_by_zero_at_the_estimates():
    m = model("""
        title = "zero division"
        [measurands.y]
        equation = "a / b"
        [inputs.a]
        value = 1
        u = 0.1
        [inputs.b]
        value = 0
        u = 0.1
    """)
    with pytest.raises(PropagationError) as caught:
        propagate(m)
    assert str(caught.value) == (
        "test.toml:4: [measurands.y] equation: expected a finite value at the estimates, found "
        "inf (a division by zero or a function outside its domain in 'a / b')")


def test_low_effective_degrees_of_freedom_warns():
    budget = propagate(model("""
        title = "few"
        [measurands.y]
        equation = "x"
        [inputs.x]
        observations = [1.0, 1.2]
    """))
    assert budget.warnings == ("'y': effective degrees of freedom 1 < 3; the coverage factor "
                               "from the t-distribution is very uncertain",)
    # t95(1) = 12.706 (JCGM 100 Table G.2 [C])
    assert budget.measurand("y").coverage_factor == pytest.approx(12.706, abs=0.0005)


def test_budget_as_dataframe():
    frame = propagate(model(_NONLINEAR)).measurand("y").to_frame()
    assert list(frame.index) == ["a", "b", "c"]
    assert list(frame.columns) == ["estimate", "unit", "u", "distribution",
                                   "type", "dof", "sensitivity", "contribution", "share"]


# -- invariants (Hypothesis) --------------------------------------------------------------

_values = st.floats(0.5, 5.0)
_uncertainties = st.floats(1e-4, 0.2)


def _product_model(values, us, order, scale=1.0, r=None):
    lines = ['title = "product"', "[measurands.y]",
             f'equation = "{scale!r} * x0 * x1 / x2 + x0 ** 2"']
    for i in order:
        lines += [f"[inputs.x{i}]", f"value = {values[i]!r}", f"u = {us[i]!r}"]
    if r is not None:
        for a, b in ((0, 1), (1, 2)):
            lines += ["[[correlations]]", f'between = ["x{a}", "x{b}"]', f"r = {r!r}"]
    return parse_model("\n".join(lines))


@settings(max_examples=40, deadline=None)
@given(st.lists(_values, min_size=3, max_size=3), st.lists(_uncertainties, min_size=3,
                                                            max_size=3), st.permutations([0, 1, 2]))
def test_permuting_inputs_leaves_the_result_unchanged(values, us, order):
    base = propagate(_product_model(values, us, [0, 1, 2])).measurand("y")
    permuted = propagate(_product_model(values, us, order)).measurand("y")
    assert permuted.combined_uncertainty == pytest.approx(base.combined_uncertainty, rel=1e-12)
    assert permuted.dof == base.dof


@settings(max_examples=40, deadline=None)
@given(st.lists(_values, min_size=3, max_size=3), st.lists(_uncertainties, min_size=3,
                                                            max_size=3), st.floats(0.1, 100))
def test_scaling_a_linear_model_scales_the_expanded_uncertainty(values, us, scale):
    def linear(factor):
        return parse_model("\n".join([
            'title = "sum"', "[measurands.y]",
            f'equation = "{factor!r} * (x0 + 2 * x1 - x2)"',
            *[line for i in range(3) for line in (f"[inputs.x{i}]", f"value = {values[i]!r}",
                                                  f"u = {us[i]!r}", "dof = 7")]]))
    one = propagate(linear(1.0)).measurand("y")
    scaled = propagate(linear(scale)).measurand("y")
    assert scaled.expanded_uncertainty == pytest.approx(scale * one.expanded_uncertainty,
                                                        rel=1e-12)


@settings(max_examples=40, deadline=None)
@given(st.lists(_values, min_size=3, max_size=3), st.lists(_uncertainties, min_size=3,
                                                            max_size=3))
def test_zero_correlations_equal_no_correlations(values, us):
    none = propagate(_product_model(values, us, [0, 1, 2])).measurand("y")
    zero = propagate(_product_model(values, us, [0, 1, 2], r=0.0)).measurand("y")
    assert zero.combined_uncertainty == pytest.approx(none.combined_uncertainty, rel=1e-14)
