"""Every example in models/ runs end to end, so the examples cannot rot; the reference
models agree with their published results (see test_reference_*.py for the details)."""

from __future__ import annotations

import json
import tomllib

import pytest

from conftest import MODELS

_REGISTERS = sorted(p for p in MODELS.rglob("*.toml")
                    if "certificates" in tomllib.loads(p.read_text()))
_MODELS = sorted(p for p in MODELS.rglob("*.toml")
                 if not p.name.startswith("campaign") and p not in _REGISTERS)
_CAMPAIGNS = sorted(MODELS.rglob("campaign*.toml"))


@pytest.mark.parametrize("path", _MODELS, ids=[str(p.relative_to(MODELS)) for p in _MODELS])
def test_model_runs_end_to_end(path, cli, tmp_path):
    code, stdout, stderr = cli("run", str(path), "--trials", "20000", "--html",
                               str(tmp_path / "report.html"))
    assert code == 0, stderr  # every model, one measurand or several, gives its report
    assert (tmp_path / "report.html").stat().st_size > 0
    code, stdout, stderr = cli("check", str(path))
    assert code == 0, stderr
    code, stdout, stderr = cli("run", str(path), "--json", "--trials", "20000")
    assert code == 0, stderr
    document = json.loads(stdout)
    for measurand in document["measurands"]:
        assert measurand["u"] > 0
        assert measurand["monte_carlo"]["trials"] == 20000


@pytest.mark.parametrize("path", _CAMPAIGNS, ids=[str(p.relative_to(MODELS)) for p in _CAMPAIGNS])
def test_campaign_runs_end_to_end(path, cli):
    code, stdout, stderr = cli("certify", str(path), "--json", "--trials", "20000")
    assert code == 0, stderr
    assert json.loads(stdout)["U"] > 0


@pytest.mark.parametrize("path", _REGISTERS,
                         ids=[str(p.relative_to(MODELS)) for p in _REGISTERS])
def test_register_loads(path):
    from budget._errors import Location
    from budget._register import load_register

    register = load_register(path, Location(file="test"), "iupac-2021-interval")
    assert register.certificates


def test_every_model_file_is_commented():
    for path in _MODELS + _CAMPAIGNS + _REGISTERS:
        assert path.read_text().lstrip().startswith("#"), path


def test_amount_content_times_molar_mass_is_the_mass_fraction():
    # the amount-content variant writes charges in mC, the mass in mg, the pressure in hPa
    # and the humidity in %: kappa * M must equal the mass-fraction model's w (same
    # determination D1) once the units are converted [C: w / % = kappa * M / 10]
    from budget._chemistry import molar_mass
    from budget._gum import propagate
    from budget._model import load_model

    kappa = propagate(load_model(MODELS / "vics-as-25a" / "coulometric-amount-content.toml")
                      ).measurand("kappa").estimate
    w = propagate(load_model(MODELS / "vics-as-25a" / "coulometric-purity.toml")
                  ).measurand("w").estimate
    assert kappa * molar_mass("C8H5KO4").estimate / 10 == pytest.approx(w, rel=1e-12)


def test_weight_titration_reproduces_the_demo_comparison_value():
    # invented demo data (../shared/demo/README.md): the weight titration gives 99.978 %
    from budget._gum import propagate
    from budget._model import load_model

    w = propagate(load_model(MODELS / "vics-as-25a" / "weight-titration-comparison.toml")
                  ).measurand("w_x")
    assert w.estimate == pytest.approx(99.978, abs=0.0015)
