"""The slips laboratories make with valid-looking files, each caught and named, and the
file habits of laboratories, each read to the same certified value as the demo files.

The reference for every "read correctly" case is the demo campaign itself (the same
numbers written differently must certify the same value); the range of validity of the
CIPM-2007 air-density equation is checked against the published statement."""

from __future__ import annotations

import json
import math
from datetime import date, datetime
from pathlib import Path
from typing import Callable

import numpy as np
import pytest
from conftest import MODELS, model
from scipy import stats

from budget._campaign import load_campaign
from budget._certification import anova, certify
from budget._errors import BudgetError, CampaignError
from budget._plausibility import AIR_DENSITY_VALIDITY

DEMO = MODELS / "vics-as-25a"
FILES = tuple(p.name for p in sorted(DEMO.iterdir()) if p.is_file())


def _copy(tmp_path: Path, edits: dict[str, Callable[[str], str]] | None = None) -> Path:
    for name in FILES:
        text = (DEMO / name).read_text(encoding="utf-8")
        if edits and name in edits:
            text = edits[name](text)
        (tmp_path / name).write_text(text, encoding="utf-8")
    return tmp_path / "campaign.toml"


def _column(text: str, name: str, change: Callable[[str], str], header: str | None = None
            ) -> str:
    """A CSV text with one column's cells (and optionally its header) changed."""
    lines = text.strip().split("\n")
    names = lines[0].split(",")
    at = names.index(name)
    if header is not None:
        names[at] = header
    rows = [names]
    for line in lines[1:]:
        cells = line.split(",")
        cells[at] = change(cells[at])
        rows.append(cells)
    return "\n".join(",".join(r) for r in rows) + "\n"


@pytest.fixture(scope="module")
def demo():
    return certify(load_campaign(DEMO / "campaign.toml"), trials=0)


def _certified(path: Path):
    return certify(load_campaign(path), trials=0)


def _plausibility(cert) -> list[str]:
    return [w for w in cert.warnings if w.startswith("plausibility:")]


# --- CIPM-2007 range of validity --------------------------------------------------------

def test_air_density_range_is_the_published_one():
    # Picard, Davis, Gläser, Fujii, Metrologia 45 (2008) 149: the CIPM-2007 equation is
    # stated for 600 hPa <= p <= 1100 hPa and 15 °C <= t <= 27 °C (confirmed through a
    # documentation page that quotes the publication; the paper's own text was not
    # reachable here); relative humidity as a fraction 0..1 (its definition).
    ranges = {label: (low, high, unit) for label, low, high, unit, _ in AIR_DENSITY_VALIDITY}
    assert ranges == {"temperature": (15.0, 27.0, "°C"), "pressure": (60000.0, 110000.0, "Pa"),
                      "relative humidity": (0.0, 1.0, "")}


# --- the slips --------------------------------------------------------------------------

def test_pressure_in_pa_where_the_model_says_hpa(tmp_path):
    def to_hpa(text: str) -> str:
        return text.replace('[inputs.p_air]\nvalue = 100381\nunit = "Pa"',
                            '[inputs.p_air]\nvalue = 1003.81\nunit = "hPa"')
    cert = _certified(_copy(tmp_path, {"coulometric-purity.toml": to_hpa}))
    runs = tmp_path / "determinations.csv"
    assert f"plausibility: {runs}:2: column 'p_air': 100381 hPa differs from the model's " \
        "estimate 1003.81 hPa by more than a factor 3 (a factor 10^2: a unit slip?)" \
        in cert.warnings
    assert any(w.startswith("plausibility: air_density() pressure 1.00381e+07 Pa (from p_air)"
                            f" in {runs}, row 2 is outside the range of validity 600 hPa to "
                            "1100 hPa") for w in cert.warnings)


def test_pressure_with_its_unit_in_the_header_is_converted(tmp_path, demo):
    def to_hpa(text: str) -> str:
        return text.replace('[inputs.p_air]\nvalue = 100381\nunit = "Pa"',
                            '[inputs.p_air]\nvalue = 1003.81\nunit = "hPa"')
    path = _copy(tmp_path, {"coulometric-purity.toml": to_hpa, "determinations.csv":
                            lambda t: _column(t, "p_air", str, "p_air / Pa")})
    cert = _certified(path)
    assert cert.certified_value == pytest.approx(demo.certified_value, rel=1e-13)
    assert [w.split(": ")[-1] for w in _plausibility(cert)] == \
        [w.split(": ")[-1] for w in _plausibility(demo)]


