"""The certificate page (ISO 17034 / ISO Guide 31 contents): the quantity named in the value
line, the sentence on k and its coverage probability (checked against scipy's t
distribution), the method that gave the interval, the prompted sections (flagged when
missing), and every warning in the certificate's unit."""

from __future__ import annotations

import html
import re
import shutil
from pathlib import Path

import pytest
from scipy import stats

from budget._campaign import load_campaign
from budget._certificate_page import SAFETY_CAUTION, certificate_page, coverage_of
from budget._certification import certify
from budget._formatting import format_pair
from budget._report import render_certification_report

from conftest import MODELS

DEMO = MODELS / "vics-as-25a"


@pytest.fixture(scope="module")
def demo():
    cert = certify(load_campaign(DEMO / "campaign.toml"), trials=20_000, seed=3)
    return cert, render_certification_report(cert)


@pytest.mark.parametrize("k, dof", [(2.0, 29.0), (2.0, 8.0), (2.0, float("inf")),
                                    (2.5, 4.0)])
def test_coverage_of_k_is_the_t_distributions(k, dof):
    # scipy.stats.t / norm: P(|T| <= k)
    expected = 2 * stats.norm.cdf(k) - 1 if dof == float("inf") else 2 * stats.t.cdf(k, dof) - 1
    assert coverage_of(k, dof) == pytest.approx(expected, abs=1e-9)


def test_value_line_names_the_quantity_and_states_k_and_p(demo):
    cert, text = demo
    value, expanded = format_pair(cert.certified_value, cert.expanded_uncertainty, 2)
    assert (f"mass fraction of potassium hydrogen phthalate (C8H5KO4): ({value} ± "
            f"{expanded}) %") in text
    p = 100 * (2 * stats.t.cdf(2.0, int(cert.dof)) - 1)  # scipy; ν_eff truncated is close
    assert re.search(r"coverage factor k = 2 corresponds to a coverage probability of about "
                     r"(\d+\.\d) %", text)
    shown = float(re.search(r"about (\d+\.\d) %", text).group(1))
    assert shown == pytest.approx(p, abs=0.15)
    assert "Reported interval: GUM" in text  # the method of the interval, named
    assert "The interval is the GUM one" in text and "Monte Carlo (20,000 trials" in text


def test_the_demo_fills_every_prompted_section(demo):
    cert, text = demo
    page = certificate_page(cert)
    assert page["missing"] == []
    for heading in ("Intended use", "Instructions for handling and use",
                    "Health and safety information"):
        assert f"<h3>{heading}</h3>" in text
    assert 'data-missing' not in text
    assert html.escape(SAFETY_CAUTION) in text
    # the drying instruction carries its caution
    handling = " ".join(next(s["text"] for s in page["sections"] if s["key"] == "instructions"))
    assert "Dry at 110-120 °C" in handling and "Caution:" in handling


def _copy_demo(tmp_path: Path) -> Path:
    folder = tmp_path / "demo"
    shutil.copytree(DEMO, folder)
    return folder


def test_missing_sections_are_flagged_not_omitted(tmp_path):
    folder = _copy_demo(tmp_path)
    campaign = folder / "campaign.toml"
    text = campaign.read_text(encoding="utf-8")
    text = re.sub(r'(?ms)^intended_use = """.*?"""\n', "", text)
    text = re.sub(r'(?ms)^safety = """.*?"""\n', "", text)
    campaign.write_text(text, encoding="utf-8")
    cert = certify(load_campaign(campaign), trials=0)
    page = certificate_page(cert)
    assert page["missing"] == ["intended_use", "safety"]
    page_html = render_certification_report(cert)
    assert 'data-missing="intended_use"' in page_html and 'data-missing="safety"' in page_html
    assert 'data-missing="instructions"' not in page_html
    assert "<h3>Health and safety information</h3>" in page_html
    # the usual caution stays even when the text is missing
    assert html.escape(SAFETY_CAUTION) in page_html


def test_without_a_quantity_key_the_measurands_description_names_it(tmp_path):
    folder = _copy_demo(tmp_path)
    campaign = folder / "campaign.toml"
    campaign.write_text(re.sub(r"(?m)^quantity = .*\n", "",
                               campaign.read_text(encoding="utf-8")), encoding="utf-8")
    page = certificate_page(certify(load_campaign(campaign), trials=0))
    assert page["quantity"] == "mass fraction of C8H5KO4 in the sample"
    assert page["method"].endswith("no Monte Carlo check was run.")


def test_warnings_are_restated_in_the_certificates_unit(tmp_path):
    folder = _copy_demo(tmp_path)
    model = folder / "coulometric-purity.toml"
    model.write_text(model.read_text(encoding="utf-8").replace(
        'equation = "M * Q / (z * F * m)"\nunit = "%"',
        'equation = "M * Q / (z * F * m)"\nunit = "g/g"'), encoding="utf-8")
    cert = certify(load_campaign(folder / "campaign.toml"), trials=20_000, seed=3)
    raw = [w for w in cert.warnings if "does not validate" in w]
    assert raw and "g/g" in raw[0]  # the model's own warning is in g/g
    warnings = certificate_page(cert)["warnings"]
    restated = [w for w in warnings if "does not validate" in w]
    assert len(restated) == 1 and "g/g" not in restated[0] and " %" in restated[0]
    validation = cert.characterization.result.simulation.measurands[0].validation
    tolerance = re.search(r"at (\S+) %", restated[0]).group(1)
    assert float(tolerance) == pytest.approx(100 * validation.tolerance, rel=0.05)
    assert all("g/g" not in w or w.startswith("characterization model (in g/g)")
               for w in warnings)


def test_a_further_methods_warning_in_mg_per_kg_is_restated_in_percent():
    from budget._certificate_page import _restate

    # 1 mg/kg = 1e-6 = 1e-4 % (SI prefixes; common practice)
    text = ("method 'mass balance/water': 'w_H2O': Monte Carlo does not validate the GUM "
            "result at 0.005 mg/kg (d_low = 0.0099, d_high = 0.0028, JCGM 101 8.2)")
    assert _restate(text, "%", "c.toml") == (
        "method 'mass balance/water': 'w_H2O': Monte Carlo does not validate the GUM result "
        "at 5.0e-07 % (d_low = 9.9e-07, d_high = 2.8e-07 %, JCGM 101 8.2)")
    same = text.replace("mg/kg", "%")
    assert _restate(same, "%", "c.toml") == same
    assert _restate("something else in mg/kg", "%", "c.toml") == "something else in mg/kg"
