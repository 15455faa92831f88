"""Standard normal numbers by the ziggurat method, vectorised in numpy.

Marsaglia and Tsang, "The ziggurat method for generating random variables", Journal of
Statistical Software 5(8), 2000: the area under f(x) = exp(−x²/2), x ≥ 0, is covered by
256 layers of equal area v, a base strip (the rectangle [0, r] × [0, f(r)] and the tail
beyond r) and 255 rectangles [0, x_i] × [f(x_i), f(x_{i−1})] with x_255 = r, x_0 = 0.
One 64-bit word gives a layer (8 bits), a sign (1 bit) and a point of the layer's
rectangle (the top 52 bits). The point lies inside the next layer's width in about 99 %
of draws, and is then a normal number as it stands; those are computed for a whole array
at once. The rest take the exact slow paths of the method, on the few positions concerned:

* base strip: a point beyond r is replaced by a draw from the tail (Marsaglia's tail
  method: x = −ln(U₁)/r, y = −ln(U₂), accept when 2y > x², return r + x);
* other layers: the point is kept when it lies under the curve within the wedge
  (f(x_i) + (f(x_{i−1}) − f(x_i))·U < f(x)); otherwise the method starts again, and a
  fresh start yields a standard normal number whatever happened before, so the position
  takes one of numpy's own standard normal numbers from the same stream.

The numbers therefore follow the standard normal distribution exactly (to the 52-bit
resolution of each layer, like numpy's scalar ziggurat); only their order in the stream
differs from numpy's, which draws one number at a time. About 15-30 % less time per number
than ``Generator.standard_normal`` on this project's machines (benchmarks/generators.py),
because the table look-ups and tests run as array operations instead of a call per number.

Long runs take the same numbers from a compiled loop (``_compiled_draws``, numba), which
computes the SFC64 words and the fast path in the registers with the arithmetic of the
array operations here, operation for operation, so that which path drew a number never
shows in it; ``use_compiled`` loads it (checking its numbers against this path first),
``expect`` and ``loading_alongside`` decide when (``COMPILED_FROM``).

When the caller asks for scaled numbers (σ·z + μ per row), a piece that lies within one
row takes σ into the layer widths, (σ·w)·p instead of σ·(w·p): the same number to a unit
in the last place, one pass over the piece fewer.

r is solved for (bisection) so that the 255 rectangles and the base strip close exactly at
the top, f(x_1) + v/x_1 = 1; it agrees with the published r = 3.6541528853610088 to about
10⁻¹⁵ (tests/test_ziggurat.py).
"""

from __future__ import annotations

import importlib
import math
import os
import sys
import threading
import warnings
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from functools import cache
from typing import Any

import numpy as np

__all__ = ["LAYERS", "compiled", "compiled_rows", "expect", "layers", "standard_normal",
           "uniform_rows", "use_compiled"]

LAYERS = 256
_BITS = 52
_SCALE = float(1 << _BITS)
_MASK = 2 * LAYERS - 1  # the layer (low 8 bits) and the sign (bit 8)
# Numbers per piece of the fast path: large enough that the dozen numpy calls per piece
# (each taking the interpreter lock) leave two threads free to run side by side, small
# enough that a piece's arrays (about 33 bytes a number) stay in the processor's caches.
# Measured here (benchmarks/generators.py, two threads against one): 2^14 0.84x, 2^15
# 1.08x, 2^16 1.51x, 2^17 1.65x, 2^18 1.79x, but 2^18 fills alone at half the speed of
# 2^17 in some runs (its arrays no longer fit the cache); the Monte Carlo ratio benchmark
# gave the same times for 2^16-2^18.
_PIECE = 1 << 17
# The compiled draws (``_compiled_draws``, numba) give the same numbers about three times
# as fast (8 ns less CPU per normal number here, 2.5 ns per rectangular one), but loading
# them (numba's import, then their cached machine code) costs about 0.45 s of wall time and
# about 120 MB. So a process loads them once it has drawn, or a run announces (``expect``,
# ``loading_alongside``), COMPILED_FROM normal numbers, a rectangular one counting for a
# third: where the CPU time saved, shared by two workers, pays for the loading's wall time
# (measured with benchmarks/montecarlo_memory.py: the demo's 10^7 trials, 6.7·10^7 such
# numbers, ran 0.6 s slower with them). Loaded, they serve every fill of at least
# COMPILED_SIZE numbers; smaller fills take the numpy path (the same numbers).
COMPILED_FROM = 200_000_000
COMPILED_SIZE = 1 << 12
_compiled: Any = None  # the module _compiled_draws, once loaded
_rows: Any = None  # and _compiled_rows (a wide model's sums over rows), loaded with it
_loading = threading.Lock()
_drawn = 0  # normal numbers drawn by this process (a rectangular one: a third)
_held = False  # numba failed to load here, or the caller said no: the numpy path
_pending = False  # a thread is loading them (loading_alongside)


