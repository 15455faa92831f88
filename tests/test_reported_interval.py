"""The reported result: GUM or a Monte Carlo coverage interval (JCGM 101 8.2), and the
Monte Carlo of the certified value (JCGM 101 applied to ISO Guide 35).

Sources: JCGM 101:2008 7.6-7.7 (estimate = mean, u = standard deviation, the symmetric
and shortest intervals), JCGM 101 9.2.4 [M, ../shared/references.md section 3: the
rectangular-dominated additive model, GUM 95 % interval about ±19.9 but Monte Carlo
±17.0], scipy.stats for the t variances and quantiles. Monte Carlo tolerances are five
standard errors from the number of trials.
"""

from __future__ import annotations

import json
import math
import shutil
from pathlib import Path

import numpy as np
import pytest
from conftest import MODELS, model
from scipy import stats

from budget._analysis import evaluate
from budget._campaign import load_campaign
from budget._certification import certify
from budget._document import certification_document, result_document
from budget._errors import BudgetError
from budget._report import render_certification_report, render_report
from budget._table import render, render_certification

DEMO = MODELS / "vics-as-25a"

# JCGM 101 9.2.4: Y = X1 + X2 + X3 + X4, X1..X3 rectangular with sd 1, X4 with sd 10
_94 = """
    title = "JCGM 101 9.2.4"
    [measurands.Y]
    equation = "X1 + X2 + X3 + X4"
    [inputs.X1]
    value = 0
    distribution = "rectangular"
    u = 1
    [inputs.X2]
    value = 0
    distribution = "rectangular"
    u = 1
    [inputs.X3]
    value = 0
    distribution = "rectangular"
    u = 1
    [inputs.X4]
    value = 0
    distribution = "rectangular"
    u = 10
    [settings]
    trials = 200000
    {extra}
"""


def test_default_reports_the_gum_interval_and_says_so():
    result = evaluate(model(_94.format(extra="")), seed=1)
    chosen = result.reported_for("Y")
    assert chosen.method == "gum"
    assert chosen.interval == pytest.approx((-19.9, 19.9), abs=0.05)  # JCGM 101 9.2.4 [M]
    assert any("does not validate" in w for w in result.warnings)  # kept, with the warning
    document = result_document(result)
    assert document["reported_interval"] == "gum"
    assert document["measurands"][0]["reported"]["method"] == "gum"
    assert document["measurands"][0]["reported"]["k"] == pytest.approx(stats.norm.ppf(0.975))
    assert "Reported interval: GUM law of propagation (JCGM 100)" in render_report(result)


@pytest.mark.parametrize("how", ["setting", "argument"])
def test_monte_carlo_interval_reported_when_asked(how):
    extra = 'reported_interval = "monte_carlo"' if how == "setting" else ""
    m = model(_94.format(extra=extra))
    result = evaluate(m, seed=1, reported_interval=None if how == "setting" else "monte_carlo")
    chosen = result.reported_for("Y")
    mc = result.simulation.measurand("Y")
    # JCGM 101 9.2.4 [M]: the Monte Carlo 95 % interval is [-17.0, 17.0] (±0.02 + noise)
    assert chosen.interval == pytest.approx((-17.0, 17.0), abs=0.1)
    assert chosen.interval == mc.interval
    assert chosen.estimate == mc.mean and chosen.standard_uncertainty == mc.standard_uncertainty
    assert chosen.coverage_factor is None
    text = render(result)
    assert "REPORTED: Y = " in text
    assert "method: Monte Carlo, probabilistically symmetric coverage interval " \
           "(JCGM 101 7.7.2)" in text
    document = result_document(result)
    assert document["reported_interval"] == "monte_carlo"
    assert document["measurands"][0]["reported"]["interval"] == list(mc.interval)
    assert document["measurands"][0]["interval"] != list(mc.interval)  # GUM keys keep meaning
    html = render_report(result)
    assert "Reported interval: Monte Carlo, probabilistically symmetric" in html


