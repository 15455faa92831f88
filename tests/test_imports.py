"""What the commands load: the numeric path needs neither the algebra system, scipy, pint
and pandas, nor numba for a Monte Carlo run too short to repay loading it.

Each command runs in a fresh interpreter (``sys.executable``), as a user starts it; the
modules it imported are read from ``sys.modules`` at its end. The heavy libraries are
loaded only where they earn their cost: sympy for typeset formulas and second-order
terms, numba once a process draws ``_ziggurat.COMPILED_FROM`` numbers (DEVELOPERS.md).
"""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from conftest import MODELS

DEMO = str(MODELS / "vics-as-25a" / "coulometric-purity.toml")
HEAVY = ("numba", "llvmlite", "sympy", "scipy", "pandas", "pint")

PROBE = """
import json, sys
from budget._cli import main
try:
    main(sys.argv[1:], standalone_mode=False)
except SystemExit:
    pass
print(json.dumps(sorted(m for m in {heavy!r} if m in sys.modules)), file=sys.stderr)
"""


def _loaded(*args: str) -> list[str]:
    done = subprocess.run([sys.executable, "-c", PROBE.format(heavy=HEAVY), *args],
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    found: list[str] = json.loads(done.stderr.strip().splitlines()[-1])
    return found


@pytest.mark.parametrize("args", [
    ("check", DEMO),
    ("run", DEMO, "--trials", "0", "--json"),
    ("run", DEMO, "--trials", "20000", "--json"),
])
def test_the_numeric_path_loads_no_heavy_library(args):
    assert _loaded(*args) == []


LAZY = ("budget._montecarlo", "budget._recordinputs", "budget._fits", "budget._datafiles")


def _loaded_of(names: tuple[str, ...], *args: str) -> list[str]:
    probe = PROBE.replace("{heavy!r}", repr(names))
    done = subprocess.run([sys.executable, "-c", probe, *args], capture_output=True,
                          text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    found: list[str] = json.loads(done.stderr.strip().splitlines()[-1])
    return found


def test_a_linear_run_of_a_model_without_records_loads_neither_sampler_nor_record_reader():
    """--trials 0 needs no Monte Carlo module; a model without [fits] or [records] tables
    needs no reader of data files (a few hundredths of a second of every run)."""
    assert _loaded_of(LAZY, "run", DEMO, "--trials", "0", "--json") == []
    assert _loaded_of(LAZY, "run", DEMO, "--trials", "20000", "--json") == [
        "budget._montecarlo"]
