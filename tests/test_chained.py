"""Chained budgets: an input that is another model's result keeps its correlations.

The three-stage chain in ``models/chain`` (invented demo scenario: certified KHP →
standardised NaOH → an assay with it) is checked against

* one model with the same equations written out (identical u_c to 1e-12: the chain is
  the same function of the same base inputs, GUM 5.1.2 / 5.2.2);
* the correlation-blind paste, where the titrant's concentration is typed in as an
  independent number: it must differ by exactly the predicted amount. The burette factor f
  enters w_X = c·f·V·M/m with c ∝ 1/f, so in the chain its sensitivity is 0, while the
  paste counts it twice, once inside u(c) and once directly: u²_paste − u²_chain =
  2·(w_X·u(f)/f)² (first-order propagation, GUM 5.1.2, by hand);
* a saved result (JSON) of stage 2 used as the input: the linear function of its base
  inputs gives the GUM u_c of the full chain (the GUM is first order);
* the Monte Carlo method (JCGM 101), which draws the shared input once per trial: its
  standard deviation agrees with the chain's u_c within five standard errors of a standard
  deviation, σ·√(1/(2M)) (common practice for a normal sample), and not with the paste.
"""

from __future__ import annotations

import json
import math
import shutil

import pytest

from budget._analysis import evaluate
from budget._errors import BudgetError
from budget._model import load_model
from conftest import MODELS

CHAIN = MODELS / "chain"
STAGE1 = MODELS / "vics-as-25a" / "coulometric-purity.toml"


def _u(model):
    return evaluate(model, trials=0).budget.measurands[0]


def _written_out(tmp_path):
    """Stages 1–3 as one model file: the same inputs, equations and shared quantities."""
    text = STAGE1.read_text()
    text = text.replace('[measurands.w]\nequation = "M * Q / (z * F * m)"',
                        '[measurands.w_X]\nequation = "c_NaOH * f_bur * V_X * M_X / m_X"')
    text = text.replace("[definitions]\n", "[definitions]\n"
                        'w_KHP = "M * Q / (z * F * m)"\n'
                        'c_NaOH = "m_KHP * w_KHP / (M * f_bur * V_read)"\n', 1)
    stage2 = (CHAIN / "naoh-standardisation.toml").read_text()
    stage3 = (CHAIN / "acid-assay.toml").read_text()
    extra = [stage2[stage2.index("[inputs.m_KHP]"):],
             stage3[stage3.index("[inputs.V_X]"):]]
    path = tmp_path / "written-out.toml"
    path.write_text(text + "\n" + "\n".join(extra))
    shutil.copy(MODELS / "vics-as-25a" / "calibrations.toml", tmp_path)
    return load_model(path)


def test_the_chain_equals_the_written_out_model():
    chained = _u(load_model(CHAIN / "acid-assay.toml"))
    import tempfile
    from pathlib import Path

    single = _u(_written_out(Path(tempfile.mkdtemp())))
    assert chained.estimate == pytest.approx(single.estimate, rel=1e-14)
    assert chained.combined_uncertainty == pytest.approx(single.combined_uncertainty,
                                                         rel=1e-12)


def test_the_correlation_blind_paste_differs_by_the_predicted_amount(tmp_path):
    stage2 = _u(load_model(CHAIN / "naoh-standardisation.toml"))
    chained_model = load_model(CHAIN / "acid-assay.toml")
    chained = _u(chained_model)
    text = (CHAIN / "acid-assay.toml").read_text().replace(
        'result_of = "naoh-standardisation.toml"    # stage 2 (which itself chains stage 1)\n'
        'shares = { f_bur = "f_bur" }',
        f'value = {stage2.estimate!r}\nunit = "mol/L"\nu = {stage2.combined_uncertainty!r}')
    (tmp_path / "paste.toml").write_text(text)
    pasted = _u(load_model(tmp_path / "paste.toml"))
    u_f = chained_model.input("f_bur").standard_uncertainty
    predicted = 2.0 * (chained.estimate * u_f) ** 2
    assert pasted.combined_uncertainty ** 2 - chained.combined_uncertainty ** 2 == \
        pytest.approx(predicted, rel=1e-9)
    assert {c.input: c.sensitivity for c in chained.contributions}["f_bur"] == \
        pytest.approx(0.0, abs=1e-12)


