"""Monte Carlo runs too long to keep every value: moments, a histogram and exact tails.

Method (JCGM 101 7.6-7.7 without the sorted array of all M values): the blocks of a run
are drawn and evaluated exactly as for a kept run (same streams, same order), and each
block leaves behind

* its count, mean and sum of squared deviations (combined block by block in order, so the
  mean and standard deviation are those of a kept run) and, for several measurands, its
  sums of products of deviations (the output correlation);
* its counts in a fine histogram of fixed bins chosen from the first block (the pilot),
  with the counts below and above it;
* its values below and above two cut points chosen from the pilot with a generous margin.

The probabilistically symmetric interval and the shortest interval need only the m − q
lowest and the m − q highest of the m values (q = ⌊pm + ½⌋): when each side kept that
many, they are sorted and the intervals are exactly those of a full sort. When a side kept
too few (the pilot misjudged the tail), the histogram's exact counts give a cut point that
surely holds enough, and a second pass over the same blocks (same streams, so the same
values) collects that side again. Memory is one block per worker plus a little over (1 − p)
of the values per side, whatever M.
"""

from __future__ import annotations

import itertools
import math
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any, Callable, Iterator

import numpy as np

if TYPE_CHECKING:
    from ._montecarlo import _Sampler

__all__ = ["HISTOGRAM_BINS", "Binned", "Pile", "Streamed", "Streaming", "stream", "cut_level",
           "pile_up"]

HISTOGRAM_BINS = 2000


@dataclass(frozen=True, slots=True)
class Binned:
    """A histogram of all the finite values of a measurand: equal bins, and the counts
    of the values below the first edge and above the last."""

    edges: np.ndarray
    counts: np.ndarray
    below: int
    above: int


@dataclass(frozen=True, slots=True)
class Streamed:
    total: int  # trials run, finite or not
    moments: np.ndarray  # (measurands, 3): count, mean, M2 of the jointly finite values
    correlation: np.ndarray
    intervals: tuple[tuple[tuple[float, float], tuple[float, float]], ...]
    histograms: tuple[Binned, ...]
    passes: int  # 1, or 2 when a tail had to be collected again


@dataclass(frozen=True, slots=True)
class _Block:
    moments: np.ndarray
    comoment: np.ndarray | None
    counts: list[np.ndarray]
    outside: list[tuple[int, int]]
    kept: list[tuple[np.ndarray, np.ndarray]]


def cut_level(share: float, pilot: int) -> float:
    """The probability below the low cut point (and above the high one): 1 − p plus
    five standard errors of the probability below a quantile estimated from ``pilot``
    values, so that a side keeps too few values about once in three million runs (and
    then the second pass gives the same exact result)."""
    return min(0.45, share + 5.0 * math.sqrt(share * (1.0 - share) / pilot))


class Pile:
    """Values appended piece by piece into chunks of ``CHUNK`` values. A long run's tails
    arrive as thousands of small pieces; held as they come, their memory is not given back
    to the system when they are freed, so joining them would need it twice. Copied into a
    few large chunks, each chunk's memory goes back once it is joined."""

    CHUNK = 1 << 20

    def __init__(self) -> None:
        self.chunks: list[np.ndarray] = []
        self.fill = 0  # values in the last chunk

    @property
    def size(self) -> int:
        return sum(c.size for c in self.chunks[:-1]) + self.fill if self.chunks else 0

    def add(self, values: np.ndarray) -> None:
        at = 0
        while at < values.size:
            if not self.chunks or self.fill == self.chunks[-1].size:
                self.chunks.append(np.empty(self.CHUNK))
                self.fill = 0
            last = self.chunks[-1]
            take = min(values.size - at, last.size - self.fill)
            last[self.fill:self.fill + take] = values[at:at + take]
            self.fill += take
            at += take

    def take(self) -> list[np.ndarray]:
        """The values (the last chunk trimmed; one empty array for an empty pile), leaving
        the pile empty."""
        found = self.chunks or [np.empty(0)]
        found[-1] = found[-1][:self.fill] if self.chunks else found[-1]
        self.chunks, self.fill = [], 0
        return found


