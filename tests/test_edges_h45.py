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


# --- transport_time with a unit, like shelf_life ---------------------------------------

def _short_term(folder: Path, transport: str, *, time_unit: bool = True) -> Path:
    """The three-method demo campaign with its short-term study's transport time edited."""
    campaign = folder / "campaign-methods.toml"
    _replace(campaign, "transport_time = 2 ", f"transport_time = {transport} ")
    if not time_unit:
        _replace(campaign, 'time_unit = "week" ', "")
        _replace(folder / "short-term-50C.csv", "time,", "time / week,")
    return campaign


def _u_sts(cli, campaign: Path) -> tuple[float, float]:
    code, stdout, stderr = cli("certify", str(campaign), "--trials", "0", "--json")
    assert code == 0, stderr
    short = json.loads(stdout)["stability_studies"]["short_term"]
    return short["transport_time"], short["u_sts"]


@pytest.mark.parametrize("transport", ['"2 week"', '"14 d"', '"336 h"'])
def test_a_transport_time_with_its_unit_is_the_bare_number_in_the_studys_unit(
        demo, tmp_path, cli, transport):
    # Found: transport_time took a bare number only; "2 week" was refused as not a number
    # while shelf_life beside it took "36 month". 2 week = 14 d = 336 h (pint).
    bare = tmp_path / "bare"
    shutil.copytree(DEMO, bare)
    period, u_sts = _u_sts(cli, _short_term(demo, transport))
    assert period == pytest.approx(2.0, rel=1e-12)
    assert u_sts == pytest.approx(_u_sts(cli, bare / "campaign-methods.toml")[1], rel=1e-12)


def test_a_transport_time_in_another_unit_is_converted_to_the_headers(demo, cli):
    # no declared time_unit: the times are in weeks by the header 'time / week'; half a
    # month is 365.25/24 d = 2.1741… weeks (pint's month is a twelfth of a Julian year)
    period, _ = _u_sts(cli, _short_term(demo, '"0.5 month"', time_unit=False))
    assert period == pytest.approx(365.25 / 24 / 7, rel=1e-12)


def test_a_short_term_study_written_in_dates_counts_them_in_its_time_unit(demo, cli):
    # Found: a [stability.short_term] data file with a date column was refused for want
    # of a declared time_unit even when time_unit = "week" was declared
    study = demo / "short-term-50C.csv"
    rows = [line.split(",") for line in study.read_text(encoding="utf-8").splitlines()]
    start = dt.date(2025, 6, 2)
    study.write_text("date,replicate,value\n" + "".join(
        f"{start + dt.timedelta(weeks=int(t))},{rep},{value}\n" for t, rep, value in rows[1:]),
        encoding="utf-8")
    period, u_sts = _u_sts(cli, demo / "campaign-methods.toml")
    assert period == 2.0
    assert u_sts == pytest.approx(_u_sts(cli, DEMO / "campaign-methods.toml")[1], rel=1e-9)


@pytest.mark.parametrize("transport, found", [
    ('"2 kg"', "expected a transport time in a unit of time (such as month, d, year), found "
               "'kg' ([mass])"),
    ('"2 blorps"', "expected a unit that pint understands, found 'blorps' "
                   "(UndefinedUnitError)"),
    ('"two weeks"', "expected a transport time as a number or as \"2 week\", found "
                    "'two weeks'"),
    ('"-2 week"', "expected a transport time > 0, found -2"),
    ("0", "expected a number > 0, found 0"),
])
def test_a_transport_time_in_no_unit_of_time_is_refused_at_its_key(demo, cli, transport,
                                                                    found):
    campaign = _short_term(demo, transport)
    code, stdout, stderr = cli("certify", str(campaign), "--trials", "0")
    assert (code, stdout) == (1, "")
    assert stderr == (f"error: {campaign}:75: [stability.short_term] transport_time: "
                      f"{found}\n")


@pytest.mark.parametrize("declared, found", [
    # Found: a time_unit that was no string was silently ignored ("for 2 time units")
    ("5", "expected a 'time_unit' string, found 5"),
    # Found: an unknown time_unit was blamed on the data file's 'time' column
    ('"blorp"', "expected a unit that pint understands, found 'blorp' (UndefinedUnitError)"),
])
def test_a_short_term_time_unit_is_checked_at_its_key(demo, cli, declared, found):
    campaign = demo / "campaign-methods.toml"
    _replace(campaign, 'time_unit = "week" ', f"time_unit = {declared} ")
    code, stdout, stderr = cli("certify", str(campaign), "--trials", "0")
    assert (code, stdout) == (1, "")
    assert stderr == f"error: {campaign}:74: [stability.short_term] time_unit: {found}\n"


# --- values given on the command line are named as options ------------------------------

