"""The CSV budget export holds the correlation terms, as the terminal and JSON budgets do,
so its shares add up to 100 % of u_c²."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest

from conftest import MODELS

H3 = MODELS / "reference" / "gum-h3-thermometer.toml"


def test_the_csv_budget_has_the_correlation_term(cli, tmp_path: Path) -> None:
    # JCGM 100:2008 H.3.3: u(y1) = 0.0029 °C, u(y2) = 0.00067 /°C, r(y1, y2) = -0.930, and
    # at t = 30 °C the sensitivities are 1 and t - t0 = 10 °C; H.3.4: u_c = 0.0041 °C
    target = tmp_path / "budget.csv"
    code, _, stderr = cli("run", str(H3), "--trials", "0", "-q", "--csv", str(target))
    assert code == 0, stderr
    with open(target, encoding="utf-8", newline="") as handle:
        rows = list(csv.DictReader(handle))
    (term,) = [r for r in rows if r["distribution"] == "correlation"]
    assert term["input"] == "r(y1, y2)" and float(term["r"]) == -0.93
    assert float(term["variance"]) == pytest.approx(2 * 1 * 10 * -0.93 * 0.0029 * 0.00067,
                                                    rel=1e-12)
    assert sum(float(r["share"]) for r in rows) == pytest.approx(100.0, abs=1e-9)
    inputs = [float(r["contribution"]) ** 2 for r in rows if r["contribution"]]
    assert (sum(inputs) + float(term["variance"])) ** 0.5 == pytest.approx(0.0041, abs=5e-5)
    code, stdout, _ = cli("run", str(H3), "--trials", "0", "--json")
    (shown,) = json.loads(stdout)["measurands"][0]["correlation_terms"]
    assert float(term["share"]) == shown["share"]


def test_a_budget_without_correlations_keeps_its_columns(cli, tmp_path: Path) -> None:
    target = tmp_path / "budget.csv"
    model = MODELS / "reference" / "eurachem-a2-naoh.toml"
    code, _, _ = cli("run", str(model), "--trials", "0", "-q", "--csv", str(target))
    header = target.read_text(encoding="utf-8").splitlines()[0]
    assert code == 0 and header == ("measurand,measurand_unit,input,estimate,unit,u,"
                                    "distribution,type,dof,sensitivity,contribution,share")
