"""Several characterization methods in one campaign: shared inputs, pair scores with and
without the covariance, combined value, mass balance; the one-method campaign unchanged."""

from __future__ import annotations

import json
import math
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from budget._campaign import load_campaign
from budget._certification import certify
from budget._errors import BudgetError, CampaignError, InputError

from conftest import MODELS

DEMO = MODELS / "vics-as-25a"

MODEL_A = """
title = "method A (test)"
[measurands.w]
equation = "a + s + g"
unit = "%"
[inputs.a]
value = 99.99
unit = "%"
u = 0.001
[inputs.s]
value = 0
unit = "%"
u = 0.010
[inputs.g]
value = 0
u = 1e-5
"""

MODEL_B = """
title = "method B (test)"
[measurands.w]
equation = "b + s"
unit = "%"
[inputs.b]
value = 99.97
unit = "%"
u = 0.002
[inputs.s]
value = 0
unit = "%"
u = 0.010
"""

IMPURITY = """
title = "an impurity (test)"
[measurands.x]
equation = "q * f + g"
unit = "mg/kg"
[inputs.q]
value = 50
unit = "mg/kg"
u = 5
[inputs.f]
value = 1
u = 0.02
[inputs.g]
value = 0
u = 1e-5
"""

HEAD = """title = "test campaign"
unit = "%"
[characterization]
label = "A"
model = "a.toml"
measurand = "w"
runs = "a.csv"
[certificate]
k = 2
"""

TWO = HEAD + """
[[method]]
label = "B"
model = "b.toml"
measurand = "w"
runs = "b.csv"
"""


def _write(folder: Path, campaign: str) -> Path:
    (folder / "a.toml").write_text(MODEL_A)
    (folder / "b.toml").write_text(MODEL_B)
    (folder / "imp.toml").write_text(IMPURITY)
    (folder / "a.csv").write_text("id,a\n1,99.990\n2,99.992\n")
    (folder / "b.csv").write_text("id,b\n1,99.970\n2,99.974\n")
    path = folder / "campaign.toml"
    path.write_text(campaign)
    return path


def test_shared_input_changes_the_scores_by_the_predicted_amount(tmp_path: Path) -> None:
    # hand computation (GUM 5.2.2, ISO 13528 9.7/9.8):
    # u_A^2 = 0.001^2 (a) + 0.010^2 (s) + 0.001^2 (g = 0 ± 1e-5 = 0.001 %)
    #       + 1e-6 (s^2/n of 99.990, 99.992) = 1.03e-4;
    # u_B^2 = 0.002^2 (b) + 0.010^2 (s) + 4e-6 (s^2/n of 99.970, 99.974) = 1.08e-4;
    # the shared s gives u_AB = 0.010^2 = 1e-4; d = 99.991 - 99.972 = 0.019;
    # u^2(d) = 2.11e-4 as if independent, 2.11e-4 - 2e-4 = 1.1e-5 with the shared input
    cert = certify(load_campaign(_write(tmp_path, TWO + """
[shared]
s = ["A.s", "B.s"]
""")), trials=0)
    pair = cert.methods.pairs[0]
    assert pair.difference == pytest.approx(0.019, abs=1e-12)
    assert pair.covariance == pytest.approx(1e-4, rel=1e-9)
    assert pair.u_difference_independent == pytest.approx(math.sqrt(2.11e-4), rel=1e-9)
    assert pair.u_difference == pytest.approx(math.sqrt(1.1e-5), rel=1e-6)
    assert pair.zeta_independent == pytest.approx(0.019 / math.sqrt(2.11e-4), rel=1e-9)
    assert pair.zeta == pytest.approx(0.019 / math.sqrt(1.1e-5), rel=1e-6)
    # the predicted change: zeta grows by sqrt(2.11e-4 / 1.1e-5) = 4.380
    assert pair.zeta / pair.zeta_independent == pytest.approx(math.sqrt(2.11e-4 / 1.1e-5),
                                                              rel=1e-6)
    # k = 2 for both: E_n = d / (2 u(d))
    assert pair.E_n == pytest.approx(pair.zeta / 2, rel=1e-12)
    assert not pair.agrees
    assert any("methods 'A' and 'B' do not agree" in w for w in cert.warnings)


