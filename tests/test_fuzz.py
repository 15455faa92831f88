"""A Hypothesis-driven fuzzer over model and campaign files.

Mutations of the shipped files, random expressions, values and units: `budget` must either
compute or raise a BudgetError — never another exception, never a hang (each example is
bounded by an alarm), and never write anything but the output it was asked for.
Set BUDGET_FUZZ_EXAMPLES for a longer run and BUDGET_FUZZ_RANDOM=1 to explore new
examples (the suite itself uses a fixed, derandomized sample so that CI is repeatable).
"""

from __future__ import annotations

import json
import os
import shutil
import signal
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from click.testing import CliRunner

from budget._analysis import evaluate
from budget._campaign import load_campaign
from budget._certification import certify
from budget._cli import main
from budget._errors import BudgetError
from budget._model import parse_model
from budget._report import write_report

from conftest import MODELS

EXAMPLES = int(os.environ.get("BUDGET_FUZZ_EXAMPLES", "60"))
SECONDS = 30
_FILES = sorted(p for p in MODELS.rglob("*.toml") if p.name != "campaign.toml")
_TEXTS = [p.read_text(encoding="utf-8") for p in _FILES]
RANDOM = bool(os.environ.get("BUDGET_FUZZ_RANDOM"))  # explore instead of the fixed sample
_SETTINGS = settings(max_examples=EXAMPLES, deadline=None, derandomize=not RANDOM,
                     suppress_health_check=list(HealthCheck))


class Hang(Exception):
    pass


@contextmanager
def time_limit(seconds: int):
    def alarm(signum, frame):
        raise Hang(f"no answer within {seconds} s")

    previous = signal.signal(signal.SIGALRM, alarm)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)


_NUMBERS = st.sampled_from(["0", "-1", "1e308", "-1e-320", "nan", "inf", "-inf", "1e-300",
                            "\"3\"", "true", "[1, 2]", "{}", "2.5", "1e6", "0.0"])
_UNITS = st.sampled_from(["\"g\"", "\"mg\"", "\"degC\"", "\"K\"", "\"%\"", "\"mol/L\"",
                          "\"m^3\"", "\"\"", "\"xyz\"", "\"1/0\"", "\"kg**0.5\"", "\"degF\"",
                          "\"V/mA\"", "\"s\"", "3", "\"m/\""])
_ATOMS = st.sampled_from(["a", "b", "c", "1", "0", "2.5", "1e300", "-3", "pi", "E", "I",
                          "__x", "a.b", "a[0]", "'s'", "x", "t"])
_FUNCTIONS = st.sampled_from(["sqrt", "exp", "log", "log10", "sin", "cos", "tan", "asin",
                              "acos", "atan", "abs", "air_density", "eval", "open"])
_OPERATORS = st.sampled_from([" + ", " - ", " * ", " / ", " ** ", " ^ ", " % ", " // ",
                              " < ", " and "])


@st.composite
def expressions(draw, depth=3):
    if depth == 0 or draw(st.booleans()):
        return draw(_ATOMS)
    kind = draw(st.integers(0, 2))
    if kind == 0:
        return f"({draw(expressions(depth - 1))}{draw(_OPERATORS)}{draw(expressions(depth - 1))})"
    if kind == 1:
        args = draw(st.lists(expressions(depth - 1), min_size=1, max_size=4))
        return f"{draw(_FUNCTIONS)}({', '.join(args)})"
    return f"-{draw(expressions(depth - 1))}"


@st.composite
def mutated(draw):
    text = draw(st.sampled_from(_TEXTS))
    lines = text.splitlines()
    for _ in range(draw(st.integers(1, 4))):
        if not lines:
            break
        i = draw(st.integers(0, len(lines) - 1))
        action = draw(st.integers(0, 6))
        line = lines[i]
        key = line.split("=", 1)[0].strip() if "=" in line else ""
        if action == 0:
            del lines[i]
        elif action == 1:
            lines.insert(i, line)
        elif action == 2 and key:
            lines[i] = f"{key} = {draw(_NUMBERS)}"
        elif action == 3 and key:
            lines[i] = f"unit = {draw(_UNITS)}"
        elif action == 4 and key:
            lines[i] = f'{key} = "{draw(expressions())}"'
        elif action == 5:
            lines[i] = line[:draw(st.integers(0, len(line)))]
        else:
            lines.insert(i, draw(st.sampled_from(["[inputs.z9]", "value = 1", "u = 0.1",
                                                  "[[correlations]]",
                                                  'between = ["a", "b"]', "r = 0.99",
                                                  "[settings]", "trials = 0",
                                                  "[definitions]", 'q = "q"'])))
    return "\n".join(lines) + "\n"


