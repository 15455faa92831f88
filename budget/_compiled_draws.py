"""Draws compiled by numba, the same numbers as numpy's path gives: the ziggurat's fast
path (``_ziggurat._fast``) and a run of rectangular inputs (``Generator.random`` by rows,
each row times its width plus its lower end).

The vectorised fast path costs about a dozen passes of numpy over every number (the raw
words through a call per word, the code, the point, two table look-ups, the product, the
test, the positions left over). Here one compiled loop makes each number in the
registers: the SFC64 word (the generator of Doty-Humphrey's PractRand, as numpy's
``SFC64`` computes it: the state is read from the bit generator and written back, so the
stream goes on exactly where numpy would take it up), its code and point, the product
with the layer's width (and the row's σ and μ), and the test against the next layer. The
arithmetic is the vectorised path's, operation for operation and in the same order (no
fused multiply-add: numba does not contract without ``fastmath``), so every number is
bit for bit the one the numpy path gives (tests/test_compiled_draws.py); the slow
paths stay in ``_ziggurat`` and run after it on the same stream, as there.

The loop releases the interpreter lock (``nogil``), so the Monte Carlo workers draw side
by side without handing it to each other. numba is imported only when a run is long
enough to repay it (``_ziggurat.COMPILED_FROM``); without numba, or below that size,
the numpy path gives the same numbers.

A rectangular run is numpy's ``random`` word for word: (word >> 11)·2⁻⁵³, then times the
row's 2a and plus its x − a, each product and sum rounded as numpy rounds them.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

import numpy as np
from numba import njit

__all__ = ["fast_path", "uniform_rows"]

_U11 = np.uint64(11)
_U3 = np.uint64(3)
_U24 = np.uint64(24)
_U40 = np.uint64(40)
_U12 = np.uint64(12)  # 64 − 52 bits of the point
_U1 = np.uint64(1)
_CODE = np.uint64(511)  # the layer (low 8 bits) and the sign (bit 8)
_HALF_ULP = 1.0 / 9007199254740992.0  # 2⁻⁵³, numpy's next_double
_CAPACITY = 64  # room for numbers left to the slow paths: this, and 1/_ROOM of the fill
_ROOM = 32


@njit(inline="always")
def _next(a: Any, b: Any, c: Any, counter: Any) -> Any:  # pragma: no cover - compiled
    """One SFC64 step: the word and the new state (numpy's sfc64_next)."""
    word = a + b + counter
    return word, b ^ (b >> _U11), c + (c << _U3), ((c << _U24) | (c >> _U40)) + word, \
        counter + _U1


@njit(nogil=True, cache=True)
def _fill(state: Any, flat: Any, start: int, columns: int, rows_each: int, signed: Any,
          bounds: Any, scale: Any, shift: Any, scaled: bool, where: Any, firsts: Any,
          codes: Any) -> Any:  # pragma: no cover - compiled
    """Numbers ``start`` … of ``flat`` until the end, or until ``where`` is full; the
    position reached and how many numbers were left to the slow paths. One loop per
    way of scaling, each the vectorised path's arithmetic."""
    n = flat.size
    rows = n // columns
    capacity = where.size
    left = 0
    a, b, c, counter = state[0], state[1], state[2], state[3]
    widths = signed.copy()
    k = start
    while k < n and left < capacity:
        row = k // columns
        # stop where a row ends, or where the room left might run out
        stop = min((row + 1) * columns, k + capacity - left)
        piece = row // rows_each
        alone = min(rows, (piece + 1) * rows_each) - piece * rows_each == 1
        if not scaled:
            for i in range(k, stop):
                word, a, b, c, counter = _next(a, b, c, counter)
                code = word & _CODE
                point = np.int64(word >> _U12)
                flat[i] = np.float64(point) * signed[code]
                if point >= bounds[code]:
                    where[left], firsts[left], codes[left] = i, flat[i], code
                    left += 1
        elif alone:  # the row's σ in the widths, (σ·w)·p + μ, as the vectorised path
            sigma, mu = scale[row], shift[row]
            for j in range(signed.size):
                widths[j] = signed[j] * sigma
            for i in range(k, stop):
                word, a, b, c, counter = _next(a, b, c, counter)
                code = word & _CODE
                point = np.int64(word >> _U12)
                flat[i] = np.float64(point) * widths[code] + mu
                if point >= bounds[code]:
                    where[left] = i
                    firsts[left], codes[left] = np.float64(point) * signed[code], code
                    left += 1
        else:  # rows of a piece: (w·p)·σ + μ
            sigma, mu = scale[row], shift[row]
            for i in range(k, stop):
                word, a, b, c, counter = _next(a, b, c, counter)
                code = word & _CODE
                point = np.int64(word >> _U12)
                value = np.float64(point) * signed[code]
                flat[i] = value * sigma + mu
                if point >= bounds[code]:
                    where[left], firsts[left], codes[left] = i, value, code
                    left += 1
        k = stop
    state[0], state[1], state[2], state[3] = a, b, c, counter
    return k, left


def fast_path(generator: np.random.Generator, flat: np.ndarray, columns: int,
              rows_each: int, signed: np.ndarray, bounds: np.ndarray,
              scale: np.ndarray | None, shift: np.ndarray | None
              ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The fast path over the whole of ``flat`` (rows of ``columns``, pieces of
    ``rows_each`` rows as the vectorised path cuts them), drawing from ``generator``
    (an SFC64 one): the numbers left to the slow paths as their flat positions, unscaled
    first values and codes, in stream order."""
    if scale is not None and shift is not None:
        scaled, sigma, mu = True, scale.reshape(-1), shift.reshape(-1)
    else:
        scaled, sigma, mu = False, np.empty(0), np.empty(0)
    # about 0.7 % of the numbers are left to the slow paths: room for 3 %, and more
    # rounds (from where the loop stopped, the stream unbroken) should that ever be short
    capacity = _CAPACITY + flat.size // _ROOM
    parts: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
    reached = 0
    with _state(generator) as words:
        while reached < flat.size or not parts:
            where = np.empty(capacity, np.int64)
            firsts = np.empty(capacity)
            codes = np.empty(capacity, np.int64)
            reached, left = _fill(words, flat, reached, columns, rows_each, signed, bounds,
                                  sigma, mu, scaled, where, firsts, codes)
            parts.append((where[:left], firsts[:left], codes[:left]))
    if len(parts) == 1:
        return parts[0]
    return (np.concatenate([p[0] for p in parts]), np.concatenate([p[1] for p in parts]),
            np.concatenate([p[2] for p in parts]))


@njit(nogil=True, cache=True)
def _uniform(state: Any, table: Any, scale: Any, shift: Any) -> None:  # pragma: no cover
    a, b, c, counter = state[0], state[1], state[2], state[3]
    rows, columns = table.shape
    for row in range(rows):
        width, low = scale[row], shift[row]
        for j in range(columns):
            word, a, b, c, counter = _next(a, b, c, counter)
            value = np.float64(word >> _U11) * _HALF_ULP
            value = value * width
            table[row, j] = value + low
    state[0], state[1], state[2], state[3] = a, b, c, counter


def uniform_rows(generator: np.random.Generator, table: np.ndarray, scale: np.ndarray,
                 shift: np.ndarray) -> None:
    """Fill the C-contiguous rows × columns ``table`` as ``generator.random(out=table)``
    then ``table *= scale; table += shift`` (arrays of rows × 1) would, from an SFC64
    ``generator``."""
    with _state(generator) as words:
        _uniform(words, table, scale.reshape(-1), shift.reshape(-1))


@contextmanager
def _state(generator: np.random.Generator) -> Iterator[np.ndarray]:
    """The SFC64 generator's four state words, to be advanced in place by a compiled
    loop and written back afterwards (numpy's stream goes on from there)."""
    bit_generator = generator.bit_generator
    found = bit_generator.state
    words = np.array(found["state"]["state"], dtype=np.uint64)
    yield words
    found["state"]["state"] = words
    bit_generator.state = found
