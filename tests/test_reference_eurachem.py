"""Checks against EURACHEM/CITAC "Quantifying Uncertainty in Analytical Measurement",
Appendix A, Examples A1 and A2 (values [V] from the guide's web summary tables, see
../shared/references.md section 4), with units converted by the engine."""

from __future__ import annotations

import pytest

from budget._gum import propagate
from budget._model import load_model

from conftest import MODELS, model


def test_a1_cadmium_calibration_standard():
    # EURACHEM/CITAC A1: c_Cd = 1000 m P / V = 1002.7 mg/L, u = 0.9 mg/L [V]; here m in mg
    # and V in mL are converted to mg/L by the engine (no factor 1000 in the equation)
    budget = propagate(model("""
        title = "EURACHEM A1"
        [measurands.c_Cd]
        equation = "m * P / V"
        unit = "mg/L"
        [inputs.m]
        value = 100.28
        unit = "mg"
        u = 0.05
        [inputs.P]
        value = 0.9999
        u = 0.000058
        [inputs.V]
        value = 100.0
        unit = "mL"
        u = 0.07
    """)).measurand("c_Cd")
    assert budget.estimate == pytest.approx(1002.7, abs=0.05)
    assert budget.combined_uncertainty == pytest.approx(0.9, abs=0.05)  # 1 significant digit
    assert budget.combined_uncertainty == pytest.approx(0.864, abs=0.0005)  # [C]


def test_a2_sodium_hydroxide_against_khp():
    # EURACHEM/CITAC A2: c_NaOH = 0.10214 mol/L, u = 0.00010 mol/L [V];
    # unrounded 0.1021362 and 0.0000986 mol/L [C]
    budget = propagate(load_model(MODELS / "reference" / "eurachem-a2-naoh.toml"))
    result = budget.measurand("c_NaOH")
    assert result.estimate == pytest.approx(0.10214, abs=0.000005)
    assert result.combined_uncertainty == pytest.approx(0.00010, abs=0.000005)
    assert result.estimate == pytest.approx(0.1021362, abs=5e-8)
    # u/x = 0.00097 in the guide's table [V]
    assert result.combined_uncertainty / result.estimate == pytest.approx(0.00097, abs=5e-6)


def test_a2_relative_contributions_rank_like_the_guide():
    # EURACHEM/CITAC A2 summary: u/x of V_T (0.0007) > rep (0.0005) > m (0.00033)
    # > P (0.00029) > M (0.000019) [V]
    result = propagate(load_model(MODELS / "reference" / "eurachem-a2-naoh.toml")
                       ).measurand("c_NaOH")
    ranked = [c.input for c in sorted(result.contributions, key=lambda c: -c.contribution)]
    assert ranked == ["V_T", "rep", "m_KHP", "P_KHP", "M_KHP"]


def test_a2_molar_mass_from_older_atomic_weights():
    # EURACHEM/CITAC A2: M(KHP) = 204.2212 g/mol, u = 0.0038 g/mol from the IUPAC 1995
    # values C 12.0107(8), H 1.00794(7), O 15.9994(3), K 39.0983(1), each +/- taken as a
    # rectangular half-width and the atoms of one element fully correlated [V]
    budget = propagate(model("""
        title = "KHP molar mass, EURACHEM A2"
        [measurands.M]
        equation = "8 * A_C + 5 * A_H + A_K + 4 * A_O"
        unit = "g/mol"
        [inputs.A_C]
        value = 12.0107
        unit = "g/mol"
        distribution = "rectangular"
        half_width = 0.0008
        [inputs.A_H]
        value = 1.00794
        unit = "g/mol"
        distribution = "rectangular"
        half_width = 0.00007
        [inputs.A_O]
        value = 15.9994
        unit = "g/mol"
        distribution = "rectangular"
        half_width = 0.0003
        [inputs.A_K]
        value = 39.0983
        unit = "g/mol"
        distribution = "rectangular"
        half_width = 0.0001
    """)).measurand("M")
    assert budget.estimate == pytest.approx(204.2212, abs=0.00005)
    assert budget.combined_uncertainty == pytest.approx(0.0038, abs=0.00005)
    assert budget.combined_uncertainty == pytest.approx(0.00377, abs=0.000005)  # [C]