def pile_up(piles: list[tuple[Pile, Pile]], pieces: list[tuple[np.ndarray, np.ndarray]]
            ) -> None:
    """Each measurand's tail values of one block (low, high) onto its two piles."""
    for (low, high), (lows, highs) in zip(pieces, piles):
        lows.add(low)
        highs.add(high)


def stream(sampler: "_Sampler", trials: int, coverage: float,
           progress: Callable[[int], None] | None, workers: int) -> Streamed:
    """Run ``trials`` trials (coverage above ½) keeping no array of all the values."""
    size = min(sampler.size, trials)
    pilot = sampler.block(0, size)
    sampler.release()
    values = _finite(pilot)
    edges = [_edges(y) for y in values]
    level = cut_level(1.0 - coverage, max(values.shape[1], 1))
    cuts = [(float(np.quantile(y, level)), float(np.quantile(y, 1.0 - level)))
            if y.size else (math.nan, math.nan) for y in values]
    several = values.shape[0] > 1
    first = _summary(pilot, edges, cuts, several)
    if progress:
        progress(size)
    counts = [np.zeros(HISTOGRAM_BINS, dtype=np.int64) for _ in edges]
    outside = np.zeros((len(edges), 2), dtype=np.int64)
    piles = [(Pile(), Pile()) for _ in edges]
    blocks: list[_Block] = []
    for found in itertools.chain([first], _blocks(
            sampler, trials, workers, progress,
            lambda view: _summary(view, edges, cuts, several))):
        for k, c in enumerate(found.counts):  # summed as they come: one histogram kept
            counts[k] += c
        outside += np.array(found.outside, dtype=np.int64)
        pile_up(piles, found.kept)
        blocks.append(replace(found, counts=[], outside=[], kept=[]))
    moments, comoment = _moments(blocks)
    histograms = tuple(Binned(edges=e, counts=c, below=int(o[0]), above=int(o[1]))
                       for e, c, o in zip(edges, counts, outside))
    blocks.clear()
    m = int(moments[0, 0])
    intervals: list[Any] = [_exact(lows, highs, m, coverage) for lows, highs in piles]
    missing = [k for k, found in enumerate(intervals) if found is None]
    if missing and m >= 2:
        _again(sampler, size, trials, workers, histograms, m, coverage, intervals, missing)
    return Streamed(total=trials, moments=moments, correlation=_correlation(moments, comoment),
                    intervals=tuple(intervals), histograms=histograms,
                    passes=2 if missing and m >= 2 else 1)


def _again(sampler: "_Sampler", size: int, trials: int, workers: int,
           histograms: tuple[Binned, ...], m: int, coverage: float,
           intervals: list[Any], missing: list[int]) -> None:
    """The second pass: the ``missing`` measurands' tails collected again over the same
    blocks (same streams, so the same values), beyond cut points that the histogram's
    exact counts say surely hold enough; their intervals set in ``intervals``."""
    wide = [_histogram_cuts(histograms[k], m, coverage) if k in missing
            else (math.nan, math.nan) for k in range(len(histograms))]
    first_tails = _tails(sampler.block(0, size), wide)
    sampler.release()
    piles = [(Pile(), Pile()) for _ in wide]
    for found in itertools.chain([first_tails], _blocks(
            sampler, trials, workers, None, lambda view: _tails(view, wide))):
        pile_up(piles, found)
    for k in missing:
        intervals[k] = _exact(*piles[k], m, coverage)


