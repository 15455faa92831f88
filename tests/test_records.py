"""Charge, end points and drift from records (budget/_records.py) against scipy and algebra."""

from __future__ import annotations

import math

import numpy as np
import pytest

from budget._fits import FitError, polynomial
from budget._records import (
    charge,
    checked_series,
    drift,
    inflection,
    intersection,
    trapezoid,
)


def _series(x, y, name="t"):
    return checked_series("rec.csv", np.asarray(x, float), np.asarray(y, float),
                          np.arange(2, len(x) + 2), name)


def test_trapezoid_matches_scipy_and_its_error_estimate_is_exact_for_a_quadratic():
    # reference: scipy.integrate.trapezoid; Richardson's (T_h − T_2h)/3 is the exact
    # correction of T_h for a quadratic on equal steps (the rule's error is ∝ h² f'')
    from scipy.integrate import trapezoid as scipy_trapezoid

    x = np.linspace(0.0, 2.0, 41)
    y = 3.0 - x + 0.5 * x ** 2
    total, weights, error = trapezoid(x, y)
    assert total == pytest.approx(scipy_trapezoid(y, x), rel=1e-14)
    assert weights @ y == pytest.approx(total, rel=1e-14)
    exact = 3.0 * 2 - 2.0 + 0.5 * 8 / 3
    assert exact - total == pytest.approx(error, rel=1e-9)


def test_charge_with_line_background_is_the_integral_minus_the_fitted_line():
    # reference: scipy.integrate.trapezoid for the raw integral; numpy.polyfit for the
    # background line, integrated over the window by hand
    from scipy.integrate import trapezoid as scipy_trapezoid

    rng = np.random.default_rng(4)
    t = np.arange(0.0, 600.0, 0.5)
    current = 0.01 + 2e-6 * t + np.where((t > 100) & (t < 400), 5.0, 0.0)
    current = current + rng.normal(0.0, 1e-4, t.size)
    result = charge(_series(t, current), (50.0, 450.0), "line", (450.0, 599.5), False)
    inside = (t >= 50) & (t <= 450)
    assert result.raw == pytest.approx(scipy_trapezoid(current[inside], t[inside]), rel=1e-13)
    tail = t >= 450
    b1, b0 = np.polyfit(t[tail], current[tail], 1)
    expected = b0 * 400.0 + b1 * (450.0 ** 2 - 50.0 ** 2) / 2
    assert result.background.estimates[0] == pytest.approx(expected, rel=1e-9)
    assert result.background.dof == tail.sum() - 2


def test_exponential_background_and_residual_charge():
    # i(t) = i0·exp(−(t − t0)/τ) + i_b: the charge beyond t_end is i_end·τ (the integral of
    # the decaying part from t_end to ∞) and the background charge is i_b·(t_end − t_start)
    t = np.linspace(0.0, 900.0, 1801)
    i = 5.0 * np.exp(-t / 120.0) + 0.004
    i = i + np.random.default_rng(2).normal(0.0, 1e-5, t.size)
    result = charge(_series(t, i), None, "exponential", (300.0, 900.0), True)
    bg, residual = result.background.estimates
    assert bg == pytest.approx(0.004 * 900.0, rel=2e-3)
    assert residual == pytest.approx(5.0 * math.exp(-900.0 / 120.0) * 120.0, rel=2e-2)
    assert result.background.covariance.shape == (2, 2)
    assert result.background.dof == (t >= 300).sum() - 3