def test_relative_humidity_in_percent_where_a_fraction_is_expected(tmp_path):
    path = _copy(tmp_path, {"determinations.csv": lambda t: _column(
        t, "h_air", lambda c: f"{100 * float(c):g}")})
    cert = _certified(path)
    runs = tmp_path / "determinations.csv"
    assert any(w.startswith("plausibility: air_density() relative humidity 34 (from h_air) "
                            f"in {runs}, row 2 is outside the range of validity 0 to 1") for w
               in cert.warnings)
    assert any(w.startswith(f"plausibility: {runs}:2: column 'h_air': 34 differs") for w
               in cert.warnings)


def test_air_temperature_in_kelvin(tmp_path, demo):
    kelvin = _copy(tmp_path, {"determinations.csv": lambda t: _column(
        t, "t_air", lambda c: f"{float(c) + 273.15:.2f}")})
    cert = _certified(kelvin)
    assert any(w.startswith("plausibility: air_density() temperature 294.95 °C (from t_air)")
               for w in cert.warnings)
    (tmp_path / "determinations.csv").write_text(_column(
        (DEMO / "determinations.csv").read_text(), "t_air",
        lambda c: f"{float(c) + 273.15:.2f}", "t_air [K]"))
    converted = _certified(kelvin)
    assert converted.certified_value == pytest.approx(demo.certified_value, rel=1e-12)


def test_sample_mass_in_mg_where_the_model_has_g(tmp_path, demo):
    mg = _copy(tmp_path, {"determinations.csv": lambda t: _column(
        t, "m_c", lambda c: f"{1000 * float(c):.3f}")})
    cert = _certified(mg)
    runs = tmp_path / "determinations.csv"
    assert f"plausibility: {runs}:2: column 'm_c': 524.652 g differs from the model's " \
        "estimate 0.524652 g by more than a factor 3 (a factor 10^3: a unit slip?)" \
        in cert.warnings
    (tmp_path / "determinations.csv").write_text(_column(
        (DEMO / "determinations.csv").read_text(), "m_c",
        lambda c: f"{1000 * float(c):.3f}", "m_c / mg"))
    assert _certified(mg).certified_value == pytest.approx(demo.certified_value, rel=1e-12)


def test_estimate_factor_can_be_changed_per_input(tmp_path):
    mg = _copy(tmp_path, {
        "determinations.csv": lambda t: _column(t, "m_c", lambda c: f"{1000 * float(c):.3f}"),
        "campaign.toml": lambda t: t.replace("scatter_covers = []",
                                             "scatter_covers = []\nestimate_factor = "
                                             "{ default = 3, m_c = 2000 }")})
    assert not any("column 'm_c'" in w for w in _certified(mg).warnings)


def test_stability_times_in_days_with_a_shelf_life_in_months(tmp_path, demo):
    def days(text: str) -> str:
        return _column(text, "time", lambda c: f"{float(c) * 30.4375:g}", "time / d")
    path = _copy(tmp_path, {"stability.csv": days})
    cert = _certified(path)
    # 36 months and the times in days: the same u_lts as the demo's months
    assert cert.stability.u_lts == pytest.approx(demo.stability.u_lts, rel=1e-12)
    assert cert.stability.time_unit == "month"
    unnamed = _copy(tmp_path, {"stability.csv": lambda t: _column(
        t, "time", lambda c: f"{float(c) * 30.4375:g}"), "campaign.toml": lambda t: t.replace(
        'time_unit = "month"\n', "")})
    warnings = _certified(unnamed).warnings
    assert f"plausibility: {tmp_path / 'stability.csv'}: no time unit stated for the " \
        "stability study (times and shelf life are taken in the same, unnamed unit); " \
        "declare time_unit = \"month\" or write it in the header, 'time / month'" in warnings