def test_without_a_shared_declaration_the_methods_are_independent(tmp_path: Path) -> None:
    cert = certify(load_campaign(_write(tmp_path, TWO)), trials=0)
    pair = cert.methods.pairs[0]
    assert pair.covariance == 0.0
    assert pair.zeta == pair.zeta_independent


def test_combined_value_is_the_certified_characterization(tmp_path: Path) -> None:
    # GLS mean with the full covariance, against a direct numpy (J^T V^-1 J)^-1
    cert = certify(load_campaign(_write(tmp_path, TWO + """
[shared]
s = ["A.s", "B.s"]
[combination]
rule = "weighted"
""")), trials=0)
    v = np.array([[1.03e-4, 1e-4], [1e-4, 1.08e-4]])
    x = np.array([99.991, 99.972])
    j = np.ones((2, 1))
    cov = np.linalg.inv(j.T @ np.linalg.inv(v) @ j)
    mu = (cov @ j.T @ np.linalg.inv(v) @ x).item()
    assert cert.certified_value == pytest.approx(mu, abs=1e-10)
    assert dict(cert.components)["characterization"] == pytest.approx(
        math.sqrt(cov.item()), rel=1e-6)
    assert cert.characterization.mean == pytest.approx(99.991, abs=1e-12)  # the first
    assert sum(s for _, s in cert.methods.shares) == pytest.approx(100.0, rel=1e-12)
    assert any("not consistent" in w for w in cert.warnings)


def test_mass_balance_against_a_hand_computation(tmp_path: Path) -> None:
    # w = 100 % - x - 0.0100 %, x from its model without runs: q f + g = 50 mg/kg with
    # u^2 = 5^2 + (50 * 0.02)^2 + 10^2 = 126 (mg/kg)^2 (u(g) = 1e-5 = 10 mg/kg);
    # 1 mg/kg = 1e-4 %. g is shared with method A, where it adds u = 0.001 %:
    # cov(A, x) = 0.001 * 0.001 %^2, so cov(A, mass balance) = -1e-6 %^2.
    cert = certify(load_campaign(_write(tmp_path, HEAD + """
[[method]]
label = "mass balance"
kind = "mass_balance"
[[method.impurity]]
label = "x"
model = "imp.toml"
measurand = "x"
[[method.impurity]]
label = "stated"
value = 0.0100
u = 0.0020
[shared]
g = ["A.g", "mass balance/x.g"]
""")), trials=0)
    balance = cert.methods.method("mass balance")
    assert balance.estimate == pytest.approx(100 - 0.0050 - 0.0100, abs=1e-12)
    assert balance.standard_uncertainty == pytest.approx(math.sqrt(126e-8 + 4e-6), rel=1e-9)
    assert cert.methods.covariance[0][1] == pytest.approx(-1e-6, rel=1e-9)
    assert [i.label for i in balance.impurities] == ["x", "stated"]


def test_monte_carlo_cross_check_of_the_difference(tmp_path: Path) -> None:
    # one joint Monte Carlo draws s once: u(d) agrees with the GUM value within five
    # standard errors of a standard deviation, u/sqrt(2(M - 1))
    cert = certify(load_campaign(_write(tmp_path, TWO + """
[shared]
s = ["A.s", "B.s"]
""")), trials=100_000, seed=3)
    pair = cert.methods.pairs[0]
    assert pair.u_difference_monte_carlo == pytest.approx(
        pair.u_difference, rel=5 / math.sqrt(2 * 100_000))


# The one-method demo campaign, numbers recorded before several methods existed (GUM
# path, trials = 0): they must not change in the last digit. (Re-recorded once when the
# equations stopped going through sympy's exact rational arithmetic: the evaluation order
# of the floating-point operations changed them by at most 1e-13 relative.)
_ONE_METHOD = {"certified_value": 99.98657796430795, "u": 0.0043473013230725865,
               "U": 0.008694602646145173,
               "components": {"characterization": 0.0026771810445158765,
                              "homogeneity": 0.0015440567997449227,
                              "long_term_stability": 0.0030162259609709295,
                              "short_term_stability": 0.0005}}