def test_intersection_of_two_lines_and_its_uncertainty_by_finite_differences():
    x = np.linspace(0.0, 10.0, 101)
    y = np.where(x < 5.0, 1.0 + 0.1 * x, 1.5 + 2.0 * (x - 5.0))
    y = y + np.random.default_rng(7).normal(0.0, 0.01, x.size)
    result = intersection(_series(x, y, "Q"), (0.0, 4.0), (6.0, 10.0))
    assert result.estimates[0] == pytest.approx(5.0, abs=0.02)
    # cross-check of the gradient: the variance again by numerical differentiation
    one, two = (x <= 4.0), (x >= 6.0)
    f1 = polynomial(x[one], y[one], 1, x0=float(x[one].mean()))
    f2 = polynomial(x[two], y[two], 1, x0=float(x[two].mean()))

    def crossing(p1, p2):
        (a1, b1), (a2, b2) = p1, p2
        c1, c2 = x[one].mean(), x[two].mean()
        return (a2 - a1 + b1 * c1 - b2 * c2) / (b1 - b2)

    variance = 0.0
    for fit, first in ((f1, True), (f2, False)):
        g = np.zeros(2)
        for k in range(2):
            step = np.zeros(2)
            step[k] = 1e-6 * max(1.0, abs(fit.estimates[k]))
            plus = fit.estimates + step
            minus = fit.estimates - step
            hi = crossing(plus, f2.estimates) if first else crossing(f1.estimates, plus)
            lo = crossing(minus, f2.estimates) if first else crossing(f1.estimates, minus)
            g[k] = (hi - lo) / (2 * step[k])
        variance += g @ fit.covariance @ g
    assert result.covariance[0, 0] == pytest.approx(variance, rel=1e-5)


def test_inflection_of_a_symmetric_step_is_its_centre():
    x = np.linspace(0.0, 20.0, 201)
    y = 0.3 + 0.2 * np.tanh((x - 11.3) / 1.5)
    result = inflection(_series(x, y, "Q"), (8.3, 14.3))  # a window centred on the step
    assert result.estimates[0] == pytest.approx(11.3, abs=0.01)
    assert result.dof == 61 - 4


def test_drift_common_slope_matches_lstsq():
    rng = np.random.default_rng(12)
    t = np.concatenate([np.arange(0.0, 300.0, 10.0), np.arange(900.0, 1200.0, 10.0)])
    water = np.where(t < 600, 2.0, 150.0) + 0.05 * t + rng.normal(0.0, 0.3, t.size)
    result = drift(_series(t, water), (0.0, 290.0), (900.0, 1190.0))
    design = np.column_stack([t < 600, t >= 600, t]).astype(float)
    coefficients, *_ = np.linalg.lstsq(design, water, rcond=None)
    assert result.estimates[0] == pytest.approx(coefficients[2], rel=1e-10)
    assert result.dof == t.size - 3


@pytest.mark.parametrize("make, message", [
    (lambda: _series([0, 1, 1, 2], [1, 2, 3, 4]),
     "expected t to increase from row to row in 'rec.csv', found 1 at row 4 after 1 at "
     "row 3"),
    (lambda: charge(_series(np.arange(10.0), np.ones(10)), (2.0, 20.0), "none", None, False),
     "expected window [2, 20] inside the data of 'rec.csv' (t from 0 to 9), found it "
     "outside"),
    (lambda: intersection(_series(np.arange(10.0), np.arange(10.0)), (0.0, 1.0), (5, 9)),
     "expected at least 3 readings of 'rec.csv' in the first window, found 2 (rows 2–3)"),
    (lambda: charge(_series(np.arange(10.0), np.array([5, 4, 3, 2, 1, 0.5, 0.2, -0.1, 0.1,
                                                       0.05])), None, "exponential",
                    (4.0, 9.0), True),
     "expected currents > 0 in background_window of 'rec.csv' for the exponential fit (its "
     "starting values take a logarithm), found -0.1 at row 9"),
    (lambda: intersection(_series(np.arange(10.0), np.arange(10.0) + [0, .1] * 5),
                          (0.0, 3.0), (5, 9)),
     "expected two segments of 'rec.csv' with different slopes, found 1.02 and 1 "
     "(difference 0.02 within three standard uncertainties, 0.104): no clear intersection"),
])
def test_bad_records_name_the_file_and_row(make, message):
    with pytest.raises(FitError) as caught:
        make()
    assert str(caught.value) == message