def test_shelf_life_as_text_with_its_unit(tmp_path, demo):
    path = _copy(tmp_path, {"campaign.toml": lambda t: t.replace(
        "shelf_life = 36 ", 'shelf_life = "3 years" ').replace('time_unit = "month"\n', ""),
        "stability.csv": lambda t: _column(t, "time", str, "time / month")})
    cert = _certified(path)
    assert (cert.stability.shelf_life, cert.stability.time_unit) == (36.0, "month")
    assert cert.stability.u_lts == pytest.approx(demo.stability.u_lts, rel=1e-12)


def test_shelf_life_longer_than_the_study_is_flagged(demo):
    assert (f"plausibility: {DEMO / 'stability.csv'}: the shelf life 36 month is longer than "
            "the span of the stability study, 24 month: u_lts extrapolates the trend beyond "
            "the data") in demo.warnings


def test_homogeneity_and_stability_data_in_another_unit(tmp_path, demo):
    in_g_per_g = {"campaign.toml": lambda t: t.replace('unit = "%"', 'unit = "g/g"', 1)}
    cert = _certified(_copy(tmp_path, in_g_per_g))
    assert cert.certified_value == pytest.approx(demo.certified_value / 100, rel=1e-12)
    flagged = _plausibility(cert)
    assert any(w.startswith("plausibility: homogeneity: the homogeneity mean 99.98") for w in
               flagged)
    assert any(w.startswith("plausibility: stability: the stability mean 99.98") for w in
               flagged)
    declared = {"campaign.toml": lambda t: t.replace('unit = "%"', 'unit = "g/g"', 1).replace(
        'data = "homogeneity.csv"', 'data = "homogeneity.csv"\nvalue_unit = "%"').replace(
        'data = "stability.csv"', 'data = "stability.csv"\nvalue_unit = "%"').replace(
        "u_short_term = 0.0005", "u_short_term = 0.000005").replace(
        "expanded = 0.034\n", 'expanded = 0.034\nunit = "%"\n')}
    cert = _certified(_copy(tmp_path, declared))
    assert cert.expanded_uncertainty == pytest.approx(demo.expanded_uncertainty / 100, rel=1e-9)
    assert cert.comparisons[0].E_n == pytest.approx(demo.comparisons[0].E_n, rel=1e-9)
    assert [w for w in _plausibility(cert) if "shelf life" not in w] == []


def test_comparison_in_its_own_unit(tmp_path, demo):
    path = _copy(tmp_path, {"campaign.toml": lambda t: t.replace(
        "value = 99.978\nexpanded = 0.034", 'value = 0.99978\nexpanded = 0.00034\nunit = "g/g"')})
    score = _certified(path).comparisons[0]
    assert score.E_n == pytest.approx(demo.comparisons[0].E_n, rel=1e-9)


def test_mass_percent_is_refused_with_a_suggestion():
    with pytest.raises(BudgetError) as caught:
        model("""
            title = "t"
            [measurands.w]
            equation = "m / m0"
            unit = "mass %"
            [inputs.m]
            value = 1
            u = 0.1
            [inputs.m0]
            value = 2
            exact = true
            """)
    assert str(caught.value) == (
        "test.toml:5: [measurands.w] unit: expected one unit, or units joined by '*' or '/', "
        "found 'mass %': two names side by side, which pint would read as their product; "
        "write '%' (or 'g/g', 'mg/g' for a mass fraction)")


@pytest.mark.parametrize("unit, flagged", [("deg", True), ("cmol/mol", True), ("%", False),
                                           ("mg/g", False), ("g/kg", False), ("1", False)])
def test_a_mass_fraction_in_a_unit_that_is_not_a_mass_ratio(unit, flagged):
    made = model(f"""
        title = "t"
        [measurands.w]
        equation = "m / m0"
        unit = "{unit}"
        description = "mass fraction of the analyte"
        [inputs.m]
        value = 1
        u = 0.1
        [inputs.m0]
        value = 2
        exact = true
        """)
    message = (f"plausibility: measurand 'w' is described as a mass fraction or purity but "
               f"its unit '{unit}' is not a ratio of masses; use '%', 'g/g', 'mg/g' or '1'")
    assert (message in made.warnings) is flagged


# --- the habits -------------------------------------------------------------------------

