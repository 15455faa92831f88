"""Atomic weights, molar masses, constants and moist-air density against outside values
(../shared/references.md sections 5, 6 and 7)."""

from __future__ import annotations

import math

import pytest
import scipy.constants

from budget._chemistry import (CONSTANTS, CONVENTIONS, air_density, atomic_weight,
                              molar_mass, parse_formula)
from budget._errors import InputError
from budget._gum import propagate

from conftest import model

# IUPAC (CIAAW) 2021 standard atomic weights: interval midpoints with u = (b - a)/(2 sqrt 3),
# value +/- U with u = U/sqrt 3; abridged values +/- as rectangular half-widths.
# Expected figures [C] from ../shared/references.md section 5; tolerance: half a unit of
# the last digit given there (1e-5 g/mol for 5 decimals, 5e-5 for the abridged 4 decimals).
_MOLAR_MASSES = [
    ("C8H5KO4", "iupac-2021-interval", 204.22057, 0.00471),
    ("C8H5KO4", "iupac-2021-abridged", 204.2220, 0.0096),
    ("Na2CO3", "iupac-2021-interval", 105.98834, 0.00086),
    ("Na2CO3", "iupac-2021-abridged", 105.9880, 0.0024),
    ("C7H6O2", "iupac-2021-interval", 122.12085, 0.00409),
    ("C7H6O2", "iupac-2021-abridged", 122.1230, 0.0082),
    ("K2Cr2O7", "iupac-2021-interval", 294.18460, 0.00165),
    ("K2Cr2O7", "iupac-2021-abridged", 294.1810, 0.0044),
    ("C4H11NO3", "iupac-2021-interval", 121.13518, 0.00256),
    ("C4H11NO3", "iupac-2021-abridged", 121.1360, 0.0051),
]


@pytest.mark.parametrize("formula, convention, value, u", _MOLAR_MASSES)
def test_molar_masses_of_primary_standards(formula, convention, value, u):
    mass = molar_mass(formula, convention)
    tolerance = 5e-5 if convention.endswith("abridged") else 1e-5
    assert mass.estimate == pytest.approx(value, abs=tolerance)
    assert mass.standard_uncertainty == pytest.approx(u, abs=tolerance)


@pytest.mark.parametrize("symbol, low, high", [
    ("H", 1.00784, 1.00811), ("C", 12.0096, 12.0116), ("N", 14.00643, 14.00728),
    ("O", 15.99903, 15.99977), ("S", 32.059, 32.076), ("Cl", 35.446, 35.457)])
def test_interval_elements(symbol, low, high):
    # CIAAW 2021 intervals [V: references.md section 5]
    weight = atomic_weight(symbol)
    assert weight.estimate == pytest.approx((low + high) / 2, abs=1e-12)
    assert weight.standard_uncertainty == pytest.approx((high - low) / (2 * math.sqrt(3)))


@pytest.mark.parametrize("formula, counts", [
    ("C8H5KO4", {"C": 8, "H": 5, "K": 1, "O": 4}),
    ("Ca(OH)2", {"Ca": 1, "O": 2, "H": 2}),
    ("CuSO4·5H2O", {"Cu": 1, "S": 1, "O": 9, "H": 10}),
    ("CuSO4*5H2O", {"Cu": 1, "S": 1, "O": 9, "H": 10}),
    ("K4[Fe(CN)6]", {"K": 4, "Fe": 1, "C": 6, "N": 6}),
    ("(NH4)2SO4", {"N": 2, "H": 8, "S": 1, "O": 4}),
])
def test_formula_parser(formula, counts):
    # element counts by reading the formula (common practice)
    assert parse_formula(formula) == counts


@pytest.mark.parametrize("formula, message", [
    ("Xy2", "<model>: expected element symbols in formula 'Xy2', found 'Xy'"),
    ("SO4^2-", "<model>: expected a neutral formula, found a charge sign '^' in 'SO4^2-' "
               "(the molar mass of an ion is not supported)"),
    ("SO4 2", "<model>: expected an element or a group before the count 2 in formula "
              "'SO4 2'"),
    ("Ca(OH2", "<model>: expected balanced brackets in formula 'Ca(OH2', found an unclosed "
               "bracket"),
    ("PuO2", "<model>: element 'Pu' in formula 'PuO2' has no standard atomic weight; give the "
             "molar mass as a value with its uncertainty"),
])
def test_formula_errors(formula, message):
    with pytest.raises(InputError) as caught:
        parse_formula(formula)
    assert str(caught.value) == message


