"""Equations as written and units as symbols: ``typeset``, ``unit_display`` and the reports
of every shipped model. The checks are of presentation rules documented in
docs/reports.md (common practice of typesetting quantities, ISO 80000-1 style symbols)."""

from __future__ import annotations

import ast
import re
import tomllib
from html.parser import HTMLParser

import pytest

from budget._analysis import evaluate
from budget._model import load_model
from budget._report import render_report
from budget._typeset import equation_mathml, expression_mathml, name_parts, name_text
from budget._unit_display import display_unit, unit_ratio

from conftest import MODELS

MODEL_FILES = sorted(p for p in MODELS.rglob("*.toml")
                     if "[measurands." in p.read_text(encoding="utf-8"))


class _Leaves(HTMLParser):
    """The text of the MathML token elements (mi, mn, mo), in document order."""

    def __init__(self) -> None:
        super().__init__()
        self.tokens: list[str] = []
        self.open: str | None = None

    def handle_starttag(self, tag, attrs):
        self.open = tag if tag in ("mi", "mn", "mo") else None

    def handle_data(self, data):
        if self.open:
            self.tokens.append(data)


def _leaves(mathml: str) -> list[str]:
    parser = _Leaves()
    parser.feed(mathml)
    return parser.tokens


@pytest.mark.parametrize("name, expected", [
    ("m_c", ("m", "c")), ("rho_ref", ("ρ", "ref")), ("d_rho_a", ("δρ", "a")),
    ("eta", ("η", None)), ("d_m", ("d", "m")), ("b0", ("b", "0")),
    ("u_rel_M", ("u", "rel,M")), ("Delta_T", ("ΔT", None)), ("delta_x", ("δx", None)),
    ("pi", ("pi", None)), ("a__b", ("a__b", None)), ("rep", ("rep", None)),
    ("c_NaOH", ("c", "NaOH")), ("t_", ("t_", None)),
])
def test_name_rules(name, expected):
    # the rules of docs/reports.md, "Names"
    assert name_parts(name) == expected


def test_order_grouping_and_names_are_kept():
    text = "m_c * (1 - rho_a / rho_ref) / (1 - rho_a / rho_s)"
    leaves = _leaves(expression_mathml(text))
    assert leaves == ["m", "c", "·", "(", "1", "−", "ρ", "a", "/", "ρ", "ref", ")",
                      "1", "−", "ρ", "a", "/", "ρ", "s"]
    # written parentheses stay, none is added; the order of a product is the user's
    assert _leaves(expression_mathml("(U_m / R_s) * t_m + Q_post")) == [
        "(", "U", "m", "R", "s", ")", "·", "t", "m", "+", "Q", "post"]
    assert _leaves(expression_mathml("b * a")) == ["b", "·", "a"]
    assert _leaves(expression_mathml("(a + b) * c - (d)")) == [
        "(", "a", "+", "b", ")", "·", "c", "−", "(", "d", ")"]


def test_numbers_and_functions_as_written():
    assert _leaves(expression_mathml("1.5e-6 * x")) == ["1.5", "×", "10", "−", "6", "·", "x"]
    assert "<msqrt>" in expression_mathml("sqrt(a)")
    assert _leaves(expression_mathml("log(a) + log10(b) + abs(c)"))[:1] == ["ln"]


def test_a_long_sum_is_typeset_without_deep_recursion():
    # 5000 terms: beyond Python's own parser (longparse splits it) and recursion limit
    text = " + ".join(f"x{i}" for i in range(5000))
    assert expression_mathml(text).count("<mo>+</mo>") == 4999


@pytest.mark.parametrize("path", MODEL_FILES, ids=lambda p: p.name)
def test_each_shipped_equation_keeps_the_users_order_and_names(path):
    document = tomllib.loads(path.read_text(encoding="utf-8"))
    equations = {n: t["equation"] for n, t in document["measurands"].items()}
    equations.update(document.get("definitions", {}))
    for name, text in equations.items():
        leaves = _leaves(equation_mathml(name, text))
        tree = ast.parse(text, mode="eval")
        called = {id(n.func) for n in ast.walk(tree) if isinstance(n, ast.Call)}
        written = [node for node in ast.walk(tree)
                   if isinstance(node, ast.Name) and id(node) not in called]
        # every name of the text, in the order written (ast positions), appears in that
        # order among the typeset identifiers (base letter of each)
        written.sort(key=lambda n: (n.lineno, n.col_offset))
        bases = [name_parts(n.id)[0] for n in written]
        position = 0
        for base in bases:
            pieces = [base] if len(base) == 1 or base in leaves else [base[0], base[1:]]
            while position < len(leaves) and leaves[position] != pieces[-1]:
                position += 1
            assert position < len(leaves), (name, text, base)
            position += 1


