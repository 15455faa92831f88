"""Certification campaigns and their data files at the edges (helper h45): warnings said
once, the certificate's period of validity against the stability study, units of the
transport time, and command-line values named as options."""

from __future__ import annotations

import datetime as dt
import json
import re
import shutil
from pathlib import Path

import pytest

from conftest import MODELS

DEMO = MODELS / "vics-as-25a"


@pytest.fixture
def demo(tmp_path: Path) -> Path:
    """A copy of the demo campaign's folder."""
    folder = tmp_path / "demo"
    shutil.copytree(DEMO, folder)
    return folder


def _replace(path: Path, old: str, new: str) -> None:
    text = path.read_text(encoding="utf-8")
    assert old in text, (path.name, old)
    path.write_text(text.replace(old, new, 1), encoding="utf-8")


# --- an expired calibration certificate is warned of once ------------------------------

_EXPIRED = ("input 'R_s': certificate 'R10' (CVCS-R-2025-0113) expired on 2025-05-06, "
            "2025-05-07 and 2025-05-08 (valid until 2025-05-01)")


def _expired(folder: Path) -> None:
    """The resistor's certificate ends before the first run (and the model's `measured`)."""
    _replace(folder / "calibrations.toml", "valid_until = 2026-01-19", "valid_until = 2025-05-01")


@pytest.mark.parametrize("campaign", ["campaign.toml", "campaign-methods.toml"])
def test_an_expired_certificate_is_one_warning_on_the_terminal_in_json_and_html(
        demo, cli, campaign):
    # Found: the model's own `measured` date (2025-05-06) gave one warning and the runs'
    # dates (2025-05-06 to -08) a second about the same certificate and day, each date
    # with its own "(valid until …)"; both reached the terminal, the JSON and the report.
    _expired(demo)
    report = demo / "report.html"
    code, stdout, stderr = cli("certify", str(demo / campaign), "--trials", "0", "--json",
                               "--html", str(report))
    assert code == 0, stderr
    expected = _EXPIRED + " (dates of the runs)"
    assert [line for line in stderr.splitlines() if "R10" in line] == [f"warning: {expected}"]
    document = json.loads(stdout)
    assert [w for w in document["warnings"] if "R10" in w] == [expected]
    # the characterization's own budget checks the certificates on the same dates
    inner = document["characterization"]["budget"]
    assert [w for w in inner["warnings"] if "R10" in w] == [expected]
    resistor = next(c for c in inner["certificates"] if c["certificate"] == "R10")
    assert resistor["measurement_dates"] == ["2025-05-06", "2025-05-07", "2025-05-08"]
    page = report.read_text(encoding="utf-8")
    warnings = re.findall(r'<ul class="warnings">(.*?)</ul>', page, re.S)
    assert sum(item.count("R10") for item in warnings) == 1
    # the certificate table's status names each date once, the end of validity once
    assert page.count("(valid until 2025-05-01)") == 2  # the warning and the status


def test_without_a_date_column_the_models_date_is_checked_once(demo, cli):
    # Found: with no `date` column the model's `measured` date was checked twice, once
    # as the model's and once labelled "(a date of the runs)", which it was not.
    _expired(demo)
    runs = demo / "determinations.csv"
    rows = [line.split(",") for line in runs.read_text(encoding="utf-8").splitlines()]
    runs.write_text("".join(",".join(r[:2] + r[3:]) + "\n" for r in rows), encoding="utf-8")
    code, _, stderr = cli("certify", str(demo / "campaign.toml"), "--trials", "0")
    assert code == 0, stderr
    assert [line for line in stderr.splitlines() if "R10" in line] == [
        "warning: input 'R_s': certificate 'R10' (CVCS-R-2025-0113) expired on 2025-05-06 "
        "(valid until 2025-05-01)"]


def test_dates_of_both_kinds_and_many_dates_are_listed_once_each():
    from budget._register import Certificate, date_problems

    certificate = Certificate(identifier="R1", instrument="resistor", issuer="lab",
                              number="N-1", calibrated=dt.date(2025, 1, 20),
                              valid_until=dt.date(2025, 2, 1), traceable_to="", si_unit="",
                              values=())
    days = (dt.date(2025, 1, 19), dt.date(2025, 1, 19), dt.date(2025, 1, 25),
            *(dt.date(2025, 3, d) for d in range(1, 6)))
    assert date_problems(certificate, days) == (
        "not yet issued on 2025-01-19 (calibrated 2025-01-20)",
        "expired on 2025-03-01, 2025-03-02, 2025-03-03 and 2 more dates "
        "(valid until 2025-02-01)")
    assert date_problems(certificate, (dt.date(2025, 2, 1),)) == ()
