"""Streamed Monte Carlo runs (budget/_streaming.py): no array of all values, the same
results as a run that keeps them.

The intervals are checked against their definitions in JCGM 101:2008 7.7.2 (the
probabilistically symmetric interval: the r-th and (r + q)-th values of the sorted
sample, q = pM rounded, r = (M − q)/2 rounded up) and 7.7.3 (the shortest: the least
y_(r+q) − y_(r) over r), computed here on a full sort of every value, and must agree to
the last bit.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from budget import _montecarlo as montecarlo, _streaming as streaming
from budget._gum import propagate
from budget._montecarlo import simulate
from budget._svg import _rebinned, histogram

from conftest import model

_TWO = """
    title = "two measurands, skewed"
    [measurands.Y1]
    equation = "X1 * X2 + sqrt(X3)"
    [measurands.Y2]
    equation = "X1 / X3"
    [inputs.X1]
    value = 2
    u = 0.3
    [inputs.X2]
    value = 1
    distribution = "rectangular"
    half_width = 0.5
    [inputs.X3]
    value = 3
    u = 1
"""  # X3 < 0 in about 0.13 % of the trials: sqrt gives NaN there, left out jointly


def _full_sort(y: np.ndarray, p: float) -> tuple[tuple[float, float], tuple[float, float]]:
    """JCGM 101 7.7.2 and 7.7.3 on every value, by a full sort (1-based r as written)."""
    y = np.sort(y)
    m = y.size
    q = int(math.floor(p * m + 0.5))
    r = (m - q) // 2 if (m - q) % 2 == 0 else (m - q + 1) // 2
    symmetric = (float(y[r - 1]), float(y[r + q - 1]))
    widths = y[q:] - y[:m - q]
    best = int(np.argmin(widths))
    return symmetric, (float(y[best]), float(y[best + q]))


def _run(keep: bool, workers: int = 2, trials: int = 200_000, p: float = 0.95):
    m = model(_TWO)
    return simulate(m, propagate(m, p), trials=trials, seed=11, coverage=p, workers=workers,
                    keep_samples=keep)


@pytest.mark.parametrize("p", [0.95, 0.99, 0.6827])
def test_streamed_intervals_equal_full_sort(p):
    kept, streamed = _run(True, p=p), _run(False, p=p)
    assert streamed.nonfinite == kept.nonfinite > 0  # the NaN trials are left out in both
    for a, b in zip(kept.measurands, streamed.measurands):
        assert b.samples is None and a.samples is not None
        assert (b.interval, b.shortest_interval) == _full_sort(a.samples, p)
        assert (a.interval, a.shortest_interval) == _full_sort(a.samples, p)
        assert (b.mean, b.standard_uncertainty, b.trials) == (a.mean, a.standard_uncertainty,
                                                              a.trials)
        assert b.histogram is not None
        binned = b.histogram
        assert binned.below + int(binned.counts.sum()) + binned.above == a.trials
        inside = (a.samples >= binned.edges[0]) & (a.samples <= binned.edges[-1])
        assert np.array_equal(binned.counts,
                              np.histogram(a.samples[inside], bins=binned.edges)[0])
    # the output correlation from running co-moments against np.corrcoef of every value
    assert np.allclose(streamed.output_correlation, kept.output_correlation, rtol=0,
                       atol=1e-12)


def test_second_pass_when_the_pilot_cuts_keep_too_few(monkeypatch):
    """A pilot whose cut points keep too few values: the histogram's exact counts choose
    new cut points and a second pass over the same streams gives the exact intervals."""
    m = model(_TWO)
    kept = simulate(m, trials=200_000, seed=11, keep_samples=True)
    monkeypatch.setattr(streaming, "cut_level", lambda share, pilot: 0.3 * share)
    sampler = montecarlo._Sampler(m, 11)
    found = streaming.stream(sampler, 200_000, 0.95, None, 2)
    assert found.passes == 2
    for k, a in enumerate(kept.measurands):
        assert found.intervals[k] == _full_sort(a.samples, 0.95)


def test_pilot_cuts_usually_suffice():
    sampler = montecarlo._Sampler(model(_TWO), 11)
    assert streaming.stream(sampler, 200_000, 0.95, None, 2).passes == 1


def test_streamed_above_the_keep_limit_only(monkeypatch):
    """The memory-bounded path is taken when trials × measurands passes KEEP_LIMIT (and
    p > ½), unless the caller asks to keep the values."""
    monkeypatch.setattr(montecarlo, "KEEP_LIMIT", 100_000)
    m = model(_TWO)  # two measurands: 50,000 trials are 100,000 values
    assert all(s.samples is not None for s in simulate(m, trials=50_000).measurands)
    assert all(s.samples is None and s.histogram is not None
               for s in simulate(m, trials=50_001).measurands)
    assert all(s.samples is not None
               for s in simulate(m, trials=50_001, keep_samples=True).measurands)
    # p ≤ ½: the shortest interval needs half of all values, so they are kept
    assert all(s.samples is not None
               for s in simulate(m, trials=50_001, coverage=0.5).measurands)


@pytest.mark.parametrize("keep", [True, False])
def test_same_results_on_any_number_of_workers(keep):
    one, two = _run(keep, workers=1), _run(keep, workers=2)
    assert one.output_correlation == two.output_correlation
    for a, b in zip(one.measurands, two.measurands):
        assert (a.mean, a.standard_uncertainty, a.interval, a.shortest_interval) == (
            b.mean, b.standard_uncertainty, b.interval, b.shortest_interval)
        if not keep:
            assert np.array_equal(a.histogram.counts, b.histogram.counts)


def test_certification_and_methods_keep_their_values(monkeypatch):
    """The certified value's Monte Carlo reuses every value of the model's run, so the
    characterization keeps them above the limit too."""
    from budget._analysis import evaluate

    monkeypatch.setattr(montecarlo, "KEEP_LIMIT", 1000)
    m = model(_TWO)
    assert evaluate(m, trials=20_000, keep_samples=True).simulation.measurands[0].samples \
        is not None
    assert evaluate(m, trials=20_000).simulation.measurands[0].samples is None


def test_histogram_of_a_streamed_run_merges_whole_fine_bins():
    edges = np.linspace(0.0, 2000.0, streaming.HISTOGRAM_BINS + 1)  # bins of width 1
    counts = np.ones(streaming.HISTOGRAM_BINS, dtype=np.int64)
    binned = streaming.Binned(edges=edges, counts=counts, below=500, above=500)
    density, coarse = _rebinned(binned, 100.0, 800.0, 70)  # 700 fine bins: 10 per bar
    assert coarse[0] == 100.0 and coarse[-1] == 800.0 and density.size == 70
    assert np.allclose(density, 10 / (3000 * 10))  # count / (all values × bar width)


def test_report_histogram_from_a_streamed_run(monkeypatch):
    monkeypatch.setattr(montecarlo, "KEEP_LIMIT", 1000)
    m = model(_TWO)
    b = propagate(m)
    s = simulate(m, b, trials=20_000).measurands[0]
    g = b.measurands[0]
    svg = histogram(s.histogram, estimate=g.estimate, u=g.combined_uncertainty, dof=g.dof,
                    gum_interval=g.interval, interval=s.interval,
                    shortest=s.shortest_interval, unit="", label="streamed")
    assert svg.count("<rect") > 30  # the bars, not the "values do not spread" note


def test_adaptive_same_on_any_number_of_workers():
    """The adaptive procedure draws ahead on its workers; batches and results depend on
    the seed only (JCGM 101 7.9 batches of whole blocks)."""
    m = model(_TWO)
    b = propagate(m)
    one = simulate(m, b, adaptive=True, digits=1, seed=4, workers=1)
    two = simulate(m, b, adaptive=True, digits=1, seed=4, workers=2)
    assert one.trials == two.trials and one.adaptive
    for x, y in zip(one.measurands, two.measurands):
        assert (x.mean, x.standard_uncertainty, x.interval, x.shortest_interval) == (
            y.mean, y.standard_uncertainty, y.interval, y.shortest_interval)
        assert np.array_equal(x.samples, y.samples)


def test_batch_interval_ends_from_the_tails_equal_a_full_selection():
    """A batch's interval ends selected among its values beyond the cut points are the
    JCGM 101 7.7.2 ends of the whole batch (exact); mean and sd from its moments."""
    rng = np.random.default_rng(8)
    chunk = np.vstack([rng.standard_normal(131_072), rng.lognormal(0.0, 0.5, 131_072)])
    tails = montecarlo._Tails(chunk[:, :65_536], 0.95)
    pieces = tails.collect(chunk)
    done = montecarlo._block_moments(chunk)
    fast = montecarlo._batch_stats(chunk, 0.95, done, pieces)
    slow = montecarlo._batch_stats(chunk, 0.95)
    assert np.array_equal(fast[:, 2:], slow[:, 2:])
    assert np.allclose(fast[:, :2], slow[:, :2], rtol=1e-12, atol=0)
    for k, y in enumerate(chunk):
        assert tuple(fast[k, 2:]) == _full_sort(y, 0.95)[0]


@pytest.mark.parametrize("piece", [1 << 14, 1000, 7])
def test_runs_of_inputs_draw_the_same_numbers_as_one_call_per_input(monkeypatch, piece):
    """Independent rectangular (and other) inputs drawn by rows into one buffer are the
    numbers of ``Distribution.sample`` called input by input on the same stream; the
    independent normal inputs, drawn last, are one vectorised ziggurat fill of their
    rows × trials buffer, scaled row by row, whatever the piece size it works in (to the
    rounding of the scaled layer widths where a piece lies within one row)."""
    from budget import _ziggurat
    from budget.distributions import Normal, Rectangular

    monkeypatch.setattr(_ziggurat, "_PIECE", piece)

    m = model("""
        title = "mixed"
        [measurands.Y]
        equation = "A + B + C + D + E"
        [inputs.A]
        value = 1
        u = 0.1
        [inputs.B]
        value = 2
        distribution = "rectangular"
        half_width = 0.3
        [inputs.C]
        value = 3
        distribution = "rectangular"
        half_width = 0.2
        [inputs.D]
        value = 4
        u = 0.4
        [inputs.E]
        value = 5
        distribution = "triangular"
        half_width = 0.5
    """)
    sampler = montecarlo._Sampler(m, 21)
    values = sampler.draw(3, 1000)
    rng = np.random.Generator(np.random.SFC64(np.random.SeedSequence(21, spawn_key=(3,))))
    names = [i.name for i in m.inputs]
    for name in ["B", "C", "E"]:  # other inputs in model order
        item = m.inputs[names.index(name)]
        assert isinstance(item.distribution, Rectangular) or name == "E"
        assert np.array_equal(values[names.index(name)], item.distribution.sample(rng, 1000))
    normals = np.empty((2, 1000))
    _ziggurat.standard_normal(rng, normals)
    for row, name in enumerate(["A", "D"]):  # then the normals, as one fill
        item = m.inputs[names.index(name)]
        assert isinstance(item.distribution, Normal)
        expected = normals[row] * item.distribution.sd + item.estimate
        if piece >= 2 * 1000:  # a piece spans both rows: scaled after, to the last bit
            assert np.array_equal(values[names.index(name)], expected)
        else:  # pieces within one row take its scale into the layer widths
            # a unit in the last place apart (binary64 unit roundoff 2⁻⁵³, IEEE 754)
            np.testing.assert_allclose(values[names.index(name)], expected, rtol=1e-15)


@pytest.mark.parametrize("operator", [" + ", " * "])
def test_sums_of_consecutive_inputs_reduced_over_rows_give_the_same_numbers(operator):
    """A sum or product of consecutive normal inputs runs as one reduction over the rows
    of their buffer: the same values, to the last bit, as the operation term by term."""
    from budget._evaluation import compile_model

    n = 300
    text = "\n".join(['title = "t"\n[measurands.Y]\nequation = "3 + '
                      + operator.join(f"x_{i}" for i in range(n)) + ' + z"']
                     + [f"[inputs.x_{i}]\nvalue = {1 + 0.001 * i}\nu = 0.01" for i in range(n)]
                     + ['[inputs.z]\nvalue = 1\ndistribution = "rectangular"\nhalf_width = 1'])
    m = model(text)
    sampler = montecarlo._Sampler(m, 5)
    assert sampler.rows  # the normal inputs are the buffer's rows
    program = compile_model(m)
    assert program._ranges  # the sum is seen as a range of inputs
    for size in (1000, 20_000):  # one slice, several slices
        fast = sampler.block(2, size)
        slow = program.evaluate(sampler.draw(2, size))[0]
        assert np.array_equal(fast[0], slow)


def test_blocks_drawn_before_the_cut_points_are_known_keep_their_tails(monkeypatch):
    """A kept run starts every block at once; the first block sets the cut points on its
    worker. Blocks finished before that (here all of them: the first block is held back)
    have their tails collected afterwards from the kept values: the intervals are still
    those of a full sort (JCGM 101 7.7.2, 7.7.3), and mean and u equal a one-worker run's."""
    import threading

    m = model("""
        title = "finite"
        [measurands.Y]
        equation = "a * b"
        [measurands.Z]
        equation = "a / b"
        [inputs.a]
        value = 2
        u = 0.1
        [inputs.b]
        value = 3
        distribution = "rectangular"
        half_width = 0.5
    """)
    one = simulate(m, trials=6 * montecarlo.BLOCK, seed=4, workers=1)
    others_done = threading.Event()
    count = [0]
    block = montecarlo._Sampler.block

    def held(self, index, size, out=None):
        found = block(self, index, size, out)
        if index == 0:
            others_done.wait(timeout=30)  # the other blocks finish first
        else:
            count[0] += 1
            if count[0] == 5:
                others_done.set()
        return found

    monkeypatch.setattr(montecarlo._Sampler, "block", held)
    calls = []
    collect = montecarlo._Tails.collect
    monkeypatch.setattr(montecarlo._Tails, "collect",
                        lambda self, view: calls.append(threading.current_thread().name)
                        or collect(self, view))
    two = simulate(m, trials=6 * montecarlo.BLOCK, seed=4, workers=2)
    assert calls.count(threading.main_thread().name) == 5  # collected afterwards
    for a, b in zip(one.measurands, two.measurands):
        assert (b.interval, b.shortest_interval) == _full_sort(b.samples, 0.95)
        assert (a.mean, a.standard_uncertainty) == (b.mean, b.standard_uncertainty)
        assert np.array_equal(a.samples, b.samples)
