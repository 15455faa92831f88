"""Certification campaigns and their data files at the edges (helper h42's sweep): each
careless or hostile input is one ``error:`` line that names the file, the key or row, what
was expected and what was found, with exit status 1 and nothing written."""

from __future__ import annotations

import json
import math
import shutil
from pathlib import Path
from typing import Callable

import numpy as np
import pytest

from conftest import MODELS

DEMO = MODELS / "vics-as-25a"

Edit = Callable[[Path], None]


def _edit(name: str, old: str, new: str) -> Edit:
    def edit(folder: Path) -> None:
        target = folder / name
        text = target.read_text(encoding="utf-8")
        assert old in text, (name, old)
        target.write_text(text.replace(old, new, 1), encoding="utf-8")
    return edit


def _write(name: str, text: str) -> Edit:
    def edit(folder: Path) -> None:
        (folder / name).write_text(text, encoding="utf-8")
    return edit


def _keep_lines(name: str, count: int) -> Edit:
    def edit(folder: Path) -> None:
        target = folder / name
        lines = target.read_text(encoding="utf-8").splitlines(keepends=True)
        target.write_text("".join(lines[:count]), encoding="utf-8")
    return edit


def _all(*edits: Edit) -> Edit:
    def edit(folder: Path) -> None:
        for each in edits:
            each(folder)
    return edit


def _methods(*edits: Edit) -> Edit:
    """The three-method campaign of the demo, edited, in place of campaign.toml."""
    def edit(folder: Path) -> None:
        shutil.copy(folder / "campaign-methods.toml", folder / "campaign.toml")
        for each in edits:
            each(folder)
    return edit