def _f(x: float) -> float:
    return math.exp(-0.5 * x * x)


def _strip(r: float) -> float:
    """Area v of the base strip: the rectangle [0, r] × [0, f(r)] and the tail beyond r."""
    return r * _f(r) + math.sqrt(math.pi / 2.0) * math.erfc(r / math.sqrt(2.0))


def _edges(r: float) -> list[float] | None:
    """x_1 … x_255 = r, each rectangle of area v; None when a layer overshoots the top."""
    v = _strip(r)
    xs = [r]
    for _ in range(LAYERS - 2):
        top = _f(xs[-1]) + v / xs[-1]
        if top >= 1.0:
            return None
        xs.append(math.sqrt(-2.0 * math.log(top)))
    return xs[::-1]


def _closing(r: float) -> float:
    """f(x_1) + v/x_1 − 1: zero when the top rectangle ends exactly at f = 1."""
    xs = _edges(r)
    if xs is None:
        return 1.0
    return _f(xs[0]) + _strip(r) / xs[0] - 1.0


def solve_r() -> float:
    """The base strip's r for 256 layers, by bisection on [3, 4]."""
    low, high = 3.0, 4.0  # too small an r overshoots (closing > 0); too large falls short
    for _ in range(200):
        middle = 0.5 * (low + high)
        if middle in (low, high):
            break
        if _closing(middle) > 0.0:
            low = middle
        else:
            high = middle
    return 0.5 * (low + high)


