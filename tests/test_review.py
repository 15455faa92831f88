"""Regressions found by an independent review of issues 10, 12 and 15 (helper h19).

Each test reproduces a defect found by trying the documented behaviour from the outside.
Numeric checks name their source beside them; dates are checked against the standard
library's ``datetime``.
"""

from __future__ import annotations

import datetime as dt
import math

from budget._campaign import load_campaign
from budget._certification import certify
from conftest import MODELS

LAB = MODELS / "vics-as-25a-lab-files"


def _lab_copy(tmp_path, dates_to):
    """The lab-files campaign with its runs' dates rewritten by ``dates_to``."""
    for path in LAB.iterdir():
        (tmp_path / path.name).write_bytes(path.read_bytes())
    runs = tmp_path / "determinations.csv"
    lines = runs.read_text(encoding="utf-8").splitlines()
    out = [lines[0]]
    for line in lines[1:]:
        cells = line.split(";")
        cells[2] = dates_to(dt.date.fromisoformat(cells[2]))
        out.append(";".join(cells))
    runs.write_text("\n".join(out) + "\n", encoding="utf-8")
    return tmp_path / "campaign.toml"


def test_run_dates_in_a_day_first_form_are_read_like_every_data_date(tmp_path):
    # Found: a runs file with ';', decimal commas, a register and dates written 06.05.2025
    # was refused ("expected a date such as 2025-05-06"), although data-files.md reads
    # day-first dates when a day above 12 settles the order or `dates` declares it.
    campaign = _lab_copy(tmp_path, lambda d: d.strftime("%d.%m.%Y"))
    text = campaign.read_text(encoding="utf-8").replace(
        'scatter_covers = []', 'scatter_covers = []\ndates = "day-first"')
    campaign.write_text(text, encoding="utf-8")
    iso = certify(load_campaign(LAB / "campaign.toml"), trials=0)
    local = certify(load_campaign(campaign), trials=0)
    assert local.run_dates == iso.run_dates
    assert local.run_dates[0] == dt.date(2025, 5, 6)  # standard library's date


def test_an_expiry_found_through_day_first_run_dates(tmp_path):
    # the resistor's certificate R10 is valid until 2026-01-19; a run on 20.01.2026 (a day
    # above 12: day-first without a declaration) must be flagged
    campaign = _lab_copy(tmp_path, lambda d: d.strftime("%d.%m.%Y"))
    runs = tmp_path / "determinations.csv"
    lines = runs.read_text(encoding="utf-8").splitlines()
    cells = lines[-1].split(";")
    cells[2] = "20.01.2026"
    lines[-1] = ";".join(cells)
    runs.write_text("\n".join(lines) + "\n", encoding="utf-8")
    cert = certify(load_campaign(campaign), trials=0)
    assert dt.date(2026, 1, 20) in cert.run_dates
    assert any("certificate 'R10'" in w and "expired on 2026-01-20" in w
               for w in cert.warnings)


STAGE1 = """
title = "stage 1 (a line with intercept and slope estimated together)"

[measurands.y]
equation = "b0 + b1 * x"

[inputs.b0]
value = 1.0
u = 0.02
dof = 6

[inputs.b1]
value = 2.0
u = 0.01
dof = 6

[inputs.x]
value = 3.0
u = 0.05

[[correlations]]
between = ["{a}", "{b}"]
r = -0.8
"""

STAGE2 = """
title = "stage 2"

[measurands.z]
equation = "y1 * x2"

[inputs.y1]
result_of = "stage1.toml"
measurand = "y"
shares = { x2 = "x" }

[inputs.x2]
value = 3.0
u = 0.05
"""


def _stages(tmp_path, a, b):
    from budget._analysis import evaluate
    from budget._chained import stages
    from budget._model import load_model

    (tmp_path / "stage1.toml").write_text(STAGE1.format(a=a, b=b), encoding="utf-8")
    (tmp_path / "stage2.toml").write_text(STAGE2, encoding="utf-8")
    model = load_model(tmp_path / "stage2.toml")
    budget = evaluate(model, trials=0).budget.measurands[0]
    return {s.label: s for s in stages(model, budget)}, budget