CASES: dict[str, tuple[Edit, str]] = {
    # determination D2 (row 3) weighed as 0 g: w = M·Q/(zF·m) divides by zero; the
    # message named the campaign and 'row 2' (a count from 1 over data rows), not the
    # runs file and its row 3 as a spreadsheet shows it
    "run_dividing_by_zero": (
        _edit("determinations.csv", "0.501407", "0"),
        "determinations.csv:3: expected run values for which 'w' is a finite number, found "
        "inf (a division by zero or a function outside its domain in "
        "'M * Q / (z * F * m)')"),
    # a single water determination: the message named [characterization] and not the
    # impurity whose runs file had one row
    "impurity_with_one_run": (
        _methods(_keep_lines("water.csv", 2)),
        "campaign.toml:35: [method.impurity] runs: expected at least 2 runs in "
        "'water.csv', found 1"),
    # HPLC impurities typed as 120 (%): the mass balance certified -20 %, and the
    # combined value of three methods with it, 37.2 %, with only warnings
    "impurities_over_one": (
        _methods(_edit("campaign.toml", "value = 0.0060", "value = 120")),
        "campaign.toml:26: [method] impurity: expected impurities that sum to at most 100 %, "
        "found 120.005 % (water 0.00438804 %, related organic substances (HPLC) 120 %, "
        "inorganic impurities other than K (ICP-MS) 0.001 %): the mass balance would give a "
        "negative purity; is a value in another unit?"),
    # a shelf life with a unit of another kind: the message spoke of a 'column' of the
    # campaign file, without its line and table; with no time_unit it was taken as is
    "shelf_life_in_kilograms": (
        _edit("campaign.toml", "shelf_life = 36 ", 'shelf_life = "3 kg" '),
        "campaign.toml:23: [stability] shelf_life: expected a shelf life in a unit of time "
        "(such as month, d, year), found 'kg' ([mass])"),
    "shelf_life_in_kilograms_without_time_unit": (
        _all(_edit("campaign.toml", "shelf_life = 36 ", 'shelf_life = "3 kg" '),
             _edit("campaign.toml", 'time_unit = "month"', "")),
        "campaign.toml:23: [stability] shelf_life: expected a shelf life in a unit of time "
        "(such as month, d, year), found 'kg' ([mass])"),
    # u = 1e300 for a stated impurity, or 1e200 in a method's model: OverflowError
    # tracebacks where u² entered the covariance of the methods
    "impurity_u_beyond_the_whole": (
        _methods(_edit("campaign.toml", "u = 0.0025", "u = 1e300")),
        "campaign.toml:40: [method.impurity] u: expected a standard uncertainty of at most "
        "the whole sample, 100 %, found 1e+300 %"),
    "method_u_too_large_to_square": (
        _methods(_edit("weight-titration.toml", "expanded = 0.010", "expanded = 1e200")),
        "campaign.toml: [method] expected the result of method 'weight titration' with a "
        "standard uncertainty of at most 1e+150 % (its square enters the covariance of the "
        "methods; limits: docs/limits.md), found 4.99914e+199 %"),
    # an unclosed quote in a long file: Python's csv message leaked, at the line where
    # the reader gave up (8814) instead of where the quote opened
    "unclosed_quote_in_a_long_file": (
        _write("homogeneity.csv", 'unit,value\n"U-1,99.98\n'
               + "".join(f"U-{i % 10},99.98\n" for i in range(20000))),
        "homogeneity.csv:2: expected cells of at most 131072 characters, found a longer one "
        "in the row that starts here (a quote \" without its closing quote, for one, makes "
        "the rest of the file one cell)"),
    # line ends of Excel's "CSV (Macintosh)": Python's csv message leaked
    "lone_carriage_returns_are_line_ends": (
        _write("homogeneity.csv", "unit,value\rA,99.98\rA,abc\rB,99.97\rB,99.99\r"),
        "homogeneity.csv:3: column 'value': expected a finite number with a decimal point, "
        "found 'abc'"),
    # a 'date' column of spreadsheet day numbers was read as elapsed months (a slope 30
    # times too small, silently); an impossible date was "expected a finite number"
    "spreadsheet_day_numbers_as_dates": (
        _write("stability.csv", "date,value\n45662,99.985\n45843,99.986\n46027,99.987\n"),
        "stability.csv:2: column 'date': expected a date (ISO 8601 such as 2025-06-30, or "
        "31.12.2025), found '45662' (a spreadsheet's day number? format the cells as dates; "
        "elapsed times go in a column 'time')"),
    "impossible_date": (
        _write("stability.csv", "date,value\n2025-01-05,99.985\n2025-02-30,99.986\n"
               "2026-01-05,99.987\n"),
        "stability.csv:3: column 'date': expected a date (ISO 8601 such as 2025-06-30, or "
        "31.12.2025), found '2025-02-30'"),
    # the campaign's unit of another dimension was found only at certification, and the
    # message had no line
    "campaign_unit_of_another_dimension": (
        _edit("campaign.toml", 'unit = "%"', 'unit = "kg"'),
        "campaign.toml:7: unit: expected a unit of the measurand's dimension ('%'), found "
        "'kg'"),
    # a right-to-left override in a unit label: 'U-0\u202e09' was a unit of its own that
    # a report shows as another label; an escape sequence in a runs label went through
    "bidirectional_override_in_a_label": (
        _edit("homogeneity.csv", "U-009,1", "U-0\u202e09,1"),
        "homogeneity.csv:2: column 'unit': expected text without control characters, found "
        "U+202E RIGHT-TO-LEFT OVERRIDE at position 4"),
    "escape_in_a_runs_label": (
        _edit("determinations.csv", "D2,", "D\x1b[31m2,"),
        "determinations.csv:3: column 'id': expected text without control characters, found "
        "U+001B ESCAPE at position 2"),
    "characterization_with_one_run": (
        _keep_lines("determinations.csv", 2),
        "campaign.toml:13: [characterization] runs: expected at least 2 runs in "
        "'determinations.csv', found 1"),
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_careless_campaign_input_is_one_error_line(cli, tmp_path: Path, name: str) -> None:
    edit, message = CASES[name]
    folder = tmp_path / "batch"
    shutil.copytree(DEMO, folder)
    edit(folder)
    report = folder / "report.html"
    code, stdout, stderr = cli("certify", "--trials", "0", "--html", str(report),
                               str(folder / "campaign.toml"))
    assert (code, stdout) == (1, "")
    assert stderr == f"error: {folder}/{message}\n"
    assert not report.exists() and not list(folder.glob(".*.tmp"))


def test_certify_all_lists_a_campaign_file_that_is_not_valid_toml(cli, tmp_path: Path) -> None:
    # an unclosed quote in one campaign: it was skipped as "not a campaign", and the
    # summary said every campaign had been certified
    shutil.copytree(DEMO, tmp_path / "good", ignore=shutil.ignore_patterns("campaign-*"))
    shutil.copytree(DEMO, tmp_path / "slip", ignore=shutil.ignore_patterns("campaign-*"))
    _edit("campaign.toml", 'title = "Certification', 'title = Certification')(
        tmp_path / "slip")
    (tmp_path / "windows.toml").write_bytes(b'title = "storage at 20 \xb0C"\n'
                                            b'[characterization]\n')
    code, stdout, stderr = cli("certify-all", "--json", str(tmp_path))
    assert code == 1
    document = json.loads(stdout)
    assert document["summary"]["campaigns"] == 3 and document["summary"]["certified"] == 1
    errors = {c["campaign"]: c["error"] for c in document["campaigns"]}
    assert errors["good/campaign.toml"] is None
    assert errors["slip/campaign.toml"] == (f"{tmp_path}/slip/campaign.toml:5: expected "
                                            "valid TOML, found a syntax error: Invalid value")
    assert errors["windows.toml"] == (f"{tmp_path}/windows.toml: expected UTF-8 text, found "
                                      "an undecodable byte at byte 24")
    assert "warning: slip/campaign.toml: not certified" in stderr


LINE_MODEL = """title = "a calibration line"
[measurands.b_30]
equation = "y1 + y2 * (t - 20)"
[fits.line]
file = "line.csv"
x = "t_k"
y = "b_k"
coefficients = ["y1", "y2"]
[inputs.t]
value = 30
exact = true
"""


@pytest.mark.parametrize(("readings", "warned"), [
    ("-0.1,-0.1,-0.1,-0.1", True),      # constant readings: s = 0
    ("-0.1,-0.2,-0.3,-0.4", True),      # an exact straight line: s at rounding level
    ("-0.1,-0.2,-0.31,-0.4", False)])   # measured readings scatter
def test_a_fit_with_zero_residual_is_a_warning(cli, tmp_path: Path, readings: str,
                                               warned: bool) -> None:
    # before, the line's coefficients came out with u ≈ 1e-15 and no word of it
    rows = "".join(f"{21 + k},{b}\n" for k, b in enumerate(readings.split(",")))
    (tmp_path / "line.csv").write_text("t_k,b_k\n" + rows, encoding="utf-8")
    (tmp_path / "line.toml").write_text(LINE_MODEL, encoding="utf-8")
    code, stdout, stderr = cli("run", "--trials", "0", str(tmp_path / "line.toml"))
    assert code == 0
    assert ("warning: [fits.line]: the points lie exactly on the fitted curve (zero "
            "residual, s = " in stderr) is warned


CHARGE_MODEL = """title = "charge from a record"
[measurands.Q_C]
equation = "Q"
unit = "C"
[records.Q]
kind = "charge"
file = "record.csv"
x = "t"
y = "i"
current_u = 0.002
"""


@pytest.mark.parametrize(("times", "gap"), [
    ("0,1,2,300,301", "from 2 s at row 4 to 300 s at row 5, 298 times the usual step of 1 s"),
    ("0,1,3,6,10", None)])   # uneven steps, no gap
def test_a_gap_in_a_current_record_is_a_warning(cli, tmp_path: Path, times: str,
                                                gap: str | None) -> None:
    # a logger that stopped for 298 s: the charge was integrated across the gap silently
    rows = "".join(f"{t},{10 - k}\n" for k, t in enumerate(times.split(",")))
    (tmp_path / "record.csv").write_text("t [s],i [mA]\n" + rows, encoding="utf-8")
    (tmp_path / "charge.toml").write_text(CHARGE_MODEL, encoding="utf-8")
    code, stdout, stderr = cli("run", "--trials", "0", str(tmp_path / "charge.toml"))
    assert code == 0
    warned = [line for line in stderr.splitlines() if "has a gap" in line]
    if gap is None:
        assert warned == []
    else:
        assert warned == [f"warning: [records.Q]: record.csv has a gap in t: {gap}; the "
                          "trapezoidal rule bridges it with a straight line, and what the "
                          "current did there is not known: check that no readings were lost"]


@pytest.mark.parametrize(("edit", "warning"), [
    # a further method's runs are checked for the sign only: the warning said "by more
    # than a factor inf (opposite sign)"
    (_methods(_edit("water.csv", "0.4989", "-0.4989")),
     "water.csv:2: column 'Q': -0.4989 C has the opposite sign of the model's estimate "
     "10.7321 C"),
    (_edit("determinations.csv", "0.501407", "-0.501407"),
     "determinations.csv:3: column 'm_c': -0.501407 g has the opposite sign of the model's "
     "estimate 0.524652 g")])
def test_a_run_value_of_the_wrong_sign_is_named_so(cli, tmp_path: Path, edit: Edit,
                                                   warning: str) -> None:
    _warns(cli, tmp_path, edit, warning)


def _warns(cli, tmp_path: Path, edit: Edit, warning: str) -> None:
    """The demo campaign, edited, is certified with ``warning`` among the plausibility
    warnings."""
    folder = tmp_path / "batch"
    shutil.copytree(DEMO, folder)
    edit(folder)
    code, stdout, stderr = cli("certify", "--trials", "0", str(folder / "campaign.toml"))
    assert code == 0
    assert f"warning: plausibility: {folder}/{warning}\n" in stderr


@pytest.mark.parametrize("edit", [
    _edit("stability.csv", "\n0,1,", "\n1e300,1,"),         # Σ(t − t̄)² was ∞
    # Σ(t − t̄)² underflowed to 0
    _write("stability.csv", "time,value\n0,99.9846\n12e-250,99.988\n24e-250,99.9849\n"),
    _methods(_edit("stability-25C.csv", "\n0,1,", "\n1e300,1,"),
             _edit("campaign.toml", 'evaluation = "separately"', 'evaluation = "together"'))])
def test_stability_times_near_the_ends_of_doubles_give_a_slope(cli, tmp_path: Path,
                                                               edit: Edit) -> None:
    # a ZeroDivisionError traceback (slope 0/0) before the times were scaled like the values
    folder = tmp_path / "batch"
    shutil.copytree(DEMO, folder)
    edit(folder)
    code, stdout, stderr = cli("certify", "--json", "--trials", "0",
                               str(folder / "campaign.toml"))
    assert code == 0, stderr
    stability = json.loads(stdout)["stability"]
    assert math.isfinite(stability["slope"]) and math.isfinite(stability["u_lts"])


def test_stability_trend_agrees_with_scipy_for_scaled_times() -> None:
    # the slope and s(b₁) of times in units of 1e-250 are those of the same points in
    # units of 1 scaled back, checked against scipy.stats.linregress
    from scipy.stats import linregress

    from budget._certification import trend

    times = np.array([0.0, 0.0, 12.0, 12.0, 24.0, 24.0])
    values = np.array([99.9846, 99.983, 99.988, 99.9902, 99.9849, 99.9842])
    expected = linregress(times, values)
    scaled = trend(times * 1e-250, values, 36e-250)
    assert scaled.slope * 1e-250 == pytest.approx(expected.slope, rel=1e-12)
    assert scaled.u_slope * 1e-250 == pytest.approx(expected.stderr, rel=1e-12)
    assert scaled.u_lts == pytest.approx(expected.stderr * 36, rel=1e-12)


@pytest.mark.parametrize(("edit", "warning"), [
    # one replicate typed without its decimal point: the certificate read (100 ± 110) %
    # with no word about the cause
    (_edit("homogeneity.csv", "99.9854", "999.854"),
     "homogeneity.csv:2: column 'value': 999.854 % differs from the median 99.9867 % of the "
     "homogeneity study by more than a factor 3 (a factor 10^1: a unit slip?)"),
    (_edit("stability.csv", "99.9846", "999.846"),
     "stability.csv:2: column 'value': 999.846 % differs from the median 99.9871 % of the "
     "stability study by more than a factor 3 (a factor 10^1: a unit slip?)")])
def test_a_slipped_study_value_is_named_with_its_row(cli, tmp_path: Path, edit: Edit,
                                                     warning: str) -> None:
    _warns(cli, tmp_path, edit, warning)


def test_the_demo_studies_raise_no_slip_warning(cli) -> None:
    code, stdout, stderr = cli("certify", "--trials", "0", str(DEMO / "campaign.toml"))
    assert code == 0 and "from the median" not in stderr


def test_demo_refuses_a_file_where_it_needs_a_folder_before_copying(cli, tmp_path: Path
                                                                    ) -> None:
    # before: 9 files copied, then "found File exists", and the half-copied demo stayed
    target = tmp_path / "demo"
    target.mkdir()
    (target / "velmora").write_text("", encoding="utf-8")
    code, stdout, stderr = cli("demo", str(target))
    assert (code, stdout) == (1, "")
    assert stderr == (f"error: {target}: expected a folder 'velmora' for the demo files, "
                      "found a file of that name; nothing was copied\n")
    assert sorted(p.name for p in target.rglob("*")) == ["velmora"]


def test_demo_removes_what_it_copied_when_a_copy_fails(cli, tmp_path: Path,
                                                       monkeypatch: pytest.MonkeyPatch) -> None:
    import budget._demo_files as demo_files

    copied = []
    copy = shutil.copyfileobj

    def failing(incoming: object, outgoing: object) -> None:  # the 12th file fails
        copied.append(outgoing)
        if len(copied) == 12:
            raise OSError(28, "No space left on device")
        copy(incoming, outgoing)  # type: ignore[arg-type]

    monkeypatch.setattr(demo_files.shutil, "copyfileobj", failing)
    target = tmp_path / "new" / "demo"
    target.parent.mkdir()
    code, stdout, stderr = cli("demo", str(target))
    assert code == 1
    assert stderr == (f"error: {target}: expected a folder that can be written, found No "
                      "space left on device\n")
    assert len(copied) == 12 and list(target.parent.iterdir()) == []


def test_a_formula_without_a_computed_value_is_not_a_missing_value(cli, tmp_path: Path
                                                                   ) -> None:
    # a workbook written by a program that does not compute formulas holds no value for
    # '=C2*1': it was read as an empty cell, i.e. a missing replicate, and left out
    openpyxl = pytest.importorskip("openpyxl")
    folder = tmp_path / "batch"
    shutil.copytree(DEMO, folder)
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["unit", "value"])
    for unit, value in (("A", 99.98), ("A", "=B2*1"), ("B", 99.97), ("B", 99.99)):
        sheet.append([unit, value])
    book.save(folder / "homogeneity.xlsx")
    _edit("campaign.toml", 'data = "homogeneity.csv"', 'data = "homogeneity.xlsx"')(folder)
    code, stdout, stderr = cli("certify", "--trials", "0", str(folder / "campaign.toml"))
    assert (code, stdout) == (1, "")
    assert stderr == (f"error: {folder}/homogeneity.xlsx[Sheet]:3: column 'value': expected a "
                      "finite number with a decimal point, found '=B2*1'\n")


