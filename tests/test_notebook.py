"""The library in a notebook: short reprs, summaries, scoped HTML, DataFrames, dicts,
lookups with a "did you mean", and what-ifs.

A notebook session is run by IPython's own shell and display formatter (what Jupyter
calls for every cell's result), so the objects are shown as a notebook would show them.
"""

from __future__ import annotations

import math
import re
from html.parser import HTMLParser
from typing import Any

import pytest

import budget
from budget._document import result_document

from conftest import MODELS

A2 = MODELS / "reference" / "eurachem-a2-naoh.toml"
CAMPAIGN = MODELS / "vics-as-25a" / "campaign.toml"


@pytest.fixture(scope="module")
def result() -> budget.Result:
    return budget.evaluate(budget.load_model(A2), trials=20_000, seed=3)


@pytest.fixture(scope="module")
def cert() -> budget.Certification:
    return budget.certify(budget.load_campaign(CAMPAIGN), trials=0)


def _objects(result: Any, cert: Any) -> list[Any]:
    explanation = budget.explain(result, sobol_trials=1024)[0]
    return [result, result.budget, result.budget.measurands[0], result.simulation,
            result.simulation.measurands[0], explanation, cert]


class _Checker(HTMLParser):
    """Counts tags and keeps the style text; fails on a closing tag that was not open."""

    VOID = {"br", "hr", "img", "meta", "link", "input", "col", "area", "base", "wbr"}

    def __init__(self) -> None:
        super().__init__()
        self.stack: list[str] = []
        self.tags: list[str] = []
        self.style = ""
        self.in_style = False

    def handle_starttag(self, tag: str, attrs: Any) -> None:
        self.tags.append(tag)
        if tag not in self.VOID:
            self.stack.append(tag)
        self.in_style = tag == "style"

    def handle_startendtag(self, tag: str, attrs: Any) -> None:
        self.tags.append(tag)

    def handle_endtag(self, tag: str) -> None:
        if tag in self.VOID:
            return
        assert self.stack and self.stack[-1] == tag, f"</{tag}> closes {self.stack[-1:]}"
        self.stack.pop()
        self.in_style = False

    def handle_data(self, data: str) -> None:
        if self.in_style:
            self.style += data


def _check_html(text: str) -> _Checker:
    checker = _Checker()
    checker.feed(text)
    checker.close()
    assert checker.stack == [], checker.stack
    return checker


def test_every_result_has_a_short_repr(result: Any, cert: Any) -> None:
    for item in _objects(result, cert):
        text = repr(item)
        assert text.startswith("<") and text.endswith(">"), text
        assert len(text) < 300 and "\n" not in text, text
    assert repr(result.budget.measurands[0]) == (
        "<MeasurandBudget c_NaOH: y = 0.102136 mol/L, u_c = 0.000099, k = 1.96, "
        "U = 0.00019 (5 inputs)>")
    assert repr(cert) == ("<Certification 'Certification of batch VICS-AS-25A, potassium "
                          "hydrogen phthalate': (99.9866 ± 0.0087) %, k = 2>")


def test_summary_is_the_terminal_text(result: Any, cert: Any) -> None:
    from budget._table import render, render_certification

    assert result.summary().startswith(render(result))
    assert cert.summary().startswith(render_certification(cert, 2))
    assert "share %" in result.budget.measurands[0].summary()
    assert "GUM result" in result.simulation.summary()


def test_html_is_well_formed_with_tables_charts_and_scoped_styles(result: Any,
                                                                  cert: Any) -> None:
    for item in _objects(result, cert):
        text = item._repr_html_()
        assert text.lstrip().startswith('<div class="budget-nb">')
        checker = _check_html(text)
        assert "table" in checker.tags
        rules = re.sub(r"/\*.*?\*/", "", checker.style, flags=re.S)
        selectors = [s.strip() for block in re.findall(r"([^{}]+)\{", rules)
                     for s in block.split(",")]
        assert selectors and all(s.startswith(".budget-nb") for s in selectors), selectors
    assert "<svg" in result._repr_html_() and "<svg" in cert._repr_html_()