def test_shortest_interval_reported():
    result = evaluate(model(_94.format(extra='reported_interval = "monte_carlo_shortest"')),
                      seed=2)
    assert result.reported_for("Y").interval == result.simulation.measurand(
        "Y").shortest_interval


def test_monte_carlo_reported_without_trials():
    # asked for explicitly (flag or argument): an error; set in the file and then run with
    # --trials 0 (compare, explain, a quick look): the GUM interval, named, and a warning
    with pytest.raises(BudgetError) as caught:
        evaluate(model(_94.format(extra="")), trials=0, reported_interval="monte_carlo")
    assert str(caught.value) == ('test.toml: reported_interval: expected Monte Carlo trials '
                                 'for "monte_carlo", found trials = 0')
    result = evaluate(model(_94.format(extra='reported_interval = "monte_carlo"')), trials=0)
    assert result.reported_for("Y").method == "gum"
    assert result.warnings[-1] == ('test.toml: [settings] reported_interval = "monte_carlo" '
                                   'but no Monte Carlo run (trials = 0): the GUM interval is '
                                   'reported')


def test_bad_setting_is_refused():
    with pytest.raises(BudgetError) as caught:
        model(_94.format(extra='reported_interval = "montecarlo"'))
    assert str(caught.value) == (
        "test.toml:23: [settings] reported_interval: expected one of gum, monte_carlo, "
        "monte_carlo_shortest, found 'montecarlo' (did you mean 'monte_carlo'?)")


def test_cli_flag(cli):
    path = MODELS / "reference" / "gum-h3-thermometer.toml"
    code, stdout, stderr = cli("run", str(path), "--trials", "20000", "--json",
                               "--reported-interval", "monte_carlo_shortest")
    assert code == 0, stderr
    assert json.loads(stdout)["measurands"][0]["reported"]["method"] == "monte_carlo_shortest"
    code, stdout, stderr = cli("run", str(path), "--reported-interval", "nonsense")
    assert code == 2 and stdout == ""


# --- certify: Monte Carlo of the certified value ---------------------------------------

@pytest.fixture
def campaign_dir(tmp_path: Path) -> Path:
    for item in DEMO.iterdir():
        if item.suffix in (".csv", ".toml"):
            shutil.copy(item, tmp_path / item.name)
    return tmp_path


def _edit(folder: Path, old: str, new: str) -> Path:
    path = folder / "campaign.toml"
    text = path.read_text(encoding="utf-8")
    assert old in text
    path.write_text(text.replace(old, new), encoding="utf-8")
    return path


def test_certified_value_monte_carlo_matches_its_components():
    # the variance of the sum of independent components, each t_nu with scale u, is
    # sum u^2 nu/(nu - 2) (scipy.stats.t.var); the model part's variance is the Monte
    # Carlo variance of the characterization model itself
    trials = 400_000
    cert = certify(load_campaign(DEMO / "campaign.toml"), trials=trials, seed=5)
    sim, char, h, s = cert.simulation, cert.characterization, cert.homogeneity, cert.stability
    model_sd = char.result.simulation.measurands[0].standard_uncertainty
    variance = (model_sd ** 2 + char.s ** 2 / char.n * stats.t.var(char.n - 1)
                + h.u_bb ** 2 * stats.t.var(h.dof_between)
                + s.u_lts ** 2 * stats.t.var(s.dof) + cert.campaign.u_short_term ** 2)
    # relative standard error of a sample sd: sqrt((kurtosis - 1)/(4M)); the kurtosis of a
    # sum of independent terms is at most the largest of theirs, here t_7 with 3 + 6/3 = 5
    # (scipy.stats.t(7).stats('k') = 2 excess), so at most 1/sqrt(M); five of them
    assert float(stats.t(7).stats("k")) == pytest.approx(2.0)
    assert sim.standard_uncertainty == pytest.approx(math.sqrt(variance),
                                                     rel=5 / math.sqrt(trials))
    assert sim.mean == pytest.approx(char.mean, abs=5 * sim.standard_uncertainty
                                     / math.sqrt(trials))
    assert sim.trials == trials
    # the demo certificate states k = 2 and no coverage probability: ±k·u_CRM is checked at
    # the probability it implies, 2·F_t(k; nu_eff) - 1 (scipy.stats.t.cdf)
    assert sim.validation is not None
    assert sim.validation_coverage == pytest.approx(
        2 * stats.t.cdf(2.0, cert.dof) - 1, rel=1e-9)