def test_one_method_campaign_unchanged_to_the_last_digit(cli) -> None:  # type: ignore[no-untyped-def]
    code, stdout, stderr = cli("certify", str(DEMO / "campaign.toml"), "--json", "--trials",
                               "0")
    assert code == 0, stderr
    document = json.loads(stdout)
    for key, value in _ONE_METHOD.items():
        assert document[key] == value, key
    assert "methods" not in document
    assert document["comparisons"][0]["E_n"] == 0.2492216042906584


def test_compared_only_methods_leave_the_certified_value_alone() -> None:
    # the demo's three methods without their [combination] (and with the stability of
    # campaign.toml): the first method certifies
    campaign = load_campaign(DEMO / "campaign-methods.toml")
    compared = replace(campaign, methods=replace(campaign.methods, rule=None, combined=()),
                       stability_plan=None, u_short_term=0.0005)  # as campaign.toml
    cert = certify(compared, trials=0)
    assert cert.certified_value == _ONE_METHOD["certified_value"]
    assert dict(cert.components) == _ONE_METHOD["components"]
    assert cert.methods.combined is None


def test_demo_three_methods(cli) -> None:  # type: ignore[no-untyped-def]
    code, stdout, stderr = cli("certify", str(DEMO / "campaign-methods.toml"), "--json",
                               "--trials", "20000")
    assert code == 0, stderr
    document = json.loads(stdout)
    methods = document["methods"]
    assert methods["labels"] == ["coulometry", "weight titration", "mass balance"]
    pair = methods["pairs"][0]
    # the shared molar mass and sample density correlate coulometry and titration
    assert pair["covariance"] > 0
    assert pair["u_difference"] < pair["u_difference_independent"]
    assert document["certified_value"] == methods["combination"]["value"]
    assert document["components"]["characterization"] == methods["combination"]["u"]
    import jsonschema

    schema = json.loads((Path(__file__).resolve().parent.parent / "budget" / "schemas"
                         / "certification.schema.json").read_text(encoding="utf-8"))
    jsonschema.validate(document, schema)


@pytest.mark.parametrize("extra, message", [
    ("\n[combination]\nrule = \"weighted\"\nmethods = [\"A\", \"C\"]\n",
     "campaign.toml:19: [combination] methods: unknown method 'C'"),
    ("\n[combination]\nrule = \"median\"\n",
     "campaign.toml:18: [combination] rule: expected one of weighted, mean, "
     "dersimonian-laird, paule-mandel, found 'median'"),
    ("\n[shared]\ns = [\"A.s\", \"B.b\"]\n",
     "campaign.toml:18: [shared] s: expected an input common to all runs, found 'b', a "
     "column of the runs"),
    ("\n[shared]\ns = [\"A.s\", \"Bee.s\"]\n",
     "campaign.toml:18: [shared] s: expected \"<method>.<input>\" with a method of A, B, "
     "found 'Bee.s'"),
    ("\n[shared]\ns = [\"A.zz\", \"B.s\"]\n",
     "campaign.toml:18: [shared] s: expected an input of "),
])
def test_campaign_errors_name_the_key(tmp_path: Path, extra: str, message: str) -> None:
    with pytest.raises(CampaignError) as caught:
        load_campaign(_write(tmp_path, TWO + extra))
    assert str(caught.value).replace(str(tmp_path) + "/", "").startswith(message)


def test_mass_balance_needs_impurities(tmp_path: Path) -> None:
    with pytest.raises(CampaignError) as caught:
        load_campaign(_write(tmp_path, HEAD + "\n[[method]]\nlabel = \"mb\"\n"
                             "kind = \"mass_balance\"\n"))
    assert str(caught.value).replace(str(tmp_path) + "/", "") == (
        "campaign.toml:13: [method] kind: expected at least one [[method.impurity]] table, "
        "found none")


def test_shared_inputs_stated_differently_are_refused_on_loading(tmp_path: Path) -> None:
    path = _write(tmp_path, TWO + "\n[shared]\ns = [\"A.s\", \"B.s\"]\n")
    (tmp_path / "b.toml").write_text(MODEL_B.replace("u = 0.010", "u = 0.020"))
    with pytest.raises(InputError) as caught:
        load_campaign(path)
    assert str(caught.value).replace(str(tmp_path) + "/", "") == (
        "campaign.toml:17: [shared] shared input 's': expected the same estimate, standard "
        "uncertainty and distribution in every model, found 0 ± 0.01 % (normal) and 0 ± "
        "0.02 % (normal) in 'B'")


