"""budget._combination: GLS mean, plain mean, random effects, consistency check."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq
from scipy.stats import chi2

from budget._combination import (combine, consistency, dersimonian_laird, gls_mean,
                                paule_mandel, plain_mean)
from budget._errors import PropagationError

# BCG vaccine trials (Colditz et al., JAMA 271 (1994) 698), the worked example of the R
# package metafor (dat.bcg): TB positive / negative in the vaccinated and control groups.
# Counts [V: metafor-project.org, analyses:vanhouwelingen2002, rows 1-7; rows 8-13 M].
BCG = np.array([[4, 119, 11, 128], [6, 300, 29, 274], [3, 228, 11, 209],
                [62, 13536, 248, 12619], [33, 5036, 47, 5761], [180, 1361, 372, 1079],
                [8, 2537, 10, 619], [505, 87886, 499, 87892], [29, 7470, 45, 7232],
                [17, 1699, 65, 1600], [186, 50448, 141, 27197], [5, 2493, 3, 2338],
                [27, 16886, 29, 17825]], dtype=float)


def _bcg() -> tuple[np.ndarray, np.ndarray]:
    a, b, c, d = BCG.T
    y = np.log((a / (a + b)) / (c / (c + d)))  # log risk ratio
    v = 1 / a - 1 / (a + b) + 1 / c - 1 / (c + d)
    return y, np.diag(v)


def test_fixed_effect_on_the_bcg_example() -> None:
    # metafor rma(method="FE") on dat.bcg, log risk ratios: estimate -0.4303, se 0.0405,
    # Q(df = 12) = 152.2330 [M✓C]
    y, v = _bcg()
    mu, u, _ = gls_mean(y, v)
    assert mu == pytest.approx(-0.4303, abs=5e-5)
    assert u == pytest.approx(0.0405, abs=5e-5)
    assert consistency(y, v).chi2 == pytest.approx(152.2330, abs=5e-5)


def test_dersimonian_laird_on_the_bcg_example() -> None:
    # metafor rma(method="DL") on dat.bcg: tau^2 = 0.3088, estimate -0.7141, se 0.1787
    # [M✓C]
    y, v = _bcg()
    assert dersimonian_laird(y, v) == pytest.approx(0.3088, abs=5e-5)
    combined = combine(y, v, "dersimonian-laird")
    assert combined.estimate == pytest.approx(-0.7141, abs=5e-5)
    assert combined.standard_uncertainty == pytest.approx(0.1787, abs=5e-5)
    assert combined.tau == pytest.approx(math.sqrt(0.3088), abs=1e-4)


def test_dersimonian_laird_closed_form() -> None:
    # independent computation: DerSimonian & Laird (1986) eq. for a diagonal V
    y, v = _bcg()
    w = 1 / np.diag(v)
    mu = np.sum(w * y) / w.sum()
    q = np.sum(w * (y - mu) ** 2)
    expected = (q - (y.size - 1)) / (w.sum() - np.sum(w * w) / w.sum())
    assert dersimonian_laird(y, v) == pytest.approx(expected, rel=1e-12)


def test_paule_mandel_solves_its_estimating_equation() -> None:
    # independent computation: Paule & Mandel (1982), sum w_i(tau)(y_i - mu)^2 = n - 1,
    # solved by scipy's brentq on the diagonal formula
    y, v = _bcg()
    var = np.diag(v)

    def excess(tau2: float) -> float:
        w = 1 / (var + tau2)
        mu = np.sum(w * y) / w.sum()
        return float(np.sum(w * (y - mu) ** 2) - (y.size - 1))

    expected = brentq(excess, 0.0, 10.0, xtol=1e-14)
    assert paule_mandel(y, v) == pytest.approx(expected, rel=1e-9)
    w = 1 / (var + expected)
    result = combine(y, v, "paule-mandel")
    assert result.estimate == pytest.approx(np.sum(w * y) / w.sum(), rel=1e-9)
    assert result.standard_uncertainty == pytest.approx(1 / math.sqrt(w.sum()), rel=1e-9)


def test_gls_mean_against_a_direct_normal_equation() -> None:
    # (J^T V^-1 J)^-1 J^T V^-1 x with J = 1, computed directly by numpy (Aitken 1935)
    x = np.array([99.9866, 99.9780, 99.9841])
    sd = np.array([0.0027, 0.0170, 0.0060])
    r = np.array([[1.0, 0.3, 0.5], [0.3, 1.0, -0.2], [0.5, -0.2, 1.0]])
    v = np.outer(sd, sd) * r
    j = np.ones((3, 1))
    vi = np.linalg.inv(v)
    cov = np.linalg.inv(j.T @ vi @ j)
    expected = (cov @ j.T @ vi @ x).item()
    mu, u, weights = gls_mean(x, v)
    assert mu == pytest.approx(expected, rel=1e-14)
    assert u == pytest.approx(math.sqrt(cov.item()), rel=1e-12)
    assert weights.sum() == pytest.approx(1.0, rel=1e-14)


def test_plain_mean_keeps_the_covariance() -> None:
    # u^2(mean) = 1^T V 1 / n^2 (GUM 5.2.2 applied to f = (x1 + x2)/2)
    v = np.array([[4.0, 1.0], [1.0, 9.0]])
    mu, u, _ = plain_mean([1.0, 3.0], v)
    assert mu == 2.0
    assert u == pytest.approx(math.sqrt((4 + 9 + 2) / 4), rel=1e-15)


def test_consistency_p_value_and_birge_ratio() -> None:
    # chi2 of two independent results: (x1 - x2)^2 / (u1^2 + u2^2); p from scipy
    check = consistency([1.0, 2.0], np.diag([0.25, 0.25]))
    assert check.chi2 == pytest.approx(2.0, rel=1e-14)
    assert check.p_value == pytest.approx(chi2.sf(2.0, 1), rel=1e-12)
    assert check.birge_ratio == pytest.approx(math.sqrt(2.0), rel=1e-14)


def test_warnings_when_the_rule_does_not_fit() -> None:
    y, v = _bcg()
    assert combine(y, v, "weighted").warnings[0].startswith(
        "combination: the results are not consistent (χ² = 152 with 12 degrees of freedom")
    consistent = combine([1.0, 1.1], np.diag([0.25, 0.25]), "paule-mandel")
    assert consistent.tau == 0.0
    assert "adds no between-method variance" in consistent.warnings[0]


def test_negative_weight_is_reported() -> None:
    # strongly correlated results of unequal uncertainty give a negative GLS weight
    # (Cox 2002, common practice)
    v = np.array([[1.0, 1.8], [1.8, 4.0]])
    result = combine([0.0, 1.0], v, "weighted")
    assert min(result.weights) < 0
    assert any("negative" in w for w in result.warnings)


def test_singular_covariance_is_refused() -> None:
    with pytest.raises(PropagationError, match="not positive definite"):
        gls_mean([1.0, 2.0], [[1.0, 1.0], [1.0, 1.0]])
    with pytest.raises(PropagationError, match="expected a combination rule"):
        combine([1.0, 2.0], np.eye(2), "median")


@settings(max_examples=50, deadline=None)
@given(st.lists(st.floats(-10, 10), min_size=2, max_size=6),
       st.lists(st.floats(0.01, 5), min_size=6, max_size=6))
def test_random_effects_widen_the_uncertainty(values: list[float], sds: list[float]) -> None:
    # invariant: tau^2 >= 0, so u(random effects) >= u(weighted mean)
    x = np.array(values)
    v = np.diag(np.array(sds[:x.size]) ** 2)
    fixed = combine(x, v, "weighted").standard_uncertainty
    for rule in ("dersimonian-laird", "paule-mandel"):
        assert combine(x, v, rule).standard_uncertainty >= fixed * (1 - 1e-12)
