"""Propagation of distributions by the Monte Carlo method (JCGM 101:2008).

Method:

* 6.4: every input is drawn from its own distribution; an input with finite ν as a
  scaled and shifted t (6.4.9); correlated Gaussian inputs as one multivariate Gaussian
  (6.4.8); the inputs of an ``[[estimated_together]]`` set with finite ν as one
  multivariate t with the set's ν (JCGM 102 6.5); other correlated non-Gaussian inputs
  through a Gaussian copula (a documented approximation, announced by a warning);
  inputs without an inverse distribution function are refused when correlated.
* 7.2-7.6: M trials in blocks; block b draws from its own stream
  ``SeedSequence(seed, spawn_key=(b,))`` through numpy's SFC64 bit generator (chosen on
  measurement, ``GENERATOR``; Gaussian inputs' standard normals by the exact ziggurat
  method vectorised in numpy, ``_ziggurat``), so the numbers depend on the seed and the
  model only, never on the chunk size or the number of threads; blocks are evaluated on both
  cores at once, by the model compiled once into a numeric program. A block holds
  ``BLOCK`` trials, fewer for models with many inputs (``block_size``: at most 32 MB of
  draws per block), so that memory stays bounded whatever the number of trials. A wide
  model's many operations alike run as one array operation over rows (``_batched``, the
  same numbers to the last bit), on slices of fewer trials.
* 7.7: the probabilistically symmetric interval (quantile indices by selection, not a
  full sort) and the shortest interval (searched in the sorted tails only).
* 7.9: the adaptive procedure, batches of at least two blocks (≥ max(J, 10⁴) trials,
  drawn on both workers) until twice the standard deviation of the batch means, standard
  deviations and interval ends is within the numerical tolerance δ; the statistics run
  batch by batch (no pass over all values so far at each step; a batch's interval ends
  are selected among its values beyond the cut points), and the workers draw the next
  blocks while a batch is checked. Past ``KEEP_LIMIT`` values its batches are streamed,
  so it can run to ``ADAPTIVE_LIMIT`` trials in bounded memory.
* Runs longer than ``KEEP_LIMIT`` values keep no array of all values (streaming.py).
* 8.2: validation of the GUM result: d_low = |y − U_p − y_low|, d_high = |y + U_p −
  y_high|, validated when both are ≤ δ.

Trials whose model value is not finite are dropped and counted; more than
``NONFINITE_LIMIT`` of them is an error.
"""

from __future__ import annotations

import math
import os
import threading
from collections import deque
from contextlib import contextmanager
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass, field, replace
from typing import Any, Callable, Generator, Iterator, cast

import numpy as np

from .distributions import Normal, Rectangular, StudentT
from ._arguments import (check_budget_of, check_flag, check_model, check_not_both,
                         check_progress,
                         check_seed_argument, check_trials_argument, check_workers)
from ._limits import MAX_TRIALS, check_digits, check_kept, check_probability, check_trials
from ._batched import Schedule
from ._errors import Location, SimulationError
from ._evaluation import compile_model
from ._formatting import decimal_exponent
from ._gum import Budget
from ._model import Model
from ._streaming import Binned, Streamed, cut_level
from ._ziggurat import compiled_rows, loading_alongside, standard_normal, uniform_rows
from ._arguments import keywords_checked
from ._unit_display import display_unit, spaced_unit

__all__ = ["BLOCK", "block_size", "NONFINITE_LIMIT", "KEEP_LIMIT", "Validation",
           "MeasurandSimulation", "Simulation",
           "simulate", "tolerance", "coverage_interval", "shortest_interval"]

BLOCK = 1 << 17
# numpy's SFC64 bit generator: measured here (benchmarks/generators.py) to draw normal
# numbers about 10-25 % faster than the default PCG64, with the same SeedSequence seeding.
# The standard normals of Gaussian inputs come from its 64-bit words through a ziggurat
# vectorised in numpy (_ziggurat.py), measured 15-30 % faster than numpy's own, and in long
# runs from the same numbers compiled (_compiled_draws.py), about 0.36x numpy's time.
GENERATOR = "SFC64"
NORMALS = "vectorised ziggurat (Marsaglia and Tsang 2000), 256 layers"
_BLOCK_BYTES = 1 << 25
# the draws of one part of a block (part_size): the block's own bound, which a model of more
# than 4096 inputs would pass at the 1024 trials a block holds at least (10^4 inputs: 82 MB
# per worker in one go, 20 MB in parts of 256 trials). Measured here (10^4 inputs, four
# shapes, parts of 128 and 256 trials against none): the same speed within the host's
# noise, less peak memory
_PART_BYTES = _BLOCK_BYTES
# Evaluation works on slices of at most this many trials: a narrow model's block in one
# go (fewer numpy calls, so fewer turns of the interpreter lock between the two workers;
# measured here against 2^13-2^15 on the ratio benchmark, the demo and EURACHEM A2), a
# wide model's in narrower slices (_width) that stay in the processor's cache.
_SLICE = 1 << 16
_GROUP_BYTES = 1 << 21  # a grouped operation's arrays in a slice (_batched.Schedule)
_GROUPING_GAIN = 256  # numpy calls per slice that grouping must save to be used
_CHUNK = 1 << 15  # normal draws are scaled in chunks of rows of about 256 kB
NONFINITE_LIMIT = 0.01
# A fixed run keeps every value (8 bytes per trial and measurand) up to this many values;
# longer runs (with p > ½) are streamed: moments, a histogram and exact tails (streaming.py)
KEEP_LIMIT = 10_000_000
# The adaptive procedure stops at the longest run allowed: its values beyond KEEP_LIMIT
# are streamed, as a fixed run's (EURACHEM A2 at --digits 3 needs about 1.1·10⁸ trials);
# a run that keeps every value (keep_samples, or p ≤ ½) stops at ADAPTIVE_KEEP_LIMIT.
ADAPTIVE_LIMIT = MAX_TRIALS
ADAPTIVE_KEEP_LIMIT = 20_000_000
# ... and at this many random numbers (trials × inputs drawn; about two minutes here), so
# that a model of 10⁴ inputs stops after 2.5·10⁶ trials, not hours later
ADAPTIVE_NUMBERS = 25_000_000_000


@dataclass(frozen=True, slots=True, kw_only=True)
class Validation:
    tolerance: float
    d_low: float
    d_high: float
    validated: bool
    reason: str = ""  # why validation was not possible (the spread is not resolved)


@dataclass(frozen=True, slots=True, kw_only=True)
class MeasurandSimulation:
    name: str
    unit: str
    trials: int
    mean: float
    standard_uncertainty: float
    interval: tuple[float, float]
    shortest_interval: tuple[float, float]
    validation: Validation | None
    # every finite value in trial order (jointly with the other measurands), or None when
    # the run was too long to keep them (``KEEP_LIMIT``): then ``histogram`` holds them
    samples: np.ndarray | None = field(repr=False, compare=False)
    histogram: Binned | None = field(default=None, repr=False, compare=False)

    def __repr__(self) -> str:
        from ._notebook import short

        mean, u = short(self.mean, self.standard_uncertainty, 3)
        unit = spaced_unit(display_unit(self.unit))
        verdict = "" if self.validation is None else (
            ", GUM validated" if self.validation.validated else ", GUM NOT validated")
        return (f"<MeasurandSimulation {self.name}: {self.trials:,} trials, y = {mean}"
                f"{unit}, u = {u}{verdict}>")

    def summary(self, digits: int = 2) -> str:
        from ._notebook import simulation_text, summary_digits

        return simulation_text(self, summary_digits(digits))

    def _repr_html_(self) -> str:
        from ._notebook import simulation_html

        return simulation_html([self])

    def to_frame(self) -> Any:
        """One row (index ``name``): the JSON keys, intervals as ``*_low``/``*_high``."""
        from ._notebook import simulation_frame

        return simulation_frame([self], {})

    def to_dict(self) -> dict[str, Any]:
        from ._document import simulation_document

        return simulation_document(self)