class Streaming:
    """The histogram and output co-moments of an adaptive run from the batch where it
    stops keeping values. The bins come from the run's first block, as a streamed fixed
    run's do, so both give the same histogram of the same values. ``summary`` is safe on
    any thread (the workers call it on their blocks); ``absorb`` (the values kept so far,
    in slices of ``step`` trials, so that no temporary array is larger than a batch) and
    ``take`` (a summary, in block order) run on one thread."""

    def __init__(self, first: np.ndarray) -> None:
        self.edges = [_edges(y) for y in _finite(first)]
        self.several = first.shape[0] > 1
        self.counts = [np.zeros(HISTOGRAM_BINS, dtype=np.int64) for _ in self.edges]
        self.outside = np.zeros((len(self.edges), 2), dtype=np.int64)
        self.blocks: list[_Block] = []

    def summary(self, view: np.ndarray) -> _Block:
        """One block's histogram counts and, for several measurands, its co-moments (its
        moments come from the adaptive run, its tails from ``_Tails``)."""
        return _summary(view, self.edges, None, self.several)

    def absorb(self, kept: np.ndarray, step: int) -> None:
        for start in range(0, kept.shape[1], step):
            self.take(self.summary(kept[:, start:start + step]))

    def take(self, found: _Block) -> None:
        for k, c in enumerate(found.counts):
            self.counts[k] += c
        self.outside += np.array(found.outside, dtype=np.int64)
        if self.several:
            self.blocks.append(replace(found, counts=[], outside=[]))

    def finish(self, sampler: "_Sampler", trials: int, coverage: float, workers: int,
               moments: np.ndarray, sides: list[tuple[Pile, Pile]] | None) -> Streamed:
        """The streamed result of ``trials`` trials whose (jointly finite) moments are
        ``moments``; ``sides``: each measurand's tail values of every batch, or None when
        they cannot serve (a batch held non-finite values), then a second pass collects
        them."""
        comoment = _moments(self.blocks)[1] if self.blocks else None
        self.blocks.clear()
        histograms = tuple(Binned(edges=e, counts=c, below=int(o[0]), above=int(o[1]))
                           for e, c, o in zip(self.edges, self.counts, self.outside))
        m = int(moments[0, 0])
        intervals: list[Any] = ([_exact(lows, highs, m, coverage) for lows, highs in sides]
                                if sides is not None and m >= 2 else [None] * len(self.edges))
        missing = [k for k, found in enumerate(intervals) if found is None]
        if missing and m >= 2:
            _again(sampler, sampler.size, trials, workers, histograms, m, coverage,
                   intervals, missing)
        return Streamed(total=trials, moments=moments,
                        correlation=_correlation(moments, comoment),
                        intervals=tuple(intervals), histograms=histograms,
                        passes=2 if missing and m >= 2 else 1)


