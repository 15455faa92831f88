"""Several measurands from shared inputs: joint Monte Carlo samples and every output.

Source for the expected correlation: the law of propagation for linear models (JCGM 102
6.2.1.3, U_y = J U_x J^T), computed by hand beside each check, and numpy's corrcoef.
Tolerance: five standard errors of a sample correlation, 5·(1 − ρ²)/sqrt(M).
"""

from __future__ import annotations

import json
import math
import shutil

import numpy as np
import pytest
from conftest import MODELS, model

from budget._analysis import evaluate
from budget._gum import propagate
from budget._model import load_model
from budget._montecarlo import simulate
from budget._report import render_report

# y1 = a + b, y2 = a - b with u(a) = 1, u(b) = 0.5: cov = 1 - 0.25, var = 1.25 each, so
# r(y1, y2) = 0.75 / 1.25 = 0.60 (JCGM 102 6.2.1.3 by hand)
_SHARED = """
    title = "two measurands"
    [measurands.y1]
    equation = "a + b"
    [measurands.y2]
    equation = "a - b"
    [inputs.a]
    value = 3
    u = 1
    [inputs.b]
    value = 1
    distribution = "rectangular"
    u = 0.5
"""


@pytest.mark.parametrize("trials", [3_000, 50_000, 300_000])
@pytest.mark.parametrize("workers", [1, 2])
def test_samples_keep_their_joint_order(trials, workers):
    # issue 10 regression: at 50,000 trials the rows came back sorted one by one and
    # showed r = 0.84 instead of 0.60
    sim = simulate(model(_SHARED), trials=trials, seed=4, workers=workers)
    y1, y2 = (m.samples for m in sim.measurands)
    r = float(np.corrcoef(y1, y2)[0, 1])
    assert r == pytest.approx(0.60, abs=5 * (1 - 0.36) / math.sqrt(trials))
    assert sim.output_correlation[0][1] == pytest.approx(r, abs=1e-12)
    a_back = (y1 + y2) / 2  # each trial's own value of a: the rows still belong together
    assert np.std(a_back) == pytest.approx(1.0, rel=5 / math.sqrt(2 * trials))


def test_adaptive_samples_keep_their_joint_order():
    sim = simulate(model(_SHARED), adaptive=True, seed=4)
    y1, y2 = (m.samples for m in sim.measurands)
    m = y1.size
    assert float(np.corrcoef(y1, y2)[0, 1]) == pytest.approx(0.60, abs=5 * 0.64 / math.sqrt(m))


# --- every output with several measurands (issue 10 item 4) ----------------------------

TWO = MODELS / "vics-as-25a" / "coulometric-two-results.toml"


def test_gum_correlation_of_shared_inputs_by_hand():
    # JCGM 102 6.2.1.3 by hand for y1 = a + b, y2 = a - b: r = 0.60
    budget = propagate(model(_SHARED))
    assert budget.output_correlation[0][1] == pytest.approx(0.60, rel=1e-12)


def test_mass_fraction_and_amount_content_are_correlated_as_the_product_rule_says():
    # w / % = kappa · M / 10: w and kappa share every input but M, so (GUM 5.1.6, relative
    # uncertainties of a product) r(w, kappa) = u_rel(kappa) / u_rel(w), and w = kappa·M/10
    result = evaluate(load_model(TWO), trials=200_000, seed=3)
    w, kappa = (result.budget.measurand(n) for n in ("w", "kappa"))
    molar = load_model(TWO).input("M").estimate
    assert w.estimate == pytest.approx(kappa.estimate * molar / 10, rel=1e-12)
    expected = (kappa.combined_uncertainty / kappa.estimate) / (
        w.combined_uncertainty / w.estimate)
    assert result.budget.output_correlation[0][1] == pytest.approx(expected, rel=1e-9)
    mc = result.simulation.output_correlation[0][1]
    assert mc == pytest.approx(expected, abs=5 * (1 - expected ** 2) / math.sqrt(200_000))


def test_report_of_two_measurands(tmp_path, cli):
    # issue 10 regression: `run --html` crashed on `row.values` for two measurands
    page = tmp_path / "two.html"
    code, stdout, stderr = cli("run", str(TWO), "--trials", "20000", "--html", str(page))
    assert code == 0, stderr
    assert "Traceback" not in stderr
    html = page.read_text(encoding="utf-8")
    assert html.count("Monte Carlo cross-check") == 2
    assert "Correlation between the measurands" in html
    assert "<caption>GUM, from the output covariance" in html
    assert "<caption>Monte Carlo, 20,000 trials" in html
    assert "mass fraction of C8H5KO4" in html and "amount content of titratable acid" in html
    text = render_report(evaluate(load_model(TWO), trials=20_000))
    assert text.count("Monte Carlo cross-check") == 2


def test_every_command_takes_two_measurands(tmp_path, cli):
    code, stdout, stderr = cli("run", str(TWO), "--json", "--trials", "20000")
    assert code == 0, stderr
    document = json.loads(stdout)
    assert [m["name"] for m in document["measurands"]] == ["w", "kappa"]
    assert all("monte_carlo" in m for m in document["measurands"])
    assert set(document["output_correlation"]) == {"w", "kappa"}
    code, stdout, stderr = cli("explain", str(TWO), "--trials", "20000")
    assert code == 0, stderr
    assert "kappa" in stdout and "w" in stdout
    code, stdout, stderr = cli("check", str(TWO))
    assert code == 0, stderr
    campaign = (MODELS / "vics-as-25a" / "campaign.toml").read_text(encoding="utf-8")
    for name in ("determinations.csv", "homogeneity.csv", "stability.csv", TWO.name):
        shutil.copy(MODELS / "vics-as-25a" / name, tmp_path / name)
    (tmp_path / "campaign.toml").write_text(campaign.replace(
        '"coulometric-purity.toml"', f'"{TWO.name}"'), encoding="utf-8")
    page = tmp_path / "certificate.html"
    code, stdout, stderr = cli("certify", str(tmp_path / "campaign.toml"), "--trials",
                               "20000", "--html", str(page))
    assert code == 0, stderr
    assert page.exists()
