"""Inputs covered by the scatter of the runs (``scatter_covers``) in every output.

ISO Guide 35:2017 / GUM 4.2: when an input varies from run to run, its variation is in
the Type A term s/√n of the characterization; it gets no term of its own in u_B, but it is
not exact either. Issue 10 regression: such inputs were shown as `exact` with u = 0.
The expected s/√n is computed with numpy from the run values (general-purpose library).
"""

from __future__ import annotations

import json
import math
import shutil
from pathlib import Path

import numpy as np
import pytest
from conftest import MODELS

from budget._campaign import load_campaign
from budget._certification import certify
from budget._document import certification_document
from budget._report import render_certification_report
from budget._table import render, render_certification

DEMO = MODELS / "vics-as-25a"
COVERED = ("Q_post", "Q_pre")


@pytest.fixture
def campaign_file(tmp_path: Path) -> Path:
    for item in DEMO.iterdir():
        if item.suffix in (".csv", ".toml"):
            shutil.copy(item, tmp_path / item.name)
    text = (DEMO / "campaign.toml").read_text(encoding="utf-8")
    (tmp_path / "campaign.toml").write_text(text.replace(
        "scatter_covers = []", 'scatter_covers = ["Q_post", "Q_pre"]'), encoding="utf-8")
    return tmp_path / "campaign.toml"


def test_covered_inputs_are_never_exact(campaign_file: Path) -> None:
    cert = certify(load_campaign(campaign_file), trials=20_000)
    char = cert.characterization
    budget = char.result.budget.measurands[0]
    rows = {c.input: c for c in budget.contributions}
    for name in COVERED:
        assert rows[name].distribution == "covered_by_scatter"
        assert rows[name].type == "A"
        assert rows[name].standard_uncertainty == 0.0  # no term of its own in u_B
    repeatability = float(np.std(char.runs, ddof=1)) / math.sqrt(len(char.runs))  # numpy
    item = char.result.model.input("Q_post")
    assert item.distribution.repeatability == pytest.approx(repeatability, rel=1e-12)
    assert item.basis.startswith("covered by the run-to-run scatter: the Type A term s/√n = ")
    table = render(char.result)
    q_post = next(line for line in table.splitlines() if line.startswith("Q_post"))
    assert "in s/√n" in q_post and "in the scatter" in q_post and "exact" not in q_post
    summary = render_certification(cert)
    assert "covered by the run-to-run scatter (Type A, s/√n = " in summary
    assert summary.rstrip().splitlines()[-1] != ""
    document = certification_document(cert)
    assert document["characterization"]["repeatability"] == pytest.approx(repeatability)
    contributions = document["characterization"]["budget"]["measurands"][0]["contributions"]
    shown = {c["input"]: c["distribution"] for c in contributions}
    assert shown["Q_post"] == shown["Q_pre"] == "covered_by_scatter"
    json.dumps(document)
    html = render_certification_report(cert)
    assert "Q_post, Q_pre: covered by the run-to-run scatter, their variation is in the Type A " \
           "term s/√n = " in html


def test_without_scatter_covers_nothing_is_marked() -> None:
    cert = certify(load_campaign(DEMO / "campaign.toml"), trials=0)
    budget = cert.characterization.result.budget.measurands[0]
    assert not [c for c in budget.contributions if c.distribution == "covered_by_scatter"]
    assert "covered by the run-to-run scatter" not in render_certification(cert)
