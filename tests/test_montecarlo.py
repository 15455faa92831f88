"""Monte Carlo method against JCGM 101:2008 and against the GUM on linear models.

Tolerances come from the number of trials M: five standard errors, sd/sqrt(M) for a mean
and sqrt(p(1 - p)/M)/f(y_p) for a quantile (f the density at the quantile), unless the
reference states its own (../shared/references.md section 3: +/- 0.02 on interval ends).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from budget._errors import SimulationError
from budget._gum import propagate
from budget._montecarlo import (BLOCK, coverage_interval, shortest_interval, simulate,
                               tolerance)

from conftest import model

_ADDITIVE = """
    title = "JCGM 101 9.2"
    [measurands.Y]
    equation = "X1 + X2 + X3 + X4"
    {inputs}
"""


def _additive(shape: str) -> str:
    if shape == "normal":
        one = "value = 0\nu = 1"
    else:
        one = f'value = 0\ndistribution = "rectangular"\nhalf_width = {math.sqrt(3)}'
    return _ADDITIVE.format(inputs="\n".join(f"[inputs.X{i}]\n{one}" for i in range(1, 5)))


def test_jcgm101_9_2_2_normal_inputs():
    # JCGM 101 9.2.2: GUF and MCM give y = 0.00, u = 2.00, 95 % interval [-3.92, 3.92] [M];
    # exact +/- 3.9199 [C]
    m = model(_additive("normal"))
    budget = propagate(m)
    result = simulate(m, budget, trials=1_000_000).measurand("Y")
    assert result.mean == pytest.approx(0.0, abs=0.01)
    assert result.standard_uncertainty == pytest.approx(2.00, abs=0.005)
    assert result.interval[0] == pytest.approx(-3.92, abs=0.02)
    assert result.interval[1] == pytest.approx(3.92, abs=0.02)
    assert result.validation.validated


def test_jcgm101_9_2_3_rectangular_inputs():
    # JCGM 101 9.2.3: four unit-variance rectangular inputs: MCM interval [-3.88, 3.88] [M];
    # the exact 97.5 % quantile of the Irwin-Hall sum is 3.8794 [C]; the GUF's +/-3.92 is
    # validated only at one significant digit (JCGM 101 9.2.3 [M])
    m = model(_additive("rectangular"))
    budget = propagate(m)
    assert budget.measurand("Y").expanded_uncertainty == pytest.approx(3.92, abs=0.005)
    result = simulate(m, budget, trials=1_000_000).measurand("Y")
    assert result.interval[0] == pytest.approx(-3.8794, abs=0.02)
    assert result.interval[1] == pytest.approx(3.8794, abs=0.02)
    assert result.validation.tolerance == pytest.approx(0.05)
    assert result.validation.validated
    three = simulate(m, budget, trials=1_000_000, digits=3).measurand("Y")
    assert three.validation.tolerance == pytest.approx(0.005)
    assert not three.validation.validated


def test_jcgm101_9_2_4_rectangular_inputs_of_different_widths():
    # JCGM 101 9.2.4: X4 with sd 10: u = 10.149, 97.5 % quantile 17.016 [C]; MCM [-17.0, 17.0]
    text = _additive("rectangular").replace(
        f"[inputs.X4]\nvalue = 0\ndistribution = \"rectangular\"\nhalf_width = {math.sqrt(3)}",
        f"[inputs.X4]\nvalue = 0\ndistribution = \"rectangular\"\nhalf_width = {10 * math.sqrt(3)}")
    m = model(text)
    budget = propagate(m)
    assert budget.measurand("Y").combined_uncertainty == pytest.approx(math.sqrt(103))
    result = simulate(m, budget, trials=1_000_000).measurand("Y")
    assert result.interval[1] == pytest.approx(17.016, abs=0.02)
    assert not result.validation.validated


def test_monte_carlo_agrees_with_gum_on_a_linear_model():
    # a linear model with mixed inputs: the Monte Carlo mean and sd equal the GUM's y and
    # u_c within five standard errors (common practice)
    m = model("""
        title = "linear"
        [measurands.y]
        equation = "2 * a - 3 * b + c"
        [inputs.a]
        value = 1.0
        u = 0.1
        [inputs.b]
        value = 2.0
        distribution = "triangular"
        half_width = 0.2
        [inputs.c]
        value = -1.0
        distribution = "arcsine"
        half_width = 0.05
    """)
    gum = propagate(m).measurand("y")
    trials = 400_000
    mc = simulate(m, propagate(m), trials=trials).measurand("y")
    se = gum.combined_uncertainty / math.sqrt(trials)
    assert mc.mean == pytest.approx(gum.estimate, abs=5 * se)
    assert mc.standard_uncertainty == pytest.approx(gum.combined_uncertainty,
                                                    abs=5 * gum.combined_uncertainty
                                                    * math.sqrt(2 / (4 * trials)))


def test_correlated_gaussian_inputs():
    # JCGM 101 6.4.8: correlated normal inputs; Var(a + b) = u_a^2 + u_b^2 + 2 r u_a u_b [C]
    m = model("""
        title = "correlated"
        [measurands.s]
        equation = "a + b"
        [measurands.d]
        equation = "a - b"
        [inputs.a]
        value = 0
        u = 1
        [inputs.b]
        value = 0
        u = 2
        [[correlations]]
        between = ["a", "b"]
        r = 0.5
    """)
    budget = propagate(m)
    assert budget.measurand("s").combined_uncertainty == pytest.approx(math.sqrt(7))
    trials = 400_000
    mc = simulate(m, budget, trials=trials)
    assert mc.measurand("s").standard_uncertainty == pytest.approx(
        math.sqrt(7), abs=5 * math.sqrt(7) * math.sqrt(2 / (4 * trials)))
    # output correlation of a + b and a - b: (1 - 4)/sqrt(7 * 3) [C]
    expected = -3 / math.sqrt(21)
    assert budget.output_correlation[0][1] == pytest.approx(expected)
    assert mc.output_correlation[0][1] == pytest.approx(expected, abs=5 / math.sqrt(trials))


def test_correlated_rectangular_inputs_use_a_copula_with_a_warning():
    m = model("""
        title = "copula"
        [measurands.y]
        equation = "a + b"
        [inputs.a]
        value = 0
        distribution = "rectangular"
        half_width = 1
        [inputs.b]
        value = 0
        distribution = "rectangular"
        half_width = 1
        [[correlations]]
        between = ["a", "b"]
        r = 0.8
    """)
    result = simulate(m, propagate(m), trials=200_000)
    assert result.warnings[0] == ("correlation between non-Gaussian inputs (a, b): drawn "
                                  "through a Gaussian copula; the correlation of the draws "
                                  "differs slightly from the stated r")
    # marginals stay rectangular on [-1, 1]
    draws = result.measurand("y").samples
    assert draws.max() <= 2.0 and draws.min() >= -2.0


def test_type_a_input_is_drawn_from_a_scaled_t_distribution():
    # JCGM 101 6.4.9: n observations give t_{n-1}(mean, s^2/n), whose sd is
    # sqrt((n-1)/(n-3)) s/sqrt(n) [M]; here n = 5: factor sqrt(2) [C]
    m = model("""
        title = "type A"
        [measurands.y]
        equation = "x"
        [inputs.x]
        observations = [10.1, 10.3, 9.9, 10.0, 10.2]
    """)
    s = float(np.std([10.1, 10.3, 9.9, 10.0, 10.2], ddof=1))
    gum = propagate(m).measurand("y")
    assert gum.combined_uncertainty == pytest.approx(s / math.sqrt(5))
    assert gum.dof == 4
    trials = 1_000_000
    mc = simulate(m, propagate(m), trials=trials).measurand("y")
    expected = math.sqrt(4 / 2) * s / math.sqrt(5)
    # t_4 has infinite kurtosis: compare a quantile instead of the sd for the tolerance
    assert mc.interval[1] - 10.1 == pytest.approx(
        stats.t.ppf(0.975, 4) * s / math.sqrt(5), rel=0.01)
    assert mc.standard_uncertainty == pytest.approx(expected, rel=0.05)


def test_same_seed_same_numbers_whatever_the_workers():
    m = model(_additive("normal"))
    budget = propagate(m)
    trials = 3 * BLOCK + 123
    one = simulate(m, budget, trials=trials, seed=7, workers=1).measurand("Y").samples
    two = simulate(m, budget, trials=trials, seed=7, workers=2).measurand("Y").samples
    assert np.array_equal(one, two)
    other = simulate(m, budget, trials=trials, seed=8, workers=2).measurand("Y").samples
    assert not np.array_equal(one, other)


def test_blocks_do_not_depend_on_the_run_length():
    # block b draws from SeedSequence(seed, spawn_key=(b,)): the same numbers whatever the
    # number of trials, so a longer run extends a shorter one
    from budget._montecarlo import _Sampler, _run_blocks

    m = model(_additive("normal"))
    sampler = _Sampler(m, 3)
    short = np.empty((1, 2 * BLOCK))
    long = np.empty((1, 5 * BLOCK))
    _run_blocks(sampler, 2 * BLOCK, short, None, 2)
    _run_blocks(sampler, 5 * BLOCK, long, None, 1)
    assert np.array_equal(short[0], long[0, :2 * BLOCK])
    assert np.array_equal(sampler.block(1, BLOCK), long[:, BLOCK:2 * BLOCK])


def test_non_finite_trials_are_counted_and_reported():
    # x ~ N(1, 0.3) is below zero with probability Phi(-3.33) = 4.3e-4 [C: scipy.stats.norm];
    # the count is binomial, so five standard errors are 5 sqrt(expected)
    m = model("""
        title = "domain"
        [measurands.y]
        equation = "log(x)"
        [inputs.x]
        value = 1
        u = 0.3
    """)
    trials = 400_000
    result = simulate(m, propagate(m), trials=trials)
    expected = stats.norm.cdf(-1 / 0.3) * trials
    assert result.nonfinite == pytest.approx(expected, abs=5 * math.sqrt(expected))
    share = 100 * result.nonfinite / trials
    assert f"{result.nonfinite} of {trials} Monte Carlo trials ({share:.2g} %) gave a " \
        "non-finite model value and were left out" in result.warnings


def test_too_many_non_finite_trials_is_an_error():
    m = model("""
        title = "domain"
        [measurands.y]
        equation = "sqrt(x)"
        [inputs.x]
        value = 0.1
        u = 1
    """)
    with pytest.raises(SimulationError) as caught:
        simulate(m, propagate(m), trials=100_000)
    assert "gave a non-finite model value (limit 1 %)" in str(caught.value)


def test_coverage_interval_indices_follow_jcgm101_7_7():
    # JCGM 101 7.7.2: with M = 100 and p = 0.95, q = 95, r = 3: [y_(3), y_(98)] [M]
    values = np.arange(1.0, 101.0)
    assert coverage_interval(values.copy(), 0.95) == (3.0, 98.0)
    # shortest interval of a skewed sample: exponential quantiles [C: scipy.stats.expon]
    draws = np.random.default_rng(1).exponential(size=1_000_000)
    low, high = shortest_interval(draws, 0.95)
    assert low == pytest.approx(0.0, abs=0.001)
    assert high == pytest.approx(stats.expon.ppf(0.95), abs=0.02)


@pytest.mark.parametrize("shape", ["normal", "rectangular"])
def test_intervals_from_the_kept_tails_equal_a_full_selection(shape):
    # the engine sorts only the values beyond cut points taken from the first block;
    # the result must be exactly that of selecting among all M values (JCGM 101 7.7)
    m = model(_additive(shape))
    result = simulate(m, propagate(m), trials=6 * BLOCK + 17).measurand("Y")
    values = result.samples.copy()
    assert result.interval == coverage_interval(values.copy(), 0.95)
    assert result.shortest_interval == shortest_interval(values.copy(), 0.95)
    p99 = simulate(m, propagate(m, 0.99), trials=6 * BLOCK, coverage=0.99).measurand("Y")
    assert p99.interval == coverage_interval(p99.samples.copy(), 0.99)


@pytest.mark.parametrize("u, digits, delta", [
    # JCGM 101 7.9.2 example: u = 0.000 35 g with two significant digits: delta = 0.000 005 g
    (0.00035, 2, 0.000005), (2.0, 2, 0.05), (2.0, 1, 0.5), (0.0999, 2, 0.005)])
def test_numerical_tolerance(u, digits, delta):
    assert tolerance(u, digits) == pytest.approx(delta, rel=1e-12)


def test_adaptive_procedure_reaches_its_tolerance():
    # JCGM 101 7.9: stop when twice the sd of the batch results is within delta
    m = model(_additive("normal"))
    budget = propagate(m)
    result = simulate(m, budget, adaptive=True)
    assert result.adaptive
    assert result.trials % BLOCK == 0 and result.trials >= 2 * BLOCK
    y = result.measurand("Y")
    assert y.interval[1] == pytest.approx(3.92, abs=0.05)  # delta for u = 2.0, n_dig = 2


def test_correlated_input_without_an_inverse_is_refused():
    m = model("""
        title = "refused"
        [measurands.y]
        equation = "a + b"
        [inputs.a]
        value = 1
        distribution = "curvilinear_trapezoid"
        half_width = 1
        inexactness = 0.1
        [inputs.b]
        value = 1
        u = 0.1
        [[correlations]]
        between = ["a", "b"]
        r = 0.5
    """)
    with pytest.raises(SimulationError) as caught:
        simulate(m, propagate(m), trials=1000)
    assert str(caught.value) == (
        "test.toml: [correlations] between: expected correlated inputs with a normal, "
        "rectangular, triangular, arcsine, trapezoidal or student_t distribution (others "
        "cannot be drawn correlated), found a (curvilinear_trapezoid)")


def test_correlated_student_t_inputs_are_normals_over_independent_chi_roots():
    # a = z_a / sqrt(χ²_a/ν), b = z_b / sqrt(χ²_b/ν) with corr(z_a, z_b) = r: each is an
    # exact t_ν (its sd is scale·sqrt(ν/(ν-2)), JCGM 101 6.4.9) and their correlation is
    # r·(ν-2)/ν·(E sqrt(ν/χ²_ν))², E sqrt(ν/χ²_ν) = sqrt(ν/2)·Γ((ν-1)/2)/Γ(ν/2) [C]
    nu, r, trials = 8.0, 0.6, 400_000
    m = model(f"""
        title = "correlated t"
        [measurands.y]
        equation = "a + b"
        [measurands.d]
        equation = "a - b"
        [inputs.a]
        value = 1
        distribution = "student_t"
        u = 0.1
        dof = {nu}
        [inputs.b]
        value = 2
        distribution = "student_t"
        u = 0.1
        dof = {nu}
        [[correlations]]
        between = ["a", "b"]
        r = {r}
    """)
    result = simulate(m, propagate(m), trials=trials, seed=5)
    assert "correlated Student-t inputs (a, b)" in result.warnings[0]
    scale = m.input("a").distribution.scale
    var_t = scale ** 2 * nu / (nu - 2)
    mean_root = math.sqrt(nu / 2) * math.gamma((nu - 1) / 2) / math.gamma(nu / 2)
    rho = r * (nu - 2) / nu * mean_root ** 2
    # var(a ± b) = 2 var_t (1 ± rho); the sample variance of a t_8 sum has a relative
    # standard error of about sqrt((2 + kurtosis excess)/M) with excess 6/(ν-4) = 1.5
    tolerance = 5 * math.sqrt(3.5 / trials)
    for name, sign in (("y", 1), ("d", -1)):
        got = result.measurand(name).standard_uncertainty ** 2
        assert got == pytest.approx(2 * var_t * (1 + sign * rho), rel=tolerance)


def test_adaptive_intervals_from_the_kept_tails_equal_a_full_selection():
    # the adaptive run keeps each batch's tail values beyond the first batch's cut points;
    # both JCGM 101 7.7 intervals must equal those of a selection over all its values
    m = model("""
        title = "adaptive tails"
        [measurands.y]
        equation = "a * exp(b)"
        [inputs.a]
        value = 1
        u = 0.2
        [inputs.b]
        value = 0
        distribution = "rectangular"
        half_width = 0.5
    """)
    result = simulate(m, propagate(m), adaptive=True, digits=1, seed=9).measurand("y")
    values = np.sort(result.samples)
    assert result.interval == coverage_interval(values.copy(), 0.95)
    assert result.shortest_interval == shortest_interval(values.copy(), 0.95)