def test_a_run_warning_shows_no_unit_1(cli, tmp_path: Path) -> None:
    # a relative humidity typed in % under a header 'h_air / %': "0.0042 1 differs from
    # the model's estimate 0.34 1"
    folder = tmp_path / "batch"
    shutil.copytree(DEMO, folder)
    _edit("determinations.csv", "h_air,", "h_air / %,")(folder)
    code, stdout, stderr = cli("certify", "--trials", "0", str(folder / "campaign.toml"))
    assert code == 0
    assert (f"warning: plausibility: {folder}/determinations.csv:3: column 'h_air': 0.0042 "
            "differs from the model's estimate 0.34 by more than a factor 3 (ratio 0.0124)\n"
            in stderr)


@pytest.mark.parametrize(("segments", "warned"), [
    ("1,1.1,1.2,5,10,15", ["first segment", "second segment"]),   # both exactly straight
    ("1,1.1,1.21,5,10,15", ["second segment"]),
    ("1,1.1,1.21,5,10,15.2", [])])
def test_an_end_point_from_exact_segments_is_a_warning(cli, tmp_path: Path, segments: str,
                                                       warned: list[str]) -> None:
    # two segments exactly straight gave the end point u = 4.5e-14 without a word
    rows = "".join(f"{q},{i}\n" for q, i in zip((0, 5, 10, 20, 25, 30), segments.split(",")))
    (tmp_path / "record.csv").write_text("Q [mC],i [uA]\n" + rows, encoding="utf-8")
    (tmp_path / "end.toml").write_text(
        'title = "end point"\n[measurands.Q_ep]\nequation = "Q_e"\nunit = "mC"\n'
        '[records.Q_e]\nkind = "end_point"\nfile = "record.csv"\nx = "Q"\ny = "i"\n'
        'windows = [[0, 10], [20, 30]]\n', encoding="utf-8")
    code, stdout, stderr = cli("run", "--trials", "0", str(tmp_path / "end.toml"))
    assert code == 0
    found = [line for line in stderr.splitlines() if "exactly on the fitted curve" in line]
    assert [w.split("the readings of the ")[1].split(" lie")[0] for w in found] == warned
    assert all(w.startswith("warning: [records.Q_e]: the readings of the ") and
               w.endswith("ordinary least squares then gives the fit no uncertainty, and it "
                          "adds none to the end point; are the readings rounded, copied or "
                          "calculated rather than measured?") for w in found)


