"""The distribution functions of budget._special against scipy.special (reference library).

Tolerance 1e-9 relative: far below the 3 to 4 digits a coverage factor or p-value is shown
with; the incomplete beta function loses a few digits for very large degrees of freedom
(the difference of two large lgamma values)."""

from __future__ import annotations

import math

import pytest
from scipy import special

from budget._special import betainc, f_sf, normal_ppf, t_cdf, t_ppf, t_two_sided_p


@pytest.mark.parametrize("a, b, x", [(0.5, 0.5, 0.3), (2.0, 3.0, 0.7), (10.0, 0.5, 0.99),
                                     (50.0, 60.0, 0.45), (0.1, 20.0, 1e-4), (4.5, 0.5, 0.2)])
def test_incomplete_beta(a, b, x):
    assert betainc(a, b, x) == pytest.approx(special.betainc(a, b, x), rel=1e-9, abs=1e-15)


@pytest.mark.parametrize("dof", [1, 2, 3, 4.5, 9, 16, 30, 120, 1e4])
@pytest.mark.parametrize("p", [0.6, 0.8413447460685429, 0.95, 0.975, 0.995, 0.99865, 0.9999])
def test_t_quantile(dof, p):
    assert t_ppf(p, dof) == pytest.approx(special.stdtrit(dof, p), rel=1e-9)
    assert t_ppf(1 - p, dof) == pytest.approx(special.stdtrit(dof, 1 - p), rel=1e-9)


@pytest.mark.parametrize("dof", [1, 3, 7.5, 40])
@pytest.mark.parametrize("t", [-4.0, -0.3, 0.0, 1.2, 6.0])
def test_t_distribution_function(dof, t):
    assert t_cdf(t, dof) == pytest.approx(special.stdtr(dof, t), rel=1e-9, abs=1e-15)
    assert t_two_sided_p(t, dof) == pytest.approx(2 * special.stdtr(dof, -abs(t)), rel=1e-9)


@pytest.mark.parametrize("f, dfn, dfd", [(1.26, 9, 20), (2.2615, 9, 40), (0.5, 3, 8),
                                         (10.0, 1, 2)])
def test_f_survival(f, dfn, dfd):
    assert f_sf(f, dfn, dfd) == pytest.approx(special.fdtrc(dfn, dfd, f), rel=1e-9)


def test_normal_quantile():
    assert normal_ppf(0.975) == pytest.approx(special.ndtri(0.975), rel=1e-14)
    assert t_ppf(0.975, math.inf) == normal_ppf(0.975)