_FUZZ = int(__import__("os").environ.get("BUDGET_FUZZ_EXAMPLES", "25"))


@settings(max_examples=_FUZZ, deadline=None,
          derandomize=not __import__("os").environ.get("BUDGET_FUZZ_RANDOM"),
          suppress_health_check=list(HealthCheck))
@given(st.data())
def test_mutated_three_method_campaigns_fail_only_with_budget_errors(
        tmp_path_factory: pytest.TempPathFactory, data: st.DataObject) -> None:
    # robustness: a mutated line of the campaign or of a method's data gives a BudgetError
    # or a result, never another exception
    import shutil

    root = tmp_path_factory.mktemp("methods")
    shutil.copytree(MODELS, root / "models")
    folder = root / "models" / "vics-as-25a"
    name = data.draw(st.sampled_from(["campaign-methods.toml", "titrations.csv", "water.csv",
                                      "short-term-50C.csv", "stability-25C.csv"]))
    lines = (folder / name).read_text().splitlines()
    i = data.draw(st.integers(0, len(lines) - 1))
    lines[i] = data.draw(st.sampled_from([
        "", "x,y", "T1,2025-05-12,0,0,0,0", "W1,2025-05-20,0,-1", "0,1,nan",
        "rule = \"paule-mandel\"", "rule = \"mean\"", "kind = \"mass_balance\"",
        "methods = [\"coulometry\"]", "value = -5", "u = 0", "transport_time = 0",
        "evaluation = \"together\"", "M_KHP = [\"coulometry.M\", \"weight titration.w_CRM\"]",
        "rho_KHP = [\"coulometry.rho_s\"]", "unit = \"mg\"", "[[method]]",
        "[[method.impurity]]", "label = \"coulometry\"", "runs = \"water.csv\"",
        "measurand = \"w\"", "[stability.short_term]", "model = \"water.csv\""]))
    (folder / name).write_text("\n".join(lines) + "\n")
    try:
        certify(load_campaign(folder / "campaign-methods.toml"), trials=0)
    except BudgetError:
        pass


@pytest.mark.parametrize("rule", ["mean", "dersimonian-laird", "paule-mandel"])
def test_declared_rule_reaches_the_certified_value(tmp_path: Path, rule: str) -> None:
    # the campaign's rule gives the same value as budget._combination on the method
    # covariance matrix (itself checked against published and independent computations)
    from budget._combination import combine

    cert = certify(load_campaign(_write(tmp_path, TWO + f"""
[combination]
rule = "{rule}"
""")), trials=0)
    v = np.array(cert.methods.covariance)
    x = [m.estimate for m in cert.methods.methods]
    expected = combine(x, v, rule)
    assert cert.certified_value == expected.estimate
    assert dict(cert.components)["characterization"] == expected.standard_uncertainty
    assert cert.methods.combined.tau == expected.tau


def test_compare_only_still_reports_the_consistency(tmp_path: Path) -> None:
    # chi2 of two results about their GLS mean = d^2 / u^2(d) (with the covariance):
    # 0.019^2 / 1.1e-5 (hand computation above)
    cert = certify(load_campaign(_write(tmp_path, TWO + "\n[shared]\ns = [\"A.s\", \"B.s\"]\n")),
                   trials=0)
    assert cert.methods.combined is None
    assert cert.methods.consistency.chi2 == pytest.approx(0.019 ** 2 / 1.1e-5, rel=1e-6)
    assert cert.methods.consistency.dof == 1


def test_a_stated_impurity_refuses_model_keys(tmp_path: Path) -> None:
    with pytest.raises(CampaignError) as caught:
        load_campaign(_write(tmp_path, HEAD + "\n[[method]]\nlabel = \"mb\"\n"
                             "kind = \"mass_balance\"\n[[method.impurity]]\nlabel = \"x\"\n"
                             "value = 0.01\nu = 0.001\nruns = \"a.csv\"\n"))
    assert str(caught.value).replace(str(tmp_path) + "/", "") == (
        "campaign.toml:18: [method.impurity] runs: expected 'runs' only with a 'model', found "
        "it with a stated value")


