"""The chain rule over the named definitions (``chain``), cross-checked against the
engine's own sensitivity coefficients: two independent computations (a reverse sweep over
the text of each equation here; the compiled program of ``evaluation`` there) must agree."""

from __future__ import annotations

import math

import pytest

from budget.chain import chain_rule
from budget.gum import propagate
from budget.model import load_model

from conftest import model
from test_typeset import MODEL_FILES


@pytest.mark.parametrize("path", MODEL_FILES, ids=lambda p: p.name)
def test_products_of_local_derivatives_equal_the_engines_coefficients(path):
    loaded = load_model(path)
    if loaded.chain:  # its equations name earlier models' results (tests/test_chained.py)
        pytest.skip("a chained model: the chain rule over its own text cannot reach the "
                    "earlier models' base inputs")
    budget = propagate(loaded)
    for k, b in enumerate(budget.measurands):
        rule = chain_rule(loaded, k)
        engine = {c.input: c.sensitivity for c in b.contributions}
        assert rule.chains, path
        for chain in rule.chains:
            assert math.isclose(chain.value, engine[chain.input], rel_tol=1e-6,
                                abs_tol=1e-12 * max(1.0, abs(b.estimate))), chain.input


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
    assert factor.formula == "(1 - rho_a/rho_ref)/(1 - rho_a/rho_s)"
    assert factor.value == pytest.approx(1.00058, abs=2e-5)
    assert factor.unit == "1"


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
    assert chain.value == pytest.approx(16.0)
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
    assert chains["m1"].value == pytest.approx(0.001) and chains["m1"].unit == "g/mg"
    assert chains["m2"].value == pytest.approx(1.0) and chains["m2"].unit == "1"