def _locale(text: str) -> str:
    """A demo CSV as a German spreadsheet saves it: ';' and decimal commas."""
    return "\n".join(line.replace(",", ";").replace(".", ",")
                     for line in text.split("\n"))


def test_semicolons_and_decimal_commas(tmp_path, demo):
    path = _copy(tmp_path, {name: _locale for name in ("determinations.csv",
                                                        "homogeneity.csv", "stability.csv")})
    cert = _certified(path)
    assert cert.certified_value == pytest.approx(demo.certified_value, rel=1e-15)
    assert cert.expanded_uncertainty == pytest.approx(demo.expanded_uncertainty, rel=1e-12)


@pytest.mark.parametrize("encoding", ["utf-8-sig", "utf-16", "cp1252"])
def test_encodings_of_the_runs_file(tmp_path, demo, encoding):
    path = _copy(tmp_path)
    text = (DEMO / "determinations.csv").read_text().replace("D1,", "Dµ1,")
    (tmp_path / "determinations.csv").write_bytes(text.encode(encoding))
    cert = _certified(path)
    assert cert.characterization.labels[0] == "Dµ1"
    assert cert.certified_value == pytest.approx(demo.certified_value, rel=1e-15)


def test_xlsx_runs_by_sheet_name(tmp_path, demo):
    import openpyxl

    path = _copy(tmp_path, {"campaign.toml": lambda t: t.replace(
        'runs = "determinations.csv"', 'runs = "lab.xlsx"\nsheet = "coulometry"')})
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "coulometry"
    lines = (DEMO / "determinations.csv").read_text().strip().split("\n")
    sheet.append(lines[0].split(","))
    for line in lines[1:]:
        cells = line.split(",")
        day = datetime.fromisoformat(cells[2])  # typed as a date in the workbook
        sheet.append(cells[:2] + [day] + [float(c) for c in cells[3:]])
    book.save(tmp_path / "lab.xlsx")
    cert = _certified(path)
    assert cert.certified_value == pytest.approx(demo.certified_value, rel=1e-15)


def test_missing_replicates_are_left_out_and_listed(tmp_path, cli, monkeypatch):
    def lose(text: str) -> str:
        return text.replace("U-009,2,99.9983", "U-009,2,NA")
    path = _copy(tmp_path, {"homogeneity.csv": lose, "campaign.toml": lambda t: t.replace(
        'data = "homogeneity.csv"', 'data = "homogeneity.csv"\nmissing = ["NA", "-"]')})
    cert = _certified(path)
    assert cert.homogeneity.counts[0] == 2
    monkeypatch.chdir(tmp_path)
    code, stdout, stderr = cli("certify", "--trials", "0", "--json", "campaign.toml")
    assert code == 0
    assert json.loads(stdout)["excluded"] == [{
        "file": "homogeneity.csv", "row": 3, "column": "value",
        "reason": "homogeneity replicate left out: missing value ('NA')"}]
    code, stdout, stderr = cli("certify", "--trials", "0", "campaign.toml")
    assert "rows left out (1):\n  homogeneity.csv:3: column 'value': homogeneity replicate " \
        "left out: missing value ('NA')" in stdout


def test_a_missing_run_value_is_an_error_naming_row_and_column(tmp_path):
    path = _copy(tmp_path, {"determinations.csv": lambda t: t.replace(",0.524652,", ",,")})
    with pytest.raises(CampaignError) as caught:
        load_campaign(path)
    assert str(caught.value) == (
        f"{tmp_path / 'determinations.csv'}:2: column 'm_c': expected a number, found an "
        "empty cell (a missing value is not allowed in this table; remove the row or give "
        "the value)")


def test_stability_dates_become_elapsed_months(tmp_path, demo):
    starts = {"0": "2025-06-30", "12": "2026-06-30", "24": "2027-06-30"}
    path = _copy(tmp_path, {"stability.csv": lambda t: _column(t, "time", starts.get)})
    cert = _certified(path)
    # elapsed months by the standard library: days / 30.4375 (pint's month)
    reference = [(date.fromisoformat(d) - date(2025, 6, 30)).days / 30.4375
                 for d in starts.values()]
    assert sorted(set(cert.stability.times)) == pytest.approx(reference, rel=1e-12)
    fit = stats.linregress(np.repeat(reference, 3), demo.stability.values)
    assert cert.stability.u_lts == pytest.approx(36 * fit.stderr, rel=1e-10)