def test_impurity_labels_are_distinct(tmp_path: Path) -> None:
    twice = "[[method.impurity]]\nlabel = \"x\"\nvalue = 0.01\nu = 0.001\n"
    with pytest.raises(CampaignError) as caught:
        load_campaign(_write(tmp_path, HEAD + "\n[[method]]\nlabel = \"mb\"\n"
                             "kind = \"mass_balance\"\n" + twice + twice))
    assert str(caught.value).replace(str(tmp_path) + "/", "") == (
        "campaign.toml:19: [method.impurity] label: expected distinct impurity labels, found "
        "'x' twice")


def test_monte_carlo_of_the_combined_value(tmp_path: Path) -> None:
    # linear models: the Monte Carlo variance of mu = w^T x is w^T V' w, where V' is the
    # GUM covariance with each repeatability s^2/n drawn as a t with nu = n - 1 = 5, whose
    # variance is s^2/n * nu/(nu - 2) (JCGM 101 6.4.9). Tolerance: five standard errors of
    # a standard deviation from 200,000 trials, allowing for the t's excess kurtosis 6:
    # 5 * 0.5 * sqrt((2 + 6) / 200,000) = 1.6 % (common practice)
    path = _write(tmp_path, TWO + "\n[shared]\ns = [\"A.s\", \"B.s\"]\n[combination]\n"
                  "rule = \"weighted\"\n")
    (tmp_path / "a.csv").write_text("id,a\n" + "\n".join(
        f"{i},{99.990 + 0.001 * (i % 3)}" for i in range(6)) + "\n")
    (tmp_path / "b.csv").write_text("id,b\n" + "\n".join(
        f"{i},{99.970 + 0.002 * (i % 2)}" for i in range(6)) + "\n")
    cert = certify(load_campaign(path), trials=200_000, seed=11)
    methods = cert.methods
    w = np.array(methods.combined.weights)
    v = np.array(methods.covariance)
    extra = np.diag([m.characterization.s ** 2 / m.characterization.n * (5 / 3 - 1)
                     for m in methods.methods])
    expected = math.sqrt(w @ (v + extra) @ w)
    simulation = methods.combined_monte_carlo
    assert simulation.standard_uncertainty == pytest.approx(expected, rel=0.016)
    assert simulation.mean == pytest.approx(methods.combined.estimate,
                                            abs=5 * expected / math.sqrt(200_000))
    assert simulation.samples.size == 200_000


def test_monte_carlo_of_a_certified_combined_value() -> None:
    # the certified value's Monte Carlo (certified_mc) takes the combined value's trials as
    # its characterization: its variance is u^2 of those trials plus the other components
    # drawn as t (u^2 nu/(nu - 2) for finite nu, JCGM 101 6.4.9). Tolerance: five standard
    # errors of a standard deviation from 100,000 trials with excess kurtosis up to 6:
    # 5 * 0.5 * sqrt(8 / 100,000) = 2.2 % (common practice)
    cert = certify(load_campaign(DEMO / "campaign-methods.toml"), trials=100_000)
    combined = cert.methods.combined_monte_carlo
    parts = dict(cert.components)
    nu_bb, nu_lts = cert.homogeneity.dof_between, cert.stability_studies.series[0].dof
    expected = math.sqrt(combined.standard_uncertainty ** 2
                         + parts["homogeneity"] ** 2 * nu_bb / (nu_bb - 2)
                         + parts["long_term_stability"] ** 2 * nu_lts / (nu_lts - 2)
                         + parts["short_term_stability"] ** 2)
    assert cert.simulation is not None
    assert cert.simulation.standard_uncertainty == pytest.approx(expected, rel=0.022)
    assert cert.simulation.mean == pytest.approx(cert.certified_value,
                                                 abs=5 * expected / math.sqrt(100_000))


def test_compare_only_keeps_the_first_methods_monte_carlo() -> None:
    # compared only: the certified value's Monte Carlo is the first method's, as with one
    campaign = load_campaign(DEMO / "campaign-methods.toml")
    compared = replace(campaign, methods=replace(campaign.methods, rule=None, combined=()))
    cert = certify(compared, trials=20_000)
    one = certify(load_campaign(DEMO / "campaign.toml"), trials=20_000)
    assert cert.simulation is not None
    assert cert.simulation.mean == pytest.approx(cert.certified_value,
                                                 abs=5 * cert.standard_uncertainty
                                                 / math.sqrt(20_000))
    assert cert.characterization.mean == one.characterization.mean
