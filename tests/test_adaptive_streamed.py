"""The adaptive procedure (JCGM 101:2008 7.9) past the values it keeps: once a run holds
``KEEP_LIMIT`` values its later batches are streamed, as a long fixed run is
(budget/_streaming.py), so that it can run to ``ADAPTIVE_LIMIT`` trials in bounded memory.

Checked against the definitions: the intervals of JCGM 101 7.7.2 and 7.7.3 on a full sort
of every value of a fixed run of the same trials and seed (the same blocks, so the same
values), the histogram counted by numpy over those values, the mean, standard deviation
and output correlation by numpy over them.
"""

from __future__ import annotations

import numpy as np
import pytest

from budget import _montecarlo as montecarlo
from budget._gum import propagate
from budget._montecarlo import simulate

from conftest import model
from test_streaming import _TWO, _full_sort

_SKEWED = """
    title = "one measurand, skewed, always finite"
    [measurands.Y]
    equation = "X1 * exp(X2)"
    [inputs.X1]
    value = 2
    u = 0.3
    [inputs.X2]
    value = 0
    u = 0.5
"""

BATCH = 2 * montecarlo.BLOCK  # a batch of these small models: two blocks (≥ 10⁴ trials)


def _capped(monkeypatch: pytest.MonkeyPatch, kept_batches: int, batches: int,
            outputs: int) -> None:
    """A run keeps ``kept_batches`` batches and stops at ``batches`` (not converged at
    --digits 6, so the number of trials is known)."""
    monkeypatch.setattr(montecarlo, "KEEP_LIMIT", kept_batches * BATCH * outputs)
    monkeypatch.setattr(montecarlo, "ADAPTIVE_LIMIT", batches * BATCH)


@pytest.mark.parametrize("text", [_SKEWED, _TWO], ids=["finite", "with-nan"])
@pytest.mark.parametrize("keep", [None, False], ids=["kept-then-streamed", "all-streamed"])
@pytest.mark.parametrize("workers", [1, 2])
def test_streamed_adaptive_run_equals_every_value_of_a_fixed_run(monkeypatch, text, keep,
                                                                 workers):
    m = model(text)
    b = propagate(m)
    outputs = len(m.measurands)
    _capped(monkeypatch, 2, 9, outputs)  # 9 batches: the ring of streamed batches wraps
    run = simulate(m, b, adaptive=True, digits=6, seed=5, workers=workers, keep_samples=keep)
    assert run.adaptive and run.trials == 9 * BATCH
    assert any("stopped at" in w for w in run.warnings)
    every = simulate(m, b, trials=run.trials, seed=5, keep_samples=True)
    assert run.nonfinite == every.nonfinite
    for streamed, kept in zip(run.measurands, every.measurands):
        assert streamed.samples is None and streamed.histogram is not None
        y = kept.samples
        assert streamed.trials == y.size
        assert (streamed.interval, streamed.shortest_interval) == _full_sort(y, 0.95)
        assert streamed.mean == pytest.approx(float(np.mean(y)), rel=1e-13, abs=1e-15)
        assert streamed.standard_uncertainty == pytest.approx(float(np.std(y, ddof=1)),
                                                              rel=1e-12)
        binned = streamed.histogram
        inside = (y >= binned.edges[0]) & (y <= binned.edges[-1])
        assert np.array_equal(binned.counts, np.histogram(y[inside], bins=binned.edges)[0])
        assert (binned.below, binned.above) == (int(np.sum(y < binned.edges[0])),
                                                int(np.sum(y > binned.edges[-1])))
    assert np.allclose(run.output_correlation, every.output_correlation, rtol=0, atol=1e-12)


def test_streamed_adaptive_run_has_the_histogram_of_a_streamed_fixed_run(monkeypatch):
    """The bins come from the first block in both, so the same values give the same
    histogram to the count."""
    m = model(_SKEWED)
    _capped(monkeypatch, 1, 5, 1)
    run = simulate(m, adaptive=True, digits=6, seed=2)
    fixed = simulate(m, trials=run.trials, seed=2)
    assert fixed.measurands[0].samples is None  # streamed too (KEEP_LIMIT is one batch)
    a, f = run.measurands[0].histogram, fixed.measurands[0].histogram
    assert np.array_equal(a.edges, f.edges) and np.array_equal(a.counts, f.counts)
    assert (a.below, a.above) == (f.below, f.above)