def _blocks(sampler: "_Sampler", trials: int, workers: int,
            progress: Callable[[int], None] | None, keep: Callable[[np.ndarray], Any]
            ) -> Iterator[Any]:
    """``keep`` of blocks 1, 2, … of the run, in block order, on ``workers`` threads."""
    block = sampler.size

    def work(b: int) -> tuple[int, Any]:
        size = min(block, trials - b * block)
        return size, keep(sampler.block(b, size))

    indices = range(1, -(-trials // block))
    with ThreadPoolExecutor(max_workers=max(1, workers)) as pool:
        results = map(work, indices) if workers <= 1 else pool.map(work, indices)
        for size, found in results:
            if progress:
                progress(size)
            yield found


def _finite(view: np.ndarray) -> np.ndarray:
    """The trials whose values are finite for every measurand."""
    finite = np.isfinite(view).all(axis=0)
    return view if finite.all() else view[:, finite]


def _edges(y: np.ndarray) -> np.ndarray:
    """Equal bins over the pilot's central 99.9 %, widened by half of it on each side."""
    low, high = (np.quantile(y, [0.0005, 0.9995]) if y.size else (-1.0, 1.0))
    span = float(high - low)
    if not (span > 0.0 and math.isfinite(span)):
        span = max(abs(float(low)), 1e-300) * 1e-6
    return np.linspace(low - 0.5 * span, high + 0.5 * span, HISTOGRAM_BINS + 1)


def _summary(view: np.ndarray, edges: list[np.ndarray],
             cuts: list[tuple[float, float]] | None, several: bool) -> _Block:
    """A block's moments, co-moments (several measurands), histogram counts and tail
    values beyond ``cuts``; without ``cuts`` (an adaptive run's block) neither tails nor,
    for one measurand, moments."""
    from ._montecarlo import _block_moments

    data = _finite(view)
    moments = _block_moments(data) if cuts is not None or several else np.zeros((0, 3))
    comoment = None
    if several:
        centred = data - moments[:, 1][:, None]
        comoment = centred @ centred.T
    counts, outside = [], []
    for y, e in zip(data, edges):
        counts.append(np.histogram(y, bins=e)[0])
        outside.append((int(np.count_nonzero(y < e[0])), int(np.count_nonzero(y > e[-1]))))
    return _Block(moments=moments, comoment=comoment, counts=counts, outside=outside,
                  kept=[] if cuts is None else _tails(data, cuts, finite=True))


def _tails(view: np.ndarray, cuts: list[tuple[float, float]], finite: bool = False
           ) -> list[tuple[np.ndarray, np.ndarray]]:
    """Each measurand's finite values at or below its low cut and at or above its high
    cut (a NaN cut keeps nothing)."""
    data = view if finite else _finite(view)
    return [(y[y <= lo], y[y >= hi]) for y, (lo, hi) in zip(data, cuts)]


def _moments(blocks: list[_Block]) -> tuple[np.ndarray, np.ndarray | None]:
    """Moments combined in block order (as a kept run) and the co-moment matrix."""
    from ._montecarlo import _combine

    # grouped as a kept run groups them (the first block, then the rest), so that both
    # give the same mean and standard deviation to the last bit
    moments = _combine([blocks[0].moments, _combine([b.moments for b in blocks[1:]])]
                       if len(blocks) > 1 else [blocks[0].moments])
    if blocks[0].comoment is None:
        return moments, None
    n, mean = blocks[0].moments[0, 0], blocks[0].moments[:, 1].copy()
    total = np.array(blocks[0].comoment, dtype=float)
    for b in blocks[1:]:
        n_b = b.moments[0, 0]
        if n_b == 0:
            continue
        delta = b.moments[:, 1] - mean
        both = n + n_b
        assert b.comoment is not None
        total += b.comoment + np.outer(delta, delta) * (n * n_b / both)
        mean += delta * (n_b / both)
        n = both
    return moments, total


def _correlation(moments: np.ndarray, comoment: np.ndarray | None) -> np.ndarray:
    if comoment is None:
        return np.ones((1, 1))
    scale = np.sqrt(np.diag(comoment))
    with np.errstate(invalid="ignore", divide="ignore"):
        correlation = comoment / np.outer(scale, scale)
    correlation = np.nan_to_num(np.clip(correlation, -1.0, 1.0), nan=0.0)
    np.fill_diagonal(correlation, 1.0)
    found: np.ndarray = correlation
    return found


def _exact(lows: Pile, highs: Pile, m: int, p: float
           ) -> tuple[tuple[float, float], tuple[float, float]] | None:
    """Both intervals from the kept values when each side holds the m − q extreme ones."""
    from ._montecarlo import tail_intervals

    return tail_intervals(_joined(lows.take()), _joined(highs.take()), m, p)


def _joined(pieces: list[np.ndarray]) -> np.ndarray:
    """The chunks of a pile end to end, each dropped once copied (``pieces`` is emptied),
    so that a long run's tails are held about once, not twice, while they are joined."""
    out = np.empty(sum(piece.size for piece in pieces))
    pieces.reverse()
    at = 0
    while pieces:
        piece = pieces.pop()
        out[at:at + piece.size] = piece
        at += piece.size
        del piece
    return out



def _histogram_cuts(binned: Binned, m: int, p: float) -> tuple[float, float]:
    """Cut points that surely keep the m − q lowest and highest values: the first edge
    with at least m − q values below it, the last with at least m − q above (exact counts;
    ±∞ when the histogram cannot tell, so that the side keeps every value)."""
    from ._montecarlo import _q

    tail = m - _q(m, p)
    below = binned.below + np.cumsum(binned.counts)  # values < edges[i + 1] (about)
    above = binned.above + np.cumsum(binned.counts[::-1])[::-1]  # values ≥ edges[i]
    i = int(np.searchsorted(below, tail))
    j = int(np.flatnonzero(above >= tail)[-1]) if np.any(above >= tail) else -1
    low = float(binned.edges[i + 1]) if i < binned.counts.size else math.inf
    high = float(binned.edges[j]) if j >= 0 else -math.inf
    return low, high
