"""Units: the pre-parsed table against pint itself, conversions between units of one
dimension, the Celsius rules, and the default unit of an equation."""

from __future__ import annotations

from fractions import Fraction

import pytest

from budget._errors import UnitError
from budget._gum import propagate
from budget._unit_table import TABLE
from budget._units import parse_unit, registry
from budget._errors import Location

from conftest import model


@pytest.mark.parametrize("text", sorted(TABLE))
def test_table_entries_agree_with_pint(text):
    # every pre-parsed unit: pint's dimensionality and factor to SI base units
    reg = registry()
    unit = reg.Unit(text)
    dims, factor, offset, _ = TABLE[text]
    assert dict((k, Fraction(v)) for k, v in dims) == {
        k: Fraction(v).limit_denominator(1000) for k, v in unit.dimensionality.items()}
    if not offset:
        magnitude = reg.Quantity(1.0, unit).to_base_units().magnitude
        assert float(Fraction(factor)) == pytest.approx(magnitude, rel=1e-14)


def test_unlisted_units_go_to_pint():
    info = parse_unit("mg/dL", Location(file="x"))
    assert "mg/dL" not in TABLE
    # 1 mg/dL = 1e-6 kg / 1e-4 m^3 = 0.01 kg/m^3 (SI prefixes)
    assert float(info.factor) == pytest.approx(0.01, rel=1e-14)
    assert info.describe() == "[mass] / [length] ** 3"


def test_mg_and_g_in_one_model():
    # a mass in mg plus a mass in g: 250 mg + 1.5 g = 1.75 g (common practice)
    budget = propagate(model("""
        title = "masses"
        [measurands.m]
        equation = "a + b"
        unit = "g"
        [inputs.a]
        value = 250
        unit = "mg"
        u = 1
        [inputs.b]
        value = 1.5
        unit = "g"
        u = 0.001
    """)).measurand("m")
    assert budget.estimate == pytest.approx(1.75, rel=1e-15)
    # c_a = 0.001 g/mg; u_c = sqrt((0.001)^2 + 0.001^2) g [C]
    assert budget.contributions[0].sensitivity == pytest.approx(0.001, rel=1e-15)
    assert budget.combined_uncertainty == pytest.approx(2 ** 0.5 * 0.001, rel=1e-12)


def test_voltage_over_milliampere_into_ohm_and_ratio_into_percent():
    budget = propagate(model("""
        title = "ratio"
        [measurands.R]
        equation = "U / I"
        unit = "ohm"
        [measurands.r]
        equation = "U / U0"
        unit = "%"
        [inputs.U]
        value = 1.0
        unit = "V"
        u = 0.001
        [inputs.U0]
        value = 2.0
        unit = "V"
        exact = true
        [inputs.I]
        value = 100
        unit = "mA"
        u = 0.01
    """))
    assert budget.measurand("R").estimate == pytest.approx(10.0, rel=1e-15)
    assert budget.measurand("r").estimate == pytest.approx(50.0, rel=1e-15)


def test_default_unit_is_the_equations_unit():
    m = model("""
        title = "default"
        [measurands.c]
        equation = "m / V"
        [inputs.m]
        value = 5
        unit = "mg"
        u = 0.1
        [inputs.V]
        value = 2
        unit = "mL"
        u = 0.01
    """)
    assert m.measurands[0].unit == "mg/mL"
    assert propagate(m).measurand("c").estimate == pytest.approx(2.5, rel=1e-15)


def test_celsius_difference_is_a_temperature_difference():
    budget = propagate(model("""
        title = "difference"
        [measurands.dT]
        equation = "t1 - t2"
        unit = "K"
        [inputs.t1]
        value = 25.0
        unit = "degC"
        u = 0.1
        [inputs.t2]
        value = 20.0
        unit = "degC"
        u = 0.1
    """)).measurand("dT")
    assert budget.estimate == pytest.approx(5.0)
    assert budget.combined_uncertainty == pytest.approx(2 ** 0.5 * 0.1)


@pytest.mark.parametrize("equation, unit, message", [
    ("t1 + t2", "K", "two Celsius temperatures cannot be added in 't1 + t2'"),
    ("2 * t1", "K", "a Celsius temperature may enter only as a difference of two temperatures "
                    "or as the argument of air_density, found '2 * t1'"),
    ("t1 - t2 + m", "K", "expected terms of like dimension in 't1 - t2 + m', found 't1 - t2' "
                         "in [temperature] and 'm' in [mass]"),
    ("sqrt(m) + m", "g", "expected terms of like dimension in 'sqrt(m) + m', found 'sqrt(m)' "
                         "in [mass] ** 1/2 and 'm' in [mass]"),
    ("m ** t1", "g", "a Celsius temperature may enter only as a difference of two "
                     "temperatures or as the argument of air_density, found 'm ** t1'"),
    ("m ** m", "g", "expected a dimensionless exponent in 'm ** m', found [mass]"),
])
def test_unit_errors(equation, unit, message):
    with pytest.raises(UnitError) as caught:
        model(f"""
            title = "celsius"
            [measurands.y]
            equation = "{equation}"
            unit = "{unit}"
            [inputs.t1]
            value = 25.0
            unit = "degC"
            u = 0.1
            [inputs.t2]
            value = 20.0
            unit = "degC"
            u = 0.1
            [inputs.m]
            value = 2.0
            unit = "g"
            u = 0.1
        """)
    assert str(caught.value) == f"test.toml:4: [measurands.y] equation: {message}"
