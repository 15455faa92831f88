"""Checks against the worked examples and tables of JCGM 100:2008 (the GUM).

Provenance tags follow ../shared/references.md: [M✓C] recalled and reproduced by
computation, [C] computed independently, [M] from memory of the published document.
"""

from __future__ import annotations

import math

import pytest
from scipy import stats

from budget._gum import coverage_factor, propagate, welch_satterthwaite
from budget._model import load_model

from conftest import MODELS, model

H1 = MODELS / "reference" / "gum-h1-end-gauge.toml"
NM_PER_MM = 1e6


@pytest.fixture(scope="module")
def h1():
    return propagate(load_model(H1)).measurand("l")


def test_h1_estimate(h1):
    # JCGM 100:2008 H.1.5: l = l_S + d = 50.000 623 mm + 215 nm = 50.000 838 mm [M✓C]
    assert h1.estimate == pytest.approx(50.000838, abs=1e-9)


def test_h1_combined_standard_uncertainty(h1):
    # JCGM 100:2008 H.1.6: u_c(l) = 32 nm [M✓C]; unrounded 31.658 nm [C]
    assert h1.combined_uncertainty * NM_PER_MM == pytest.approx(32, abs=0.5)
    assert h1.combined_uncertainty * NM_PER_MM == pytest.approx(31.658, abs=0.002)


def test_h1_effective_degrees_of_freedom(h1):
    # JCGM 100:2008 H.1.6: nu_eff = 16.7 (eq. G.2b) [M✓C]; 16.74 unrounded [C]
    assert h1.dof == pytest.approx(16.7, abs=0.2)


def test_h1_coverage_factor_and_expanded_uncertainty(h1):
    # JCGM 100:2008 H.1.6: nu_eff truncated to 16, t99(16) = 2.92, U99 = 93 nm [M✓C]
    assert h1.coverage_factor == pytest.approx(2.92, abs=0.005)
    assert h1.expanded_uncertainty * NM_PER_MM == pytest.approx(93, abs=1)


def test_h1_sensitivities_are_signed(h1):
    # JCGM 100:2008 H.1.3: c(d_theta) = -l_S alpha_S = -0.575 um/degC, c(d_alpha) = +5 mm degC
    c = {item.input: item.sensitivity for item in h1.contributions}
    assert c["d_theta"] == pytest.approx(-50.000623 * 11.5e-6, rel=1e-12)
    assert c["d_alpha"] == pytest.approx(50.000623 * 0.1, rel=1e-12)  # -l_S * theta, theta = -0.1 K


def test_h1_second_order_terms():
    # JCGM 100:2008 H.1.7: with the higher-order terms u_c = 34 nm [M]; 33.9 nm [C] with
    # u(theta) rounded to 0.41 degC (the model carries the unrounded 0.406 degC)
    budget = propagate(load_model(H1), second_order=True).measurand("l")
    assert budget.combined_uncertainty * NM_PER_MM == pytest.approx(34, abs=0.5)
    extra = budget.second_order_variance * NM_PER_MM ** 2
    u_theta = math.hypot(0.2, 0.5 / math.sqrt(2))
    # l_S u(d_alpha) u(theta) and l_S u(alpha_S) u(d_theta), JCGM 100 H.1.7 [C]
    expected = (50e6 * 1e-6 / math.sqrt(3) * u_theta) ** 2 \
        + (50e6 * 2e-6 / math.sqrt(3) * 0.05 / math.sqrt(3)) ** 2
    assert extra == pytest.approx(expected, rel=1e-4)


def test_g41_welch_satterthwaite_example():
    # JCGM 100:2008 G.4.1 example: Y = b X1 X2 X3, relative u 0.25 % (nu 9), 0.57 % (nu 4),
    # 0.82 % (nu 14): u_c/y = 1.03 % and nu_eff = 19.0 [M✓C]; t95(19) = 2.09 [C]
    budget = propagate(model("""
        title = "GUM G.4.1"
        [measurands.Y]
        equation = "b * X1 * X2 * X3"
        [inputs.b]
        value = 1
        exact = true
        [inputs.X1]
        value = 1
        u = 0.0025
        dof = 9
        [inputs.X2]
        value = 1
        u = 0.0057
        dof = 4
        [inputs.X3]
        value = 1
        u = 0.0082
        dof = 14
    """)).measurand("Y")
    assert 100 * budget.combined_uncertainty == pytest.approx(1.03, abs=0.005)
    assert budget.dof == pytest.approx(19.0, abs=0.05)
    assert budget.coverage_factor == pytest.approx(2.093, abs=0.0005)


@pytest.mark.parametrize("reliability, dof", [(0.25, 8.0), (0.10, 50.0), (0.50, 2.0)])
def test_g42_degrees_of_freedom_from_reliability(reliability, dof):
    # JCGM 100:2008 G.4.2, eq. (G.3): nu = 1/2 (Delta u / u)^-2; 25 % gives 8 [M✓C]
    m = model(f"""
        title = "GUM G.4.2"
        [measurands.y]
        equation = "x"
        [inputs.x]
        value = 1
        u = 0.1
        reliability = {reliability}
    """)
    assert m.input("x").dof == pytest.approx(dof, rel=1e-12)


# JCGM 100:2008 Table G.2, rows nu = 1, 2, 5, 10, 16, 20, 50 and infinity, columns
# 68.27, 90, 95, 95.45, 99 and 99.73 % [C: scipy; agree with the GUM's table, M]
_P = [2 * stats.norm.cdf(1) - 1, 0.90, 0.95, 2 * stats.norm.cdf(2) - 1, 0.99,
      2 * stats.norm.cdf(3) - 1]
_TABLE_G2 = {
    1: [1.837, 6.314, 12.706, 13.968, 63.657, 235.801],
    2: [1.321, 2.920, 4.303, 4.527, 9.925, 19.207],
    5: [1.111, 2.015, 2.571, 2.649, 4.032, 5.507],
    10: [1.053, 1.812, 2.228, 2.284, 3.169, 3.957],
    16: [1.032, 1.746, 2.120, 2.169, 2.921, 3.544],
    20: [1.026, 1.725, 2.086, 2.133, 2.845, 3.422],
    50: [1.010, 1.676, 2.009, 2.051, 2.678, 3.157],
    math.inf: [1.000, 1.645, 1.960, 2.000, 2.576, 3.000],
}


@pytest.mark.parametrize("dof", list(_TABLE_G2))
def test_table_g2_coverage_factors(dof):
    for p, expected in zip(_P, _TABLE_G2[dof]):
        assert coverage_factor(p, dof) == pytest.approx(expected, abs=0.0005)


def test_coverage_factor_truncates_dof():
    # JCGM 100:2008 G.4.1 note 1: nu_eff is truncated to the next lower integer
    assert coverage_factor(0.99, 16.74) == coverage_factor(0.99, 16)


def test_welch_satterthwaite_ignores_infinite_components():
    # JCGM 100:2008 eq. (G.2b): components with nu_i = infinity add nothing [common practice]
    import numpy as np

    nu = welch_satterthwaite(5.0, np.array([3.0, 4.0]), np.array([10.0, math.inf]))
    assert nu == pytest.approx(5.0 ** 4 / (3.0 ** 4 / 10.0))