def test_every_element_of_both_conventions_is_consistent():
    # abridged values agree with the standard values within their stated half-widths
    # (CIAAW construction of the abridged table [M])
    for symbol in ("H", "C", "N", "O", "Na", "K", "Cl", "Ca", "Fe", "Cu", "Ag", "Hg", "Pb"):
        standard, abridged = (atomic_weight(symbol, c) for c in CONVENTIONS)
        assert abs(standard.estimate - abridged.estimate) <= abridged.half_width + 1e-12


def test_si_2019_constants_against_scipy():
    # SI Brochure 9th ed. defining constants vs scipy.constants (CODATA 2018, exact values)
    assert CONSTANTS["e"][0] == scipy.constants.e
    assert CONSTANTS["N_A"][0] == scipy.constants.N_A
    assert CONSTANTS["k_B"][0] == scipy.constants.k
    assert CONSTANTS["h"][0] == scipy.constants.h
    assert CONSTANTS["c"][0] == scipy.constants.c
    assert CONSTANTS["F"][0] == pytest.approx(scipy.constants.physical_constants[
        "Faraday constant"][0], rel=1e-15)
    assert CONSTANTS["R"][0] == pytest.approx(scipy.constants.R, rel=1e-15)
    # F = e N_A = 96 485.332 123 310 0184 C/mol exactly [C: references.md section 6]
    assert CONSTANTS["F"][0] == pytest.approx(96485.33212331001, rel=1e-16)


# CIPM-2007 (Picard et al., Metrologia 45 (2008) 149): check values [C] of references.md
# section 7, computed independently from the published formula; tolerance 1e-6 kg/m3.
_AIR = [(20, 101325, 0.50, 1.199314), (20, 101325, 0.00, 1.204557),
        (23, 101325, 0.50, 1.186084), (20, 100000, 0.50, 1.183557),
        (22, 98000, 0.40, 1.152387)]


@pytest.mark.parametrize("t, p, h, rho", _AIR)
def test_cipm_2007_air_density(t, p, h, rho):
    assert air_density(t, p, h) == pytest.approx(rho, abs=1e-6)


@pytest.mark.parametrize("t, p, h, rho", _AIR)
def test_cipm_2007_in_the_expression_language_with_units(t, p, h, rho):
    # the same check values through a model: pressure in hPa and humidity in % converted
    budget = propagate(model(f"""
        title = "air density"
        [measurands.rho]
        equation = "air_density(t, p, h)"
        unit = "kg/m^3"
        [inputs.t]
        value = {t}
        unit = "degC"
        u = 0.1
        [inputs.p]
        value = {p / 100}
        unit = "hPa"
        u = 0.5
        [inputs.h]
        value = {100 * h}
        unit = "%"
        u = 5
    """)).measurand("rho")
    assert budget.estimate == pytest.approx(rho, abs=1e-6)


def test_oiml_approximation_agrees_with_cipm_2007():
    # OIML R 111-1 approximate formula (0.34848 p - 0.009 h exp(0.061 t))/(273.15 + t),
    # p in hPa and h in %: 1.19929 kg/m3 at 20 degC, 1013.25 hPa, 50 % [M formula, C value]
    approx = (0.34848 * 1013.25 - 0.009 * 50 * math.exp(0.061 * 20)) / (273.15 + 20)
    assert air_density(20, 101325, 0.5) == pytest.approx(approx, abs=2e-4)


def test_air_density_sensitivities_against_finite_differences():
    # the symbolic derivative of the CIPM-2007 expression vs central differences of the
    # plain-number implementation (independent code path)
    budget = propagate(model("""
        title = "air density"
        [measurands.rho]
        equation = "air_density(t, p, h)"
        unit = "kg/m^3"
        [inputs.t]
        value = 21.8
        unit = "degC"
        u = 0.1
        [inputs.p]
        value = 100381
        unit = "Pa"
        u = 10
        [inputs.h]
        value = 0.34
        u = 0.05
    """)).measurand("rho")
    c = {item.input: item.sensitivity for item in budget.contributions}
    for name, index, step in (("t", 0, 1e-3), ("p", 1, 1.0), ("h", 2, 1e-4)):
        point = [21.8, 100381.0, 0.34]
        up, down = list(point), list(point)
        up[index] += step
        down[index] -= step
        numeric = (air_density(*up) - air_density(*down)) / (2 * step)
        assert c[name] == pytest.approx(numeric, rel=1e-6)