@cache
def layers() -> tuple[float, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """r; per 9-bit code (layer + 256·sign): signed width per unit and the accept bound;
    per layer: f at its outer edge with f(x_0) = 1 prepended (the wedge's top and bottom).

    Layer 0 is the base strip, of width q = v/f(r) per unit (its points beyond r go to the
    tail); layer i ≥ 1 is the rectangle of width x_i, accepted outright below x_{i−1}."""
    r = solve_r()
    xs = _edges(r)
    assert xs is not None
    v = _strip(r)
    q = v / _f(r)
    widths = np.array([q] + xs) / _SCALE
    inner = np.array([r / q] + [0.0] + [a / b for a, b in zip(xs, xs[1:])])
    bounds = np.floor(inner * _SCALE).astype(np.int64)
    heights = np.array([1.0] + [_f(x) for x in xs])  # f(x_0) = 1, f(x_1) … f(x_255)
    signed = np.concatenate([widths, -widths])
    return r, signed, np.concatenate([bounds, bounds]), heights, widths


def use_compiled(on: bool = True) -> bool:
    """Load the compiled draws (numba) for the fills to come, or stop using them and
    never load them on their own again (``on=False``); True when they are in use.
    Without a working numba (not installed, its cache nowhere to write, numbers that
    disagree), or with ``BUDGET_COMPILED=0`` in the environment, False and the numpy path
    from then on, which gives the same numbers."""
    global _compiled, _held, _rows
    _held = not on or os.environ.get("BUDGET_COMPILED", "").strip() == "0"
    if _held:  # asked not to, or BUDGET_COMPILED=0 in the environment
        _compiled = _rows = None
        return False
    with _loading:
        if _compiled is None:
            try:  # numba's own warnings (a cache it cannot write, say) are not the user's
                with warnings.catch_warnings(), _without_blas():
                    warnings.simplefilter("ignore")
                    module = importlib.import_module("budget._compiled_draws")
                    agrees = _agrees(module)
                    rows = importlib.import_module("budget._compiled_rows")
            except Exception:  # noqa: BLE001 - any failure to load: the numpy path
                agrees = False
            if not agrees:
                _held = True
                return False
            _compiled, _rows = module, rows
    return True


class _NoBlas:
    """An import finder (``sys.meta_path``) that refuses ``scipy.linalg`` to one thread
    and leaves every other import to the finders after it: see ``_without_blas``."""

    def __init__(self) -> None:
        self.thread = threading.get_ident()

    def find_spec(self, name: str, path: Any = None, target: Any = None) -> None:
        if name == "scipy.linalg" and threading.get_ident() == self.thread:
            raise ImportError("scipy.linalg is not loaded with the compiled draws")
        return None


@contextmanager
def _without_blas() -> Iterator[None]:
    """numba, when it first loads its array functions, imports ``scipy.linalg`` to find
    a BLAS for ``np.dot`` and the like in compiled code (numba.np.arraymath, _check_blas):
    a quarter of a second of imports here, holding the interpreter lock while a run is
    being prepared. The compiled loops use no linear algebra, so while this thread loads
    them that import fails at once, in this thread only (other threads, and this one
    afterwards, import scipy.linalg as usual), and numba goes on without a BLAS for its
    inner products (``np.correlate`` and ``np.convolve`` in compiled code elsewhere in the
    process take numba's own loop instead; ``np.dot`` looks for the BLAS again when used).
    Where scipy.linalg is already loaded, nothing changes."""
    if "scipy.linalg" in sys.modules:
        yield
        return
    finder = _NoBlas()
    sys.meta_path.insert(0, finder)
    try:
        yield
    finally:
        sys.meta_path.remove(finder)


def _agrees(module: Any) -> bool:
    """Whether the compiled draws give the numpy path's numbers here (a few thousand of
    each kind, scaled and not; this also compiles or loads their machine code now)."""
    scale, shift = np.array([[0.5], [3.0]]), np.array([[1.0], [-2.0]])
    for pair in ((None, None), (scale, shift)):
        mine, theirs = np.empty((2, COMPILED_SIZE)), np.empty((2, COMPILED_SIZE))
        first, second = (np.random.Generator(np.random.SFC64(1)) for _ in range(2))
        left = module.fast_path(first, mine.reshape(-1), COMPILED_SIZE, 1,
                                *layers()[1:3], *pair)[0]
        positions = _pieces(second, theirs, 1, None if pair[0] is None else (scale, shift))[0]
        if not np.array_equal(mine, theirs) or not np.array_equal(
                left, np.concatenate(positions)) or not np.array_equal(
                first.bit_generator.random_raw(2), second.bit_generator.random_raw(2)):
            return False
    uniform, reference = np.empty((2, COMPILED_SIZE)), np.empty((2, COMPILED_SIZE))
    first, second = (np.random.Generator(np.random.SFC64(2)) for _ in range(2))
    module.uniform_rows(first, uniform, scale, shift)
    second.random(out=reference)
    reference *= scale
    reference += shift
    return bool(np.array_equal(uniform, reference))


def _due(numbers: float) -> bool:
    """Whether ``numbers`` more, with those this process drew before, reach COMPILED_FROM
    while the compiled draws are neither loaded, refused nor being loaded."""
    return _compiled is None and not _held and not _pending \
        and _drawn + numbers >= COMPILED_FROM


def expect(numbers: float) -> None:
    """``numbers`` more to draw: the compiled draws are loaded (here and now) when they
    are due (``_due``); not while another thread loads them (a worker goes on in numpy
    meanwhile)."""
    if _due(numbers):
        use_compiled()


# How long a run waits for the compiled draws being loaded before it starts in numpy:
# loading them from numba's cache took 0.5-0.9 s here (about 0.45 s since numba's search
# for a BLAS is refused to the loading thread), and a run that starts meanwhile
# draws in numpy, at a third of the speed, and takes turns at the interpreter lock with
# the loading (measured here, a mean of 3332 determinations with 10^5 trials in one
# process: its Monte Carlo took 0.6-1.0 s longer than one that waited); compiling them
# afresh (a first run after an installation: about 6 s) takes longer, and the run then
# goes on alongside.
LOADING_WAIT = 2.0


@contextmanager
def loading_alongside(numbers: float) -> Iterator[Callable[[], None]]:
    """A run of ``numbers`` numbers: when they reach COMPILED_FROM, the compiled draws are
    loaded by a thread of their own while the caller prepares the run; the caller's
    ``ready()`` waits for them up to LOADING_WAIT seconds, and the run then starts in
    numpy if they are not there yet (its fills take the compiled loop once it is: the
    same numbers either way); the thread is joined when the run ends, so none is left
    behind."""
    global _pending
    thread = None
    if _due(numbers):
        _pending = True
        thread = threading.Thread(target=use_compiled, name="budget-load-compiled")
        thread.start()

    def ready() -> None:
        if thread is not None:
            thread.join(LOADING_WAIT)

    try:
        yield ready
    finally:
        if thread is not None:
            thread.join()
            _pending = False


def compiled() -> bool:
    """Whether the compiled draws are in use."""
    return _compiled is not None


def compiled_rows() -> Any:
    """The compiled sums over a wide model's rows (``_compiled_rows``) when the compiled
    draws are in use, else None (the same numbers in numpy)."""
    return _rows


_local = threading.local()  # each thread's scratch arrays, reused call after call


def _scratch(n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """This thread's scratch arrays of ``n`` elements (temporaries of this size would be
    fresh pages at every call): codes, widths and, in the same memory once the widths
    are used, the accept bounds, and the flags."""
    found = getattr(_local, "arrays", None)
    if found is None or found[0].size < n:
        found = _local.arrays = (np.empty(n, np.uint64), np.empty(n), np.empty(n, bool))
    codes, widths, flags = found
    return codes[:n], widths[:n], widths[:n].view(np.int64), flags[:n]


def standard_normal(generator: np.random.Generator, out: np.ndarray,
                    scale: np.ndarray | None = None,
                    shift: np.ndarray | None = None) -> np.ndarray:
    """Fill the C-contiguous float64 array ``out`` (rows × columns, or one row) with
    standard normal numbers drawn from ``generator``, each row then times its ``scale``
    plus its ``shift`` (arrays of rows × 1) when given.

    The fast path runs on pieces of about ``_PIECE`` numbers, scaled while they are in the
    cache; the slow paths run once for the whole array, whose few positions would
    otherwise cost a dozen small numpy calls per piece."""
    if out.dtype != np.float64 or not out.flags.c_contiguous or out.ndim > 2:
        raise ValueError("standard_normal fills a C-contiguous float64 array of 1 or 2 "
                         "dimensions")
    table = out.reshape(1, -1) if out.ndim == 1 else out
    rows, columns = table.shape
    if table.size == 0:
        return out
    r, signed, bounds, _, _ = layers()
    rows_each = max(1, _PIECE // columns)
    pair = (scale, shift) if scale is not None and shift is not None else None
    compiled = _compiled_for(generator, table.size, table.size)
    if compiled is not None:  # the same numbers, compiled
        found = compiled.fast_path(generator, table.reshape(-1), columns, rows_each, signed,
                                   bounds, scale, shift)
        positions, firsts, codes = [found[0]], [found[1]], [found[2]]
    else:
        positions, firsts, codes = _pieces(generator, table, rows_each, pair)
    where = np.concatenate(positions)
    if where.size:
        value = _slow_paths(generator, np.concatenate(firsts), np.concatenate(codes), r)
        if pair is not None:
            row = where // columns
            value = value * pair[0][row, 0] + pair[1][row, 0]
        table.reshape(-1)[where] = value
    return out


def uniform_rows(generator: np.random.Generator, table: np.ndarray, scale: np.ndarray,
                 shift: np.ndarray) -> bool:
    """Fill the C-contiguous rows × columns ``table`` with ``generator.random``, each row
    times its ``scale`` plus its ``shift`` (rows × 1), in one compiled loop when it is
    loaded (True); False, and nothing drawn, when the caller should do it in numpy. The
    numbers count towards COMPILED_FROM, a third of a normal number each."""
    compiled = _compiled_for(generator, table.size, table.size // 3)
    if compiled is None:
        return False
    compiled.uniform_rows(generator, table, scale, shift)
    return True


def _compiled_for(generator: np.random.Generator, size: int, weight: int) -> Any:
    """A fill of ``size`` numbers, counting ``weight`` normal numbers towards
    COMPILED_FROM: the compiled draws when they are loaded, the fill is large enough and
    the generator is SFC64; else None (the numpy path)."""
    global _drawn
    _drawn += weight  # (two workers may add at once: a count, not a total, is needed)
    expect(0)
    compiled = _compiled
    if compiled is None or size < COMPILED_SIZE or not isinstance(
            generator.bit_generator, np.random.SFC64):
        return None
    return compiled


def _pieces(generator: np.random.Generator, table: np.ndarray, rows_each: int,
            pair: tuple[np.ndarray, np.ndarray] | None
            ) -> tuple[list[np.ndarray], list[np.ndarray], list[np.ndarray]]:
    """The fast path in numpy, piece by piece (scaled while in the cache): the flat
    positions, first values and codes of the numbers left to the slow paths."""
    _, signed, bounds, _, _ = layers()
    rows, columns = table.shape
    width = min(columns, _PIECE)
    positions: list[np.ndarray] = []
    firsts: list[np.ndarray] = []
    codes: list[np.ndarray] = []
    for first in range(0, rows, rows_each):
        last = min(rows, first + rows_each)
        # a piece within one row takes its row's scale in the widths (one pass fewer)
        factor = float(pair[0][first, 0]) if pair is not None and last - first == 1 else None
        widths = signed if factor is None else signed * factor
        for start in range(0, columns, width):
            piece = table[first:last, start:start + width]  # contiguous in ``out``
            flat = piece.reshape(-1)
            code, beyond, x = _fast(generator, flat, widths, bounds, signed)
            positions.append(beyond + (first * columns + start))
            firsts.append(x)
            codes.append(code)
            if pair is not None and factor is not None:
                flat += pair[1][first, 0]
            elif pair is not None:
                piece *= pair[0][first:last]
                piece += pair[1][first:last]
    return positions, firsts, codes


def _fast(generator: np.random.Generator, flat: np.ndarray, widths: np.ndarray,
          bounds: np.ndarray, signed: np.ndarray
          ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The fast path on one piece: every number as its point times its layer's width
    (``widths``: the signed widths, or those times a row's scale); for the numbers left
    to the slow paths, their codes, flat positions and unscaled first values."""
    n = flat.size
    code_of, found, limits, beyond = _scratch(n)
    words = generator.bit_generator.random_raw(n)
    code = np.bitwise_and(words, np.uint64(_MASK), out=code_of).view(np.int64)
    point = np.right_shift(words, np.uint64(64 - _BITS), out=words).view(np.int64)
    # mode="clip": the codes are in range, and numpy buffers take(out=) in "raise" mode
    np.multiply(point, np.take(widths, code, out=found, mode="clip"), out=flat)
    np.greater_equal(point, np.take(bounds, code, out=limits, mode="clip"), out=beyond)
    where = np.flatnonzero(beyond)
    left = code[where]
    return left, where, point[where] * signed[left]


@cache
def _wedges() -> tuple[np.ndarray, np.ndarray]:
    """Per layer: the wedge's bottom f(x_i) and height f(x_{i−1}) − f(x_i); layer 0 (the
    base strip) gets a bottom of 2, above f everywhere, so that it always leaves the
    wedge test for the tail."""
    heights = layers()[3]
    return (np.concatenate([[2.0], heights[1:]]),
            np.concatenate([[0.0], heights[:-1] - heights[1:]]))


def _slow_paths(generator: np.random.Generator, x: np.ndarray, code: np.ndarray, r: float
                ) -> np.ndarray:
    """The numbers of the positions whose point fell outside the next layer's width,
    from their first values ``x`` and codes: the wedge test on all of them at once (a
    point under the curve is kept), then the base strip's to the tail and the others
    rejected to a fresh start."""
    layer = code & (LAYERS - 1)
    value = x  # the caller's own array
    bottom, gap = _wedges()
    height = np.take(bottom, layer) + np.take(gap, layer) * generator.random(layer.size)
    again = np.flatnonzero(height >= np.exp(-0.5 * np.square(x)))
    base = layer[again] == 0
    if base.any():
        strip = again[base]
        sign = np.where(code[strip] >= LAYERS, -1.0, 1.0)
        value[strip] = sign * _tail(generator, strip.size, r)
        again = again[~base]
    if again.size:
        value[again] = generator.standard_normal(again.size)
    return value


def _tail(generator: np.random.Generator, count: int, r: float) -> np.ndarray:
    """``count`` numbers from the normal tail beyond r (Marsaglia 1964), each drawn until
    accepted."""
    found = np.empty(count)
    missing = np.arange(count)
    while missing.size:
        x = -np.log1p(-generator.random(missing.size)) / r
        y = -np.log1p(-generator.random(missing.size))
        accepted = y + y > x * x
        found[missing[accepted]] = r + x[accepted]
        missing = missing[~accepted]
    return found
