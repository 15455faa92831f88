"""A sum or product over the rows of a wide model's operations alike, compiled by numba:
the rows made and reduced in one loop, without the arrays in between.

``_batched.Schedule`` runs operations alike of a wide model (``U_i·t_i/m_i`` over 3332
determinations) as numpy calls over (rows × trials) arrays: a call per operand and per
level, each a pass over arrays larger than the processor's cache, and the sum over the
rows one pass more. Where such a tree of groups ends in a sum or product over all of its
rows (``_batched._fusions`` says where), this loop takes each row of the tree in turn,
computes it on a few registers of a slice's width from the draws, and adds it to (or
multiplies it into) the running result: every operation is the one numpy would do, on
the same operands in the same order (left to right; 1/x, x·x and √x as ``_apply``; the
rows reduced in order, as numpy reduces an outer axis), so every value is the same to
the last bit (tests/test_compiled_rows.py). It is loaded with the compiled draws
(``_ziggurat.use_compiled``), for long runs only.

A row's program is a table of instructions, one per row of ``code``: (operation,
register, source kind, source, base, step), as ``_batched`` names them. The source of row
r is register ``source`` (kind 0), row ``source`` of ``vectors`` (kind 1: numbers or
values per trial shared by every row), ``pool[base + step·r]`` (kind 2: a constant per
row), or row ``base + step·r`` of the first or second run of draws (kinds 3 and 4: whole
buffers, C-contiguous, of which the slice's columns are read, so that every loop runs
over contiguous numbers and vectorises).
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numba import njit

from ._batched import ADD, CONSTANT, FIRST, MUL, RECIPROCAL, REGISTER, SET, SQUARE, VECTOR

__all__ = ["reduce_rows"]

_SIGNATURE = ("void(int64[:, ::1], float64[::1], float64[:, ::1], float64[:, ::1], "
              "float64[:, ::1], int64, int64, boolean, float64, boolean, float64[::1], "
              "float64[:, ::1])")


@njit(inline="always")
def _operate(operation: int, target: Any, values: Any) -> None:  # pragma: no cover
    """One instruction over a row of the slice (contiguous rows: the loops vectorise)."""
    if operation == SET:
        for c in range(target.size):
            target[c] = values[c]
    elif operation == ADD:
        for c in range(target.size):
            target[c] = target[c] + values[c]
    elif operation == MUL:
        for c in range(target.size):
            target[c] = target[c] * values[c]
    elif operation == RECIPROCAL:
        for c in range(target.size):
            target[c] = 1.0 / values[c]
    elif operation == SQUARE:
        for c in range(target.size):
            target[c] = values[c] * values[c]
    else:
        for c in range(target.size):
            target[c] = np.sqrt(values[c])


@njit(inline="always")
def _operate_self(operation: int, target: Any) -> None:  # pragma: no cover
    """An instruction whose source is its own register (``1/x`` of the register, say):
    the same operations on one array, so that the loop vectorises (with a second array
    that might overlap it, the compiler checks at run time, and an exact overlap takes
    its scalar loop: a row of the mean of determinations took twice as long)."""
    if operation == ADD:
        for c in range(target.size):
            target[c] = target[c] + target[c]
    elif operation == MUL or operation == SQUARE:
        for c in range(target.size):
            target[c] = target[c] * target[c]
    elif operation == RECIPROCAL:
        for c in range(target.size):
            target[c] = 1.0 / target[c]
    elif operation != SET:
        for c in range(target.size):
            target[c] = np.sqrt(target[c])


@njit(inline="always")
def _operate_number(operation: int, target: Any, number: float) -> None:  # pragma: no cover
    if operation == SET:
        target[:] = number
    elif operation == ADD:
        for c in range(target.size):
            target[c] = target[c] + number
    elif operation == MUL:
        for c in range(target.size):
            target[c] = target[c] * number
    elif operation == RECIPROCAL:
        target[:] = 1.0 / number
    elif operation == SQUARE:
        target[:] = number * number
    else:
        target[:] = np.sqrt(number)


@njit(_SIGNATURE, nogil=True, cache=True, error_model="numpy")
def _reduce(code: Any, pool: Any, vectors: Any, first: Any, second: Any, start: int,
            rows: int, multiply: bool, initial: float, started: bool, out: Any,
            registers: Any) -> None:  # pragma: no cover - compiled
    width = out.size
    stop = start + width
    if started:
        out[:] = initial
    for r in range(rows):
        for k in range(code.shape[0]):
            operation, target = code[k, 0], registers[code[k, 1]]
            kind, source, at = code[k, 2], code[k, 3], code[k, 4] + code[k, 5] * r
            if kind == CONSTANT:
                _operate_number(operation, target, pool[at])
            elif kind == REGISTER and source == code[k, 1]:
                _operate_self(operation, target)
            elif kind == REGISTER:
                _operate(operation, target, registers[source])
            elif kind == VECTOR:
                _operate(operation, target, vectors[source])
            elif kind == FIRST:
                _operate(operation, target, first[at, start:stop])
            else:
                _operate(operation, target, second[at, start:stop])
        row = registers[0]
        if r == 0 and not started:
            out[:] = row
        elif multiply:
            for c in range(width):
                out[c] = out[c] * row[c]
        else:
            for c in range(width):
                out[c] = out[c] + row[c]


def reduce_rows(code: np.ndarray, pool: np.ndarray, vectors: np.ndarray,
                first: np.ndarray, second: np.ndarray, columns: slice, rows: int,
                multiply: bool, initial: float | None, out: np.ndarray,
                registers: np.ndarray) -> np.ndarray:
    """The sum (or product, ``multiply``) of ``rows`` rows of the program ``code`` into
    ``out`` (one value per trial of the slice ``columns`` of the runs ``first`` and
    ``second``), after ``initial`` when given: the same numbers as the rows made by numpy
    and reduced over the outer axis."""
    _reduce(code, pool, vectors, first, second, columns.start, rows, multiply,
            0.0 if initial is None else float(initial), initial is not None, out, registers)
    return out