@pytest.fixture(scope="module")
def reports():
    return {p.name: render_report(evaluate(load_model(p), trials=2000, seed=1))
            for p in MODEL_FILES}


@pytest.mark.parametrize("path", MODEL_FILES, ids=lambda p: p.name)
def test_no_internal_object_reaches_any_report(reports, path):
    text = reports[path.name]
    for internal in ("subs(", "Subs(", "Derivative", "ξ", "_Dummy", "Symbol(", "Function("):
        assert internal not in text, internal


def test_no_internal_object_reaches_the_certification_report():
    from budget._campaign import load_campaign
    from budget._certification import certify
    from budget._report import render_certification_report

    text = render_certification_report(certify(load_campaign(
        MODELS / "vics-as-25a" / "campaign.toml"), trials=2000, seed=1))
    for internal in ("subs(", "Subs(", "Derivative", "ξ", "_Dummy", "Symbol(", "degC",
                     "kg/m^3"):
        assert internal not in text, internal


@pytest.mark.parametrize("path", MODEL_FILES, ids=lambda p: p.name)
def test_units_render_as_symbols_in_reports(reports, path):
    text = reports[path.name]
    cells = re.findall(r"<td>([^<]*)</td>", text)
    for spelled in ("degC", "kg/m^3", "ohm", "uA", "**", "^"):
        assert spelled not in cells, spelled


@pytest.mark.parametrize("written, shown", [
    ("degC", "°C"), ("kg/m^3", "kg/m³"), ("kg/m**3", "kg/m³"), ("uA", "µA"), ("ohm", "Ω"),
    ("kohm", "kΩ"), ("mol/kg", "mol/kg"), ("%", "%"), ("percent", "%"), ("1", ""), ("", ""),
    ("m**-1", "m⁻¹"), ("kg m^-3", "kg·m⁻³"), ("(V/ohm)*s", "(V/Ω)·s"), ("umol/g", "µmol/g"),
])
def test_display_unit(written, shown):
    assert display_unit(written) == shown


def test_display_unit_falls_back_to_the_written_text_for_a_narrow_encoding():
    assert display_unit("degC", encoding="ascii") == "degC"
    assert display_unit("kg/m^3", encoding="latin-1") == "kg/m³"
    assert display_unit("ohm", encoding="latin-1") == "ohm"  # Latin-1 has no Ω
    assert display_unit("degC", encoding="latin-1") == "°C"


@pytest.mark.parametrize("top, bottom, shown", [
    ("%", "g", "%/g"), ("%", "kg/m³", "%·m³/kg"), ("%", "1", "%"), ("1", "°C", "1/°C"),
    ("g/mol", "kg/m³", "(g/mol)/(kg/m³)"), ("C", "C", ""),
])
def test_unit_of_a_derivative(top, bottom, shown):
    assert unit_ratio(top, bottom) == shown


def test_name_text():
    assert name_text("d_rho_a") == "δρ_a" and name_text("eta") == "η"


def test_terminal_units_follow_the_encoding_of_standard_output(monkeypatch):
    import sys

    from budget._table import terminal_unit

    class Narrow:
        encoding = "ascii"

    monkeypatch.setattr(sys, "stdout", Narrow())
    assert terminal_unit("degC") == "degC" and terminal_unit("kg/m^3") == "kg/m^3"
    Narrow.encoding = "utf-8"
    assert terminal_unit("degC") == "°C" and terminal_unit("ohm") == "Ω"


def test_the_terminal_table_shows_unit_symbols(cli):
    code, stdout, _ = cli("run", str(MODELS / "vics-as-25a" / "coulometric-purity.toml"),
                          "--trials", "0")
    assert code == 0
    assert "kg/m³" in stdout and "°C" in stdout and "Ω" in stdout
    assert "kg/m^3" not in stdout and "degC" not in stdout
