"""The calibration register: certificates behind Type B inputs, their validity on the
measurement dates, agreement of inputs with certificates, generated traceability, and the
SHA-256 digests of every file that fed a result.

The date rule (a certificate is valid from its calibration date to its valid-until day,
both included) is common practice for calibration intervals; the dates themselves are
checked against the standard library's ``datetime``. Digests are checked against
``hashlib``. Certificates in these tests are invented.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import math

import pytest

from budget._analysis import evaluate
from budget._campaign import load_campaign
from budget._certification import certify
from budget._errors import BudgetError, Location
from budget._model import load_model, parse_model
from budget._register import load_register, validity
from conftest import MODELS

DEMO = MODELS / "vics-as-25a"

REGISTER = """
title = "test register (invented)"

[certificates.R1]
instrument = "standard resistor"
issuer = "an invented calibration service"
number = "INV-1"
calibrated = 2025-01-20
valid_until = 2026-01-19
traceable_to = "the ohm through an invented institute"

[certificates.R1.values.R]
value = 100.0012
unit = "ohm"
expanded = 0.0004
k = 2

[certificates.V1]
instrument = "voltmeter"
issuer = "an invented calibration service"
number = "INV-2"
calibrated = 2024-01-31
interval_months = 13

[certificates.V1.values.reading]
unit = "V"
u = 2e-6

[certificates.V1.values.offset]
value = 0.0
unit = "V"
u = 1e-7
"""


def _model(inputs: str, measured: str = "2025-02-01") -> str:
    return f"""
title = "register test"
register = "register.toml"
measured = {measured}

[measurands.I]
equation = "U / R"
unit = "mA"

{inputs}
"""


_R_WHOLE = """
[inputs.R]
certificate = "R1"
"""
_U_READ = """
[inputs.U]
value = 1.0
certificate = "V1"
stated = "reading"
"""


@pytest.fixture()
def folder(tmp_path):
    (tmp_path / "register.toml").write_text(REGISTER)
    return tmp_path


def _load(folder, text):
    path = folder / "model.toml"
    path.write_text(text)
    return load_model(path)


def test_input_taken_whole_from_a_certificate_equals_the_stated_input(folder):
    taken = _load(folder, _model(_R_WHOLE + _U_READ))
    written = _load(folder, _model("""
[inputs.R]
value = 100.0012
unit = "ohm"
expanded = 0.0004
k = 2
""" + """
[inputs.U]
value = 1.0
unit = "V"
u = 2e-6
"""))
    a = evaluate(taken, trials=0).budget.measurands[0]
    b = evaluate(written, trials=0).budget.measurands[0]
    assert a.combined_uncertainty == b.combined_uncertainty
    assert taken.input("R").standard_uncertainty == 0.0002
    assert not taken.warnings


def test_valid_until_day_itself_is_valid_and_the_next_day_is_not():
    register = load_register_text(REGISTER)
    r1 = register.certificate("R1", Location())
    assert validity(r1, dt.date(2026, 1, 19)) is None
    assert validity(r1, dt.date(2025, 1, 20)) is None
    assert validity(r1, dt.date(2026, 1, 19) + dt.timedelta(days=1)) == \
        "expired on 2026-01-20 (valid until 2026-01-19)"
    assert validity(r1, dt.date(2025, 1, 19)) == \
        "not yet issued on 2025-01-19 (calibrated 2025-01-20)"


def test_interval_in_months_ends_on_the_last_day_of_a_short_month():
    # 2024-01-31 plus 13 months: February 2025 has 28 days (the calendar module)
    import calendar

    v1 = load_register_text(REGISTER).certificate("V1", Location())
    assert v1.valid_until == dt.date(2025, 2, calendar.monthrange(2025, 2)[1])


def load_register_text(text, tmp=None):
    import tempfile
    from pathlib import Path

    folder = Path(tempfile.mkdtemp())
    (folder / "r.toml").write_text(text)
    return load_register(folder / "r.toml", Location(), "iupac-2021-interval")


def test_a_certificate_issued_after_the_measurement_warns(folder):
    model = _load(folder, _model(_R_WHOLE + _U_READ, measured="2025-01-10"))
    assert ("input 'R': certificate 'R1' (INV-1) not yet issued on 2025-01-10 (calibrated "
            "2025-01-20)") in model.warnings


def test_an_expired_certificate_warns(folder):
    model = _load(folder, _model(_R_WHOLE + _U_READ, measured="[2025-06-01, 2026-02-01]"))
    assert ("input 'R': certificate 'R1' (INV-1) expired on 2026-02-01 (valid until "
            "2026-01-19)") in model.warnings
    assert any(w.startswith("input 'U': certificate 'V1' (INV-2) expired on 2025-06-01")
               for w in model.warnings)


def test_value_and_uncertainty_that_differ_from_the_certificate_warn_in_the_inputs_unit(
        folder):
    model = _load(folder, _model("""