def _bad_option(cli, *args: str) -> str:
    """The one 'Error:' line of a bad option value (status 2, nothing on standard output)."""
    code, stdout, stderr = cli(*args)
    assert (code, stdout) == (2, ""), stderr
    return stderr.strip().splitlines()[-1]


_TOO_FEW = "expected at least 20 trials for a 95 % interval, found 5"
_KEPT = ("expected at most 100,000,000 Monte Carlo values for a run that keeps every one of "
         "them (8 bytes each: a coverage probability of ½ or less, or a certification, which "
         "combines the values; limits: docs/limits.md), found 200,000,000 trials × 1 measurand")


@pytest.mark.parametrize("args, option, message", [
    # Found: each of these named the value as a key of the model or campaign file
    # ("coulometric-purity.toml: trials: …", "campaign.toml: [certificate]
    # reported_interval: …", a table the campaign does not even have)
    (("run", "coulometric-purity.toml", "--trials", "5"), "--trials", _TOO_FEW),
    (("explain", "coulometric-purity.toml", "--trials", "5"), "--trials", _TOO_FEW),
    (("certify", "campaign.toml", "--trials", "5"), "--trials", _TOO_FEW),
    (("certify", "campaign-methods.toml", "--trials", "5"), "--trials", _TOO_FEW),
    (("run", "coulometric-purity.toml", "--trials", "200000000", "--coverage", "0.3"),
     "--trials", _KEPT),
    (("certify", "campaign.toml", "--trials", "200000000"), "--trials", _KEPT),
    (("run", "coulometric-purity.toml", "--adaptive", "--coverage", "0.99999"), "--coverage",
     "expected a coverage probability whose adaptive batches fit the limit of 20,000,000 "
     "trials (p below 0.99999; JCGM 101 7.9 asks for batches of 100/(1 - p) = 10,000,001 "
     "trials here), found 0.99999; give a fixed number of trials instead"),
    (("run", "coulometric-purity.toml", "--trials", "0", "--reported-interval",
      "monte_carlo"), "--reported-interval",
     'expected Monte Carlo trials for "monte_carlo", found trials = 0'),
    (("certify", "campaign.toml", "--trials", "0", "--reported-interval", "monte_carlo"),
     "--reported-interval", 'expected a Monte Carlo run of the characterization for '
     '"monte_carlo" (trials > 0, one method), found none'),
])
def test_a_command_line_value_is_named_as_its_option(cli, args, option, message):
    command, name, *rest = args
    line = _bad_option(cli, command, str(DEMO / name), *rest)
    assert line == f"Error: Invalid value for '{option}': {message}"


def test_the_same_limits_from_the_files_still_name_their_keys(demo, cli):
    model = demo / "coulometric-purity.toml"
    _replace(model, "coverage = 0.95", "coverage = 0.95\ntrials = 5")
    code, stdout, stderr = cli("run", str(model))
    assert (code, stdout) == (1, "")
    assert stderr == f"error: {model}: [settings] trials: {_TOO_FEW}\n"
    campaign = demo / "campaign.toml"
    _replace(campaign, "[certificate]\n", '[certificate]\nreported_interval = "monte_carlo"\n')
    code, stdout, stderr = cli("certify", str(campaign), "--trials", "0")
    assert (code, stdout) == (1, "")
    assert stderr == (f"error: {campaign}: [certificate] reported_interval: expected a Monte "
                      "Carlo run of the characterization for \"monte_carlo\" (trials > 0, one "
                      "method), found none\n")


def test_certify_all_names_the_option_for_every_campaign_it_stops(demo, cli, tmp_path):
    (demo / "campaign-methods.toml").unlink()
    summary = tmp_path / "summary.csv"
    code, stdout, stderr = cli("certify-all", str(demo), "--trials", "5", "--json",
                               "--csv", str(summary))
    assert code == 1
    assert json.loads(stdout)["campaigns"][0]["error"] == f"--trials: {_TOO_FEW}"
    assert f'"--trials: {_TOO_FEW}"' in summary.read_text(encoding="utf-8")
    assert stderr == f"warning: campaign.toml: not certified: --trials: {_TOO_FEW}\n"


def test_certify_folder_names_its_own_argument(demo):
    from budget.batch import certify_folder

    (demo / "campaign-methods.toml").unlink()
    batch = certify_folder(demo, trials=5, workers=1)
    assert batch.entries[0].error == f"certify_folder(): trials: {_TOO_FEW}"


def test_certify_names_its_reported_interval_argument(demo):
    from budget import certify, load_campaign
    from budget._errors import BudgetError

    campaign = load_campaign(demo / "campaign.toml")
    with pytest.raises(BudgetError) as caught:
        certify(campaign, trials=0, reported_interval="monte_carlo")
    assert str(caught.value).startswith(f"{demo / 'campaign.toml'}: reported_interval: ")


