"""The chain rule over the named definitions (``chain``), cross-checked against the
engine's own sensitivity coefficients: two independent computations (a reverse sweep over
the text of each equation here; the compiled program of ``evaluation`` there) must agree."""

from __future__ import annotations

import math

import pytest

from budget._chain import chain_rule
from budget._gum import propagate
from budget._model import load_model

from conftest import model
from test_typeset import MODEL_FILES


@pytest.mark.parametrize("path", MODEL_FILES, ids=lambda p: p.name)
def test_products_of_local_derivatives_equal_the_engines_coefficients(path):
    loaded = load_model(path)
    budget = propagate(loaded)
    for k, b in enumerate(budget.measurands):
        engine = {c.input: c.sensitivity for c in b.contributions}
        # a chained model's earlier stages are reached through their results: only the
        # paths within this file are independent of the engine (tests/test_chained.py)
        rule = chain_rule(loaded, k, engine if loaded.chain else None)
        assert rule.chains, path
        for chain in rule.chains:
            if chain.through is not None:
                continue
            assert math.isclose(chain.sensitivity, engine[chain.input], rel_tol=1e-6,
                                abs_tol=1e-12 * max(1.0, abs(b.estimate))), chain.input


def test_a_chained_model_reaches_the_earlier_models_inputs():
    # stage 3 of the chain demo: the burette factor f_bur enters the titrant's
    # standardisation and the assay and cancels (docs: chained budgets)
    loaded = load_model(MODEL_FILES[[p.name for p in MODEL_FILES].index("acid-assay.toml")])
    engine = {c.input: c.sensitivity for c in propagate(loaded).measurands[0].contributions}
    chains = {c.input: c for c in chain_rule(loaded, 0, engine).chains}
    assert set(chains) == {i.name for i in loaded.inputs if i.standard_uncertainty > 0}
    burette = chains["f_bur"]
    assert burette.through == "c_NaOH" and burette.path_count == 2
    direct = next(p for p in chain_rule(loaded, 0).chains if p.input == "f_bur").sensitivity
    local = chain_rule(loaded, 0).partial("w_X", "c_NaOH").derivative
    # the two paths cancel: direct + ∂w/∂c_NaOH · ∂c_NaOH/∂f_bur = engine's c ≈ 0
    assert direct + local * burette.upstream == pytest.approx(engine["f_bur"], abs=1e-9)
    assert abs(engine["f_bur"]) < 1e-9 * abs(direct)
    mass = chains["c_NaOH:m_KHP"]
    assert mass.paths == (("w_X", "c_NaOH", "c_NaOH:m_KHP"),)
    assert mass.sensitivity == engine["c_NaOH:m_KHP"]


def test_demo_chain_goes_through_the_sample_mass():
    loaded = load_model(MODEL_FILES[[p.name for p in MODEL_FILES].index(
        "coulometric-purity.toml")])
    rule = chain_rule(loaded, 0)
    chains = {c.input: c for c in rule.chains}
    assert chains["m_c"].paths == (("w", "m", "m_c"),)
    assert chains["d_rho_a"].paths == (("w", "m", "rho_a", "d_rho_a"),)
    assert chains["M"].paths == (("w", "M"),)
    assert chains["m_c"].unit == "%/g" and chains["rho_s"].unit == "%·m³/kg"
    # ∂m/∂m_c is the buoyancy factor (1 − ρ_a/ρ_ref)/(1 − ρ_a/ρ_s), about 1.000 58 for
    # KHP (README, Buoyancy: common practice, OIML D 28 conventions)
    factor = rule.partial("m", "m_c")
    assert factor.formula == "(1 - rho_a / rho_ref) / (1 - rho_a / rho_s)"
    assert factor.derivative == pytest.approx(1.00058, abs=2e-5)
    assert factor.unit == ""  # dimensionless: shown as nothing (docs/reports.md, Units)


def test_an_input_reached_by_two_paths_sums_them():
    m = model("""
        title = "two paths"
        [measurands.y]
        equation = "a * b"
        [definitions]
        a = "x + 1"
        b = "x * x"
        [inputs.x]
        value = 2
        u = 0.1
    """)
    (chain,) = chain_rule(m, 0).chains
    assert chain.path_count == 2
    # y = (x + 1)·x², dy/dx = x² + 2x(x + 1) = 4 + 12 = 16 (calculus)
    assert chain.sensitivity == pytest.approx(16.0)
    assert propagate(m).measurands[0].contributions[0].sensitivity == pytest.approx(16.0)


