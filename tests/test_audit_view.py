"""The auditor's page of the budget report (``audit_view``): the dominant input and why,
u(M) broken down by element, the what-if reruns, the verdict against Monte Carlo."""

from __future__ import annotations

import math

import pytest

from budget._analysis import evaluate
from budget._audit_view import audit_view, element_rows
from budget._equations_view import sensitivity_view
from budget._explanation import explain
from budget._model import load_model
from budget._report import render_report
from budget._typeset import name_html

from conftest import MODELS

DEMO = MODELS / "vics-as-25a" / "coulometric-purity.toml"


@pytest.fixture(scope="module")
def result():
    return evaluate(load_model(DEMO), trials=20_000, seed=1)


def test_molar_mass_broken_down_by_element(result):
    item = result.model.input("M")
    budget = result.budget.measurands[0]
    c = next(c for c in budget.contributions if c.input == "M")
    view = element_rows(item, c.sensitivity, budget.combined_uncertainty, 2, "%")
    rows = {r["element"]: r for r in view["rows"]}
    assert set(rows) == {"C", "H", "K", "O"}
    # CIAAW interval of carbon [12.0096, 12.0116] [V, ../shared/references.md 5]: u =
    # 0.001/√3 as a rectangular half-width (the model-format contract); 8 atoms correlated
    assert rows["C"]["n"] == 8
    assert rows["C"]["part"] == pytest.approx(8 * 0.001 / math.sqrt(3), rel=1e-9)
    # u(M) of KHP from the interval midpoints: 0.00471 g/mol [C, references.md 5]
    assert float(view["u_M"]) == pytest.approx(0.0047, abs=5e-5)
    assert math.fsum(r["part"] ** 2 for r in view["rows"]) == pytest.approx(
        item.standard_uncertainty ** 2, rel=1e-12)
    assert view["top"]["element"] == "C"
    shares = [float(r["share_M"]) for r in view["rows"] if r["share_M"] != "< 0.1"]
    assert sum(shares) == pytest.approx(100.0, abs=0.2)


def test_the_audit_follows_explain(result):
    chains = [sensitivity_view(result.model, 0)]
    (page,) = audit_view(result, chains)
    (e,) = explain(result, sobol_trials=1 << 10)
    assert page["lead"]["written"] == e.drivers[0].input == "M"
    assert [str(d["name"]) for d in page["drivers"]] == [name_html(d.input)
                                                         for d in e.drivers]
    assert page["validated"] == e.validated
    assert page["reasons"] == list(e.reasons)
    assert page["lead"]["chain"]["unit"] == "%·mol/g"


def test_the_report_carries_the_answer(result):
    text = render_report(result)
    assert "What dominates the uncertainty, and what would reduce it" in text
    assert "<strong><var>M</var> dominates</strong>" in text
    assert 'data-element="C"' in text
    assert "U if u(x<sub>i</sub>) were halved" in text
    assert "Type A inputs" in text and "GUM against Monte Carlo" in text