[inputs.R]
value = 100001.5
unit = "mohm"
u = 0.3
certificate = "R1"
""" + _U_READ))
    assert model.warnings[:2] == (
        "input 'R': estimate 100001.5 mohm differs from certificate 'R1' (INV-1), which "
        "states 100001.2 mohm",
        "input 'R': standard uncertainty 0.3 mohm differs from certificate 'R1' (INV-1), "
        "which states 0.2 mohm (expanded uncertainty, k = 2)")


def test_same_statement_in_another_unit_agrees(folder):
    model = _load(folder, _model("""
[inputs.R]
value = 0.1000012
unit = "kohm"
expanded = 0.0000004
k = 2
certificate = "R1"
""" + _U_READ))
    assert not [w for w in model.warnings if "differs" in w]


@pytest.mark.parametrize("inputs, message", [
    ('[inputs.R]\ncertificate = "R2"\n' + _U_READ,
     "model.toml:11: [inputs.R] certificate: expected a certificate of the register "
     "{folder}/register.toml, found 'R2'"),
    ('[inputs.R]\ncertificate = "R1"\n[inputs.U]\nvalue = 1.0\ncertificate = "V1"\n',
     "model.toml:14: [inputs.U] certificate: expected 'stated' naming one of the values of "
     "certificate 'V1' (reading, offset), found none"),
    ('[inputs.R]\ncertificate = "R1"\n[inputs.U]\ncertificate = "V1"\nstated = "reading"\n',
     "model.toml:12: [inputs.U] expected the 'value' read (certificate 'V1' states only "
     "the uncertainty of a reading), found none"),
    ('[inputs.R]\ncertificate = "R1"\nvalue = 3\n' + _U_READ,
     "model.toml:12: [inputs.R] value: expected either a full statement of the uncertainty "
     "or none (taken from certificate 'R1'), found 'value' alone"),
    ('[inputs.R]\ncertificate = "R1"\nunit = "V"\nu = 1\nvalue = 100\n' + _U_READ,
     "model.toml:11: [inputs.R] certificate: expected a unit of [mass] * [length] ** 2 / "
     "[time] ** 3 / [current] ** 2 as on certificate 'R1' ('ohm'), found 'V' ([mass] * "
     "[length] ** 2 / [time] ** 3 / [current])"),
])
def test_bad_certificate_references_are_errors(folder, inputs, message):
    with pytest.raises(BudgetError) as error:
        _load(folder, _model(inputs))
    assert str(error.value) == str(folder / message.format(folder=folder))


def test_a_certificate_without_a_register_is_an_error():
    with pytest.raises(BudgetError) as error:
        parse_model(_model(_R_WHOLE + _U_READ).replace('register = "register.toml"', ""))
    assert str(error.value) == ("<string>:12: [inputs.R] certificate: expected a top-level "
                                "'register' file for inputs that name a certificate, found "
                                "none")


@pytest.mark.parametrize("edit, message", [
    (("valid_until = 2026-01-19\n", ""),
     "r.toml:4: [certificates.R1] expected exactly one of 'valid_until' or "
     "'interval_months', found neither"),
    (("calibrated = 2025-01-20", 'calibrated = "20.01.2025"'),
     "r.toml:8: [certificates.R1] calibrated: expected a date such as 2026-03-14, found "
     "'20.01.2025'"),
    (("valid_until = 2026-01-19", "valid_until = 2024-01-19"),
     "r.toml:9: [certificates.R1] valid_until: expected a date on or after the calibration "
     "date 2025-01-20, found 2024-01-19"),
    (("issuer = \"an invented calibration service\"\nnumber = \"INV-1\"",
      "issuer = \"an invented calibration service\"\nnumbr = \"INV-1\""),
     "r.toml:7: [certificates.R1] numbr: expected a key among instrument, issuer, number, "
     "calibrated, valid_until, interval_months, traceable_to, si_unit, values, note, found "
     "'numbr' (did you mean 'number'?)"),
])
def test_bad_register_files_are_errors(edit, message):
    with pytest.raises(BudgetError) as error:
        load_register_text(REGISTER.replace(*edit, 1))
    assert str(error.value).endswith(message)


def test_demo_takes_its_calibrations_from_the_register():
    model = load_model(DEMO / "coulometric-purity.toml")
    used = {u.input: u.certificate.identifier for u in model.certificates}
    assert used == {"U_m": "DVM1", "R_s": "R10", "m_c": "BAL3", "rho_ref": "W-E2"}
    assert not model.warnings


def test_campaign_run_dates_are_checked_and_traceability_is_generated(tmp_path):
    for name in ("campaign.toml", "coulometric-purity.toml", "determinations.csv",
                 "homogeneity.csv", "stability.csv"):
        (tmp_path / name).write_bytes((DEMO / name).read_bytes())
    # the resistor's certificate expires on the second day of the runs
    (tmp_path / "calibrations.toml").write_text(
        (DEMO / "calibrations.toml").read_text().replace("valid_until = 2026-01-19",
                                                         "valid_until = 2025-05-06"))
    cert = certify(load_campaign(tmp_path / "campaign.toml"), trials=0)
    assert ("input 'R_s': certificate 'R10' (CVCS-R-2025-0113) expired on 2025-05-07 and "
            "2025-05-08 (valid until 2025-05-06) (dates of the runs)") in cert.warnings
    from budget._document import certification_document

    document = certification_document(cert)
    assert document["traceability_generated"].startswith(
        "The measurement results are traceable to the SI: the volt through certificate "
        "CVCS-V-2025-0042 issued by Corran Valley Calibration Service (fictional)")
    resistor = next(c for c in document["certificates"] if c["certificate"] == "R10")
    assert resistor["problems"] == ["expired on 2025-05-07 (valid until 2025-05-06)",
                                    "expired on 2025-05-08 (valid until 2025-05-06)"]


def test_every_file_that_fed_a_certification_has_its_sha256(cli):
    code, stdout, stderr = cli("certify", str(DEMO / "campaign.toml"), "--json",
                               "--trials", "0")
    assert code == 0, stderr
    files = json.loads(stdout)["provenance"]["files"]
    assert {f["role"] for f in files} == {"campaign", "model", "register",
                                          "characterization.runs", "homogeneity.data",
                                          "stability.data"}
    for entry in files:
        with open(entry["path"], "rb") as handle:  # the digest of the bytes (hashlib)
            assert entry["sha256"] == hashlib.sha256(handle.read()).hexdigest()


def test_a_what_if_copy_never_carries_the_files_digest(cli):
    from budget._document import result_document

    model = load_model(DEMO / "coulometric-purity.toml")
    changed = model.with_uncertainty("R_s", factor=0.5)
    document = result_document(evaluate(changed, trials=0))
    assert document["model_sha256"] is None
    assert document["provenance"]["model_sha256"] is None
    assert document["provenance"]["changes"] == ["u(R_s) × 0.5"]
    original = result_document(evaluate(model, trials=0))
    assert original["model_sha256"] == hashlib.sha256(
        (DEMO / "coulometric-purity.toml").read_bytes()).hexdigest()
    assert math.isclose(changed.input("R_s").standard_uncertainty, 5e-6)


def test_reports_list_the_certificates_and_the_generated_traceability():
    from budget._report import render_certification_report, render_report

    budget_page = render_report(evaluate(load_model(DEMO / "coulometric-purity.toml"),
                                         trials=0))
    assert "<td>CVCS-R-2025-0113</td>" in budget_page
    assert "valid on 2025-05-06" in budget_page
    cert = certify(load_campaign(DEMO / "campaign.toml"), trials=0)
    page = render_certification_report(cert)
    assert "The measurement results are traceable to the SI: the volt through certificate " \
           "CVCS-V-2025-0042" in page
    assert "valid on each of the 3 measurement dates" in page
    assert "SHA-256 " + hashlib.sha256((DEMO / "calibrations.toml").read_bytes()).hexdigest() \
        in page


def test_record_files_have_their_digest_too(cli):
    path = DEMO / "coulometric-purity-records.toml"
    code, stdout, stderr = cli("run", str(path), "--json", "--trials", "0")
    assert code == 0, stderr
    files = [f for f in json.loads(stdout)["provenance"]["files"]
             if f["role"].startswith("records.")]
    assert files
    for entry in files:
        with open(entry["path"], "rb") as handle:  # hashlib over the bytes on disk
            assert entry["sha256"] == hashlib.sha256(handle.read()).hexdigest()


def test_strict_turns_an_expired_certificate_into_a_failure(folder, cli):
    path = folder / "model.toml"
    path.write_text(_model(_R_WHOLE + _U_READ, measured="2027-01-01"))
    code, stdout, stderr = cli("run", str(path), "--trials", "0", "--strict")
    assert code == 3 and stdout == ""
    assert "expired on 2027-01-01" in stderr


def test_a_campaign_names_the_register_for_a_model_that_names_none(tmp_path):
    for name in ("campaign.toml", "determinations.csv", "homogeneity.csv", "stability.csv",
                 "calibrations.toml"):
        (tmp_path / name).write_bytes((DEMO / name).read_bytes())
    (tmp_path / "coulometric-purity.toml").write_text(
        (DEMO / "coulometric-purity.toml").read_text().replace(
            'register = "calibrations.toml"', ""))
    with pytest.raises(BudgetError):  # alone, the model has no register
        load_model(tmp_path / "coulometric-purity.toml")
    text = (tmp_path / "campaign.toml").read_text()
    (tmp_path / "campaign.toml").write_text('register = "calibrations.toml"\n' + text)
    cert = certify(load_campaign(tmp_path / "campaign.toml"), trials=0)
    expected = certify(load_campaign(DEMO / "campaign.toml"), trials=0)
    assert cert.expanded_uncertainty == expected.expanded_uncertainty
    assert {u.input for u in cert.campaign.model.certificates} == {"U_m", "R_s", "m_c",
                                                                    "rho_ref"}
