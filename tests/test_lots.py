"""budget.lots.propagate_lots: many lots of one model at once must give, lot by lot,
what propagate gives for a model with that lot's estimates, and agree with the
general-purpose uncertainties package (linear propagation, first order)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from budget._errors import InputError
from budget._gum import propagate
from budget.lots import propagate_lots
from budget._model import load_model

MODELS = Path(__file__).resolve().parent.parent / "models"
A2 = MODELS / "reference" / "eurachem-a2-naoh.toml"


def _lot(model, **values):  # type: ignore[no-untyped-def]
    for name, value in values.items():  # the distribution moves with the estimate
        model = model.with_value(name, value)
    return propagate(model)


@pytest.mark.parametrize("path, name, values", [
    (A2, "m_KHP", [0.3888, 0.40, 0.37]),
    (MODELS / "reference" / "gum-h1-end-gauge.toml", None, None),
    (MODELS / "vics-as-25a" / "coulometric-purity.toml", None, None),
])
def test_each_lot_is_what_propagate_gives(path, name, values) -> None:  # type: ignore[no-untyped-def]
    model = load_model(path)
    name = name or model.inputs[0].name
    base = model.input(name).estimate
    values = values or [base, base * 1.001, base * 0.999]
    lots = propagate_lots(model, {name: values})
    for row, value in enumerate(values):
        expected = _lot(model, **{name: value})
        for k, b in enumerate(expected.measurands):
            assert lots.estimate[row, k] == pytest.approx(b.estimate, rel=1e-14)
            assert lots.combined_uncertainty[row, k] == pytest.approx(
                b.combined_uncertainty, rel=1e-12)
            assert lots.dof[row, k] == pytest.approx(b.dof, rel=1e-12)
            assert lots.coverage_factor[row, k] == b.coverage_factor
            assert list(lots.sensitivity[row, k]) == pytest.approx(
                [c.sensitivity for c in b.contributions], rel=1e-12)


def test_lots_agree_with_the_uncertainties_package() -> None:
    # uncertainties (first-order propagation, general-purpose reference library)
    from uncertainties import ufloat

    model = load_model(A2)
    masses, sds = [0.3888, 0.41], [0.00013, 0.0002]
    lots = propagate_lots(model, {"m_KHP": masses}, {"m_KHP": sds})
    x = {i.name: (i.estimate, i.standard_uncertainty) for i in model.inputs}
    for row, (m, s) in enumerate(zip(masses, sds)):
        # EURACHEM A2 writes c = 1000 m P / (M V) with V in mL (mol/L)
        c = 1000 * ufloat(*x["rep"]) * ufloat(m, s) * ufloat(*x["P_KHP"]) / (
            ufloat(*x["M_KHP"]) * ufloat(*x["V_T"]))
        assert lots.estimate[row, 0] == pytest.approx(c.nominal_value, rel=1e-12)
        assert lots.combined_uncertainty[row, 0] == pytest.approx(c.std_dev, rel=1e-10)


def test_bad_tables_are_clean_errors() -> None:
    model = load_model(A2)
    with pytest.raises(InputError) as caught:
        propagate_lots(model, {"m_KHQ": [1.0]})
    assert str(caught.value).endswith("expected an input of the model, found 'm_KHQ' "
                                      "(did you mean 'm_KHP'?)")
    with pytest.raises(InputError) as caught:
        propagate_lots(model, {"m_KHP": [1.0, 2.0], "V_T": [18.0]})
    assert str(caught.value).endswith("expected one value per lot in every column, found "
                                      "columns of 1, 2 values")


def test_many_lots_in_one_pass_have_the_right_shapes() -> None:
    model = load_model(A2)
    masses = np.linspace(0.3, 0.5, 1000)
    lots = propagate_lots(model, {"m_KHP": masses})
    assert lots.estimate.shape == (1000, 1)
    assert lots.sensitivity.shape == (1000, 1, len(model.inputs))
    # c is proportional to m: the relative uncertainty changes only through u(m)/m
    assert np.all(np.diff(lots.estimate[:, 0]) > 0)
