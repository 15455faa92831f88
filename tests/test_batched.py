"""Operations alike run as one array operation over rows (budget/_batched.py): the same
numbers, to the last bit, as the program run operation by operation (the path before
it), and the same results on one and two workers. Synthetic model shapes only."""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

from budget import _montecarlo as montecarlo
from budget._model import parse_model
from budget._montecarlo import simulate

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks"))

from generate import defined_mean, linear_model, mean_of_determinations  # noqa: E402

MIXED = "\n".join(
    ['title = "t"', "[measurands.Y]",
     'equation = "' + " + ".join(f"a_{i} * b_{i}**2 / sqrt(c_{i}) + exp(d_{i} / 10)"
                                 for i in range(12)) + ' + e * f"',
     "[measurands.Z]", 'equation = "' + " * ".join(f"(1 + a_{i} / c_{i})" for i in range(12))
     + '"', "[measurands.W]", 'equation = "a_3"']  # an input read as it stands
    + [f"[inputs.a_{i}]\nvalue = {1 + 0.01 * i}\nu = 0.01\n"
       f"[inputs.b_{i}]\nvalue = 2\ndistribution = \"rectangular\"\nhalf_width = 0.1\n"
       f"[inputs.c_{i}]\nvalue = {3 + i}\n{'exact = true' if i % 4 == 0 else 'u = 0.05'}\n"
       f"[inputs.d_{i}]\nvalue = 0.5\ndistribution = \"triangular\"\nhalf_width = 0.2"
       for i in range(12)]
    + ["[inputs.e]\nvalue = 1\nu = 0.1\n[inputs.f]\nvalue = 2\nu = 0.1",
       '[[correlations]]\nbetween = ["e", "f"]\nr = 0.4'])

SHAPES = {"mean in one equation": mean_of_determinations(200),
          "mean through definitions": defined_mean(200),
          "ratio benchmark": linear_model(10), "mixed": MIXED}


def _one_by_one(sampler: montecarlo._Sampler, index: int, size: int) -> np.ndarray:
    """A block as it was evaluated before grouping: ``Program.evaluate`` on slices of
    ``_SLICE`` trials, sums of consecutive normal inputs reduced over the buffer's rows."""
    values = sampler.draw(index, size)  # the block's draws, every part of it
    plan = sampler.plan
    matrix = (np.array([values[slot] for slot in plan[-1][1][0]])
              if plan and plan[-1][0] == "normal" else None)
    out = np.empty((len(sampler.model.measurands), size))
    for start in range(0, size, montecarlo._SLICE):
        stop = min(size, start + montecarlo._SLICE)
        part = values if size <= montecarlo._SLICE else [
            v[start:stop] if isinstance(v, np.ndarray) else v for v in values]
        rows = (sampler.rows, matrix[:, start:stop]) if matrix is not None else None
        for k, y in enumerate(sampler.program.evaluate(part, rows)):
            out[k, start:stop] = y
    return out


@pytest.mark.parametrize("shape", SHAPES)
def test_grouped_operations_give_the_numbers_of_the_operation_by_operation_path(shape):
    sampler = montecarlo._Sampler(parse_model(SHAPES[shape]), 11)
    assert sampler.schedule.widest >= 4  # operations alike were grouped
    assert sampler.grouped == shape.startswith("mean")  # narrow models: one by one
    sampler.grouped, sampler.width = True, montecarlo._width(sampler.schedule.widest)
    for size in (1, 2, 65, 1025, 8193, 20_000):  # slices of one and of two trials included
        grouped = sampler.block(3, size)
        assert np.array_equal(grouped, _one_by_one(sampler, 3, size), equal_nan=True)


def test_a_wide_model_evaluates_in_narrow_slices_with_no_single_trial_slice():
    sampler = montecarlo._Sampler(parse_model(mean_of_determinations(200)), 1)
    assert sampler.width < montecarlo._SLICE
    assert list(montecarlo._slices(2 * 64 + 1, 64)) == [(0, 64), (64, 129)]
    whole = montecarlo._SLICE
    assert list(montecarlo._slices(whole + 1, whole)) == [(0, whole), (whole, whole + 1)]


@pytest.mark.parametrize("shape", ["mean in one equation", "mean through definitions"])
def test_a_wide_model_gives_the_same_results_on_one_and_two_workers(shape):
    model = parse_model(SHAPES[shape])
    one, two = (simulate(model, trials=5000, seed=7, workers=w) for w in (1, 2))
    assert one.measurands[0].mean == two.measurands[0].mean
    assert one.measurands[0].standard_uncertainty == two.measurands[0].standard_uncertainty
    assert one.measurands[0].interval == two.measurands[0].interval
    assert np.array_equal(one.measurands[0].samples, two.measurands[0].samples)


def test_intervals_from_the_tails_select_before_sorting_with_the_same_result():
    """``_from_tails`` sorts only the m − q extreme values of the kept tails (a selection
    first): the same two intervals as sorting every kept value, ties included."""
    rng = np.random.default_rng(0)
    for _ in range(100):
        m = int(rng.integers(50, 5000))
        p = float(rng.choice([0.6, 0.9, 0.95, 0.99]))
        y = np.round(rng.standard_normal(m), int(rng.integers(1, 4)))  # many ties
        tails = montecarlo._Tails(y[None, :], p)
        pieces = [tails.collect(y[None, a:a + 300])[0] for a in range(0, m, 300)]
        tail = m - montecarlo._q(m, p)
        low = np.sort(np.concatenate([b[0] for b in pieces]))
        high = np.sort(np.concatenate([b[1] for b in pieces]))
        expected = (None if low.size < tail or high.size < tail else
                    montecarlo._pick(low[:tail], high[high.size - tail:], m, p))
        assert montecarlo._from_tails(pieces, m, p) == expected


def test_a_wide_block_is_drawn_and_evaluated_in_parts_that_depend_on_the_model_only():
    """A block of a wide model is drawn and evaluated part by part from its one stream
    (``part_size``, ``_parts``): the parts follow from the model, a last part of one trial
    joins the one before, and the block equals its concatenated draws evaluated at once."""
    model = parse_model(mean_of_determinations(1400))  # about 4200 inputs drawn
    sampler = montecarlo._Sampler(model, 3)
    assert sampler.size == 1024 and sampler.part == 512  # 8 bytes x 4200 x 512 < 32 MB
    assert sampler.part == montecarlo.part_size(model)
    assert list(montecarlo._parts(2 * 8 + 1, 8)) == [(0, 8), (8, 17)]
    assert list(montecarlo._parts(5, 8)) == [(0, 5)]
    size = 2 * sampler.part + 1
    values = sampler.draw(4, size)
    assert all(v.shape == (size,) for v in values if isinstance(v, np.ndarray))
    whole = sampler.program.evaluate(values, divide=True)[0]
    # grouped steps against division steps: roundings apart (unit roundoff 2⁻⁵³, IEEE 754)
    assert np.allclose(sampler.block(4, size)[0], whole, rtol=1e-14, atol=0.0)
    other = montecarlo._Sampler(model, 3)  # a fresh sampler: the same numbers
    assert np.array_equal(other.block(4, size), sampler.block(4, size))
