"""The compiled sums over a wide model's rows (budget/_compiled_rows.py, numba) give the
numbers of numpy's grouped path (budget/_batched.py) and of the program run operation by
operation, to the last bit.

Source: numpy's own arithmetic (a general-purpose reference library), which the grouped
path and ``Program.evaluate`` use: every +, ×, 1/x, x·x and √x of IEEE 754 double
precision is correctly rounded, so the same operations on the same operands in the same
order must give the same bits whichever loop runs them. The models are synthetic shapes
(the numbers mean nothing). The equalities below were seen to fail when the compiled
loop was broken on purpose (the rows taken from the last to the first, the leading shared
operands combined in the reverse order, a constant per row read at the wrong row).
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

from budget import _montecarlo as montecarlo
from budget import _ziggurat as zig
from budget._model import parse_model
from budget._montecarlo import simulate

pytest.importorskip("numba")

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks"))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from generate import defined_mean, mean_of_determinations  # noqa: E402
from test_batched import _one_by_one  # noqa: E402

N = 24


def _model(equations: dict[str, str], definitions: dict[str, str] | None = None,
           n: int = N) -> str:
    """Measurands over n rectangular a_i (one run), n normal b_i and a normal e (the
    other run), a triangular z drawn on its own (between the two runs)."""
    lines = ['title = "synthetic rows"']
    for name, equation in equations.items():
        lines += [f"[measurands.{name}]", f'equation = "{equation}"']
    if definitions:
        lines += ["[definitions]"] + [f'{k} = "{v}"' for k, v in definitions.items()]
    for i in range(n):
        lines += [f"[inputs.a_{i}]", f"value = {1.0 + 0.01 * i}", 'distribution = "rectangular"',
                  "half_width = 0.05"]
    lines += ["[inputs.z]", "value = 2.0", 'distribution = "triangular"', "half_width = 0.1"]
    for i in range(n):
        lines += [f"[inputs.b_{i}]", f"value = {0.5 + 0.02 * i}", "u = 0.01"]
    lines += ["[inputs.e]", "value = 1.5", "u = 0.1"]
    return "\n".join(lines) + "\n"


def _terms(pattern: str, joint: str = " + ") -> str:
    return joint.join(pattern.format(i=i, k=2 + i) for i in range(N))


# name → (model text, the fusions expected)
SHAPES = {
    "mean in one equation": (mean_of_determinations(200), 1),
    "mean through definitions": (defined_mean(200), 1),
    # a number before the sum, a term after it, a constant per row, x·x over a group
    "squares with a number first and a term after": (
        _model({"R": "1.5 + " + _terms("{k} * (a_{i} * b_{i})**2") + " + e"}), 1),
    # √x over a group with a value shared by every row
    "roots with a shared value": (_model({"R": _terms("(a_{i} * e)**0.5")}), 1),
    # x·x straight from a run; 1/x over a group whose rows start with a number
    "squares and reciprocals": (
        _model({"S": _terms("b_{i}**2"), "T": _terms("1 / (a_{i} * b_{i} * 0.5)")}), 2),
    # a constant per row inside the tree, read through a reversed row order
    "reciprocals with a constant per row": (
        _model({"T": _terms("1 / ({k} * a_{i} * b_{i})")}), 1),
    # a product over rows: 1 + a/b, the shared number first
    "product over rows": (_model({"P": _terms("(1 + a_{i} / b_{i})", " * ")}), 1),
    # a group whose rows two trees read (a·b and a·e are one group of 2N rows), and a
    # group read by two measurands (w_i): made in numpy
    "shared groups": (_model({"R1": _terms("(a_{i} * b_{i})**2"),
                              "R2": _terms("(a_{i} * e)**0.5"),
                              "S": _terms("w_{i}"), "T": _terms("w_{i}", " * ")},
                             {f"w_{i}": f"a_{i} * z * b_{i}" for i in range(N)}), 0),
}


@pytest.mark.parametrize("shape", SHAPES)
def test_compiled_rows_give_the_numbers_of_numpy_and_of_the_program(restore, shape):
    text, expected = SHAPES[shape]
    sampler = montecarlo._Sampler(parse_model(text), 5)
    assert len(sampler.schedule.fusions) == expected
    sampler.grouped, sampler.width = True, montecarlo._width(sampler.schedule.widest)
    for size in (1, 2, 3, 65, 1025, 8193):  # slices of one and of two trials included
        zig.use_compiled(False)
        numpy_rows = sampler.block(7, size)
        assert zig.use_compiled(True) and zig.compiled_rows() is not None
        compiled_rows = sampler.block(7, size)
        assert np.array_equal(compiled_rows, numpy_rows, equal_nan=True)
        assert np.array_equal(compiled_rows, _one_by_one(sampler, 7, size), equal_nan=True)


def test_non_finite_rows_are_numpys_too(restore):
    """A reciprocal of zero and a root of a negative number (inf and nan rows) reduce as
    numpy reduces them."""
    text = _model({"T": _terms("1 / (a_{i} * b_{i} * 0.5)"), "R": _terms("(a_{i} * e)**0.5")})
    text = text.replace('value = 1.5\nu = 0.1', 'value = 0.0\nu = 1.0')  # e around 0
    text = text.replace('value = 0.5\nu = 0.01', 'value = 0.0\nu = 1e-300')  # b_0 ≈ 0
    sampler = montecarlo._Sampler(parse_model(text), 3)
    assert len(sampler.schedule.fusions) == 2
    sampler.grouped = True
    zig.use_compiled(False)
    reference = sampler.block(2, 4096)
    zig.use_compiled(True)
    found = sampler.block(2, 4096)
    assert not np.all(np.isfinite(found))  # the case is exercised
    assert np.array_equal(found, reference, equal_nan=True)


def test_every_group_compiled_lets_a_slice_take_the_whole_part(restore):
    """When the compiled loop makes every group's rows, a slice is the whole part (its
    rows read from end to end), not the cache-sized slice the groups' arrays need."""
    sampler = montecarlo._Sampler(parse_model(mean_of_determinations(200)), 5)
    assert sampler.schedule.unbounded and sampler.grouped
    assert sampler.width < montecarlo._SLICE
    shared = montecarlo._Sampler(parse_model(SHAPES["shared groups"][0]), 5)
    assert not shared.schedule.unbounded


@pytest.mark.parametrize("workers", [1, 2])
def test_a_wide_simulation_is_the_same_with_and_without_the_compiled_rows(restore, workers):
    """The Monte Carlo results of a mean of 1500 determinations (4503 inputs: parts of
    fewer trials than a block, grouped, every group compiled) are equal to the bit."""
    model = parse_model(mean_of_determinations(1500))
    found = {}
    for on in (False, True):
        zig.use_compiled(on)
        found[on] = simulate(model, trials=3000, seed=17, workers=workers,
                             keep_samples=True).measurands[0]
    assert np.array_equal(found[True].samples, found[False].samples)
    assert found[True].interval == found[False].interval