def test_day_first_dates_with_a_declared_origin(tmp_path):
    starts = {"0": "01.07.2025", "12": "01.07.2026", "24": "01.07.2027"}
    path = _copy(tmp_path, {"stability.csv": lambda t: _column(t, "time", starts.get),
                            "campaign.toml": lambda t: t.replace(
                                'time_unit = "month"', 'time_unit = "month"\n'
                                'time_origin = 2025-06-30\ndates = "day-first"')})
    times = sorted(set(_certified(path).stability.times))
    assert times[0] == pytest.approx(1 / 30.4375, rel=1e-12)


def test_single_replicate_units_enter_the_anova():
    # scipy.stats.f_oneway accepts groups of one value: they add to the between-unit sum
    groups = [np.array([10.1, 10.3, 10.2]), np.array([10.6]), np.array([9.9, 10.0]),
              np.array([10.4, 10.5, 10.2])]
    result = anova(groups)
    assert result.F == pytest.approx(stats.f_oneway(*groups).statistic, rel=1e-12)
    assert (result.dof_between, result.dof_within) == (3, 5)


def test_single_replicate_units_are_accepted_by_a_campaign(tmp_path):
    path = _copy(tmp_path, {"homogeneity.csv": lambda t: t.replace("U-009,2,99.9983\n", "")
                            .replace("U-009,3,99.9812\n", "")})
    cert = _certified(path)
    assert cert.homogeneity.counts[0] == 1


def test_only_single_replicates_are_refused_with_the_reason(tmp_path):
    path = _copy(tmp_path, {"homogeneity.csv": lambda t: "unit,value\nA,1\nB,2\nC,3\n"})
    with pytest.raises(CampaignError) as caught:
        load_campaign(path)
    assert str(caught.value) == (
        f"{tmp_path / 'homogeneity.csv'}: expected at least one unit with 2 or more "
        "replicates, found a single replicate for every unit: the within-unit variance "
        "cannot be estimated")


# --- export and --strict ---------------------------------------------------------------

def test_csv_and_xlsx_export_carry_the_json_names(tmp_path, cli):
    import csv

    import openpyxl

    target = MODELS / "reference" / "eurachem-a2-naoh.toml"
    code, stdout, _ = cli("run", str(target), "--trials", "0", "--json")
    document = json.loads(stdout)
    code, _, _ = cli("run", str(target), "--trials", "0", "--csv", str(tmp_path / "b.csv"),
                     "--xlsx", str(tmp_path / "b.xlsx"))
    assert code == 0
    with open(tmp_path / "b.csv", encoding="utf-8") as stream:
        rows = list(csv.DictReader(stream))
    contributions = document["measurands"][0]["contributions"]
    assert list(rows[0]) == ["measurand", "measurand_unit", *contributions[0]]
    for row, entry in zip(rows, contributions):
        assert row["input"] == entry["input"]
        assert float(row["sensitivity"]) == entry["sensitivity"]
    book = openpyxl.load_workbook(tmp_path / "b.xlsx")
    assert book.sheetnames == ["budget", "measurands"]
    cells = [c.value for c in book["measurands"][2]][:7]
    first = document["measurands"][0]
    assert cells[:2] == [first["name"], first["unit"]]
    assert cells[4] == first["dof"]  # None where ν is infinite, as in the JSON
    assert [cells[2], cells[3], cells[5], cells[6]] == pytest.approx(
        [first[k] for k in ("value", "u", "k", "U")], rel=1e-15)


def test_certify_exports_the_components(tmp_path, cli, demo):
    code, _, _ = cli("certify", str(DEMO / "campaign.toml"), "--trials", "0", "--csv",
                     str(tmp_path / "c.csv"))
    assert code == 0
    lines = (tmp_path / "c.csv").read_text().strip().split("\n")
    assert lines[0] == "component,u,share,unit"
    name, u, share, unit = lines[1].split(",")
    assert (name, unit) == ("characterization", "%")
    assert float(u) == demo.components[0][1]
    assert math.isclose(float(share), demo.shares["characterization"], rel_tol=1e-15)