def test_frames_use_the_json_names_and_carry_the_totals(result: Any) -> None:
    document = result_document(result)["measurands"][0]
    frame = result.budget.measurands[0].to_frame()
    keys = set(document["contributions"][0]) - {"input"}
    assert set(frame.columns) == keys
    assert frame.index.name == "input"
    for key in ("value", "u", "dof", "k", "U"):
        assert frame.attrs[key] == document[key]
    assert "index" not in frame.columns  # the share of u_c² is never called an index
    row = document["contributions"][0]
    assert frame.loc[row["input"], "share"] == row["share"]


def test_dicts_are_the_json_documents(result: Any, cert: Any) -> None:
    document = result_document(result)
    assert result.to_dict()["measurands"] == document["measurands"]
    assert result.budget.measurands[0].to_dict()["u"] == document["measurands"][0]["u"]
    assert result.simulation.measurands[0].to_dict() == document["measurands"][0][
        "monte_carlo"]
    assert cert.to_dict()["U"] == cert.expanded_uncertainty
    assert cert.to_frame().attrs["U"] == cert.expanded_uncertainty
    assert sum(cert.to_frame()["share"]) == pytest.approx(100.0)


def test_wrong_names_raise_key_errors_with_a_suggestion(result: Any) -> None:
    with pytest.raises(KeyError) as caught:
        result.budget.measurand("c_NaOh")
    assert str(caught.value) == ("no measurand 'c_NaOh' (did you mean 'c_NaOH'?); expected "
                                 "one of c_NaOH")
    with pytest.raises(KeyError) as caught:
        result.simulation.measurand("c")
    assert str(caught.value) == "no measurand 'c'; expected one of c_NaOH"
    with pytest.raises(KeyError) as caught:
        result.model.input("V_t")
    assert str(caught.value) == ("no input 'V_t' (did you mean 'V_T'?); expected one of rep, "
                                 "m_KHP, P_KHP, M_KHP, V_T")
    assert isinstance(caught.value, budget.BudgetError)


# -- what-ifs ---------------------------------------------------------------------------

def test_with_uncertainty_sets_or_scales(result: Any) -> None:
    from uncertainties import ufloat

    model = result.model
    changed = model.with_uncertainty("V_T", u=0.026)
    assert changed.input("V_T").standard_uncertainty == 0.026
    assert model.input("V_T").standard_uncertainty == 0.013  # the original is untouched
    assert model.with_uncertainty("V_T", factor=2.0).input("V_T").standard_uncertainty == \
        pytest.approx(0.026, rel=1e-15)
    # cross-check with the general-purpose `uncertainties` package (linear propagation)
    values = {i.name: ufloat(i.estimate, i.standard_uncertainty) for i in changed.inputs}
    c = values["rep"] * values["m_KHP"] * values["P_KHP"] / (values["M_KHP"] *
                                                              values["V_T"] / 1000)
    u = budget.propagate(changed).measurand("c_NaOH").combined_uncertainty
    assert u == pytest.approx(c.std_dev, rel=1e-12)


def test_with_uncertainty_keeps_the_shape() -> None:
    model = budget.load_model(A2)
    changed = model.with_uncertainty("P_KHP", u=0.001)
    item = changed.input("P_KHP")
    assert item.distribution.name == "rectangular"
    assert item.distribution.half_width == pytest.approx(0.001 * math.sqrt(3.0), rel=1e-15)


def test_with_value_moves_the_estimate() -> None:
    model = budget.load_model(A2)
    before = budget.propagate(model).measurand("c_NaOH")
    after = budget.propagate(model.with_value("V_T", 18.0)).measurand("c_NaOH")
    # c is proportional to 1/V_T: c(18.0) = c(18.64) * 18.64 / 18.0 (exact arithmetic)
    assert after.estimate == pytest.approx(before.estimate * 18.64 / 18.0, rel=1e-14)
    assert model.with_value("V_T", 18.0).input("V_T").distribution.estimate == 18.0


def test_with_distribution_by_shape_keeps_u() -> None:
    model = budget.load_model(A2)
    changed = model.with_distribution("V_T", "rectangular")
    item = changed.input("V_T")
    assert item.distribution.name == "rectangular"
    assert item.standard_uncertainty == pytest.approx(0.013, rel=1e-15)
    from budget.distributions import Triangular

    given = model.with_distribution("V_T", Triangular(18.64, 0.03)).input("V_T")
    assert given.standard_uncertainty == pytest.approx(0.03 / math.sqrt(6.0))  # GUM 4.3.9


