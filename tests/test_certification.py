"""Certification: ANOVA against scipy.stats.f_oneway and the GUM H.5 data, the stability
trend against scipy.stats.linregress, E_n and zeta (ISO 13528), and the demo campaign."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import stats

from budget._campaign import load_campaign
from budget._certification import anova, certify, trend
from budget._errors import CampaignError

from conftest import MODELS

DEMO = MODELS / "vics-as-25a"

# JCGM 100:2008 H.5: 10 days x 5 observations of a Zener standard; day means (V) and day
# standard deviations (uV) [M✓C, ../shared/references.md section 2]
_H5_MEANS = [10.000172, 10.000116, 10.000013, 10.000144, 10.000106, 10.000031, 10.000060,
             10.000125, 10.000163, 10.000041]
_H5_SDS = [60, 77, 111, 101, 67, 93, 80, 73, 88, 86]


def _h5_groups():
    """Five values per day with exactly the published mean and standard deviation."""
    pattern = np.array([-2.0, -1.0, 0.0, 1.0, 2.0])
    pattern /= pattern.std(ddof=1)
    return [(mean - 10.0) * 1e6 + sd * pattern for mean, sd in zip(_H5_MEANS, _H5_SDS)]


def test_anova_on_gum_h5_data():
    # JCGM 100 H.5: F = 2.26 [M✓C: 2.2615]; pooled within-day s_W = 85 uV [M✓C: 84.89];
    # s_B = 43 uV [M✓C: 42.64] equals ISO Guide 35 s_bb; u*_bb = 17.95 uV [C]
    result = anova(_h5_groups())
    assert result.F == pytest.approx(2.2615, abs=0.0005)
    assert math.sqrt(result.ms_within) == pytest.approx(84.89, abs=0.005)
    assert result.s_bb == pytest.approx(42.64, abs=0.005)
    assert result.u_bb_star == pytest.approx(17.95, abs=0.005)
    assert result.ms_between == pytest.approx(16296, rel=5e-4)
    # F_0.95(9, 40) = 2.12 < F: the between-day effect is significant [M✓C]
    assert stats.f.ppf(0.95, 9, 40) == pytest.approx(2.124, abs=0.0005)
    assert result.p_value < 0.05


@pytest.mark.parametrize("sizes", [(3, 3, 3, 3), (2, 4, 3, 5, 2)])
def test_anova_against_scipy_f_oneway(sizes):
    rng = np.random.default_rng(11)
    groups = [rng.normal(10 + 0.1 * i, 0.2, n) for i, n in enumerate(sizes)]
    result = anova(groups)
    reference = stats.f_oneway(*groups)
    assert result.F == pytest.approx(reference.statistic, rel=1e-12)
    assert result.p_value == pytest.approx(reference.pvalue, rel=1e-9)
    # n0 = (N - sum n_i^2 / N)/(p - 1) for unbalanced designs (ISO Guide 35 [M])
    total = sum(sizes)
    assert result.n0 == pytest.approx((total - sum(n * n for n in sizes) / total)
                                      / (len(sizes) - 1))


def test_stability_trend_against_scipy_linregress():
    times = np.array([0, 0, 0, 6, 6, 12, 12, 12, 24, 24.0])
    values = np.array([5.01, 5.02, 4.99, 5.00, 5.03, 4.98, 5.01, 5.00, 4.97, 4.99])
    result = trend(times, values, shelf_life=36)
    reference = stats.linregress(times, values)
    assert result.slope == pytest.approx(reference.slope, rel=1e-12)
    assert result.u_slope == pytest.approx(reference.stderr, rel=1e-12)
    assert result.p_value == pytest.approx(reference.pvalue, rel=1e-9)
    assert result.u_lts == pytest.approx(36 * reference.stderr, rel=1e-12)


def _campaign_text(comparison_value=99.978):
    return (DEMO / "campaign.toml").read_text().replace("value = 99.978",
                                                        f"value = {comparison_value}")


def test_en_and_zeta_scores(tmp_path):
    # ISO 13528:2015: E_n = (x - X)/sqrt(U_x^2 + U_X^2), zeta = (x - X)/sqrt(u_x^2 + u_X^2)
    # [M]; recomputed here from the characterization result
    cert = certify(load_campaign(DEMO / "campaign.toml"), trials=0)
    char = cert.characterization
    score = cert.comparisons[0]
    u_char = char.standard_uncertainty
    assert score.E_n == pytest.approx((char.mean - 99.978) / math.hypot(2 * u_char, 0.034))
    assert score.zeta == pytest.approx((char.mean - 99.978) / math.hypot(u_char, 0.017))
    assert score.agrees


def test_disagreeing_comparison_warns(tmp_path):
    for name in ("coulometric-purity.toml", "calibrations.toml", "determinations.csv",
                 "homogeneity.csv",
                 "stability.csv"):
        (tmp_path / name).write_bytes((DEMO / name).read_bytes())
    (tmp_path / "campaign.toml").write_text(_campaign_text(99.900))
    cert = certify(load_campaign(tmp_path / "campaign.toml"), trials=0)
    assert not cert.comparisons[0].agrees
    assert any(w.startswith("comparison with 'weight titration against CRM-Z7 (fictional)': "
                            "no agreement (E_n = 2.") for w in cert.warnings)


def test_demo_campaign_end_to_end(cli):
    # invented demo data (../shared/demo): the whole certification through the CLI
    code, stdout, stderr = cli("certify", "--json", "--trials", "0",
                               str(DEMO / "campaign.toml"))
    assert code == 0
    document = json.loads(stdout)
    assert set(document) >= {"title", "unit", "certified_value", "u", "k", "U", "components",
                             "characterization", "homogeneity", "stability", "comparisons",
                             "warnings"}
    components = document["components"]
    assert document["u"] == pytest.approx(math.sqrt(sum(c * c for c in components.values())))
    assert document["U"] == pytest.approx(2 * document["u"])
    char = document["characterization"]
    assert char["n"] == 9 and len(char["runs"]) == 9
    assert char["mean"] == pytest.approx(np.mean(char["runs"]))
    assert char["u"] == pytest.approx(math.hypot(char["u_B"], char["s"] / 3))
    h = document["homogeneity"]
    assert h["u_bb"] == max(h["s_bb"], h["u_bb_star"])
    # the demo homogeneity data through scipy.stats.f_oneway
    import pandas as pd

    data = pd.read_csv(DEMO / "homogeneity.csv")
    groups = [g["value"].to_numpy() for _, g in data.groupby("unit")]
    assert h["F"] == pytest.approx(stats.f_oneway(*groups).statistic, rel=1e-10)
    s = document["stability"]
    stability = pd.read_csv(DEMO / "stability.csv")
    fit = stats.linregress(stability["time"], stability["value"])
    assert s["slope"] == pytest.approx(fit.slope, rel=1e-10)
    assert s["u_lts"] == pytest.approx(36 * fit.stderr, rel=1e-10)


def test_scatter_covers_removes_an_input_from_u_b(tmp_path):
    for name in ("coulometric-purity.toml", "calibrations.toml", "determinations.csv",
                 "homogeneity.csv",
                 "stability.csv"):
        (tmp_path / name).write_bytes((DEMO / name).read_bytes())
    (tmp_path / "campaign.toml").write_text(_campaign_text().replace(
        "scatter_covers = []", 'scatter_covers = ["Q_post", "Q_pre"]'))
    both = certify(load_campaign(tmp_path / "campaign.toml"), trials=0)
    full = certify(load_campaign(DEMO / "campaign.toml"), trials=0)
    budget = full.characterization.result.budget.measurands[0]
    removed = sum(c.contribution ** 2 for c in budget.contributions
                  if c.input in ("Q_post", "Q_pre"))
    assert both.characterization.model_uncertainty == pytest.approx(
        math.sqrt(full.characterization.model_uncertainty ** 2 - removed), rel=1e-9)


@pytest.mark.parametrize("edit, csv, message", [
    (("runs = \"determinations.csv\"", "runs = \"nothing.csv\""), None,
     "campaign.toml:13: [characterization] runs: expected a file 'nothing.csv' beside the "
     "campaign file, found none"),
    (("measurand = \"w\"", "measurand = \"x\""), None,
     "campaign.toml:12: [characterization] measurand: expected a measurand of "
     "coulometric-purity.toml (w), found 'x'"),
    (None, ("homogeneity.csv", "unit,replicate,valu\nA,1,1\nA,2,2\nB,1,1\nB,2,3\n"),
     "homogeneity.csv: expected a column 'value' (did you mean 'valu'?), found the columns "
     "unit, replicate, valu"),
    (None, ("homogeneity.csv", "unit,replicate,value\nA,1,1\nA,2,x2\nB,1,1\nB,2,3\n"),
     "homogeneity.csv:3: column 'value': expected a finite number with a decimal point, "
     "found 'x2'"),
    (None, ("homogeneity.csv", "unit,replicate,value\nA,1,1\nA,2,2\nA,3,1\nA,4,3\n"),
     "homogeneity.csv: expected at least 2 units with a value, found 1"),
    (None, ("stability.csv", "time,value\n0,1\n0,2\n0,1.5\n"),
     "stability.csv: expected at least 3 points at 2 or more different times, found 3 at 1"),
    (("shelf_life = 36", "shelf_life = -36"), None,
     "campaign.toml:23: [stability] shelf_life: expected a number > 0, found -36"),
    (("[certificate]", "[certificat]"), None,
     "campaign.toml:33: certificat: expected a top-level key among title, material, unit, "
     "description, producer, characterization, homogeneity, stability, comparison, "
     "certificate, method, shared, combination, register, found 'certificat' (did you mean "
     "'certificate'?)"),
])
def test_campaign_errors(edit, csv, message, tmp_path, cli, monkeypatch):
    for name in ("coulometric-purity.toml", "calibrations.toml", "determinations.csv",
                 "homogeneity.csv",
                 "stability.csv"):
        (tmp_path / name).write_bytes((DEMO / name).read_bytes())
    text = _campaign_text()
    if edit:
        text = text.replace(*edit)
    (tmp_path / "campaign.toml").write_text(text)
    if csv:
        (tmp_path / csv[0]).write_text(csv[1])
    monkeypatch.chdir(tmp_path)
    code, stdout, stderr = cli("certify", "--trials", "0", "campaign.toml")
    assert (code, stdout) == (1, "")
    expected = message
    assert stderr.startswith("error: ")
    assert stderr.rstrip("\n").endswith(expected) and "Traceback" not in stderr
    assert stderr.count("\n") == 1


def test_missing_campaign_file(cli, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, stdout, stderr = cli("certify", "none.toml")
    assert (code, stdout, stderr) == (1, "", "error: none.toml: expected a campaign file, "
                                             "found no such file\n")


def test_certified_value_components_and_shares():
    cert = certify(load_campaign(DEMO / "campaign.toml"), trials=0)
    total = math.sqrt(sum(u * u for _, u in cert.components))
    assert cert.standard_uncertainty == pytest.approx(total)
    assert sum(cert.shares.values()) == pytest.approx(100.0)
    with pytest.raises(CampaignError):
        load_campaign(DEMO / "coulometric-purity.toml")