def test_certified_value_reported_from_monte_carlo(campaign_dir, cli):
    path = _edit(campaign_dir, "[certificate]\nk = 2",
                 '[certificate]\ncoverage = 0.95\nreported_interval = "monte_carlo"')
    cert = certify(load_campaign(path), trials=100_000, seed=3)
    chosen = cert.reported_result
    assert chosen.method == "monte_carlo"
    assert chosen.interval == cert.simulation.interval
    assert cert.simulation.validation is not None  # a coverage probability was stated
    summary = render_certification(cert)
    assert "certified value (REPORTED): " in summary
    assert "GUM result, for comparison: " in summary
    assert "reported interval: Monte Carlo, probabilistically symmetric" in summary
    document = certification_document(cert)
    assert document["reported"]["method"] == "monte_carlo"
    assert document["reported"]["interval"] == list(cert.simulation.interval)
    assert document["monte_carlo"]["trials"] == 100_000
    assert document["U"] == cert.expanded_uncertainty  # the GUM keys keep their meaning
    assert all(key not in dict(cert.campaign.certificate) for key in ("reported_interval",))
    html = render_certification_report(cert)
    assert "Reported interval: Monte Carlo, probabilistically symmetric" in html
    assert "The GUM result, for comparison" in html
    assert "The interval is the Monte Carlo one" in html
    code, stdout, stderr = cli("certify", str(path), "--trials", "20000", "--json",
                               "--reported-interval", "gum")
    assert code == 0, stderr
    assert json.loads(stdout)["reported"]["method"] == "gum"


def test_certified_monte_carlo_needs_trials(campaign_dir):
    path = _edit(campaign_dir, "[certificate]\nk = 2",
                 '[certificate]\nk = 2\nreported_interval = "monte_carlo_shortest"')
    with pytest.raises(BudgetError) as caught:
        certify(load_campaign(path), trials=0)
    assert str(caught.value).endswith(
        "campaign.toml: [certificate] reported_interval: expected a Monte Carlo run of the "
        "characterization for \"monte_carlo_shortest\" (trials > 0, one method), found none")


def test_bad_campaign_setting(campaign_dir):
    path = _edit(campaign_dir, "[certificate]\nk = 2",
                 '[certificate]\nk = 2\nreported_interval = "mc"')
    with pytest.raises(BudgetError) as caught:
        load_campaign(path)
    assert "[certificate] reported_interval: expected one of gum, monte_carlo, " \
           "monte_carlo_shortest, found 'mc'" in str(caught.value)


def test_gum_certificate_not_validated_warns(campaign_dir):
    # with a stated coverage probability the GUM certificate interval is checked against
    # the Monte Carlo one (JCGM 101 8.2); heavy t components (nu = 7, 9) widen the latter
    path = _edit(campaign_dir, "[certificate]\nk = 2", "[certificate]\ncoverage = 0.95")
    cert = certify(load_campaign(path), trials=100_000, seed=3)
    v = cert.simulation.validation
    assert v is not None
    if not v.validated:
        assert any(w.startswith("certified value: the GUM interval is not validated by the "
                                "Monte Carlo of the certified value at 95 %")
                   for w in cert.warnings)
    quantiles = np.array(cert.simulation.interval)
    assert quantiles[0] < cert.certified_value < quantiles[1]
