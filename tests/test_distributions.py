"""Each distribution: its standard uncertainty (GUM 4.3.7-4.3.9, JCGM 101 6.4), its sample
moments against the closed form, and its inverse distribution function against scipy.stats.

Monte Carlo tolerances are five standard errors for M draws: sd/sqrt(M) for the mean and
sd*sqrt((kurtosis - 1)/(4M)) for the standard deviation (large-sample formula).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from budget import distributions as d

M = 1_000_000


def _rng():
    return np.random.default_rng(20260601)


# (distribution, closed-form sd, kurtosis): normal 3, uniform 1.8, triangular 2.4, arcsine
# 1.5, t_10 3 + 6/(10 - 4) = 4; the trapezoid, the curvilinear trapezoid and the sum of
# uniforms lie between uniform and triangular, so 2.4 bounds them from above
_CASES = [
    (d.Normal(3.0, 0.5), 0.5, 3.0),
    (d.Rectangular(3.0, 0.5), 0.5 / math.sqrt(3), 1.8),
    (d.Triangular(3.0, 0.5), 0.5 / math.sqrt(6), 2.4),
    (d.Arcsine(3.0, 0.5), 0.5 / math.sqrt(2), 1.5),
    (d.Trapezoidal(3.0, 0.5, 0.5), 0.5 * math.sqrt(1.25 / 6), 2.4),
    (d.CurvilinearTrapezoid(3.0, 0.5, 0.1), math.sqrt(0.25 / 3 + 0.01 / 9), 2.4),
    (d.StudentT(3.0, 0.5, 10.0), 0.5 * math.sqrt(10 / 8), 4.0),
    (d.AtomicWeightSum((8.0, 5.0), (12.0106, 1.007975), (0.001, 0.000135)),
     math.sqrt((8 * 0.001) ** 2 + (5 * 0.000135) ** 2) / math.sqrt(3), 2.4),
]


@pytest.mark.parametrize("distribution, sd, kurtosis", _CASES,
                         ids=[c[0].name for c in _CASES])
def test_sample_moments_match_the_closed_form(distribution, sd, kurtosis):
    draws = distribution.sample(_rng(), M)
    assert draws.mean() == pytest.approx(distribution.estimate, abs=5 * sd / math.sqrt(M))
    assert draws.std(ddof=1) == pytest.approx(sd, abs=5 * sd * math.sqrt((kurtosis - 1) / (4 * M)))


@pytest.mark.parametrize("distribution, divisor", [
    # GUM 4.3.7 (rectangular a/sqrt 3), 4.3.9 (triangular a/sqrt 6), JCGM 101 6.4.6
    # (arcsine a/sqrt 2), JCGM 101 6.4.4 (trapezoid a sqrt((1 + beta^2)/6), beta = 0.5 gives
    # 0.456435 a) [M; numbers C]
    (d.Rectangular(0.0, 1.0), 0.577350),
    (d.Triangular(0.0, 1.0), 0.408248),
    (d.Arcsine(0.0, 1.0), 0.707107),
    (d.Trapezoidal(0.0, 1.0, 0.5), 0.456435),
    (d.Trapezoidal(0.0, 1.0, 0.0), 0.408248),
    (d.Trapezoidal(0.0, 1.0, 1.0), 0.577350),
])
def test_standard_uncertainty_divisors(distribution, divisor):
    assert distribution.standard_uncertainty == pytest.approx(divisor, abs=5e-7)


def test_curvilinear_trapezoid_standard_uncertainty():
    # JCGM 101 6.4.3: u^2 = w^2/3 + d^2/9 [M]
    assert d.CurvilinearTrapezoid(0.0, 2.0, 0.3).standard_uncertainty == pytest.approx(
        math.sqrt(4 / 3 + 0.09 / 9))


_P = np.linspace(0.001, 0.999, 37)


@pytest.mark.parametrize("distribution, reference", [
    (d.Normal(1.0, 2.0), stats.norm(1.0, 2.0)),
    (d.Rectangular(1.0, 2.0), stats.uniform(-1.0, 4.0)),
    (d.Triangular(1.0, 2.0), stats.triang(0.5, loc=-1.0, scale=4.0)),
    (d.Arcsine(1.0, 2.0), stats.arcsine(loc=-1.0, scale=4.0)),
    (d.Trapezoidal(1.0, 2.0, 0.4), stats.trapezoid(0.3, 0.7, loc=-1.0, scale=4.0)),
    (d.StudentT(1.0, 2.0, 5.0), stats.t(5.0, loc=1.0, scale=2.0)),
], ids=["normal", "rectangular", "triangular", "arcsine", "trapezoidal", "student_t"])
def test_inverse_distribution_function_against_scipy(distribution, reference):
    assert np.allclose(distribution.ppf(_P), reference.ppf(_P), rtol=0, atol=1e-12)


def test_trapezoid_sampling_matches_scipy_distribution():
    # JCGM 101 6.4.4 sampling rule against scipy.stats.trapezoid by a Kolmogorov-Smirnov
    # test; with M = 10^5 a false alarm at alpha = 1e-4 is negligible
    draws = d.Trapezoidal(1.0, 2.0, 0.4).sample(_rng(), 100_000)
    assert stats.kstest(draws, stats.trapezoid(0.3, 0.7, loc=-1.0, scale=4.0).cdf).pvalue > 1e-4


def test_exact_draws_its_value():
    assert np.all(d.Exact(4.2).sample(_rng(), 10) == 4.2)