def test_a_flat_background_of_rounded_readings_is_a_warning(cli, tmp_path: Path) -> None:
    # a logger's resolution makes every background reading 0.01 mA: u(background) = 0
    rows = "0,10\n1,9\n2,8\n3,7\n4,6\n5,5\n" + "".join(f"{t},0.01\n" for t in range(6, 11))
    (tmp_path / "record.csv").write_text("t [s],i [mA]\n" + rows, encoding="utf-8")
    (tmp_path / "charge.toml").write_text(
        CHARGE_MODEL.replace('current_u = 0.002', 'current_u = 0.002\nwindow = [0, 5]\n'
                             'background = "constant"\nbackground_window = [6, 10]'),
        encoding="utf-8")
    code, stdout, stderr = cli("run", "--trials", "0", str(tmp_path / "charge.toml"))
    assert code == 0
    assert ("warning: [records.Q]: the readings of the background constant lie exactly on "
            "the fitted curve" in stderr)


@pytest.mark.parametrize("broken", [False, True])
def test_certify_all_never_writes_its_summary_onto_a_data_file(cli, tmp_path: Path,
                                                               broken: bool) -> None:
    # --csv onto a campaign's runs file replaced the lab's determinations by the summary;
    # only the campaign files themselves were protected
    shutil.copytree(DEMO, tmp_path / "a", ignore=shutil.ignore_patterns("campaign-*"))
    if broken:  # a campaign that fails still protects the files it names
        _edit("homogeneity.csv", "99.9854", "abc")(tmp_path / "a")
    target = tmp_path / "a" / ("homogeneity.csv" if broken else "determinations.csv")
    before = target.read_bytes()
    code, stdout, stderr = cli("certify-all", "--csv", str(target), str(tmp_path))
    assert (code, stdout) == (1, "")
    assert stderr.startswith(f"error: {target}: expected an output file other than the "
                             "files of the run, found the ")
    assert target.read_bytes() == before


def test_a_zero_uncertainty_in_a_weighted_fit_names_its_row(cli, tmp_path: Path) -> None:
    # the message said "at point 2": the index among the fitted points, not the row
    (tmp_path / "line.csv").write_text("t_k,b_k,u\n21,-0.1,0.01\n22,-0.2,0\n23,-0.31,0.01\n"
                                       "24,-0.4,0.01\n", encoding="utf-8")
    (tmp_path / "line.toml").write_text(LINE_MODEL.replace('y = "b_k"', 'y = "b_k"\n'
                                                           'u_y = "u"'), encoding="utf-8")
    code, stdout, stderr = cli("run", "--trials", "0", str(tmp_path / "line.toml"))
    assert (code, stdout) == (1, "")
    assert stderr == (f"error: {tmp_path}/line.toml:5: [fits.line] file: expected every u_y "
                      "> 0 in column 'u' of 'line.csv', found 0 at row 3\n")