@pytest.mark.parametrize(("call", "message"), [
    (lambda m: m.with_uncertainty("V_T", u=-0.1),
     "<what-if>: [inputs.V_T] u: expected a number ≥ 0, found -0.1"),
    (lambda m: m.with_uncertainty("V_T", factor=-2),
     "<what-if>: [inputs.V_T] factor: expected a number ≥ 0, found -2"),
    (lambda m: m.with_uncertainty("V_T"),
     "<what-if>: [inputs.V_T] u: expected exactly one of u= (set) or factor= (scale), "
     "found neither"),
    (lambda m: m.with_uncertainty("V_T", u=1, factor=2),
     "<what-if>: [inputs.V_T] u: expected exactly one of u= (set) or factor= (scale), "
     "found both"),
    (lambda m: m.with_value("V_T", math.nan),
     "<what-if>: [inputs.V_T] value: expected a finite number, found nan"),
    (lambda m: m.with_distribution("V_T", "rectangle"),
     "<what-if>: [inputs.V_T] distribution: expected one of normal, rectangular, "
     "triangular, arcsine, found 'rectangle' (did you mean 'rectangular'?) (or pass a "
     "distribution object)"),
])
def test_what_if_errors(call: Any, message: str) -> None:
    with pytest.raises(budget.BudgetError) as caught:
        call(budget.load_model(A2))
    assert str(caught.value) == message
    assert isinstance(caught.value, ValueError)


def test_what_if_on_an_unknown_name_is_a_key_error() -> None:
    model = budget.load_model(A2)
    for call in (lambda: model.with_uncertainty("VT", u=1.0),
                 lambda: model.with_value("VT", 1.0),
                 lambda: model.with_distribution("VT", "normal")):
        with pytest.raises(KeyError, match="no input 'VT' \\(did you mean 'V_T'\\?\\)"):
            call()


def test_a_notebook_session() -> None:
    """Cells run by IPython's shell; each result is formatted by IPython's display
    formatter, which is what a Jupyter front end receives."""
    shell_module = pytest.importorskip("IPython.core.interactiveshell")
    shell = shell_module.InteractiveShell.instance()
    cells = [
        "import budget",
        f"result = budget.evaluate(budget.load_model({str(A2)!r}), trials=10_000, seed=1)",
        "result",
        "result.budget.measurand('c_NaOH').to_frame()",
        "budget.explain(result, sobol_trials=512)[0]",
    ]
    shown = []
    for cell in cells:
        outcome = shell.run_cell(cell, store_history=False)
        assert outcome.success, outcome.error_in_exec
        if outcome.result is not None:
            data, _ = shell.display_formatter.format(outcome.result)
            shown.append(data)
    result_data, frame_data, explanation_data = shown
    assert result_data["text/plain"].startswith("<Result 'Standardising NaOH")
    assert '<div class="budget-nb">' in result_data["text/html"]
    assert "share" in frame_data["text/html"]  # pandas' own table of the budget
    assert "What dominates" in explanation_data["text/html"]
    shell.clear_instance()


def test_a_comparison_shows_itself_too(tmp_path: Any) -> None:
    from budget._difference import compare, load_side

    before = budget.load_model(A2)
    changed = tmp_path / "changed.toml"
    changed.write_text(A2.read_text(encoding="utf-8").replace("u = 0.013", "u = 0.026"),
                       encoding="utf-8")
    diff = compare(load_side(A2), load_side(changed))
    assert repr(diff).startswith("<Difference ") and len(repr(diff)) < 300
    assert diff.summary() and diff.to_dict()["measurands"]
    _check_html(diff._repr_html_())
    frame = diff.to_frame()
    assert {"share_before", "share_after", "variance_change"} <= set(frame.columns)
    with pytest.raises(KeyError, match="did you mean 'c_NaOH'"):
        diff.measurand("c_NaOh")
    assert before.input("V_T").standard_uncertainty == 0.013