@dataclass(frozen=True, slots=True, kw_only=True)
class Simulation:
    trials: int
    seed: int
    coverage_probability: float
    adaptive: bool
    nonfinite: int
    measurands: tuple[MeasurandSimulation, ...]
    output_correlation: tuple[tuple[float, ...], ...]
    warnings: tuple[str, ...] = ()

    def measurand(self, name: str) -> MeasurandSimulation:
        """The simulation of measurand ``name`` (a ``KeyError`` with a "did you mean")."""
        from ._notebook import lookup

        return lookup(self.measurands, name, "measurand")

    def __repr__(self) -> str:
        names = ", ".join(m.name for m in self.measurands)
        return f"<Simulation of {names}: {self.trials:,} trials, seed {self.seed}>"

    def summary(self, digits: int = 2) -> str:
        p = f"{100 * self.coverage_probability:g} %"
        return "\n".join(m.summary(digits).replace("interval", f"{p} interval", 1)
                         for m in self.measurands)

    def _repr_html_(self) -> str:
        from ._notebook import simulation_html

        return simulation_html(self.measurands)

    def to_frame(self) -> Any:
        """One row per measurand; ``trials``, ``seed``, ``coverage`` in ``attrs``."""
        from ._notebook import simulation_frame

        return simulation_frame(self.measurands, {
            "trials": self.trials, "seed": self.seed, "coverage": self.coverage_probability,
            "adaptive": self.adaptive})

    def to_dict(self) -> dict[str, Any]:
        from ._document import simulation_document

        return {"trials": self.trials, "seed": self.seed,
                "coverage": self.coverage_probability, "adaptive": self.adaptive,
                "measurands": {m.name: simulation_document(m) for m in self.measurands},
                "warnings": list(self.warnings)}


def drawn_inputs(model: Model) -> int:
    """The inputs drawn in every trial (those with an uncertainty), at least 1."""
    return max(1, sum(1 for i in model.inputs if i.standard_uncertainty > 0))


def block_size(model: Model) -> int:
    """Trials per block: ``BLOCK``, halved until the draws of one block fit in 32 MB."""
    drawn = drawn_inputs(model)
    size = BLOCK
    while size > 1024 and drawn * size * 8 > _BLOCK_BYTES:
        size //= 2
    return size


def part_size(model: Model) -> int:
    """Trials drawn and evaluated at a time within a block: ``BLOCK``, halved until the
    draws of one part fit in ``_PART_BYTES`` (at least 64 trials). A model of 10⁴ inputs
    draws a block of 1024 trials in parts of 256 (20 MB of draws at a time, not 82 MB).
    It depends on the model only."""
    drawn = drawn_inputs(model)
    size = BLOCK
    while size > 64 and drawn * size * 8 > _PART_BYTES:
        size //= 2
    return size


def _parts(size: int, part: int) -> Generator[tuple[int, int], None, None]:
    """The parts of a block of ``size`` trials; a last part of one trial joins the one
    before it (as in ``_slices``)."""
    starts = list(range(0, size, part))
    if len(starts) > 1 and size - starts[-1] == 1:
        starts.pop()
    yield from zip(starts, starts[1:] + [size])


def tolerance(u: float, digits: int) -> float:
    """δ = ½·10^ℓ where u = c·10^ℓ and c has ``digits`` digits (JCGM 101 7.9.2)."""
    if not math.isfinite(u) or u <= 0.0:
        return 0.0
    return 0.5 * 10.0 ** decimal_exponent(u, digits)


def coverage_interval(values: np.ndarray, p: float) -> tuple[float, float]:
    """Probabilistically symmetric interval (JCGM 101 7.7.2); ``values`` is reordered."""
    lo, hi = _indices(values.size, p)
    values.partition([lo, hi])
    return float(values[lo]), float(values[hi])


def _indices(m: int, p: float) -> tuple[int, int]:
    q = _q(m, p)
    r = (m - q) // 2 if (m - q) % 2 == 0 else (m - q + 1) // 2
    r = max(r, 1)
    return r - 1, min(r + q - 1, m - 1)


def _q(m: int, p: float) -> int:
    exact = p * m
    q = int(round(exact)) if abs(exact - round(exact)) < 1e-9 else int(math.floor(exact + 0.5))
    return min(max(q, 1), m - 1)


def shortest_interval(values: np.ndarray, p: float) -> tuple[float, float]:
    """Shortest 100p % interval (JCGM 101 7.7.3) from the sorted tails; reorders values."""
    return _intervals(values, p)[1]


def _pick(low: np.ndarray, high: np.ndarray, m: int,
          p: float) -> tuple[tuple[Any, ...], tuple[Any, ...]]:
    """Both intervals from the sorted ``m − q`` lowest and highest of M values."""
    lo, hi = _indices(m, p)
    best = int(np.argmin(high - low))
    return (float(low[lo]), float(high[hi - _q(m, p)])), (float(low[best]), float(high[best]))


def _from_tails(tails: list[Any], m: int, p: float) -> tuple[Any, ...] | None:
    """Both intervals from the values kept below and above the cuts, when enough were."""
    low = np.concatenate([block[0] for block in tails])
    high = np.concatenate([block[1] for block in tails])
    return tail_intervals(low, high, m, p)


def tail_intervals(low: np.ndarray, high: np.ndarray, m: int, p: float
                   ) -> tuple[tuple[float, float], tuple[float, float]] | None:
    """Both intervals of m values from the values at or below the low cut and at or above
    the high cut (each reordered in place), or None when a side holds fewer than the
    m − q extreme ones."""
    tail = m - _q(m, p)
    if low.size < tail or high.size < tail:
        return None
    with ThreadPoolExecutor(max_workers=2) as pool:  # np.sort lets the other thread run
        lowest = pool.submit(_extreme, low, tail, False)
        highest = pool.submit(_extreme, high, tail, True)
        found: tuple[tuple[float, float], tuple[float, float]] = _pick(
            lowest.result(), highest.result(), m, p)
    return found


def _extreme(values: np.ndarray, count: int, high: bool) -> np.ndarray:
    """The ``count`` lowest (or highest) of ``values`` in ascending order, selected and
    sorted in place: only they are sorted, and a long run's large tails are not copied."""
    cut = values.size - count if high else count - 1
    if count < values.size:
        values.partition(cut)
    end = values[values.size - count:] if high else values[:count]
    end.sort()
    return end


def _intervals(values: np.ndarray, p: float) -> tuple[tuple[float, float],
                                                     tuple[float, float]]:
    """Both JCGM 101 7.7 intervals from one partition and two sorts of the tails."""
    m = values.size
    q = _q(m, p)
    tail = m - q
    if tail - 1 >= q:  # p ≤ 1/2: a full sort is as cheap
        values.sort()
        return _pick(values[:tail], values[q:], m, p)
    values.partition([tail - 1, q])
    return _pick(np.sort(values[:tail]), np.sort(values[q:]), m, p)