def test_adaptive_run_within_the_keep_limit_keeps_its_values(monkeypatch):
    m = model(_SKEWED)
    _capped(monkeypatch, 4, 4, 1)
    run = simulate(m, adaptive=True, digits=6, seed=2)
    assert run.trials == 4 * BATCH and run.measurands[0].samples.size == run.trials


@pytest.mark.parametrize("how", ["keep_samples", "p at most one half"])
def test_adaptive_run_that_must_keep_every_value_stops_at_its_own_cap(monkeypatch, how):
    """A caller that asks for every value, or p ≤ ½ (whose shortest interval needs half of
    them), keeps them all; such a run stops at ADAPTIVE_KEEP_LIMIT, not ADAPTIVE_LIMIT."""
    m = model(_SKEWED)
    _capped(monkeypatch, 1, 50, 1)
    monkeypatch.setattr(montecarlo, "ADAPTIVE_KEEP_LIMIT", 3 * BATCH)
    run = simulate(m, adaptive=True, digits=6, seed=2,
                   **({"keep_samples": True} if how == "keep_samples" else {"coverage": 0.5}))
    assert run.trials == 3 * BATCH and run.measurands[0].samples.size == run.trials
    assert any(f"stopped at {3 * BATCH} trials" in w for w in run.warnings)


def test_eurachem_a2_at_three_digits_converges_in_bounded_memory():
    """EURACHEM/CITAC Guide CG 4 (3rd ed.) example A2, c(NaOH): at --digits 3 the adaptive
    procedure needs about 10⁸ trials (measured here: 1.07-1.09·10⁸ for seeds 1-2), beyond
    the values a run keeps; it now converges instead of stopping at a cap, and its values
    are streamed (no array of all of them)."""
    from pathlib import Path

    from budget._model import load_model

    m = load_model(Path(__file__).resolve().parent.parent / "models" / "reference"
                   / "eurachem-a2-naoh.toml")
    run = simulate(m, propagate(m), adaptive=True, digits=3, seed=1)
    assert not any("stopped at" in w for w in run.warnings)
    assert montecarlo.KEEP_LIMIT < run.trials < montecarlo.ADAPTIVE_LIMIT
    s = run.measurands[0]
    assert s.samples is None and s.histogram is not None
    # the guide's result, c = 0.10214 mol/L with u = 0.00010 mol/L, within the interval
    assert s.interval[0] < 0.10214 < s.interval[1]
    assert s.standard_uncertainty == pytest.approx(0.00010, abs=0.000005)


def test_a_pile_holds_its_pieces_in_order_across_chunks(monkeypatch):
    """The tails of a long run are copied into a few large chunks as they arrive
    (streaming.Pile); what comes out is every value, in the order it went in."""
    from budget._streaming import Pile

    monkeypatch.setattr(Pile, "CHUNK", 7)
    rng = np.random.default_rng(3)
    pieces = [rng.standard_normal(n) for n in (0, 3, 7, 1, 12, 0, 5)]
    pile = Pile()
    for piece in pieces:
        pile.add(piece)
    assert pile.size == 28
    chunks = pile.take()
    assert [c.size for c in chunks] == [7, 7, 7, 7]
    assert np.array_equal(np.concatenate(chunks), np.concatenate(pieces))
    assert pile.size == 0 and [c.size for c in pile.take()] == [0]


def test_adaptive_run_of_a_wide_model_stops_at_its_random_numbers(monkeypatch):
    """The cap counts the numbers drawn (trials × inputs drawn) as well as the trials, so
    that a model of many inputs stops in minutes, not hours; the warning says why."""
    inputs = "\n".join(f"[inputs.x{i}]\nvalue = 1\nu = 0.1" for i in range(40))
    m = model('title = "forty inputs"\n[measurands.Y]\nequation = "'
              + " + ".join(f"x{i}" for i in range(40)) + '"\n' + inputs)
    _capped(monkeypatch, 1, 50, 1)
    monkeypatch.setattr(montecarlo, "ADAPTIVE_NUMBERS", 40 * 3 * BATCH)
    run = simulate(m, adaptive=True, digits=6, seed=2)
    assert run.trials == 3 * BATCH
    assert any(f"(limit {3 * BATCH:,} trials: {40 * 3 * BATCH:.2g} random numbers for 40 "
               "inputs drawn)" in w for w in run.warnings)
