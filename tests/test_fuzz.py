"""A Hypothesis-driven fuzzer over model and campaign files.

Mutations of the shipped files, random expressions, values and units: `budget` must either
compute or raise a BudgetError — never another exception, never a hang (each example is
bounded by an alarm), and never write anything but the output it was asked for.
Set BUDGET_FUZZ_EXAMPLES for a longer run and BUDGET_FUZZ_RANDOM=1 to explore new
examples (the suite itself uses a fixed, derandomized sample so that CI is repeatable).
"""

from __future__ import annotations

import os
import shutil
import signal
from contextlib import contextmanager
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from budget.analysis import evaluate
from budget.campaign import load_campaign
from budget.certification import certify
from budget.errors import BudgetError
from budget.model import parse_model
from budget.report import write_report

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