def test_stage_shares_include_the_earlier_models_own_correlation(tmp_path):
    # Found: "Share of u_c² by stage" printed 99.3 % + 2.7 % = 102 %: the correlation term
    # r(b0, b1) of stage 1 was left out of its stage.
    # Hand computation (GUM eq. (16)): z = (b0 + b1·x)·x, c_b0 = x = 3, c_b1 = x² = 9,
    # c_x = b0 + 2·b1·x = 13; stage 1: (3·0.02)² + (9·0.01)² + 2·3·9·(−0.8)·0.02·0.01
    # = 0.0036 + 0.0081 − 0.00864 = 0.00306; this model: (13·0.05)² = 0.4225.
    found, budget = _stages(tmp_path, "b0", "b1")
    assert math.isclose(found["y1"].variance, 0.00306, rel_tol=1e-9)
    assert math.isclose(found[""].variance, 0.4225, rel_tol=1e-9)
    assert math.isclose(sum(s.share for s in found.values()), 100.0, rel_tol=1e-9)
    assert math.isclose(sum(s.variance for s in found.values()),
                        budget.combined_uncertainty ** 2, rel_tol=1e-12)


def test_a_correlation_across_stages_is_a_row_of_its_own(tmp_path):
    # stage 1 correlates its b0 with x, which stage 2 shares as x2: the term
    # 2·c_b0·c_x·r·u_b0·u_x = 2·3·13·(−0.8)·0.02·0.05 = −0.0624 (hand computation)
    from budget._chained import BETWEEN_STAGES

    found, budget = _stages(tmp_path, "b0", "x")
    assert math.isclose(found[BETWEEN_STAGES].variance, -0.0624, rel_tol=1e-9)
    assert math.isclose(sum(s.share for s in found.values()), 100.0, rel_tol=1e-9)


TWO = """
title = "two results from shared inputs"

[measurands.s]
equation = "a + b"
unit = "g"

[measurands.d]
equation = "a - b"
unit = "g"

[inputs.a]
value = 10
unit = "g"
u = 0.3
dof = 5

[inputs.b]
value = 4
unit = "g"
u = {u_b}
dof = 5

[[correlations]]
between = ["a", "b"]
r = {r}

[[estimated_together]]
inputs = ["a", "b"]
"""


def test_compare_names_a_changed_correlation_coefficient(tmp_path):
    # Found: `budget compare` of two budgets whose r(a,b) went 0.5 → 0.2 blamed
    # "correlation terms" without naming the coefficient that changed.
    # Hand computation (GUM eq. (16)): u_c²(s) = 0.09 + u_b² + 2·r·0.3·u_b, so the
    # correlation term goes 2·0.5·0.3·0.4 = 0.12 → 2·0.2·0.3·0.5 = 0.06 g².
    from budget._difference import compare, load_side
    from budget._difference_view import causes, difference_document

    (tmp_path / "a.toml").write_text(TWO.format(u_b=0.4, r=0.5), encoding="utf-8")
    (tmp_path / "b.toml").write_text(TWO.format(u_b=0.5, r=0.2), encoding="utf-8")
    diff = compare(load_side(tmp_path / "a.toml"), load_side(tmp_path / "b.toml"))
    s = diff.measurands[0]
    assert math.isclose(s.correlation_change, 0.06 - 0.12, rel_tol=1e-9)
    assert math.isclose(s.variance_change, (0.09 + 0.25 + 0.06) - (0.09 + 0.16 + 0.12),
                        rel_tol=1e-9)
    assert "correlation terms (r(a,b) 0.5 → 0.2)" in causes(s)[1]
    document = difference_document(diff)
    assert document["measurands"][1]["correlations_changed"] == ["r(a,b) 0.5 → 0.2"]


def test_the_basis_of_an_input_with_finite_dof_names_the_t_it_is_drawn_from():
    # Found: the report's "Inputs and the basis of their uncertainty" and `explain` said
    # "standard uncertainty, normal" for `u` with `dof = 5`, which Monte Carlo draws as a
    # t with 5 degrees of freedom (JCGM 101 6.4.9; docs/uncertainty-rules.md).
    from budget._model import parse_model

    model = parse_model(TWO.format(u_b=0.4, r=0.5), "two.toml")
    inputs = {i.name: i for i in model.inputs}
    assert inputs["a"].distribution.name == "student_t"
    assert inputs["a"].basis == "standard uncertainty, t with ν = 5"
    plain = parse_model(TWO.format(u_b=0.4, r=0.5).replace("dof = 5\n", ""),
                        "plain.toml")
    assert {i.name: i for i in plain.inputs}["a"].basis == "standard uncertainty, normal"