def test_buoyancy_factor_of_potassium_hydrogen_phthalate():
    # buoyancy correction of a balance reading (conventional mass): reference density of
    # weights 8000 kg/m3 and air 1.2 kg/m3 (OIML D 28 conventions [M]); KHP density
    # 1.636 g/cm3 (common handbook value); factor 1.000 584 [C]
    budget = propagate(model("""
        title = "buoyancy"
        [measurands.m]
        equation = "m_c * (1 - rho_a / rho_ref) / (1 - rho_a / rho_s)"
        unit = "g"
        [inputs.m_c]
        value = 1
        unit = "g"
        exact = true
        [inputs.rho_a]
        value = 1.2
        unit = "kg/m^3"
        exact = true
        [inputs.rho_ref]
        value = 8000
        unit = "kg/m^3"
        exact = true
        [inputs.rho_s]
        value = 1.636
        unit = "g/cm^3"
        u = 0.01
    """)).measurand("m")
    expected = (1 - 1.2 / 8000) / (1 - 1.2 / 1636)
    assert budget.estimate == pytest.approx(expected, rel=1e-14)
    assert budget.estimate == pytest.approx(1.000584, abs=5e-7)


def test_formula_input_in_a_model_reports_the_convention():
    m = model("""
        title = "formula"
        [settings]
        atomic_weights = "iupac-2021-abridged"
        [measurands.y]
        equation = "M"
        unit = "kg/mol"
        [inputs.M]
        formula = "C8H5KO4"
    """)
    item = m.input("M")
    assert item.molar_mass.convention == "iupac-2021-abridged"
    # abridged KHP: 204.2220 g/mol, u 0.0096 g/mol [C, references.md section 5]
    budget = propagate(m).measurand("y")
    assert budget.estimate == pytest.approx(0.2042220, abs=1e-8)
    assert budget.combined_uncertainty == pytest.approx(0.0096e-3, abs=1e-7)


@pytest.mark.parametrize("symbol, standard, abridged", [
    # IUPAC 2021 Table 1 as transcribed in the public repository MilanSkocic/ciaaw
    # (data/src/saw_2021.txt) [V]: interval elements and elements with value(U)
    ("Ar", (39.792, 39.963), (39.95, 0.16)), ("Li", (6.938, 6.997), (6.94, 0.06)),
    ("Tl", (204.382, 204.385), (204.38, 0.01)), ("Pb", (206.14, 207.94), (207.2, 1.1)),
    ("Mn", (54.938043, 0.000002), (54.938, 0.001)), ("U", (238.02891, 0.00003), (238.03, 0.01)),
    ("Hf", (178.486, 0.006), (178.49, 0.01)), ("Ir", (192.217, 0.002), (192.22, 0.01)),
    ("Yb", (173.045, 0.010), (173.05, 0.02)),
])
def test_atomic_weights_against_the_2021_table(symbol, standard, abridged):
    weight = atomic_weight(symbol)
    if symbol in ("Ar", "Li", "Tl", "Pb"):
        low, high = standard
        assert (weight.estimate - weight.half_width, weight.estimate + weight.half_width) == \
            pytest.approx((low, high), abs=1e-12)
    else:
        assert (weight.estimate, weight.half_width) == pytest.approx(standard, abs=1e-12)
    short = atomic_weight(symbol, "iupac-2021-abridged")
    assert (short.estimate, short.half_width) == pytest.approx(abridged, abs=1e-12)


def test_elements_without_a_standard_atomic_weight_are_refused():
    # IUPAC 2021: Tc, Pm, Po ... Ac and the elements after U have none [V: same transcription]
    for symbol in ("Tc", "Pm", "Po", "Rn", "Ac", "Np", "Og"):
        with pytest.raises(InputError):
            parse_formula(f"{symbol}O2")
