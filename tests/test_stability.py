"""Stability studies: several long-term series (separately, together), the short-term
study, the significance warning."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from budget._campaign import load_campaign
from budget._certification import certify, trend
from budget._errors import CampaignError
from budget._stability import pooled_trend

from conftest import MODELS

DEMO = MODELS / "vics-as-25a"


def test_pooled_slope_against_least_squares_with_one_intercept_per_series() -> None:
    # independent computation: numpy lstsq on the design [t, series indicators], the
    # slope's standard error from s^2 (X^T X)^-1 (ordinary least squares, common practice)
    rng = np.random.default_rng(5)
    series = [(np.array([0.0, 6, 12, 24, 24]), None), (np.array([0.0, 3, 9, 18]), None),
              (np.array([0.0, 12, 36]), None)]
    data = [(t, 100 + g + 0.002 * t + rng.normal(0, 0.01, t.size))
            for g, (t, _) in enumerate(series)]
    result = pooled_trend(data, period=36)
    t_all = np.concatenate([t for t, _ in data])
    y_all = np.concatenate([y for _, y in data])
    columns = [t_all] + [np.concatenate([np.full(t.size, float(g == h))
                                         for h, (t, _) in enumerate(data)])
                         for g in range(len(data))]
    x = np.column_stack(columns)
    beta, residual, *_ = np.linalg.lstsq(x, y_all, rcond=None)
    dof = y_all.size - x.shape[1]
    s2 = residual[0] / dof
    se = math.sqrt(s2 * np.linalg.inv(x.T @ x)[0, 0])
    assert result.slope == pytest.approx(beta[0], rel=1e-10)
    assert result.u_slope == pytest.approx(se, rel=1e-10)
    assert result.dof == dof
    assert result.intercepts == pytest.approx(tuple(beta[1:]), rel=1e-12)
    assert result.p_value == pytest.approx(2 * stats.t.sf(abs(beta[0] / se), dof), rel=1e-8)
    assert result.u_lts == pytest.approx(se * 36, rel=1e-10)


def test_short_term_study_against_scipy_linregress() -> None:
    # u_sts = s(b1) * t_transport (ISO Guide 35:2017 8.7); s(b1) from scipy
    campaign = load_campaign(DEMO / "campaign-methods.toml")
    cert = certify(campaign, trials=0)
    plan = campaign.stability_plan.short_term
    reference = stats.linregress(plan.times, plan.values)
    studies = cert.stability_studies
    assert studies.short_term.slope == pytest.approx(reference.slope, rel=1e-9)
    assert studies.u_sts == pytest.approx(reference.stderr * 2, rel=1e-9)
    assert dict(cert.components)["short_term_stability"] == studies.u_sts


def test_separate_series_the_largest_governs() -> None:
    campaign = load_campaign(DEMO / "campaign-methods.toml")
    cert = certify(campaign, trials=0)
    studies = cert.stability_studies
    second = campaign.stability_plan.series[0]
    reference = stats.linregress(second.times, second.values)
    assert studies.series[1].u_lts == pytest.approx(reference.stderr * 36, rel=1e-9)
    assert studies.u_lts == max(f.u_lts for f in studies.series)
    assert studies.governing == "20 °C"
    # the main series keeps its meaning in the spec's "stability" key
    assert cert.stability.u_lts == studies.series[0].u_lts


def _campaign(folder: Path, stability: str) -> Path:
    (folder / "stability.csv").write_text((DEMO / "stability.csv").read_text())
    (folder / "drift.csv").write_text("time,value\n0,99.990\n0,99.991\n1,99.986\n1,99.987\n"
                                      "2,99.982\n2,99.983\n")
    path = folder / "campaign.toml"  # names the demo files by absolute path: allowed below
    path.write_text('title = "t"\nunit = "%"\n[characterization]\n'
                    f'model = "{DEMO / "coulometric-purity.toml"}"\nmeasurand = "w"\n'
                    f'runs = "{DEMO / "determinations.csv"}"\n' + stability)
    return path


def test_a_significant_trend_is_named_with_its_predicted_change(tmp_path: Path) -> None:
    path = _campaign(tmp_path, '[stability]\ndata = "stability.csv"\nshelf_life = 36\n'
                     '[stability.short_term]\ndata = "drift.csv"\ntransport_time = 2\n')
    cert = certify(load_campaign(path, allow_outside=True), trials=0)
    found = [w for w in cert.warnings if w.startswith("short-term stability")]
    fit = cert.stability_studies.short_term
    assert fit.p_value < 0.05
    assert found == [
        f"short-term stability: the trend is significant (slope {fit.slope:.3g} % per time "
        f"unit, p = {fit.p_value:.3g} < 0.05): it predicts a change of "
        f"{abs(fit.slope) * 2:.3g} % over 2, which the uncertainty s(b₁)·t does not cover "
        "(ISO Guide 35: shorten the period, change the conditions or correct for the change)"]


def test_together_uses_the_common_slope(tmp_path: Path) -> None:
    path = _campaign(tmp_path, '[stability]\ndata = "stability.csv"\nshelf_life = 36\n'
                     'u_short_term = 0.0005\nevaluation = "together"\n'
                     '[[stability.series]]\nlabel = "unit B"\ndata = "stability.csv"\n')
    cert = certify(load_campaign(path, allow_outside=True), trials=0)
    studies = cert.stability_studies
    assert studies.governing == "together"
    assert dict(cert.components)["long_term_stability"] == studies.pooled.u_lts
    # the same series twice: the same slope, more degrees of freedom
    single = trend(np.array(cert.stability.times), np.array(cert.stability.values), 36)
    assert studies.pooled.slope == pytest.approx(single.slope, rel=1e-9)
    assert studies.pooled.dof == 2 * 9 - 2 - 1


def test_stated_and_studied_short_term_together_is_refused(tmp_path: Path) -> None:
    path = _campaign(tmp_path, '[stability]\ndata = "stability.csv"\nshelf_life = 36\n'
                     'u_short_term = 0.0005\n'
                     '[stability.short_term]\ndata = "drift.csv"\ntransport_time = 2\n')
    with pytest.raises(CampaignError) as caught:
        load_campaign(path, allow_outside=True)
    assert str(caught.value) == (
        f"{path}:10: [stability] u_short_term: expected either 'u_short_term' or a "
        "[stability.short_term] study, found both")


def test_json_has_the_studies(cli) -> None:  # type: ignore[no-untyped-def]
    code, stdout, stderr = cli("certify", str(DEMO / "campaign-methods.toml"), "--json",
                               "--trials", "0")
    assert code == 0, stderr
    studies = json.loads(stdout)["stability_studies"]
    assert [s["label"] for s in studies["series"]] == ["20 °C", "25 °C (upper storage limit)"]
    assert studies["short_term"]["temperature"] == 50


def test_short_term_study_has_its_own_time_unit(tmp_path: Path) -> None:
    # the demo's 50 °C study written in days (0, 7, 14, 28) with time_unit = "week"
    # gives the same u_sts as the study in weeks (1 week = 7 days, exact)
    lines = (DEMO / "short-term-50C.csv").read_text().splitlines()
    rows = [line.split(",") for line in lines[1:]]
    (tmp_path / "days.csv").write_text("time / day,replicate,value\n" + "\n".join(
        f"{int(t) * 7},{r},{v}" for t, r, v in rows) + "\n")
    path = _campaign(tmp_path, '[stability]\ndata = "stability.csv"\nshelf_life = 36\n'
                     'time_unit = "month"\n[stability.short_term]\ndata = "days.csv"\n'
                     'time_unit = "week"\ntransport_time = 2\n')
    found = certify(load_campaign(path, allow_outside=True), trials=0).stability_studies.u_sts
    demo = certify(load_campaign(DEMO / "campaign-methods.toml"), trials=0)
    assert found == pytest.approx(demo.stability_studies.u_sts, rel=1e-12)
