"""Inputs estimated together, degrees of freedom of correlated inputs, t draws.

Sources: JCGM 100:2008 Annex H.3 (thermometer calibration by least squares) for the
degrees of freedom of a prediction from one fitted line; scipy.stats (t,
multivariate_t) for the distributions Monte Carlo draws (JCGM 101 6.4.9, JCGM 102 6.5).
Monte Carlo tolerances are five standard errors computed from the number of trials.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from conftest import MODELS, model
from scipy import stats

from budget._analysis import evaluate
from budget._errors import InputError
from budget._explanation import explain
from budget._gum import propagate
from budget._model import load_model
from budget._montecarlo import simulate

H3 = MODELS / "reference" / "gum-h3-thermometer.toml"

# JCGM 100:2008 H.3, table H.6 [M✓C]: the eleven readings t_k / degC and corrections
# b_k / degC; recalled, and reproduced exactly by the fit below (y1, y2, u, r, s).
H3_T = [21.521, 22.012, 22.512, 23.003, 23.507, 23.999, 24.513, 25.002, 25.503, 26.010,
        26.511]
H3_B = [-0.171, -0.169, -0.166, -0.159, -0.164, -0.165, -0.156, -0.157, -0.159, -0.161,
        -0.160]


def _line(at: float, declared: bool = True, dof_y2: int = 9) -> str:
    text = f"""
        title = "H.3 prediction"
        [measurands.b]
        equation = "y1 + y2 * (t - t0)"
        [inputs.y1]
        value = -0.1712
        u = 0.0029
        dof = 9
        [inputs.y2]
        value = 0.00218
        u = 0.00067
        dof = {dof_y2}
        [inputs.t]
        value = {at}
        exact = true
        [inputs.t0]
        value = 20
        exact = true
        [[correlations]]
        between = ["y1", "y2"]
        r = -0.930
    """
    if declared:
        text += """
        [[estimated_together]]
        inputs = ["y1", "y2"]
        """
    return text


def test_the_published_h3_fit_is_what_the_model_file_states():
    # JCGM 100 H.3.3 [V: issue 10 quotes the published figures]: y1 = -0.1712 degC,
    # u(y1) = 0.0029, y2 = 0.00218, u(y2) = 0.00067, r = -0.930, from 11 points (nu = 9);
    # numpy's least squares on the table H.6 data [M] reproduces them
    x = np.column_stack([np.ones(11), np.array(H3_T) - 20.0])
    coef, residual, _, _ = np.linalg.lstsq(x, np.array(H3_B), rcond=None)
    cov = residual[0] / 9 * np.linalg.inv(x.T @ x)
    u = np.sqrt(np.diag(cov))
    assert coef[0] == pytest.approx(-0.1712, abs=0.00005)
    assert coef[1] == pytest.approx(0.00218, abs=0.000005)
    assert u[0] == pytest.approx(0.0029, abs=0.00005)
    assert u[1] == pytest.approx(0.00067, abs=0.000005)
    assert cov[0, 1] / (u[0] * u[1]) == pytest.approx(-0.930, abs=0.0005)
    m = load_model(H3)
    assert [(i.estimate, i.standard_uncertainty, i.dof) for i in m.inputs[:2]] == [
        (-0.1712, 0.0029, 9.0), (0.00218, 0.00067, 9.0)]
    assert m.correlations == (("y1", "y2", -0.93),)


def test_gum_h3_prediction_at_30_degc_has_the_line_dof():
    # JCGM 100:2008 H.3.4 [V: figures quoted in issue 10]: b(30 degC) = -0.1494 degC,
    # u = 0.0041 degC (rounding); the fit has nu = 11 - 2 = 9 and so has the prediction,
    # k = t_0.975(9) = 2.262 (scipy.stats.t)
    b = propagate(load_model(H3)).measurand("b")
    assert b.estimate == pytest.approx(-0.1494, abs=0.00005)
    assert b.combined_uncertainty == pytest.approx(0.0041, abs=0.00005)
    assert b.dof == pytest.approx(9.0, rel=1e-12)
    assert b.coverage_factor == pytest.approx(stats.t.ppf(0.975, 9), rel=1e-9)
    assert round(b.coverage_factor, 3) == 2.262
    assert b.expanded_uncertainty == pytest.approx(2.262 * b.combined_uncertainty, rel=1e-3)
    assert b.dof_rule == ("Welch-Satterthwaite, GUM eq. (G.2b); inputs estimated together "
                          "(y1, y2) count as one component with their common ν = 9")


@pytest.mark.parametrize("at", [22.0, 24.0, 30.0, 40.0])
def test_regression_negative_correlation_does_not_shrink_nu(at):
    # issue 10 regression: term-by-term Welch-Satterthwaite kept both full terms in the
    # denominator while the negative correlation shrank u_c (nu_eff far below 9 near the
    # middle of the line); one set gives the line's nu = 9 at every point [JCGM 100 H.3]
    b = propagate(model(_line(at))).measurand("b")
    c = np.array([1.0, at - 20.0]) * np.array([0.0029, 0.00067])
    term_by_term = b.combined_uncertainty ** 4 / float(np.sum(c ** 4 / 9))
    assert term_by_term < 9  # the old answer, for the record
    assert b.dof == pytest.approx(9.0, rel=1e-12)


def test_undeclared_correlated_finite_dof_counts_with_the_smallest_nu_and_warns():
    # no published rule without the independent sources of the correlation (Willink,
    # Metrologia 44 (2007) 340): the group counts once, with its smallest nu, and says so
    budget = propagate(model(_line(24.0, declared=False, dof_y2=12)))
    b = budget.measurand("b")
    assert b.dof == pytest.approx(9.0, rel=1e-12)
    assert "the correlated inputs (y1, y2) count as one component with their smallest " \
           "ν = 9" in b.dof_rule
    assert budget.warnings == (
        ("'b': inputs y1, y2 are correlated and have finite degrees of freedom but are not "
        "declared [[estimated_together]]; Welch-Satterthwaite has no rule for them "
        "(Willink 2007 needs the independent sources of the correlation), so they count as "
        "one component with ν = 9, their smallest; declare them estimated together if they "
        "come from one data set"),)


def test_nu_eff_is_never_below_the_smallest_input_nu():
    # a property of Welch-Satterthwaite over independent components (GUM G.4.1):
    # u_c^4 / sum(v_g^2/nu_g) >= min(nu) because sum(v_g^2) <= (sum v_g)^2
    rng = np.random.default_rng(7)
    for _ in range(20):
        at = float(rng.uniform(15, 35))
        r = float(rng.uniform(-0.99, 0.99))
        smallest = int(rng.integers(3, 30))
        text = _line(at, declared=False, dof_y2=smallest).replace(
            "r = -0.930", f"r = {r}")
        text += """
        [inputs.z]
        value = 0
        u = 0.001
        dof = 4
        """
        text = text.replace('"y1 + y2 * (t - t0)"', '"y1 + y2 * (t - t0) + z"')
        assert propagate(model(text)).measurand("b").dof >= min(4, smallest) - 1e-9


def test_set_with_uncorrelated_members_is_one_component():
    # two corrections from one data set, no correlation stated: v = u1^2 + u2^2 with the
    # common nu (not the Welch-Satterthwaite sum of two nu = 5 terms, which would be 10)
    b = propagate(model("""
        title = "set"
        [measurands.y]
        equation = "a + b"
        [inputs.a]
        value = 1
        u = 0.1
        dof = 5
        [inputs.b]
        value = 1
        u = 0.1
        dof = 5
        [[estimated_together]]
        inputs = ["a", "b"]
        note = "one data set"
    """)).measurand("y")
    assert b.dof == pytest.approx(5.0, rel=1e-12)


@pytest.mark.parametrize("body, message", [
    ('inputs = ["a", "b"]\n', ("test.toml:17: [estimated_together] inputs: expected one "
     "common ν for the inputs of set 1 (they come from one data set), found a ν = 5, "
     "b ν = 7")),
    ('inputs = ["a", "q"]\n', ("test.toml:17: [estimated_together] inputs: unknown input "
     "'q' in set 1")),
    ('inputs = ["a"]\n', ("test.toml:17: [estimated_together] inputs: expected inputs = "
     "[\"name\", \"name\", …] (at least two) in set 1, found ['a']")),
    ('inputs = ["a", "a"]\n', ("test.toml:17: [estimated_together] inputs: expected "
     "different inputs in set 1, found 'a' twice")),
    ('inputs = ["a", "c"]\n', ("test.toml:17: [estimated_together] inputs: expected inputs "
     "stated with a normal or t distribution (u, expanded or observations) in set 1, found "
     "'c' (rectangular)")),
    ('input = ["a", "b"]\n', ("test.toml:17: [estimated_together] input: expected a key in "
     "set 1 among inputs, note, found 'input' (did you mean 'inputs'?)")),
    ('inputs = ["a", "b"]\n[[estimated_together]]\ninputs = ["b", "c"]\n',
     ("test.toml:17: [estimated_together] inputs: expected one common ν for the inputs of "
     "set 1 (they come from one data set), found a ν = 5, b ν = 7")),
])
def test_bad_sets_are_refused_with_the_place(body, message):
    text = ('title = "bad"\n[measurands.y]\nequation = "a + b + c"\n[inputs.a]\nvalue = 1\n'
            'u = 0.1\ndof = 5\n[inputs.b]\nvalue = 1\nu = 0.1\ndof = 7\n'
            '[[estimated_together]]\n' + body)
    text = text.replace("dof = 7\n", "dof = 7\n[inputs.c]\nvalue = 1\ndistribution = "
                        '"rectangular"\nhalf_width = 0.1\n', 1)
    with pytest.raises(InputError) as caught:
        model(text)
    assert str(caught.value) == message


def test_an_input_in_two_sets_is_refused():
    text = ('title = "bad"\n[measurands.y]\nequation = "a + b + c"\n'
            + "".join(f"[inputs.{n}]\nvalue = 1\nu = 0.1\ndof = 5\n" for n in "abc")
            + '[[estimated_together]]\ninputs = ["a", "b"]\n'
            + '[[estimated_together]]\ninputs = ["b", "c"]\n')
    with pytest.raises(InputError) as caught:
        model(text)
    assert str(caught.value) == ("test.toml:19: [estimated_together] inputs: expected each "
                                 "input in one set at most, found 'b' in sets 1 and 2")


# --- Monte Carlo: what is drawn (JCGM 101 6.4.9, JCGM 102 6.5) -------------------------

def _quantile_tolerance(p: float, m: int, density: float) -> float:
    """Five standard errors of the p-quantile of m draws: 5·sqrt(p(1-p)/m)/f(q)."""
    return 5.0 * math.sqrt(p * (1.0 - p) / m) / density


def test_u_with_dof_is_drawn_as_t():
    # issue 10 regression: `u` + `dof` was drawn as a plain normal; JCGM 101 6.4.9 says
    # t_nu(x, u^2); quantiles checked against scipy.stats.t
    m = model("""
        title = "t"
        [measurands.y]
        equation = "x"
        [inputs.x]
        value = 10
        u = 0.5
        dof = 4
    """)
    trials = 400_000
    y = simulate(m, trials=trials, seed=3).measurands[0].samples
    law = stats.t(4, loc=10, scale=0.5)
    for p in (0.025, 0.5, 0.975):
        tol = _quantile_tolerance(p, trials, law.pdf(law.ppf(p)))
        assert np.quantile(y, p) == pytest.approx(law.ppf(p), abs=tol)


def _pair(nu: int, r: float) -> str:
    return f"""
        title = "set"
        [measurands.p]
        equation = "a"
        [measurands.q]
        equation = "b"
        [inputs.a]
        value = 1
        u = 0.2
        dof = {nu}
        [inputs.b]
        value = -2
        u = 0.5
        dof = {nu}
        [[correlations]]
        between = ["a", "b"]
        r = {r}
        [[estimated_together]]
        inputs = ["a", "b"]
    """


def test_a_set_is_drawn_as_one_multivariate_t():
    # JCGM 102 6.5: X = x + L z sqrt(nu/w), w ~ chi2_nu, one w for the whole set;
    # checked against scipy.stats.multivariate_t (joint lower-orthant probabilities) and
    # scipy.stats.t (marginal quantiles); covariance nu/(nu-2)·Sigma
    nu, r, trials = 6, -0.7, 400_000
    sim = simulate(model(_pair(nu, r)), trials=trials, seed=11)
    a, b = sim.measurands[0].samples, sim.measurands[1].samples
    shape = np.array([[0.04, r * 0.1], [r * 0.1, 0.25]])
    joint = stats.multivariate_t(loc=[1.0, -2.0], shape=shape, df=nu)
    for point in ([1.0, -2.0], [1.2, -2.6], [0.7, -1.5], [1.4, -1.0]):
        p = float(joint.cdf(point, random_state=1))
        share = float(np.mean((a <= point[0]) & (b <= point[1])))
        assert share == pytest.approx(p, abs=5 * math.sqrt(p * (1 - p) / trials) + 1e-3)
    for values, loc, scale in ((a, 1.0, 0.2), (b, -2.0, 0.5)):
        law = stats.t(nu, loc=loc, scale=scale)
        for p in (0.025, 0.975):
            tol = _quantile_tolerance(p, trials, law.pdf(law.ppf(p)))
            assert np.quantile(values, p) == pytest.approx(law.ppf(p), abs=tol)
    covariance = np.cov(a, b)
    assert covariance[0, 1] == pytest.approx(nu / (nu - 2) * r * 0.1, rel=0.05)


def test_one_chi_square_for_the_set_even_without_correlation():
    # with r = 0 a multivariate t still couples its members through the shared w:
    # P(|A| > c, |B| > c) differs from the product of the marginals; the value comes from
    # scipy.stats.multivariate_t (1 - the four orthant terms of the square)
    nu, trials, c = 3, 400_000, 2.0
    sim = simulate(model(_pair(nu, 0.0)), trials=trials, seed=5)
    za = (sim.measurands[0].samples - 1.0) / 0.2
    zb = (sim.measurands[1].samples + 2.0) / 0.5
    joint = stats.multivariate_t(loc=[0, 0], shape=np.eye(2), df=nu)
    inner = float(joint.cdf([c, c], lower_limit=[-c, -c], random_state=1))
    marginal = 2 * stats.t.sf(c, nu)
    both_outside = 1 - 2 * (1 - marginal) + inner  # inclusion-exclusion on |A|,|B| <= c
    share = float(np.mean((np.abs(za) > c) & (np.abs(zb) > c)))
    assert share == pytest.approx(both_outside, abs=5 * math.sqrt(
        both_outside * (1 - both_outside) / trials) + 1e-3)
    assert both_outside > 1.5 * marginal ** 2  # not two independent t's


def test_h3_monte_carlo_validates_and_explain_says_t():
    # the H.3 prediction is linear in a bivariate t with nu = 9: its distribution is a
    # t_9 with scale u_c, so the GUM interval (k = t_0.975(9)) and the Monte Carlo one
    # agree (JCGM 101 8.2) and the Monte Carlo u is u_c·sqrt(9/7) (scipy-free algebra)
    result = evaluate(load_model(H3), trials=400_000, seed=2)
    b = result.budget.measurand("b")
    mc = result.simulation.measurand("b")
    assert mc.standard_uncertainty == pytest.approx(
        b.combined_uncertainty * math.sqrt(9 / 7), rel=5 * math.sqrt(2 / 400_000) * 2)
    law = stats.t(9, loc=b.estimate, scale=b.combined_uncertainty)
    tol = _quantile_tolerance(0.025, 400_000, law.pdf(law.ppf(0.025)))
    assert mc.interval[0] == pytest.approx(law.ppf(0.025), abs=tol)
    assert mc.interval[1] == pytest.approx(law.ppf(0.975), abs=tol)
    assert not [w for w in result.warnings if "copula" in w]
    assert explain(result)  # runs with a set in the model


def test_a_joint_evaluation_keeps_the_sets():
    # two models, each predicting from its own calibration line (JCGM 100 H.3 figures):
    # joined, each line is still one Welch-Satterthwaite component with nu = 9
    from budget._joint import Member, join

    members = [Member(name=n, model=model(_line(at))) for n, at in (("a", 24.0), ("b", 30.0))]
    joint = join(members)
    assert [s.inputs for s in joint.model.estimated_together] == [
        (joint.input_name("a", "y1"), joint.input_name("a", "y2")),
        (joint.input_name("b", "y1"), joint.input_name("b", "y2"))]
    budget = propagate(joint.model)
    assert [m.dof for m in budget.measurands] == pytest.approx([9.0, 9.0], rel=1e-12)


@pytest.mark.parametrize("statement, says_t", [
    ("u = 1\ndof = 3", True),                                      # drawn as t_3
    ('distribution = "rectangular"\nhalf_width = 1.7\ndof = 3', False),  # drawn rectangular
])
def test_explain_says_t_only_for_what_is_drawn_as_t(statement, says_t):
    # issue 10 regression: explain said "drawn from a t distribution" for an input that
    # Monte Carlo drew as a plain normal; now it says so exactly when the draw is a t
    text = ('title = "one"\n[measurands.y]\nequation = "x + e"\n[inputs.x]\nvalue = 0\n'
            + statement + "\n[inputs.e]\nvalue = 0\nu = 0.01\n")
    result = evaluate(model(text), trials=100_000, seed=9)
    reasons = " ".join(explain(result, sobol_trials=1024)[0].reasons)
    drawn = result.model.input("x").distribution.name
    assert (drawn == "student_t") == says_t
    if not result.simulation.measurand("y").validation.validated:
        assert ("drawn from a t distribution" in reasons) == says_t


def test_many_correlated_groups_give_one_warning_and_a_short_rule():
    # 40 independent correlated pairs with finite nu: one warning per measurand and a
    # dof_rule that names three groups and counts the rest (a rule, not a listing)
    lines = ['title = "many"', "[measurands.y]",
             'equation = "' + " + ".join(f"x{i}" for i in range(80)) + '"']
    for i in range(80):
        lines += [f"[inputs.x{i}]", "value = 1", "u = 0.1", "dof = 6"]
    for i in range(0, 80, 2):
        lines += ["[[correlations]]", f'between = ["x{i}", "x{i + 1}"]', "r = 0.5"]
    budget = propagate(model("\n".join(lines)))
    b = budget.measurand("y")
    assert b.dof_rule.endswith("37 more such groups count the same way")
    assert len(budget.warnings) == 1
    assert budget.warnings[0].startswith(
        "'y': 40 groups of correlated inputs with finite degrees of freedom are not declared "
        "[[estimated_together]] (x0, x1; x2, x3; x4, x5 and 37 more groups)")
    # each pair: v = 2·0.01·(1 + 0.5) = 0.03 with nu = 6; u_c^2 = 40·0.03 (GUM G.2b by hand)
    assert b.dof == pytest.approx((40 * 0.03) ** 2 / (40 * 0.03 ** 2 / 6), rel=1e-12)


def test_a_set_correlated_outside_itself_is_drawn_with_a_warning():
    # the set's multivariate t and an outside Gaussian share one correlation structure;
    # the sample correlation is then below the stated r by the factor E[sqrt(nu/w)]/
    # sqrt(nu/(nu-2)) (computed with scipy.special.gamma), and a warning says so
    from scipy.special import gamma

    text = _pair(5, 0.0).replace("[[estimated_together]]", """
        [inputs.c]
        value = 0
        u = 1
        [[correlations]]
        between = ["a", "c"]
        r = 0.8
        [[estimated_together]]""").replace('equation = "b"', 'equation = "c"')
    trials = 200_000
    sim = simulate(model(text), trials=trials, seed=8)
    assert any(w.startswith("inputs estimated together are correlated with inputs outside "
                            "their set (a, b, c)") for w in sim.warnings)
    nu = 5
    mean_scale = math.sqrt(nu / 2) * gamma((nu - 1) / 2) / gamma(nu / 2)  # E[sqrt(nu/w)]
    expected = 0.8 * mean_scale / math.sqrt(nu / (nu - 2))
    r = float(np.corrcoef(sim.measurands[0].samples, sim.measurands[1].samples)[0, 1])
    # 5 standard errors of a sample correlation, (1 - r^2)/sqrt(M) < 1/sqrt(M), doubled for
    # the heavy t_5 tails of one of the pair
    assert r == pytest.approx(expected, abs=10 / math.sqrt(trials))


def test_check_counts_the_sets(cli):
    code, stdout, stderr = cli("check", str(H3))
    assert code == 0, stderr
    assert stdout.endswith(": 4 inputs, 1 measurand(s), 0 definition(s), 1 correlation(s), "
                           "1 set(s) estimated together\n")
