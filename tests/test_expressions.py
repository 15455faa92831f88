"""The expression language: ordinary symbols, the function whitelist, no execution."""

from __future__ import annotations

import builtins

import pytest
import sympy

from budget._chemistry import air_density
from budget._errors import ModelSyntaxError
from budget._gum import propagate
from budget._model import parse_model

from conftest import model


def test_names_that_sympy_would_take_for_constants_are_ordinary_symbols():
    names = ["E", "I", "N", "S", "Q", "beta", "gamma", "pi", "O", "zeta"]
    lines = ['title = "names"', "[measurands.y]", f'equation = "{" + ".join(names)}"']
    for n, name in enumerate(names):
        lines += [f"[inputs.{name}]", f"value = {n + 1}", "u = 0.1"]
    m = parse_model("\n".join(lines))
    assert m.measurands[0].expression.free_symbols == {sympy.Symbol(n) for n in names}
    # 1 + 2 + ... + 10 = 55 (arithmetic)
    assert propagate(m).measurand("y").estimate == 55


def test_model_text_is_never_executed(monkeypatch):
    def forbidden(*args, **kwargs):
        raise AssertionError("model text reached eval or parse_expr")

    original = sympy.sympify

    def no_strings(value, *args, **kwargs):  # sympy itself sympifies its own objects
        if isinstance(value, str):
            raise AssertionError(f"a string reached sympify: {value!r}")
        return original(value, *args, **kwargs)

    monkeypatch.setattr(builtins, "eval", forbidden)
    # (exec is left alone: Python's own import machinery runs on it)
    monkeypatch.setattr(sympy, "sympify", no_strings)
    monkeypatch.setattr(sympy, "parse_expr", forbidden, raising=False)
    m = model("""
        title = "safe"
        [measurands.y]
        equation = "sqrt(a) * exp(-b) / log10(c) + abs(-a) ** 2"
        [inputs.a]
        value = 4
        u = 0.1
        [inputs.b]
        value = 0
        u = 0.1
        [inputs.c]
        value = 100
        u = 1
    """)
    assert m.measurands[0].equation.startswith("sqrt(a)")


def test_functions_evaluate_like_math():
    budget = propagate(model("""
        title = "functions"
        [measurands.y]
        equation = "sqrt(a) + exp(b) + log(c) + log10(c) + sin(b) + cos(b) + tan(b) \
+ asin(b) + acos(b) + atan(b) + abs(-a)"
        [inputs.a]
        value = 4
        u = 0.1
        [inputs.b]
        value = 0.5
        u = 0.01
        [inputs.c]
        value = 10
        u = 0.1
    """)).measurand("y")
    import math

    expected = (2 + math.exp(0.5) + math.log(10) + 1 + math.sin(0.5) + math.cos(0.5)
                + math.tan(0.5) + math.asin(0.5) + math.acos(0.5) + math.atan(0.5) + 4)
    assert budget.estimate == pytest.approx(expected, rel=1e-14)


def test_air_density_takes_an_optional_co2_fraction():
    # CIPM-2007: M_a grows with x_CO2, 12.011 g/mol per unit mole fraction (Picard et al.)
    def density(extra: str) -> float:
        return propagate(model(f"""
            title = "air"
            [measurands.rho]
            equation = "air_density(t, p, h{extra})"
            unit = "kg/m^3"
            [inputs.t]
            value = 20
            unit = "degC"
            u = 0.1
            [inputs.p]
            value = 101325
            unit = "Pa"
            u = 1
            [inputs.h]
            value = 0.5
            u = 0.01
            [inputs.x]
            value = 0.0005
            exact = true
        """)).measurand("rho").estimate

    assert density("") == pytest.approx(air_density(20, 101325, 0.5), rel=1e-14)
    assert density(", x") == pytest.approx(air_density(20, 101325, 0.5, 0.0005), rel=1e-14)
    assert density(", x") > density("")