def test_a_saved_result_keeps_the_shared_input(tmp_path, cli):
    code, stdout, stderr = cli("run", str(CHAIN / "naoh-standardisation.toml"), "--json",
                               "--trials", "0")
    assert code == 0, stderr
    (tmp_path / "stage2.json").write_text(stdout)
    text = (CHAIN / "acid-assay.toml").read_text().replace(
        '"naoh-standardisation.toml"', '"stage2.json"')
    (tmp_path / "assay.toml").write_text(text)
    from_saved = _u(load_model(tmp_path / "assay.toml"))
    chained = _u(load_model(CHAIN / "acid-assay.toml"))
    assert from_saved.estimate == pytest.approx(chained.estimate, rel=1e-12)
    assert from_saved.combined_uncertainty == pytest.approx(chained.combined_uncertainty,
                                                            rel=1e-9)


def test_monte_carlo_draws_the_shared_input_once():
    model = load_model(CHAIN / "acid-assay.toml")
    result = evaluate(model, trials=200_000, seed=11)
    gum = result.budget.measurands[0].combined_uncertainty
    assert result.simulation is not None
    mc = result.simulation.measurands[0].standard_uncertainty
    assert abs(mc - gum) <= 5 * gum / math.sqrt(2 * 200_000)
    paste = math.sqrt(gum ** 2 + 2 * (result.budget.measurands[0].estimate * 0.001) ** 2)
    assert abs(mc - paste) > 20 * gum / math.sqrt(2 * 200_000)


def test_the_json_and_terminal_show_the_chain_and_the_stages(cli):
    code, stdout, stderr = cli("run", str(CHAIN / "acid-assay.toml"), "--json", "--trials",
                               "0")
    assert code == 0, stderr
    document = json.loads(stdout)
    chain = document["chain"]["w_X"]
    assert [(link["input"], link["measurand"]) for link in chain["links"]] == [
        ("c_NaOH", "c_NaOH"), ("c_NaOH:w_KHP", "w")]
    assert chain["links"][0]["shares"] == {"f_bur": "f_bur"}
    u2 = document["measurands"][0]["u"] ** 2
    assert math.fsum(s["variance"] for s in chain["stages"]) == pytest.approx(u2, rel=1e-12)
    files = {f["role"] for f in document["provenance"]["files"]}
    assert {"model", "c_NaOH ← model", "c_NaOH:w_KHP ← model",
            "c_NaOH:w_KHP ← register"} <= files
    code, stdout, _ = cli("run", str(CHAIN / "acid-assay.toml"), "--trials", "0")
    assert "Share of u_c² by stage:" in stdout
    assert "c_NaOH:w_KHP = w of " in stdout


@pytest.mark.parametrize("table, message", [
    ('result_of = "acid-assay.toml"\n',
     "expected a chain without cycles, found 'acid-assay.toml' again"),
    ('result_of = "naoh-standardisation.toml"\nmeasurand = "c"\n',
     "expected a measurand of {chain}/naoh-standardisation.toml (c_NaOH), found 'c'"),
    ('result_of = "naoh-standardisation.toml"\nshares = { f_bur = "f_burette" }\n',
     "expected an input of {chain}/naoh-standardisation.toml, found 'f_burette' (did you "
     "mean 'f_bur'?)"),
    ('result_of = "naoh-standardisation.toml"\nu = 0.1\n',
     "'u' does not apply to an input that is the result of another model (its uncertainty "
     "comes from that model)"),
    ('result_of = "missing.toml"\n',
     "expected a model file '{chain}/missing.toml', found no such file"),
    ('result_of = "naoh-standardisation.toml"\nunit = "g"\n',
     "expected a unit of [substance] / [length] ** 3 like measurand 'c_NaOH' of "
     "{chain}/naoh-standardisation.toml ('mol/L'), found 'g'"),
])
def test_bad_links_are_errors(tmp_path, table, message):
    folder = tmp_path / "chain"
    shutil.copytree(CHAIN, folder)
    shutil.copytree(MODELS / "vics-as-25a", tmp_path / "vics-as-25a")
    text = (folder / "acid-assay.toml").read_text().replace(
        'result_of = "naoh-standardisation.toml"    # stage 2 (which itself chains stage 1)\n'
        'shares = { f_bur = "f_bur" }\n', table)
    (folder / "acid-assay.toml").write_text(text)
    with pytest.raises(BudgetError) as error:
        load_model(folder / "acid-assay.toml")
    assert str(error.value).endswith(message.format(chain=folder))


def test_the_report_shows_the_chain():
    from budget._report import render_report

    page = render_report(evaluate(load_model(CHAIN / "acid-assay.toml"), trials=0))
    assert "Chained results" in page
    assert "<td>c_NaOH:w_KHP</td><td>w</td>" in page
    assert "Share of u<sub>c</sub>²(w_X) by stage" in page