def test_strict_turns_a_warning_into_exit_status_3_and_writes_nothing(tmp_path, cli):
    report = tmp_path / "report.html"
    code, stdout, stderr = cli("certify", str(DEMO / "campaign.toml"), "--trials", "0",
                               "--strict", "--html", str(report))
    assert (code, stdout) == (3, "")
    assert stderr.endswith("error: --strict: 1 warning; no output written\n")
    assert "warning: plausibility:" in stderr
    assert not report.exists()


@pytest.mark.parametrize("unit", ["cmol/mol", "deg"])
def test_a_campaign_unit_that_is_no_mass_ratio(tmp_path, unit):
    path = _copy(tmp_path, {"campaign.toml": lambda t: t.replace('unit = "%"',
                                                                  f'unit = "{unit}"', 1)})
    assert (f"plausibility: the certified value ('w', a mass fraction or purity) is given in "
            f"'{unit}', which is not a ratio of masses; use '%', 'g/g', 'mg/g' or '1'"
            ) in _certified(path).warnings


@pytest.mark.parametrize("edit, message", [
    (("shelf_life = 36 ", 'shelf_life = "3.3.3 months" '),
     "[stability] shelf_life: expected a shelf life as a number or as \"36 month\", found "
     "'3.3.3 months'"),
    (('time_unit = "month"', 'time_unit = "kg"'),
     "stability.csv: column 'time': expected a time unit (such as month, d, year), found 'kg' "
     "([mass])"),
])
def test_bad_time_declarations_are_refused(tmp_path, edit, message):
    path = _copy(tmp_path, {"campaign.toml": lambda t: t.replace(*edit)})
    with pytest.raises(CampaignError) as caught:
        load_campaign(path)
    assert str(caught.value).endswith(message)


def test_all_dates_missing_is_refused_without_traceback(tmp_path):
    path = _copy(tmp_path, {"stability.csv": lambda t: "time,value\n-,1\n-,2\n-,3\n",
                            "campaign.toml": lambda t: t.replace(
                                'data = "stability.csv"',
                                'data = "stability.csv"\nmissing = ["-"]')})
    with pytest.raises(CampaignError, match="expected at least 3 points at 2 or more "
                                            "different times, found 0 at 0"):
        load_campaign(path)


def test_xlsx_export_without_openpyxl_writes_nothing(tmp_path, cli, monkeypatch):
    import sys

    monkeypatch.setitem(sys.modules, "openpyxl", None)
    report = tmp_path / "r.html"
    code, stdout, stderr = cli("run", str(MODELS / "reference" / "eurachem-a2-naoh.toml"),
                               "--trials", "0", "--html", str(report), "--xlsx",
                               str(tmp_path / "b.xlsx"))
    assert (code, stdout) == (1, "")
    assert stderr == (f"error: {tmp_path / 'b.xlsx'}: expected openpyxl to be installed, found "
                      "none: reading and writing .xlsx workbooks needs openpyxl, the optional "
                      "'xlsx' extra: pip install openpyxl (or save the sheet as CSV)\n")
    assert not report.exists() and not (tmp_path / "b.xlsx").exists()


def test_air_density_guard_covers_the_runs_of_further_methods(tmp_path):
    # a second coulometric series whose runs file has the humidity in % (a slip)
    second = _column((DEMO / "determinations.csv").read_text(), "h_air",
                     lambda c: f"{100 * float(c):g}")
    path = _copy(tmp_path, {"campaign.toml": lambda t: t.replace(
        "[homogeneity]", '[[method]]\nlabel = "second series"\n'
        'model = "coulometric-purity.toml"\nmeasurand = "w"\nruns = "second.csv"\n\n'
        "[homogeneity]", 1)})
    (tmp_path / "second.csv").write_text(second)
    warnings = load_campaign(path).warnings
    assert any(w.startswith("plausibility: air_density() relative humidity 34 (from h_air) "
                            f"in {tmp_path / 'second.csv'}, row 2 is outside") for w in warnings)
    assert not any("column 'h_air'" in w for w in warnings)  # no factor for further methods
