"""Regressions found by an independent review of issues 10, 12 and 15 (helper h19).

Each test reproduces a defect found by trying the documented behaviour from the outside.
Numeric checks name their source beside them; dates are checked against the standard
library's ``datetime``.
"""

from __future__ import annotations

import datetime as dt

from budget.campaign import load_campaign
from budget.certification import certify
from conftest import MODELS

LAB = MODELS / "vics-as-25a-lab-files"


def _lab_copy(tmp_path, dates_to):
    """The lab-files campaign with its runs' dates rewritten by ``dates_to``."""
    for path in LAB.iterdir():
        (tmp_path / path.name).write_bytes(path.read_bytes())
    runs = tmp_path / "determinations.csv"
    lines = runs.read_text(encoding="utf-8").splitlines()
    out = [lines[0]]
    for line in lines[1:]:
        cells = line.split(";")
        cells[2] = dates_to(dt.date.fromisoformat(cells[2]))
        out.append(";".join(cells))
    runs.write_text("\n".join(out) + "\n", encoding="utf-8")
    return tmp_path / "campaign.toml"


def test_run_dates_in_a_day_first_form_are_read_like_every_data_date(tmp_path):
    # Found: a runs file with ';', decimal commas, a register and dates written 06.05.2025
    # was refused ("expected a date such as 2025-05-06"), although data-files.md reads
    # day-first dates when a day above 12 settles the order or `dates` declares it.
    campaign = _lab_copy(tmp_path, lambda d: d.strftime("%d.%m.%Y"))
    text = campaign.read_text(encoding="utf-8").replace(
        'scatter_covers = []', 'scatter_covers = []\ndates = "day-first"')
    campaign.write_text(text, encoding="utf-8")
    iso = certify(load_campaign(LAB / "campaign.toml"), trials=0)
    local = certify(load_campaign(campaign), trials=0)
    assert local.run_dates == iso.run_dates
    assert local.run_dates[0] == dt.date(2025, 5, 6)  # standard library's date


def test_an_expiry_found_through_day_first_run_dates(tmp_path):
    # the resistor's certificate R10 is valid until 2026-01-19; a run on 20.01.2026 (a day
    # above 12: day-first without a declaration) must be flagged
    campaign = _lab_copy(tmp_path, lambda d: d.strftime("%d.%m.%Y"))
    runs = tmp_path / "determinations.csv"
    lines = runs.read_text(encoding="utf-8").splitlines()
    cells = lines[-1].split(";")
    cells[2] = "20.01.2026"
    lines[-1] = ";".join(cells)
    runs.write_text("\n".join(lines) + "\n", encoding="utf-8")
    cert = certify(load_campaign(campaign), trials=0)
    assert dt.date(2026, 1, 20) in cert.run_dates
    assert any("certificate 'R10'" in w and "expired on 2026-01-20" in w
               for w in cert.warnings)