def test_certificates_of_a_chained_stage_are_checked_on_that_stages_dates(tmp_path):
    # Found: the chained example's report listed the demo's certificates as "no
    # measurement date given", although the earlier model states `measured = 2025-05-06`;
    # an expired certificate then showed no problem in the report or the JSON.
    from budget._analysis import evaluate
    from budget._document import result_document
    from budget._model import load_model

    demo = MODELS / "vics-as-25a"
    for name in ("coulometric-purity.toml", "calibrations.toml"):
        (tmp_path / name).write_bytes((demo / name).read_bytes())
    for path in (MODELS / "chain").glob("*.toml"):
        (tmp_path / path.name).write_text(path.read_text(encoding="utf-8").replace(
            "../vics-as-25a/", ""), encoding="utf-8")
    register = tmp_path / "calibrations.toml"
    register.write_text(register.read_text(encoding="utf-8").replace(
        "valid_until = 2026-01-19", "valid_until = 2025-05-01"), encoding="utf-8")
    document = result_document(evaluate(load_model(tmp_path / "acid-assay.toml"), trials=0))
    found = {c["certificate"]: c for c in document["certificates"]}
    assert found["DVM1"]["measurement_dates"] == ["2025-05-06"]  # the stage's `measured`
    assert found["DVM1"]["problems"] == []
    assert found["R10"]["problems"] == ["expired on 2025-05-06 (valid until 2025-05-01)"]


def test_a_saved_result_keeps_its_estimated_together_sets(tmp_path):
    # Found: chaining the saved JSON of a model with [[estimated_together]] lost the set:
    # a warning asked to "declare them estimated together" (impossible in a saved result)
    # and Monte Carlo drew the pair as correlated t with separate χ² draws instead of one
    # multivariate t (JCGM 102 6.5; docs/uncertainty-rules.md).
    import json

    from budget._analysis import evaluate
    from budget._document import result_document
    from budget._model import load_model

    stage1 = STAGE1.format(a="b0", b="b1") + '\n[[estimated_together]]\ninputs = ["b0", "b1"]\n'
    (tmp_path / "stage1.toml").write_text(stage1, encoding="utf-8")
    saved = result_document(evaluate(load_model(tmp_path / "stage1.toml"), trials=0))
    assert saved["estimated_together"] == [{"inputs": ["b0", "b1"], "dof": 6.0, "note": ""}]
    (tmp_path / "stage1.json").write_text(json.dumps(saved), encoding="utf-8")
    (tmp_path / "stage2.toml").write_text(STAGE2.replace("stage1.toml", "stage1.json"),
                                          encoding="utf-8")
    model = load_model(tmp_path / "stage2.toml")
    assert [s.inputs for s in model.estimated_together] == [("y1:b0", "y1:b1")]
    result = evaluate(model, trials=0)
    assert not any("not declared [[estimated_together]]" in w for w in result.warnings)
    assert "estimated together (y1:b0, y1:b1)" in result.budget.measurands[0].dof_rule


def test_a_what_if_names_the_listed_model_digest_as_the_file_before_the_changes(tmp_path):
    # Found: a what-if copy listed `{"role": "model", "sha256": <the unchanged file's>}`
    # in provenance.files, which reads as the digest of what was computed.
    # Digest checked against hashlib.
    import hashlib

    from budget._analysis import evaluate
    from budget._document import result_document
    from budget._model import load_model

    path = tmp_path / "two.toml"
    path.write_text(TWO.format(u_b=0.4, r=0.5), encoding="utf-8")
    changed = load_model(path).with_uncertainty("a", u=0.6)
    files = result_document(evaluate(changed, trials=0))["provenance"]["files"]
    assert files == [{"role": "model (before the changes)", "path": str(path),
                      "sha256": hashlib.sha256(path.read_bytes()).hexdigest()}]
    plain = result_document(evaluate(load_model(path), trials=0))["provenance"]["files"]
    assert plain[0]["role"] == "model"
