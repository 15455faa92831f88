"""Degenerate data (issue 17): a statistic whose variance is zero is "not computable",
never "significant"; JSON stays valid (null with a reason). The values follow from the
definitions (ISO Guide 35 one-way ANOVA, least-squares slope): with zero within-unit
variance F = MS_between/0 is undefined; points exactly on a line have s(b₁) = 0."""

from __future__ import annotations

import json
import math
import shutil
from pathlib import Path

import numpy as np

from budget._certification import anova, trend

from conftest import MODELS

DEMO = MODELS / "vics-as-25a"


def test_tied_replicates_make_f_not_computable() -> None:
    groups = [np.array([99.98, 99.98, 99.98]), np.array([99.99, 99.99, 99.99]),
              np.array([99.97, 99.97, 99.97])]
    h = anova(groups, ["A", "B", "C"])
    assert math.isnan(h.F) and math.isnan(h.p_value)
    assert h.reason.startswith("the replicates of each unit agree exactly")
    # s_bb = √(MS_between/n₀) still follows from the definition: here the s of the means
    assert math.isclose(h.s_bb, 0.01, rel_tol=1e-9)


def test_identical_values_are_0_over_0() -> None:
    h = anova([np.full(3, 5.0), np.full(3, 5.0)])
    assert math.isnan(h.F) and h.reason.startswith("every value is the same")
    assert h.s_bb == 0.0 and h.u_bb == 0.0


def test_points_on_a_line_have_no_t_test() -> None:
    times = np.array([0.0, 6.0, 12.0, 18.0])
    fit = trend(times, 99.98 + 1e-4 * times, 36.0)
    assert math.isnan(fit.t) and math.isnan(fit.p_value)
    assert fit.u_lts == 0.0 and fit.reason.startswith("the points lie exactly on the")


def _degenerate_campaign(tmp_path: Path) -> Path:
    folder = tmp_path / "batch"
    shutil.copytree(DEMO, folder)
    rows = ["unit,replicate,value"] + [f"U-{u},{r},99.98{u}" for u in range(4)
                                       for r in range(1, 4)]
    (folder / "homogeneity.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    rows = ["time,replicate,value"] + [f"{t},1,{99.98 + 1e-4 * t!r}" for t in (0, 6, 12)]
    (folder / "stability.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    return folder / "campaign.toml"


def test_certify_json_is_valid_and_says_why(cli, tmp_path: Path) -> None:
    campaign = _degenerate_campaign(tmp_path)
    code, stdout, stderr = cli("certify", "--json", "--trials", "0", str(campaign))
    assert code == 0, stderr
    document = json.loads(stdout)  # strict JSON: no Infinity or NaN
    h, s = document["homogeneity"], document["stability"]
    assert h["F"] is None and h["p_value"] is None
    assert h["F_reason"].startswith("the replicates of each unit agree exactly")
    assert s["t"] is None and s["p_value"] is None and s["t_reason"]
    assert "significant" not in " ".join(document["warnings"])
    assert "homogeneity: F and p not computable" in stderr
    code, stdout, stderr = cli("certify", "--trials", "0", str(campaign))
    assert code == 0 and "F = not computable (p = not computable)" in stdout
    report = tmp_path / "report.html"
    code, _, _ = cli("certify", "--trials", "0", "--html", str(report), str(campaign))
    assert code == 0 and "not computable" in report.read_text(encoding="utf-8")


def test_huge_and_tiny_data_give_representable_statistics() -> None:
    # scaling leaves the statistics of x·10^k as those of x times 10^k (plain arithmetic)
    base = [np.array([1.0, 2.0, 4.0]), np.array([2.0, 3.0, 3.5]), np.array([0.5, 1.5, 2.0])]
    reference = anova(base)
    for factor in (1e300, 1e-300):
        h = anova([g * factor for g in base])
        assert math.isclose(h.s_bb, reference.s_bb * factor, rel_tol=1e-12)
        assert math.isclose(h.u_bb_star, reference.u_bb_star * factor, rel_tol=1e-12)
        assert math.isclose(h.F, reference.F, rel_tol=1e-12)
    times = np.array([0.0, 6.0, 12.0, 18.0])
    values = np.array([1.0, 1.5, 1.7, 2.6])
    line = trend(times, values, 36.0)
    for factor in (1e300, 1e-300):
        fit = trend(times, values * factor, 36.0)
        assert math.isclose(fit.u_lts, line.u_lts * factor, rel_tol=1e-12)
        assert math.isclose(fit.t, line.t, rel_tol=1e-12)