@st.composite
def random_models(draw):
    names = ["a", "b", "c", "t", "x"]
    lines = ['title = "fuzz"', "[measurands.y]", f'equation = "{draw(expressions())}"']
    if draw(st.booleans()):
        lines.append(f"unit = {draw(_UNITS)}")
    for name in names:
        lines += [f"[inputs.{name}]", f"value = {draw(_NUMBERS)}", f"unit = {draw(_UNITS)}",
                  draw(st.sampled_from(["u = 0.1", "exact = true", "half_width = 0.2\n"
                                        "distribution = \"rectangular\"",
                                        "observations = [1, 2, 3]", "u = -1",
                                        "expanded = 0.2\nk = 2", "formula = \"H2O\""]))]
    return "\n".join(lines) + "\n"


def _exercise(text: str, folder: Path) -> None:
    """Parse, evaluate and report: only a BudgetError may come out."""
    before = sorted(os.listdir(folder))
    target = folder / "out.html"
    with time_limit(SECONDS):
        try:
            model = parse_model(text, name="fuzz.toml", trials=2000)
            result = evaluate(model, trials=2000)
            write_report(result, str(target))
        except BudgetError:
            pass
    after = sorted(os.listdir(folder))
    assert set(after) - set(before) <= {"out.html"}
    if target.exists():
        target.unlink()


@pytest.fixture(scope="module")
def sandbox(tmp_path_factory):
    folder = tmp_path_factory.mktemp("fuzz")
    cwd = os.getcwd()
    os.chdir(folder)
    yield folder
    os.chdir(cwd)


@_SETTINGS
@given(mutated())
def test_mutated_model_files(sandbox, text):
    _exercise(text, sandbox)


@_SETTINGS
@given(random_models())
def test_random_models(sandbox, text):
    _exercise(text, sandbox)


@_SETTINGS
@given(st.binary(max_size=300))
def test_random_bytes(sandbox, data):
    with time_limit(SECONDS):
        try:
            parse_model(data, name="fuzz.toml")
        except BudgetError:
            pass


_CAMPAIGN = MODELS / "vics-as-25a"