def test_units_of_mixed_prefixes_are_converted():
    m = model("""
        title = "mg and g"
        [measurands.y]
        equation = "m1 + m2"
        unit = "g"
        [definitions]
        s = "m1 * 2"
        [inputs.m1]
        value = 500
        unit = "mg"
        u = 1
        [inputs.m2]
        value = 1
        unit = "g"
        u = 0.001
    """)
    chains = {c.input: c for c in chain_rule(m, 0).chains}
    assert chains["m1"].sensitivity == pytest.approx(0.001) and chains["m1"].unit == "g/mg"
    assert chains["m2"].sensitivity == pytest.approx(1.0) and chains["m2"].unit == ""


def test_a_derivative_through_air_density_has_a_value_but_no_formula():
    from budget._equations_view import sensitivity_view

    m = model("""
        title = "air density"
        [measurands.y]
        equation = "rho_a * 2"
        unit = "kg/m^3"
        [definitions]
        rho_a = "air_density(t, p, h)"
        [inputs.t]
        value = 20
        unit = "degC"
        u = 0.1
        [inputs.p]
        value = 101325
        unit = "Pa"
        u = 10
        [inputs.h]
        value = 0.5
        u = 0.01
    """)
    rule = chain_rule(m, 0)
    partial = rule.partial("rho_a", "p")
    assert partial.formula is None
    engine = {c.input: c.sensitivity for c in propagate(m).measurands[0].contributions}
    for chain in rule.chains:  # central differences agree with the engine's derivative
        assert chain.sensitivity == pytest.approx(engine[chain.input], rel=1e-6)
    view = sensitivity_view(m, 0)
    notes = [r["note"] for g in view["groups"] for r in g["rows"]]
    assert any("air_density" in n for n in notes)


def test_a_wide_formula_is_folded_after_each_term():
    from budget._equations_view import FOLD_WIDTH, _folded

    text = " + ".join(f"Q_post{i} * U_meas{i} * R_std{i}" for i in range(8))
    folded = _folded("<mi>y</mi>", text)
    assert folded.startswith("<mtable") and folded.count("<mtr>") == 8
    assert "<mtable" not in _folded("<mi>y</mi>", "a + b")
    assert FOLD_WIDTH < 80


@pytest.mark.parametrize("path", MODEL_FILES, ids=lambda p: p.name)
def test_each_printed_formula_evaluates_to_its_derivative(path):
    # the formulas (symbolic, symbolic_partials) against the values (reverse sweep, chain):
    # two independent differentiations of the same text
    import ast

    from budget._chain import _Quantity, _sweep
    from budget._units import DIMENSIONLESS

    loaded = load_model(path)
    for k in range(len(loaded.measurands)):
        rule = chain_rule(loaded, k)
        known = {name: _Quantity(value, DIMENSIONLESS, 1, "") for name, value in
                 rule.si_values}
        checked = 0
        for partial in rule.partials:
            if partial.formula is None:
                continue
            value, _, _ = _sweep(ast.parse(partial.formula, mode="eval").body, known)
            assert value == pytest.approx(partial.si_derivative, rel=1e-9, abs=1e-300), partial
            checked += 1
        assert checked or not rule.partials


def test_a_model_of_thousands_of_inputs_gets_its_chains():
    # linear cost: one top-down sweep for the coefficients, no search per input
    n = 3000
    text = ("title = \"many\"\n[measurands.y]\nequation = \"s / n\"\n[definitions]\n"
            f"s = \"{' + '.join(f'x{i}' for i in range(n))}\"\n"
            f"[inputs.n]\nvalue = {n}\nexact = true\n"
            + "".join(f"[inputs.x{i}]\nvalue = 1\nu = 0.01\n" for i in range(n)))
    from budget._model import parse_model

    m = parse_model(text)
    rule = chain_rule(m, 0)
    assert len(rule.chains) == n
    assert all(c.sensitivity == pytest.approx(1 / n) and c.paths == (("y", "s", c.input),)
               for c in rule.chains)