class _Sampler:
    """Draws the inputs of one block and evaluates the model on them."""

    def __init__(self, model: Model, seed: int,
                 drawing: tuple[list[list[int]], list[tuple[str, Any]]] | None = None
                 ) -> None:
        self.model, self.seed = model, seed
        self.size = block_size(model)
        self.program = compile_model(model)
        self.groups, self.plan = drawing or _drawing(model)  # (made by simulate, or here)
        self.warnings = _copula_warnings(model, self.groups)
        self.factors = {key: _factor(matrix)
                        for key, matrix in _group_matrices(model, self.groups).items()}
        self.sets = _set_slots(model)
        # input slot → row of the normal inputs' buffer (the last run of the plan)
        self.rows = ({slot: row for row, slot in enumerate(self.plan[-1][1][0])}
                     if self.plan and self.plan[-1][0] == "normal" else {})
        self.local = threading.local()  # each thread's buffers for the normal inputs
        # wide models: operations alike run as one array operation over rows (_batched)
        self.runs = [n for n, (kind, _) in enumerate(self.plan) if kind in ("normal", "uniform")]
        layout = {slot: (n, row) for n in self.runs
                  for row, slot in enumerate(self.plan[n][1][0])}
        self.schedule = Schedule(self.program, layout)
        # grouped only where it saves many numpy calls: small arrays one by one stay in
        # the cache, and a narrow model's few calls cost little
        saved = len(self.program._steps) - len(self.schedule.items)
        self.grouped = saved >= _GROUPING_GAIN
        self.width = _width(self.schedule.widest) if self.grouped else _SLICE
        self.part = part_size(model)

    def block(self, index: int, size: int, out: np.ndarray | None = None) -> np.ndarray:
        """Draw block ``index`` and evaluate it into ``out`` (measurands × size), part by
        part (``_parts``): a wide model's draws are evaluated while they are in the cache."""
        out = np.empty((len(self.model.measurands), size)) if out is None else out
        rng = self._generator(index)
        for low, high in _parts(size, self.part):
            values = self._draw(rng, high - low)
            self._evaluate(values, high - low, out[:, low:high])
        return out

    def _evaluate(self, values: list[Any], size: int, out: np.ndarray) -> None:
        normals = self.plan[-1] if self.plan and self.plan[-1][0] == "normal" else None
        matrix = self.local.buffers[len(self.plan) - 1] if normals else None
        buffers = getattr(self.local, "buffers", {})
        # cache-sized slices of the part; whole ones (each run's rows read from end to end)
        # when the compiled loop makes every group's rows (_compiled_rows)
        width = _SLICE if self.schedule.unbounded and compiled_rows() else self.width
        for start, stop in _slices(size, width):
            rows = (self.rows, matrix[:, start:stop]) if matrix is not None else None
            if self.grouped:
                found = self.schedule.run(values, slice(start, stop),
                                          {n: buffers[n] for n in self.runs}, rows,
                                          self._scratch())
            else:
                part = values if stop - start == size else [
                    v[start:stop] if isinstance(v, np.ndarray) else v for v in values]
                found = self.program.evaluate(part, rows, divide=True)
            for k, y in enumerate(found):
                out[k, start:stop] = y

    def _generator(self, index: int) -> np.random.Generator:
        """Block ``index``'s own stream: the same on any number of workers."""
        return np.random.Generator(np.random.SFC64(
            np.random.SeedSequence(self.seed, spawn_key=(index,))))

    def draw(self, index: int, size: int) -> list[Any]:
        """The inputs of block ``index`` as ``block`` draws them: arrays of ``size``
        values (copies, when the block is drawn in several parts), or numbers for exact
        inputs."""
        rng = self._generator(index)
        cuts = list(_parts(size, self.part))
        if len(cuts) == 1:
            return self._draw(rng, size)
        parts = [[v.copy() if isinstance(v, np.ndarray) else v
                  for v in self._draw(rng, high - low)] for low, high in cuts]
        return [np.concatenate([p[slot] for p in parts])
                if isinstance(parts[0][slot], np.ndarray) else parts[0][slot]
                for slot in range(len(parts[0]))]

    def _draw(self, rng: np.random.Generator, size: int) -> list[Any]:
        """The inputs of one part of a block, drawn from the block's stream ``rng``.

        A run of k consecutive independent rectangular inputs is drawn by rows into one
        reused k × size buffer (the same stream as k calls of ``size`` each), each chunk
        of rows scaled and shifted while it is in the cache; the run of independent
        normal inputs is one fill of its buffer by the vectorised ziggurat
        (``_ziggurat``), scaled piece by piece while in the cache."""
        values = self._values(size)
        for number, (kind, item) in enumerate(self.plan):
            if kind == "fixed":
                values[item] = self.model.inputs[item].estimate
            elif kind in ("normal", "uniform"):
                # normal: z·sd + mean; rectangular: u·2a + (x − a), as Rectangular.sample
                slots, shift, scale = item
                z = self._buffer(number, len(slots), size)
                if kind == "normal":  # scaled piece by piece inside
                    standard_normal(rng, z, scale, shift)
                elif not uniform_rows(rng, z, scale, shift):  # else compiled: the same
                    rows = max(1, _CHUNK // size)
                    for first in range(0, len(slots), rows):
                        chunk = z[first:first + rows]
                        rng.random(out=chunk)
                        chunk *= scale[first:first + rows]
                        chunk += shift[first:first + rows]
            elif kind == "single":
                values[item] = self.model.inputs[item].distribution.sample(rng, size)
            else:
                factor = self.factors[tuple(item)]
                for slot, column in zip(item, _correlated(self.model, item, factor, rng,
                                                          size, self.sets)):
                    values[slot] = column
        return values

    def _scratch(self) -> dict[tuple[int, int, int], np.ndarray]:
        """This thread's scratch arrays for the grouped operations (``_batched``)."""
        found: dict[tuple[int, int, int], np.ndarray] | None = getattr(
            self.local, "scratch", None)
        if found is None:
            found = self.local.scratch = {}
        return found

    def release(self) -> None:
        """Drop this thread's buffers (the first block runs alone, before the workers)."""
        self.local.buffers = {}
        self.local.scratch = {}
        self.local.values = {}
        self.local.views = {}
        self.local.stores = {}

    def _values(self, size: int) -> list[Any]:
        """A fresh list of a part's input values with the rows of this thread's run
        buffers already in place (made once per buffer and size: a model of 10⁴ inputs
        would otherwise make 10⁴ row views per part, holding the interpreter lock)."""
        runs = [(number, self._buffer(number, len(item[0]), size))
                for number, (kind, item) in enumerate(self.plan)
                if kind in ("normal", "uniform")]
        made_by_size: dict[int, Any] = getattr(self.local, "values", None) or {}
        self.local.values = made_by_size
        made = made_by_size.get(size)
        if made is None or len(made[0]) != len(runs) or any(
                a is not b for a, (_, b) in zip(made[0], runs)):
            template: list[Any] = [None] * len(self.model.inputs)
            for number, z in runs:
                for slot, row in zip(self.plan[number][1][0], z):
                    template[slot] = row
            made = made_by_size[size] = ([z for _, z in runs], template)
        return list(made[1])

    def _buffer(self, number: int, rows: int, size: int) -> np.ndarray:
        """This thread's rows × size buffer for the run ``number`` of the plan: a
        C-contiguous view of one reused store (the values of a part are dead once it is
        evaluated), the same view object for the same size."""
        local = self.local
        if not getattr(local, "views", None):
            local.buffers, local.views, local.stores = {}, {}, {}
        found: np.ndarray | None = local.views.get((number, size))
        if found is None:
            store = local.stores.get(number)
            if store is None or store.size < rows * size:
                store = local.stores[number] = np.empty(rows * size)
                local.views = {key: view for key, view in local.views.items()
                               if key[0] != number}
            found = local.views[(number, size)] = store[:rows * size].reshape(rows, size)
        local.buffers[number] = found
        return found


def _drawing(model: Model) -> tuple[list[list[int]], list[tuple[str, Any]]]:
    """The model's inputs joined by correlations (``_groups``), and how a block draws
    them (``_plan``)."""
    groups = _groups(model)
    return groups, _plan(model, groups)


def _announced(plan: list[tuple[str, Any]]) -> float:
    """What a trial's draws would save compiled (``_ziggurat.loading_alongside``), in
    normal numbers: the independent normal inputs and the groups' standard normals, and a
    rectangular input for a third of one (its numpy path costs less to begin with)."""
    return sum(len(item[0]) if kind == "normal" else len(item)
               for kind, item in plan if kind in ("normal", "group")) \
        + sum(len(item[0]) for kind, item in plan if kind == "uniform") / 3


def _width(widest: int) -> int:
    """Trials per evaluated slice: ``_SLICE``, fewer when a group of operations alike is
    wide, so that its (rows × trials) arrays stay near ``_GROUP_BYTES``."""
    width = _SLICE
    while width > 64 and widest * width * 8 > _GROUP_BYTES:
        width //= 2
    return width


def _slices(size: int, width: int) -> Generator[tuple[int, int], None, None]:
    """Slices of ``width`` within slices of ``_SLICE``; a last slice of one trial joins
    the one before it (a reduction over one column is ordered otherwise by numpy), so a
    single column is evaluated alone only where a ``_SLICE`` slice holds one trial."""
    for low in range(0, size, _SLICE):
        high = min(size, low + _SLICE)
        starts = list(range(low, high, width))
        if len(starts) > 1 and high - starts[-1] == 1:
            starts.pop()
        yield from zip(starts, starts[1:] + [high])


def _plan(model: Model, groups: list[list[int]]) -> list[tuple[str, Any]]:
    """How the inputs of a block are drawn, in the order of its stream: the groups
    (correlated inputs, other distributions) in model order, consecutive independent
    rectangular inputs among them as one run, then every independent normal input in
    model order as one run; a run is drawn into one buffer (rectangular: the same stream
    as one call per input; normal: one vectorised ziggurat fill), so a model of many
    inputs draws them in a few calls."""
    plan: list[tuple[str, Any]] = []
    normals: list[int] = []
    uniforms: list[int] = []

    def close(kind: str, run: list[int]) -> None:
        if not run:
            return
        items = [model.inputs[i] for i in run]
        if kind == "normal":
            shift = [i.estimate for i in items]
            scale = [cast(Normal, i.distribution).sd for i in items]
        else:
            widths = [cast(Rectangular, i.distribution).half_width for i in items]
            shift = [i.estimate - a for i, a in zip(items, widths)]
            scale = [2.0 * a for a in widths]
        plan.append((kind, (tuple(run), np.array(shift, dtype=float)[:, None],
                            np.array(scale, dtype=float)[:, None])))
        run.clear()

    for group in groups:
        item = model.inputs[group[0]]
        if len(group) == 1 and item.standard_uncertainty == 0:
            plan.append(("fixed", group[0]))  # draws nothing: the runs go on
        elif len(group) == 1 and isinstance(item.distribution, Normal):
            normals.append(group[0])
        elif len(group) == 1 and isinstance(item.distribution, Rectangular):
            uniforms.append(group[0])
        else:
            close("uniform", uniforms)
            plan.append(("group", group) if len(group) > 1 else ("single", group[0]))
    close("uniform", uniforms)
    close("normal", normals)
    return plan


def _groups(model: Model) -> list[list[int]]:
    """Inputs joined by correlations (connected components), in model order."""
    index = {item.name: j for j, item in enumerate(model.inputs)}
    names = list(index)
    parent = list(range(len(names)))

    def root(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    index = {name: k for k, name in enumerate(names)}
    links = [(a, b) for a, b, _ in model.correlations]
    links += [(s.inputs[0], name) for s in model.estimated_together for name in s.inputs[1:]]
    for a, b in links:
        parent[root(index[a])] = root(index[b])
    groups: dict[int, list[int]] = {}
    for i in range(len(names)):
        groups.setdefault(root(i), []).append(i)
    return sorted(groups.values(), key=lambda g: g[0])


def _group_matrices(model: Model, groups: list[list[int]]) -> dict[tuple[int, ...], np.ndarray]:
    """The correlation matrix of each group of inputs, in one pass over the pairs
    (never the whole N × N matrix)."""
    joint = [g for g in groups if len(g) > 1]
    matrices = {tuple(g): np.eye(len(g)) for g in joint}
    where = {model.inputs[slot].name: (tuple(g), j) for g in joint for j, slot in enumerate(g)}
    for a, b, r in model.correlations:
        key, i = where[a]
        j = where[b][1]
        matrices[key][i, j] = matrices[key][j, i] = r
    return matrices


def _set_slots(model: Model) -> dict[int, tuple[int, float]]:
    """Input index → (number of its [[estimated_together]] set, the set's ν)."""
    index = {item.name: k for k, item in enumerate(model.inputs)}
    return {index[name]: (number, s.dof) for number, s in enumerate(model.estimated_together)
            for name in s.inputs}


def _copula_warnings(model: Model, groups: list[list[int]]) -> list[str]:
    warnings = []
    in_sets = _set_slots(model)
    for group in (g for g in groups if len(g) > 1):
        members = [model.inputs[i] for i in group if i not in in_sets]
        odd = [i for i in members if not i.distribution.gaussian]
        refused = [i for i in odd if not i.distribution.has_ppf]
        if refused:
            shapes = ", ".join(f"{i.name} ({i.distribution.name})" for i in refused)
            raise SimulationError(
                "expected correlated inputs with a normal, rectangular, triangular, arcsine, "
                f"trapezoidal or student_t distribution (others cannot be drawn correlated), "
                f"found {shapes}", Location(file=model.source, table="correlations",
                                            key="between"))
        t_members = [i for i in odd if isinstance(i.distribution, StudentT)]
        copula = [i for i in odd if not isinstance(i.distribution, StudentT)]
        if copula:
            warnings.append(
                f"correlation between non-Gaussian inputs "
                f"({', '.join(i.name for i in copula)}): drawn through a Gaussian copula; "
                "the correlation of the draws differs slightly from the stated r")
        if t_members:
            warnings.append(
                f"correlated Student-t inputs ({', '.join(i.name for i in t_members)}): "
                "drawn as correlated normals over independent √(χ²_ν/ν); the correlation "
                "of the draws is somewhat below the stated r")
        t_sets = {in_sets[i][0] for i in group if i in in_sets and math.isfinite(in_sets[i][1])}
        if t_sets and (len(t_sets) > 1 or members):
            names = ", ".join(model.inputs[i].name for i in group)
            warnings.append(
                f"inputs estimated together are correlated with inputs outside their set "
                f"({names}): each set is drawn as its own multivariate t on one Gaussian "
                "correlation structure; the correlation across sets differs slightly from "
                "the stated r")
    return warnings


def _factor(r: np.ndarray) -> np.ndarray:
    """F with F Fᵀ = r for a positive semi-definite r (singular ones included)."""
    eigenvalues, vectors = np.linalg.eigh(r)
    factor: np.ndarray = vectors * np.sqrt(np.clip(eigenvalues, 0.0, None))
    return factor


def _correlated(model: Model, group: list[int], factor: np.ndarray,
                rng: np.random.Generator, size: int,
                sets: dict[int, tuple[int, float]]) -> list[np.ndarray]:
    """One group of jointly drawn inputs: a multivariate Gaussian z with the group's
    correlations (JCGM 101 6.4.8); the members of an [[estimated_together]] set with
    finite ν share one χ²_ν draw w and are z·√(ν/w), a multivariate t (JCGM 102 6.5);
    a correlated Student-t input is its z over its own √(χ²_ν/ν) (exact t marginals, no
    inverse CDF); other non-Gaussian members go through the Gaussian copula of their ppf."""
    z = standard_normal(rng, np.empty((size, len(group)))) @ factor.T
    scales: dict[int, np.ndarray] = {}
    for number, nu in sorted({sets[slot] for slot in group if slot in sets}):
        if math.isfinite(nu):
            scales[number] = np.sqrt(nu / rng.chisquare(nu, size))
    columns = []
    for j, slot in enumerate(group):
        item = model.inputs[slot]
        if slot in sets:
            column = z[:, j] * scales[sets[slot][0]] if sets[slot][0] in scales else z[:, j]
            columns.append(item.estimate + item.standard_uncertainty * column)
        elif item.distribution.gaussian:
            columns.append(item.estimate + item.standard_uncertainty * z[:, j])
        elif isinstance(item.distribution, StudentT):  # z / √(χ²_ν/ν): no inverse CDF
            t = item.distribution
            columns.append(t.estimate + t.scale * z[:, j]
                           * np.sqrt(t.dof / rng.chisquare(t.dof, size)))
        else:
            from scipy.special import ndtr

            columns.append(item.distribution.ppf(ndtr(z[:, j])))
    return columns


class _Tails:
    """Cut values from a first block, below and above which every block keeps its values,
    so that the coverage intervals need sorting only a little over (1 − p)·M values per
    tail instead of selecting among all M (checked afterwards; a full selection, or for a
    streamed run a second pass, when short): the margin of ``cut_level``."""

    def __init__(self, view: np.ndarray, p: float) -> None:
        level = cut_level(1.0 - p, view.shape[1])
        self.low = np.quantile(view, level, axis=1)
        self.high = np.quantile(view, 1.0 - level, axis=1)

    def collect(self, view: np.ndarray) -> list[tuple[np.ndarray, np.ndarray]]:
        return [(y[y <= lo], y[y >= hi]) for y, lo, hi in zip(view, self.low, self.high)]


class _Cuts:
    """The cut points of a kept run, set by its first block on whichever worker draws it
    (None for no tails: a first block with non-finite values); the other blocks start at
    once, and a block evaluated before they are set has its tails collected afterwards
    from the kept values."""

    def __init__(self, coverage: float) -> None:
        self.coverage = coverage
        self.tails: _Tails | None = None
        self.known = False

    def settle(self, head: np.ndarray) -> None:
        self.tails = _Tails(head, self.coverage) if np.isfinite(head).all() else None
        self.known = True

    def collect(self, view: np.ndarray) -> list[tuple[np.ndarray, np.ndarray]] | None:
        if not self.known:
            return None
        return self.tails.collect(view) if self.tails else []


def _run_blocks(sampler: _Sampler, trials: int, out: np.ndarray,
                progress: Callable[[int], None] | None, workers: int,
                cuts: _Cuts | None = None) -> tuple[np.ndarray, list[Any]]:
    """Fill ``out`` with the blocks of a run of ``trials``; the moments of all of them
    and, with ``cuts``, each block's tail values (none when the first block has
    non-finite values)."""
    block = sampler.size
    moments: list[np.ndarray] = []
    kept: list[list[tuple[np.ndarray, np.ndarray]] | None] = []

    def work(b: int) -> tuple[int, np.ndarray, list[Any] | None]:
        start = b * block
        size = min(block, trials - start)
        view = out[:, start:start + size]
        sampler.block(b, size, view)
        if cuts is None:
            return size, _block_moments(view), []
        if b == 0:
            cuts.settle(view)
        return size, _block_moments(view), cuts.collect(view)

    blocks = range(-(-trials // block))
    results = map(work, blocks) if workers <= 1 else \
        ThreadPoolExecutor(max_workers=workers).map(work, blocks)
    for done, block_moments, block_tails in results:  # in block order
        moments.append(block_moments)
        kept.append(block_tails)
        if progress:
            progress(done)
    if cuts is None:
        return _combine(moments), []
    # the first block, then the others combined: the order of a streamed run, whose
    # first block runs alone (the same mean and variance to the last bit)
    total = _combine([moments[0], _combine(moments[1:])])
    tails = cuts.tails
    if tails is None:
        return total, []
    return total, [found if found is not None
                   else tails.collect(out[:, b * block:(b + 1) * block])
                   for b, found in enumerate(kept)]


def _block_moments(view: np.ndarray) -> np.ndarray:
    """Per measurand: count, mean and sum of squared deviations of the jointly finite
    values of one block (computed while the block is in the cache)."""
    data = view
    with np.errstate(over="ignore", invalid="ignore"):  # a sum beyond ±1.8e308 included
        mean = view.mean(axis=1)  # finite only when every value is (or a sum overflowed)
        if not np.isfinite(mean).all():
            finite = np.isfinite(view).all(axis=0)
            if not finite.all():
                data = view[:, finite]
                mean = data.mean(axis=1) if data.shape[1] else np.zeros(view.shape[0])
    n = data.shape[1]
    with np.errstate(over="ignore"):
        if not np.isfinite(mean).all():  # then in units of the largest value
            scale = np.max(np.abs(data), axis=1)
            mean = scale * (data / scale[:, None]).mean(axis=1)
        centred = data - mean[:, None]
        m2 = np.einsum("ij,ij->i", centred, centred)
    return np.column_stack([np.full(view.shape[0], float(n)), mean, m2])


def _combine(moments: list[np.ndarray]) -> np.ndarray:
    """Chan et al.'s pairwise update, block by block in order: (n, mean, M2) per measurand."""
    total = moments[0].copy()
    for part in moments[1:]:
        n_a, n_b = total[:, 0], part[:, 0]
        n = n_a + n_b
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            delta = part[:, 1] - total[:, 1]
            share = np.where(n > 0, n_b / np.where(n > 0, n, 1), 0.0)
            total[:, 1] = total[:, 1] + delta * share
            total[:, 2] = total[:, 2] + part[:, 2] + delta * delta * n_a * share
        total[:, 0] = n
    return total


@keywords_checked
def simulate(model: Model, budget: Budget | None = None, *, trials: int | None = None,
             adaptive: bool = False, seed: int | None = None, coverage: float | None = None,
             digits: int | None = None, workers: int | None = None,
             progress: Callable[[int, int], None] | None = None,
             keep_samples: bool | None = None) -> Simulation:
    """Monte Carlo propagation of distributions; validates ``budget`` when given.

    ``keep_samples``: keep every value (``MeasurandSimulation.samples``); by default only
    while a fixed run has at most ``KEEP_LIMIT`` values, longer runs are streamed."""
    settings = _checked(model, budget, trials=trials, seed=seed, coverage=coverage,
                        digits=digits, workers=workers, progress=progress,
                        flags={"adaptive": adaptive, "keep_samples": keep_samples})
    seed = settings.seed if seed is None else check_seed_argument(seed, Location(
        file=model.source, key="seed"))
    coverage_at = Location(file=model.source, table="settings" if coverage is None else None,
                           key="coverage")
    coverage = settings.coverage_probability if coverage is None else float(coverage)
    digits = settings.digits if digits is None else digits
    workers = check_workers(workers, Location(file=model.source, key="workers")) \
        or min(2, os.cpu_count() or 1)
    trials_at = Location(file=model.source, table="settings" if trials is None else None,
                         key="trials")  # the file's setting, or an argument
    check_budget_of(budget, model, coverage, Location(file=model.source, key="budget"))
    if trials is not None:
        trials = check_trials_argument(trials, trials_at)
    else:
        adaptive = adaptive or settings.trials == "adaptive"
        trials = 0 if settings.trials == "adaptive" else int(settings.trials)
    check_trials(trials, trials_at)
    if adaptive:
        check_adaptive(coverage, coverage_at)
        _check_finite_variance(model, budget)
    if not adaptive and (trials < 2 or trials < 1.0 / (1.0 - coverage)):
        least = max(2, math.ceil(1 / (1 - coverage)))
        raise SimulationError(f"expected at least {least} trials for a "
                              f"{100 * coverage:.10g} % interval, found {trials}", trials_at)
    drawing = _drawing(model)
    # a long run loads the compiled draws (_ziggurat) while its sampler is made, and
    # waits for them a while; the workers are the parallelism (BLAS on one thread)
    with loading_alongside(0 if adaptive else trials * _announced(drawing[1])) as ready, \
            _blas_on_one_thread(workers):
        sampler = _Sampler(model, seed, drawing)
        ready()
        if adaptive:
            adaptive_samples, warnings, moments, kept, streamed = _adaptive(
                sampler, coverage, digits, workers, progress, keep_samples)
            if streamed is not None:
                return _summarise(model, budget, None, seed, coverage, digits, True,
                                  sampler.warnings + warnings, moments, streamed=streamed)
            assert adaptive_samples is not None
            samples = adaptive_samples
        else:
            ticker = (lambda n, total=trials: progress(n, total)) if progress else None
            if not _keeps(keep_samples, trials, len(model.measurands), coverage):
                from ._streaming import stream

                found = stream(sampler, trials, coverage, ticker, workers)
                return _summarise(model, budget, None, seed, coverage, digits, False,
                                  sampler.warnings, found.moments, streamed=found)
            check_kept(trials, len(model.measurands), trials_at)
            samples = np.empty((len(model.measurands), trials))
            moments, kept = _fixed_run(sampler, samples, coverage, ticker, workers)
            warnings = []
        return _summarise(model, budget, samples, seed, coverage, digits, adaptive,
                          sampler.warnings + warnings, moments, kept)


@contextmanager
def _blas_on_one_thread(workers: int) -> Iterator[None]:
    """The BLAS library on one thread while several workers run: with its own threads
    inside each worker, the workers' matrix products (correlated groups, several
    measurands' comoments) wait on each other (measured here, benchmarks/correlated_t.py:
    twice the time). The limit is the process's, restored afterwards (threadpoolctl)."""
    if workers <= 1:
        yield
        return
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        yield


def _checked(model: Model, budget: Budget | None, *, trials: Any, seed: Any, coverage: Any,
             digits: Any, workers: Any, progress: Any, flags: dict[str, Any]) -> Any:
    """The arguments of ``simulate`` checked as the file's keys are; the model's settings."""
    check_model(model, "simulate")
    where = Location(file=model.source)
    if coverage is not None:
        check_probability(coverage, replace(where, key="coverage"))
    if digits is not None:
        check_digits(digits, replace(where, key="digits"))
    check_progress(progress, replace(where, key="progress"))
    for name, value in flags.items():
        check_flag(value, replace(where, key=name), none=name == "keep_samples")
    check_not_both(trials, flags["adaptive"], replace(where, key="trials"))
    return model.settings


def _keeps(keep_samples: bool | None, trials: int, measurands: int, coverage: float) -> bool:
    """Whether a fixed run keeps every value: asked for, short enough, or p ≤ ½ (whose
    shortest interval needs half of all values)."""
    if keep_samples is not None:
        return keep_samples
    return trials * measurands <= KEEP_LIMIT or coverage <= 0.5


def _fixed_run(sampler: _Sampler, samples: np.ndarray, coverage: float,
               ticker: Callable[[int], None] | None, workers: int) -> tuple[np.ndarray, list[Any]]:
    trials = samples.shape[1]
    blocks = -(-trials // sampler.size)
    cuts = None if blocks < 4 or coverage <= 0.5 else _Cuts(coverage)
    return _run_blocks(sampler, trials, samples, ticker, workers, cuts)


def _adaptive(sampler: _Sampler, coverage: float, digits: int, workers: int,
              progress: Callable[[int, int], None] | None, keep_samples: bool | None
              ) -> tuple[np.ndarray | None, list[str], np.ndarray, list[Any], Streamed | None]:
    """JCGM 101 7.9 with batches of whole blocks (≥ max(J, 10⁴) trials each), on all
    workers. Running statistics: each batch leaves its moments, its four results (mean,
    sd, interval ends) and its tail values beyond the first batch's cut points, so a
    convergence check costs one batch, never all the values so far, and the final
    intervals sort the tails only. The workers draw the next blocks while a batch is
    checked (blocks depend on their index only, so drawing ahead changes nothing).

    Values are kept, as for a fixed run, while the run holds at most ``KEEP_LIMIT`` of
    them; the batches after that are drawn into a small ring of batches and streamed
    (a histogram, the output correlation and the tails, as ``_streaming`` does for a
    long fixed run), so a run of ``ADAPTIVE_LIMIT`` trials stays in bounded memory. A run
    that must keep every value (``keep_samples``, or p ≤ ½) stops at
    ``ADAPTIVE_KEEP_LIMIT``."""
    from ._streaming import Pile, Streaming, pile_up

    j = math.ceil(100.0 / (1.0 - coverage))
    # at least two blocks per batch, so that both workers draw (the same on any number
    # of cores: the batch size never depends on the workers)
    per_batch = max(2, -(-max(j, 10_000) // sampler.size))
    size = per_batch * sampler.size
    outputs = len(sampler.model.measurands)
    keep_all = bool(keep_samples) or coverage <= 0.5
    limit = ADAPTIVE_KEEP_LIMIT if keep_all else ADAPTIVE_LIMIT
    drawn = drawn_inputs(sampler.model)
    why = ""
    if ADAPTIVE_NUMBERS // drawn < limit:
        limit = ADAPTIVE_NUMBERS // drawn
        why = f": {ADAPTIVE_NUMBERS:.2g} random numbers for {drawn:,} inputs drawn"
    most = max(1, limit // size)  # batches: the last one keeps (h + 2)·M ≤ cap
    # batches whose values are kept: all of them, or while the run holds ≤ KEEP_LIMIT
    room = most if keep_all else (0 if keep_samples is False
                                  else min(most, KEEP_LIMIT // (outputs * size)))
    samples = np.empty((outputs, room * size))
    # the streamed batches rotate through a ring that outlasts the blocks drawn ahead: while
    # batch h is checked, the workers may write up to 2·workers blocks past it
    slots = 2 + 2 * max(1, workers) // per_batch
    ring = np.empty((outputs, slots * size)) if room < most else np.empty((outputs, 0))
    stats = np.empty((most, outputs, 4))  # per batch: mean, sd, low, high
    moments: np.ndarray | None = None  # (n_out, 3): count, mean, M2 of all batches
    piles = [(Pile(), Pile()) for _ in range(outputs)]  # every batch's tail values
    # set once batch 0 is in; a worker that sees them works for the main thread
    shared: dict[str, Any] = {"tails": None, "streaming": None}

    def batch(h: int) -> np.ndarray:
        if h < room:
            return samples[:, h * size:(h + 1) * size]
        slot = (h - room) % slots
        return ring[:, slot * size:(slot + 1) * size]

    def place(b: int) -> np.ndarray:
        h, offset = divmod(b, per_batch)
        return batch(h)[:, offset * sampler.size:(offset + 1) * sampler.size]

    def work(b: int) -> tuple[np.ndarray, Any, Any]:
        view = place(b)
        sampler.block(b, sampler.size, view)
        cut, streaming = shared["tails"], shared["streaming"]
        return (_block_moments(view), cut.collect(view) if cut is not None else None,
                streaming.summary(view) if streaming is not None and b >= room * per_batch
                else None)

    blocks = _ahead(work, most * per_batch, workers)
    warnings: list[str] = []
    h = 0
    try:
        for h in range(most):
            chunk = batch(h)
            found = [next(blocks) for _ in range(per_batch)]
            done = _combine([f[0] for f in found])
            if progress:
                progress(size, (h + 1) * size)  # trials done since the last call
            if h == 0 and coverage > 0.5 and np.isfinite(chunk).all():
                shared["tails"] = _Tails(chunk, coverage)
            if h == 0 and room < most:
                shared["streaming"] = Streaming(chunk[:, :sampler.size])
            tails, streaming = shared["tails"], shared["streaming"]
            views = [place(h * per_batch + i) for i in range(per_batch)]
            if streaming is not None and h >= room:  # from here on the values are streamed
                if h == room:
                    streaming.absorb(samples, size)
                for view, f in zip(views, found):
                    streaming.take(f[2] if f[2] is not None else streaming.summary(view))
            pieces = None
            if tails is not None:
                parts = [f[1] if f[1] is not None else tails.collect(view)
                         for view, f in zip(views, found)]
                pieces = [(np.concatenate([p[k][0] for p in parts]),
                           np.concatenate([p[k][1] for p in parts])) for k in range(outputs)]
                pile_up(piles, pieces)
            moments = done if moments is None else _combine([moments, done])
            stats[h] = _batch_stats(chunk, coverage, done, pieces)
            if h >= 1 and _converged(moments, stats[:h + 1], digits):
                break
        else:
            warnings.append(f"adaptive Monte Carlo stopped at {most * size} trials before "
                            f"its numerical tolerance was reached (limit {limit:,} "
                            f"trials{why})")
    finally:
        blocks.close()
    assert moments is not None
    trials = (h + 1) * size
    streaming = shared["streaming"]
    collected = shared["tails"] is not None
    if h < room or streaming is None:
        # the tails as one block of pieces, as a fixed kept run leaves them
        kept = [[(np.concatenate(lows.take()), np.concatenate(highs.take()))
                 for lows, highs in piles]] if collected else []
        return samples[:, :trials], warnings, moments, kept, None
    samples = ring = np.empty((outputs, 0))  # the kept values and the ring are dropped
    sides = piles if collected and moments[0, 0] == trials else None
    return None, warnings, moments, [], streaming.finish(sampler, trials, coverage, workers,
                                                         moments, sides)


def _ahead(work: Callable[[int], Any], count: int, workers: int
           ) -> Generator[Any, None, None]:
    """``work(b)`` of blocks 0, 1, …, in order, with up to two blocks per worker done
    ahead; closing it stops the work."""
    if workers <= 1:
        yield from map(work, range(count))
        return
    with ThreadPoolExecutor(max_workers=workers) as pool:
        pending: deque[Future[Any]] = deque()
        try:
            for b in range(count):
                pending.append(pool.submit(work, b))
                while len(pending) > 2 * workers:
                    yield pending.popleft().result()
            while pending:
                yield pending.popleft().result()
        finally:
            for future in pending:
                future.cancel()


def _unresolved(estimate: float, u: float, delta: float,
                interval: tuple[float, float]) -> str:
    """Why the Monte Carlo values cannot resolve the tolerance δ, or '' when they can.

    Double-precision values near y are spaced by ε·|y|; when u_c is not a thousand such
    spacings, or δ not ten, the drawn values are quantised and d_low, d_high say nothing.
    """
    spacing = float(np.spacing(max(abs(estimate), abs(interval[0]), abs(interval[1]))))
    if u >= 1000.0 * spacing and delta >= 10.0 * spacing:
        return ""
    return (f"the spread is not resolved in double precision (u_c = {u:.2g} and δ = "
            f"{delta:.2g} against a spacing of {spacing:.2g} between representable values "
            f"near {max(abs(estimate), abs(interval[0]), abs(interval[1])):.3g})")


def _spread(y: np.ndarray | None, mean: float, variance: float) -> float:
    """The standard deviation; recomputed in scaled units when the variance over- or
    underflows (values near 1e±200) and the values are kept, so that a representable
    spread is never 0 or ∞."""
    if 1e-280 < variance < 1e280 or y is None:
        return math.sqrt(variance)
    finite = y[np.isfinite(y)]
    scale = float(np.max(np.abs(finite - mean))) if finite.size else 0.0
    if scale == 0.0 or not math.isfinite(scale):
        return math.sqrt(variance) if math.isfinite(variance) else math.inf
    return scale * float(np.std((finite - mean) / scale, ddof=1))


def heavy_tailed(model: Model, budget: Budget | None, k: int) -> list[tuple[str, float]]:
    """(name, ν) of the inputs measurand k depends on (a non-zero sensitivity; every input
    without a budget) that are drawn from a t distribution with ν ≤ 2: it has no finite
    variance (JCGM 101 6.4.9), so neither has the measurand's distribution."""
    found = []
    for i, item in enumerate(model.inputs):
        t = item.distribution
        if isinstance(t, StudentT) and t.dof <= 2 and t.scale > 0 and (
                budget is None or budget.measurands[k].contributions[i].sensitivity != 0):
            found.append((item.name, t.dof))
    return found


def _check_finite_variance(model: Model, budget: Budget | None) -> None:
    """Refuse the adaptive procedure for an output without finite variance: its stopping
    rule (JCGM 101 7.9.4) waits for the standard deviation to settle, which never comes."""
    for k in range(len(model.measurands)):
        for name, dof in heavy_tailed(model, budget, k)[:1]:
            raise SimulationError(
                f"expected inputs with a finite variance for the adaptive procedure, found ν "
                f"= {dof:g}: a t distribution with ν ≤ 2 has none, so the Monte Carlo standard "
                f"deviation of '{model.measurands[k].name}' never settles (JCGM 101 6.4.9, "
                "7.9); give a fixed number of trials instead",
                Location(file=model.source, table=f"inputs.{name}",
                         line=model.input(name).line))


def _heavy_warnings(model: Model, budget: Budget | None) -> list[str]:
    """A warning per measurand whose Monte Carlo mean or standard deviation estimates
    nothing (an input drawn from a t distribution with ν ≤ 2)."""
    warnings = []
    for k, measurand in enumerate(model.measurands):
        found = heavy_tailed(model, budget, k)
        if found:
            names = ", ".join(f"{name} (ν = {dof:g})" for name, dof in found)
            what = "mean and standard deviation are" if min(d for _, d in found) <= 1 \
                else "standard deviation is"
            warnings.append(
                f"'{measurand.name}': the Monte Carlo {what} not an estimate of anything: "
                f"{names} {'is' if len(found) == 1 else 'are'} drawn from a t distribution "
                "with ν ≤ 2, which has no finite variance (JCGM 101 6.4.9), so such figures "
                "change from run to run and grow with the trials; the coverage interval "
                "remains valid")
    return warnings


def check_adaptive(coverage: float, where: Location | None = None) -> None:
    """Refuse a coverage whose adaptive batches (≥ 100/(1 − p) trials, a few of them held
    in memory at once) pass the cap of a run that keeps its values."""
    batch = math.ceil(100.0 / (1.0 - coverage))
    if 2 * batch > ADAPTIVE_KEEP_LIMIT:
        raise SimulationError(
            f"expected a coverage probability whose adaptive batches fit the limit of "
            f"{ADAPTIVE_KEEP_LIMIT:,} trials (p below {1 - 200 / ADAPTIVE_KEEP_LIMIT:.7g}; "
            f"JCGM 101 "
            f"7.9 asks for batches of 100/(1 - p) = {batch:,} trials here), found {coverage:g}"
            "; give a fixed number of trials instead", where)


def _batch_stats(chunk: np.ndarray, coverage: float, done: np.ndarray | None = None,
                 pieces: list[tuple[np.ndarray, np.ndarray]] | None = None) -> np.ndarray:
    """Per measurand: mean, standard deviation and interval ends of one batch. With the
    batch's moments (``done``) and its values beyond the cut points (``pieces``) of an
    all-finite batch, the ends are selected among those few values (the same order
    statistics: every value beyond a cut is there)."""
    if done is not None and pieces is not None and np.all(done[:, 0] == chunk.shape[1]):
        found = [_batch_ends(low, high, chunk.shape[1], coverage) for low, high in pieces]
        if all(f is not None for f in found):
            sd = np.sqrt(done[:, 2] / (done[:, 0] - 1))
            return np.column_stack([done[:, 1], sd, np.array(found, dtype=float)])
    rows = []
    for y in chunk:
        finite = y[np.isfinite(y)]
        if finite.size < 2:
            rows.append([np.nan] * 4)
            continue
        low, high = coverage_interval(finite.copy(), coverage)
        rows.append([finite.mean(), finite.std(ddof=1), low, high])
    return np.array(rows)


def _batch_ends(low: np.ndarray, high: np.ndarray, m: int, p: float
               ) -> tuple[float, float] | None:
    """The JCGM 101 7.7.2 interval of m values from the values at or below the low cut
    and at or above the high cut, or None when one side holds too few."""
    lo, hi = _indices(m, p)
    above = m - 1 - hi  # values above the upper end
    if lo >= low.size or above >= high.size:
        return None
    upper = high.size - 1 - above
    return (float(np.partition(low, lo)[lo]), float(np.partition(high, upper)[upper]))


def _converged(moments: np.ndarray, stats: np.ndarray, digits: int) -> bool:
    """JCGM 101 7.9.4: twice the standard deviation of the h batch results over √h
    within δ, δ from the standard deviation of all values so far (running moments)."""
    h = stats.shape[0]
    spread = 2.0 * stats.std(axis=0, ddof=1) / math.sqrt(h)  # (n_out, 4)
    for k in range(moments.shape[0]):
        count, m2 = moments[k, 0], moments[k, 2]
        sd = math.sqrt(m2 / (count - 1)) if count > 1 else math.nan
        delta = tolerance(sd, digits)
        if not np.all(spread[k] <= delta):
            return False
    return True


def _summarise(model: Model, budget: Budget | None, samples: np.ndarray | None, seed: int,
               coverage: float, digits: int, adaptive: bool, warnings: list[str],
               moments: np.ndarray | None = None, kept: list[Any] | None = None,
               streamed: Streamed | None = None) -> Simulation:
    """The simulation from every value (``samples``) or from a streamed run."""
    total = streamed.total if streamed is not None else samples.shape[1]  # type: ignore[union-attr]
    if moments is None:
        assert samples is not None
        moments = _block_moments(samples)
    bad = int(total - moments[0, 0])
    if bad and samples is not None:
        samples = samples[:, np.isfinite(samples).all(axis=0)]
    if bad:
        share = bad / total
        if share > NONFINITE_LIMIT:
            raise SimulationError(
                f"{bad} of {total} Monte Carlo trials ({100 * share:.2g} %) "
                f"gave a non-finite model value (limit {100 * NONFINITE_LIMIT:g} %); the "
                "input distributions reach outside the equations' domain",
                Location(file=model.source))
        warnings.append(f"{bad} of {total} Monte Carlo trials ({100 * share:.2g} %) gave a "
                        "non-finite model value and were left out")
    if streamed is not None:
        correlation = streamed.correlation
    else:
        assert samples is not None
        with np.errstate(invalid="ignore", divide="ignore"):  # a constant measurand: 0/0
            correlation = np.corrcoef(samples) if samples.shape[0] > 1 else np.ones((1, 1))
        correlation = np.nan_to_num(np.atleast_2d(correlation), nan=0.0)
        np.fill_diagonal(correlation, 1.0)  # as the streamed run and the GUM give it
    results = tuple(
        _one(model, budget, k, None if samples is None else samples[k], coverage, digits,
             moments[k], [block[k] for block in kept] if kept and not bad else None,
             streamed)
        for k in range(moments.shape[0]))
    warnings += _heavy_warnings(model, budget)
    for item in results:
        if item.validation is not None and item.validation.reason:
            warnings.append(f"'{item.name}': Monte Carlo cannot validate the GUM result: "
                            f"{item.validation.reason}")
        elif item.validation is not None and not item.validation.validated:
            warnings.append(
                f"'{item.name}': Monte Carlo does not validate the GUM result at "
                f"{item.validation.tolerance:.2g}{spaced_unit(display_unit(item.unit))} (d_low = "
                f"{item.validation.d_low:.2g}, d_high = {item.validation.d_high:.2g}, "
                "JCGM 101 8.2)")
    return Simulation(trials=total, seed=seed, coverage_probability=coverage,
                      adaptive=adaptive, nonfinite=bad, measurands=results,
                      output_correlation=tuple(tuple(float(x) for x in row)
                                               for row in correlation),
                      warnings=tuple(warnings))


def _one(model: Model, budget: Budget | None, k: int, y: np.ndarray | None, coverage: float,
         digits: int, moments: np.ndarray, tails: list[Any] | None = None,
         streamed: Streamed | None = None) -> MeasurandSimulation:
    measurand = model.measurands[k]
    count = int(moments[0])
    if count < 2:
        raise SimulationError(f"expected at least 2 finite Monte Carlo values, found {count}",
                              Location(file=model.source, table=f"measurands.{measurand.name}",
                                       key="equation", line=measurand.line))
    mean = float(moments[1])
    sd = _spread(y, mean, float(moments[2]) / (moments[0] - 1))
    if not (math.isfinite(mean) and math.isfinite(sd)):  # running sums beyond ±1.8e308
        raise SimulationError(
            f"expected a Monte Carlo mean and standard deviation within ±1.8e308, found "
            f"{mean:.3g} and {sd:.3g}: the running sums of a run that does not keep its "
            "values (adaptive, or above 10⁷ values) overflow for u of about 1e150 and more; "
            "rescale the units, or give at most 10⁷ trials",
            Location(file=model.source, table=f"measurands.{measurand.name}",
                     key="equation", line=measurand.line))
    if streamed is not None:
        interval, shortest = streamed.intervals[k]
    else:
        assert y is not None
        found = _from_tails(tails, count, coverage) if tails else None
        # the intervals partition a copy: ``samples`` keep the trial order, jointly with
        # the other measurands (issue 10: sorting row by row destroyed their correlation)
        interval, shortest = found or _intervals(y.copy(), coverage)
    validation = None
    if budget is not None:
        gum = budget.measurands[k]
        delta = tolerance(gum.combined_uncertainty, digits)
        d_low = abs(gum.estimate - gum.expanded_uncertainty - interval[0])
        d_high = abs(gum.estimate + gum.expanded_uncertainty - interval[1])
        reason = _unresolved(gum.estimate, gum.combined_uncertainty, delta, interval)
        validation = Validation(tolerance=delta, d_low=d_low, d_high=d_high,
                                validated=bool(d_low <= delta and d_high <= delta
                                               and not reason), reason=reason)
    return MeasurandSimulation(name=measurand.name, unit=measurand.unit, trials=count,
                               mean=mean, standard_uncertainty=sd, interval=interval,
                               shortest_interval=shortest, validation=validation,
                               samples=y, histogram=None if streamed is None
                               else streamed.histograms[k])