@settings(max_examples=max(10, EXAMPLES // 3), deadline=None, derandomize=not RANDOM,
          suppress_health_check=list(HealthCheck))
@given(st.data())
def test_mutated_campaigns(tmp_path_factory, data):
    folder = tmp_path_factory.mktemp("campaign")
    for path in _CAMPAIGN.iterdir():
        if path.is_file():
            shutil.copy(path, folder / path.name)
    name = data.draw(st.sampled_from(["campaign.toml", "determinations.csv",
                                      "homogeneity.csv", "stability.csv"]))
    lines = (folder / name).read_text().splitlines()
    i = data.draw(st.integers(0, len(lines) - 1))
    replacement = data.draw(st.sampled_from(["", "x,y", "1,2,3,4,5,6,7,8,9,10,11,12",
                                             "U-1,1,abc", "0,1,nan", "k = -2",
                                             "shelf_life = 0", "scatter_covers = [\"zz\"]",
                                             "unit = \"mg\"", "coverage = 0.95"]))
    lines[i] = replacement
    (folder / name).write_text("\n".join(lines) + "\n")
    before = sorted(os.listdir(folder))
    with time_limit(SECONDS):
        try:
            certify(load_campaign(folder / "campaign.toml"), trials=0)
        except BudgetError:
            pass
    assert sorted(os.listdir(folder)) == before


# --- the whole path (issue 17): generated models and campaigns go through the command
# line as a user runs it: run --json, run --html, the table, explain (table and JSON),
# check; certify --json, --html and its table. Only exit 0 or 1 with one error line, valid
# JSON, no raw control character on the terminal, no file but the one asked for.

_EDGE_NUMBERS = st.sampled_from(["-3", "0", "1e300", "1e-300", "1e17", "1e-17",
                                 "-1e308", "5e-324", "1" + "0" * 400, "0.1", "1e15"])
_EDGE_U = st.sampled_from(["u = 1e200", "u = 1e-200", "u = 1", "exact = true",
                           "observations = [1e308, -1e308]", "observations = [1, 1, 1]",
                           "observations = [2, 2.0000000000000004]",
                           "expanded = 1\nlevel = 1e-17", "expanded = 1\nlevel = 0.999999",
                           "u = 1\nreliability = 1e-200", "u = 0.1\ndof = 1e-300",
                           "half_width = 1e-300\ndistribution = \"arcsine\"",
                           "u = 0.5\ndistribution = \"student_t\"\ndof = 1"])
_EDGE_TEXT = st.sampled_from(["x\\u001b[2Jy", "line\\nerror: forged", "tab\\there",
                              "bell\\u0007", "\\u202eevil", "\\u009b31m", "é ü µ", "x" * 300,
                              ""])
_EDGE_UNITS = st.sampled_from(["\"g\"", "\"mg\"", "\"%\"", "\"m\"",
                                                     "\"Yg**20\"",
                               "\"m**(1/1001)\"", "\"" + "m*" * 120 + "m\"", "\"degC\"",
                               "\"s\\u001b\""])
_EDGE_EXPRESSIONS = st.sampled_from([
    "a + b + c", "a / b * c", "a ** 2 * b + c", "sqrt(a * b)",
    "log(a) + b", "a - a",
    "a * b # - b", "a ** 1e308", "10**10**10 * a", "a * " + "9" * 200, "exp(a) * b",
    "a ** b", "(a + b) ** 0.5", "a * (1 / (b - b))", "abs(a) * c", "-" * 120 + "a",
    "**".join(["a"] * 150), "+".join(["a", "b", "c"] * 400), "a * b * c * 1e300 * 1e300",
    "atan(a) / (c + 1e-300)", "a\\u001b * b"])


@st.composite
def edge_models(draw):
    """A plain model with up to two edges: huge and tiny numbers, long names, control
    characters, degenerate data, costly expressions, out-of-range settings."""
    fields = {"title": '"t"', "description": '"plain"', "equation": '"a * b * c"',
              "settings": ""}
    for name in ("a", "b", "c"):
        fields[f"{name}.value"] = draw(st.sampled_from(["1.5", "2", "0.3"]))
        fields[f"{name}.unit"] = '"1"'
        fields[f"{name}.u"] = draw(st.sampled_from(["u = 0.1", "u = 0.01"]))
        fields[f"{name}.source"] = '"plain"'
    for _ in range(draw(st.integers(0, 2))):
        key = draw(st.sampled_from(sorted(fields)))
        kind = key.split(".")[-1]
        fields[key] = draw({"title": _quoted(_EDGE_TEXT), "description": _quoted(_EDGE_TEXT),
                            "source": _quoted(_EDGE_TEXT), "equation": _quoted(_EDGE_EXPRESSIONS),
                            "value": _EDGE_NUMBERS, "unit": _EDGE_UNITS, "u": _EDGE_U,
                            "settings": _EDGE_SETTINGS}[kind])
    name = draw(st.sampled_from(["a"] * 4 + ["n" * 150, "ä", "a\\u001b"]))
    lines = [f"title = {fields['title']}", f"description = {fields['description']}",
             "[measurands.y]", f"equation = {fields['equation'].replace('a', name, 1)}"
             if name != "a" else f"equation = {fields['equation']}"]
    for input_name in ("a", "b", "c"):
        shown = name if input_name == "a" else input_name
        statement = fields[input_name + ".u"]
        value = "" if statement.startswith("observations") else \
            f"value = {fields[input_name + '.value']}"
        lines += [f'[inputs."{shown}"]', value,
                  f"unit = {fields[input_name + '.unit']}", statement,
                  f"source = {fields[input_name + '.source']}"]
    return "\n".join([*lines, fields["settings"]]) + "\n"


def _quoted(strategy: Any) -> Any:
    return strategy.map(lambda text: f'"{text}"')


_EDGE_SETTINGS = st.sampled_from(["[settings]\ndigits = 6", "[settings]\ncoverage = 0.5",
                                  "[settings]\ndigits = 1000",
                                  "[settings]\ntrials = 1000000000000",
                                  "[settings]\ncoverage = 0.999999999", "[settings]\nseed = -1"])


_UNSAFE = [chr(c) for c in (*range(0, 9), *range(11, 32), 0x7F, *range(0x80, 0xA0),
                            0x202E)]


def _check_output(code: int, stdout: str, stderr: str, as_json: bool) -> None:
    assert code in (0, 1), (code, stderr)
    for stream in (stdout, stderr):
        assert not any(char in stream for char in _UNSAFE), repr(stream[:300])
    lines = stderr.splitlines()
    assert all(line.startswith(("warning: ", "error: ")) for line in lines), lines
    if code == 1:
        assert sum(line.startswith("error: ") for line in lines) == 1 and stdout == ""
    elif as_json:
        json.loads(stdout, parse_constant=_no_constant)  # no NaN or Infinity


_TALLY = os.environ.get("BUDGET_FUZZ_TALLY")  # a file to append exit codes to (exploring)


def _tally(command: str, result: Any) -> None:
    if _TALLY:
        with open(_TALLY, "a", encoding="utf-8") as out:
            out.write(f"{command} {result.exit_code} {result.stderr[:90]!r}\n")


def _no_constant(name: str) -> None:
    raise AssertionError(f"JSON holds {name}")


_COMMANDS = (("run", "--json", "--trials", "500", "--html", "out.html"),
             ("run", "--trials", "500"), ("explain", "--trials", "500"),
             ("explain", "--json", "--trials", "0"), ("check",), ("compare", "--json"),
             ("compare",))


def _through_the_cli(text: str, folder: Path) -> None:
    model = folder / "fuzz.toml"
    model.write_text(text, encoding="utf-8")
    runner = CliRunner()
    for command in _COMMANDS:
        before = set(os.listdir(folder))
        with time_limit(SECONDS):
            sides = [str(model)] * (2 if command[0] == "compare" else 1)
            result = runner.invoke(main, [*command, *sides], catch_exceptions=False)
        _check_output(result.exit_code, result.stdout, result.stderr, "--json" in command)
        _tally(command[0], result)
        assert set(os.listdir(folder)) - before <= {"out.html"}
        if (folder / "out.html").exists():
            (folder / "out.html").unlink()


@settings(max_examples=max(6, EXAMPLES // 3), deadline=None, derandomize=not RANDOM,
          suppress_health_check=list(HealthCheck))
@given(edge_models())
def test_edge_models_through_every_command(sandbox, text):
    _through_the_cli(text, sandbox)


@settings(max_examples=max(4, EXAMPLES // 6), deadline=None, derandomize=not RANDOM,
          suppress_health_check=list(HealthCheck))
@given(mutated())
def test_mutated_models_through_every_command(sandbox, text):
    _through_the_cli(text, sandbox)


_HOMOGENEITY = st.sampled_from([
    "unit,value\nA,99.98\nA,99.98\nB,99.99\nB,99.99\n",  # ties: zero within-unit variance
    "unit,value\nA,5\nA,5\nB,5\nB,5\n",  # every value the same
    "unit,value\nA,1e300\nA,-1e300\nB,1e300\nB,-1e300\n",
    "unit,value\nA,1e-300\nA,2e-300\nB,1e-300\nB,3e-300\n",
    "unit,value\nA\\x1b[31m,1\nA\\x1b[31m,2\nB\\x07,1\nB\\x07,3\n",
    "unit,value\nA,1\nA ,2\nB,1\nB,3\n", "unit,value\nA,9_9.9\nA,1\nB,1\nB,2\n",
    "\n", "unit,value\n\"A,1\nA,2\nB,1\nB,2\n"])
_STABILITY = st.sampled_from([
    "time,value\n0,99.98\n6,99.986\n12,99.992\n",  # exactly on a line
    "time,value\n0,99.98\n6,99.98\n12,99.98\n",  # flat: 0/0
    "time,value\n0,1e300\n6,-1e300\n12,1e300\n", "time,value\n0,1\n0,2\n0,3\n",
    "time,value\n0,99.98\n6,99.97\n12,99.99\n"])
_COMPARISON = st.sampled_from(["99.978", "nan", "1e308", "-1e308", "1" + "0" * 400])
_CERTIFICATE = st.sampled_from(["k = 2", "coverage = 1e-300", "coverage = 0.95",
                                "k = 1e300", "coverage = 0.9999999999"])


@settings(max_examples=max(6, EXAMPLES // 4), deadline=None, derandomize=not RANDOM,
          suppress_health_check=list(HealthCheck))
@given(st.data())
def test_edge_campaigns_through_certify(tmp_path_factory, data):
    folder = tmp_path_factory.mktemp("edge-campaign")
    for path in _CAMPAIGN.iterdir():
        if path.is_file():
            shutil.copy(path, folder / path.name)
    (folder / "homogeneity.csv").write_text(data.draw(_HOMOGENEITY).replace("\\x1b", "\x1b")
                                            .replace("\\x07", "\x07"), encoding="utf-8")
    (folder / "stability.csv").write_text(data.draw(_STABILITY), encoding="utf-8")
    campaign = folder / "campaign.toml"
    text = campaign.read_text(encoding="utf-8")
    text = text.replace("value = 99.978", f"value = {data.draw(_COMPARISON)}")
    text = text.replace("[certificate]\nk = 2", f"[certificate]\n{data.draw(_CERTIFICATE)}")
    campaign.write_text(text, encoding="utf-8")
    runner = CliRunner()
    for command in (("--json", "--html", str(folder / "out.html")), ()):
        before = set(os.listdir(folder))
        with time_limit(SECONDS):
            result = runner.invoke(main, ["certify", "--trials", "0", *command,
                                          str(campaign)], catch_exceptions=False)
        _check_output(result.exit_code, result.stdout, result.stderr, "--json" in command)
        _tally("certify", result)
        assert set(os.listdir(folder)) - before <= {"out.html"}