# --- valid_until against the shelf life -------------------------------------------------

def _valid_until(folder: Path, text: str) -> Path:
    campaign = folder / "campaign.toml"
    _replace(campaign, 'valid_until = "2028-04-30"', f"valid_until = {text}")
    return campaign


def _validity_lines(cli, campaign: Path, *more: str) -> list[str]:
    code, _, stderr = cli("certify", str(campaign), "--trials", "0", *more)
    assert code == 0, stderr
    return [line for line in stderr.splitlines() if "[certificate] valid_until" in line]


def test_the_demo_certificate_ends_within_its_shelf_life(cli):
    # the demo's copy states 2028-04-30, within 36 months of its last determination
    for name in ("vics-as-25a/campaign.toml", "vics-as-25a/campaign-methods.toml",
                 "vics-as-25a-lab-files/campaign.toml"):
        assert _validity_lines(cli, MODELS / name) == []


def test_a_valid_until_beyond_the_shelf_life_from_the_last_run_warns(demo, cli):
    # Found: the demo's original "2028-06-30" is 36 months after the planned release,
    # but the value was measured on 2025-05-08 (the last of the runs' dates) and u_lts
    # covers 36 months, so nothing covered the last 53 days (2028-05-08 to 2028-06-30:
    # 23 + 30 days, counted by hand)
    campaign = _valid_until(demo, '"2028-06-30"')
    assert _validity_lines(cli, campaign) == [
        f"warning: plausibility: {campaign}:36: [certificate] valid_until: 2028-06-30 is 53 "
        "days after the end of the shelf life: u_lts covers 36 months from the last "
        "characterization run (2025-05-08), up to 2028-05-08; end the period of validity "
        "by then, or support a longer shelf_life with stability data"]
    code, stdout, _ = cli("certify", str(campaign), "--trials", "0", "--strict")
    assert (code, stdout) == (3, "")


@pytest.mark.parametrize("text, late", [
    ("2028-05-08", None),  # the last day of 36 calendar months: still covered
    ('"2028-05-09"', 1),
    ("2028-05-09T12:00:00", 1),  # a TOML date-time counts by its day
])
def test_the_last_covered_day_is_the_same_day_36_calendar_months_later(demo, cli, text,
                                                                       late):
    lines = _validity_lines(cli, _valid_until(demo, text))
    if late is None:
        assert lines == []
    else:
        assert len(lines) == 1 and "2028-05-09 is 1 day after the end" in lines[0]


def test_a_shelf_life_in_days_counts_days_and_without_dated_runs_the_models_date(demo,
                                                                                 cli):
    campaign = _valid_until(demo, '"2028-02-02"')
    _replace(campaign, "shelf_life = 36 ", 'shelf_life = "1000 d" ')
    # 2025-05-08 + 1000 d = 2028-02-02 (Python's datetime): covered
    assert _validity_lines(cli, campaign) == []
    # without the runs' date column the model's `measured` day, 2025-05-06, counts
    runs = demo / "determinations.csv"
    rows = [line.split(",") for line in runs.read_text(encoding="utf-8").splitlines()]
    runs.write_text("".join(",".join(r[:2] + r[3:]) + "\n" for r in rows), encoding="utf-8")
    assert dt.date(2025, 5, 6) + dt.timedelta(days=1000) == dt.date(2028, 1, 31)
    lines = _validity_lines(cli, campaign)
    assert len(lines) == 1
    assert ("2028-02-02 is 2 days after the end of the shelf life: u_lts covers 32.8542 months "
            "from the last characterization run (2025-05-06), up to 2028-01-31") in lines[0]


def test_a_valid_until_before_the_characterization_warns(demo, cli):
    campaign = _valid_until(demo, "2024-04-30")
    assert _validity_lines(cli, campaign) == [
        f"warning: plausibility: {campaign}:36: [certificate] valid_until: 2024-04-30 is "
        "before the last characterization run (2025-05-08): the certified value would be "
        "valid for no time; a slip in the year?"]


def test_a_valid_until_that_is_no_date_is_shown_as_written(demo, cli):
    campaign = _valid_until(demo, '"36 months from dispatch"')
    assert _validity_lines(cli, campaign) == []


def test_a_valid_until_day_that_does_not_exist_is_refused(demo, cli):
    campaign = _valid_until(demo, '"2028-02-30"')
    code, stdout, stderr = cli("certify", str(campaign), "--trials", "0")
    assert (code, stdout) == (1, "")
    assert stderr == (f"error: {campaign}:36: [certificate] valid_until: expected a date "
                      "that exists, found '2028-02-30'\n")