@pytest.mark.parametrize("equation, fragment", [
    ("a if b else c", "expected arithmetic only, found a conditional expression"),
    ("[a, b]", "expected arithmetic only, found a list"),
    ("a % b", "expected one of + - * / ** in 'a % b', found '%'"),
    ("not a", "expected unary + or -, found 'not' in 'not a'"),
    ("air_density(a)", "air_density() expects 3 or 4 argument(s), found 1"),
    ("sqrt(a, b)", "sqrt() expects 1 argument(s), found 2"),
    ("sqroot(a)", "found 'sqroot(...)' (did you mean 'sqrt'?)"),
    ("a.__class__", "expected arithmetic only, found an attribute access"),
    ("f'{a}'", "expected arithmetic only, found a string"),
    ("1j * a", "expected a number, found complex 1j"),
])
def test_grammar_errors(equation, fragment):
    with pytest.raises(ModelSyntaxError) as caught:
        model(f"""
            title = "grammar"
            [measurands.y]
            equation = "{equation}"
            [inputs.a]
            value = 1
            u = 0.1
            [inputs.b]
            value = 1
            u = 0.1
            [inputs.c]
            value = 1
            u = 0.1
        """)
    assert fragment in str(caught.value)
    assert str(caught.value).startswith("test.toml:4: [measurands.y] equation: ")



_FORMS = """
title = "three forms"
[measurands.y]
equation = "a * b / (c * d) + sqrt(a) - d ** 2 + g"
[definitions]
h = "a * b"
g = "h / (c * m)"
[inputs.a]
value = 2.0
u = 0.1
[inputs.b]
value = 3.0
u = 0.1
[inputs.c]
value = 5.0
u = 0.1
[inputs.d]
value = 7.0
u = 0.1
[inputs.m]
value = 50
unit = "%"
u = 0.1
"""


def test_a_graph_is_built_once_where_its_three_forms_agree():
    """Each operation has three forms: in coherent SI, as written, and in SI with the
    functions kept as calls. Where its operands' forms are the same nodes (inputs in
    coherent units, numbers, and what is built of them alone) the operation is one node,
    not three alike; an input in percent (SI form m/100) keeps a written form of its own,
    and so does everything above it. The sympy forms are those sympy gives for the
    equation (sympy, a general-purpose reference library)."""
    y = parse_model(_FORMS).measurands[0]
    a, b, c, d, g, mass = sympy.symbols("a b c d g m")
    assert sympy.simplify(y.shown - (a * b / (c * d) + sympy.sqrt(a) - d ** 2 + g)) == 0
    assert sympy.simplify(y.expression - (a * b / (c * d) + sympy.sqrt(a) - d ** 2
                                          + a * b / (c * mass / 100))) == 0
    total, shown, opaque = y.graph.args[0], y.shown_graph, y.opaque_graph.args[0]
    assert total.kind == shown.kind == "add" and len(total.args) == len(shown.args) == 4
    for k in range(2):  # a·b/(c·d) and √a: one node in all three forms (−d² is negated
        assert total.args[k] is shown.args[k] is opaque.args[k]  # by the sum, per form)
    assert total.args[2].args[1] is shown.args[2].args[1]  # d² below it: one node
    assert total.args[3] is not shown.args[3]  # g: 1/100 in SI, the symbol as written
    assert total.args[3] is opaque.args[3]  # no function below: SI and opaque agree


def test_air_density_keeps_its_opaque_form_apart():
    """air_density() is a formula in SI and a call in the opaque form."""
    stated = {"T": (293.15, "K", 0.1), "p": (101325, "Pa", 10), "h": (0.5, "1", 0.01)}
    text = 'title = "air"\n[measurands.rho]\nequation = "air_density(T, p, h)"\n' \
        'unit = "kg/m^3"\n' + "".join(
            f'[inputs.{name}]\nvalue = {value}\nunit = "{unit}"\nu = {u}\n'
            for name, (value, unit, u) in stated.items())
    rho = parse_model(text).measurands[0]
    assert rho.opaque_graph.args[0].kind == "call"
    assert rho.graph.args[0] is not rho.opaque_graph.args[0]
