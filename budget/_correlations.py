"""Correlation coefficients r(x_i, x_j) between input estimates (GUM 5.2).

Method: the pairs of ``[[correlations]]`` fill a symmetric matrix with unit diagonal.
A correlation matrix must be positive semi-definite (every variance of a linear
combination of the inputs is ≥ 0); one that is not is refused with the pairs that make
it so. Nothing is repaired: clipping eigenvalues would change the user's statement.
"""

from __future__ import annotations

import math
from typing import Any, Callable, Sequence

import numpy as np

from ._errors import InputError, Location
from ._tomlkeys import check_input_names, check_keys

__all__ = ["read", "matrix", "indexed_pairs"]

_KEYS = ("between", "r", "matrix")
_PAIR_KEYS = ("between", "r")


def read(entries: Any, names: Sequence[str],
         where: Callable[..., Location]) -> tuple[tuple[str, str, float], ...]:
    """Checked ``(a, b, r)`` triples from the ``[[correlations]]`` tables.

    A block of n inputs gives n(n-1)/2 pairs: each pair is checked once by an integer
    key, and the matrix of all pairs is assembled from index arrays and factored once."""
    if not isinstance(entries, list):
        raise InputError("expected [[correlations]] tables, found a single value",
                         where(None, "correlations"))
    pairs: list[tuple[str, str, float]] = []
    seen: set[int] = set()
    known = _Names(names)
    size = len(names)
    columns: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
    for index, entry in enumerate(entries):
        here: Callable[..., Location] = \
            lambda key=None, i=index: where("correlations", key, i)  # noqa: E731
        block = isinstance(entry, dict) and (
            "matrix" in entry or (isinstance(entry.get("between"), list)
                                  and len(entry["between"]) > 2))
        made, first, second, r = (_block(entry, known, here, index) if block
                                  else _single(_one(entry, known, here, index), known))
        if index == len(entries) - 1 and not seen:  # the only entry: nothing to compare
            pairs.extend(made)
            columns.append((first, second, r))
            break
        keys = (np.minimum(first, second) * size + np.maximum(first, second)).tolist() \
            if block else [min(int(first[0]), int(second[0])) * size
                           + max(int(first[0]), int(second[0]))]
        if not seen.isdisjoint(keys):
            again = next(k for k, key in enumerate(keys) if key in seen)
            a, b, _ = made[again]
            raise InputError(f"expected each pair once, found {a} and {b} again in "
                             f"correlation {index + 1}", here("between"))
        seen.update(keys)
        pairs.extend(made)
        columns.append((first, second, r))
    if not pairs:
        return ()
    first, second, r = (np.concatenate(c) for c in zip(*columns))
    _check_definite(names, pairs, first, second, r, where("correlations"))
    made_pairs = tuple(pairs)
    remember(made_pairs, names, (first, second, r))
    return made_pairs


_Indexed = tuple[np.ndarray, np.ndarray, np.ndarray]
_KNOWN: dict[int, tuple[tuple[tuple[str, str, float], ...], tuple[str, ...], _Indexed]] = {}


def remember(pairs: tuple[tuple[str, str, float], ...], names: Sequence[str],
             indexed: _Indexed) -> None:
    """Keep the index arrays of ``pairs`` (over ``names``) for :func:`indexed_pairs`."""
    while len(_KNOWN) >= 2:  # the model being read and one before it: a block's arrays
        # and pairs take tens of megabytes, and only propagate needs them again
        del _KNOWN[next(iter(_KNOWN))]
    _KNOWN[id(pairs)] = (pairs, tuple(names), indexed)


def indexed_pairs(pairs: tuple[tuple[str, str, float], ...],
                  names: Sequence[str]) -> _Indexed:
    """First and second input index and r of each pair: those found while reading, if
    these are the same pairs over the same names, else looked up."""
    known = _KNOWN.get(id(pairs))
    if known is not None and known[0] is pairs and known[1] == tuple(names):
        return known[2]
    index = {name: k for k, name in enumerate(names)}
    count = len(pairs)
    return (np.fromiter((index[a] for a, _, _ in pairs), dtype=np.intp, count=count),
            np.fromiter((index[b] for _, b, _ in pairs), dtype=np.intp, count=count),
            np.fromiter((r for _, _, r in pairs), dtype=float, count=count))


def _single(pair: tuple[str, str, float], known: "_Names"
            ) -> tuple[list[tuple[str, str, float]], np.ndarray, np.ndarray, np.ndarray]:
    return ([pair], np.array([known.index_of[pair[0]]], dtype=np.intp),
            np.array([known.index_of[pair[1]]], dtype=np.intp), np.array([pair[2]]))


class _Names(list[str]):
    """The input names with a set for membership (a list for did-you-mean)."""

    def __init__(self, names: Sequence[str]) -> None:
        super().__init__(names)
        self.known = set(names)
        self.index_of = {name: k for k, name in enumerate(names)}

    def __contains__(self, name: object) -> bool:
        return name in self.known


def _one(entry: Any, names: Sequence[str], here: Callable[..., Location],
         index: int) -> tuple[str, str, float]:
    if not isinstance(entry, dict):
        raise InputError(f"expected a table in correlation {index + 1}, found {entry!r}",
                         here())
    check_keys(entry, _PAIR_KEYS, here, within=f"in correlation {index + 1}")
    between = entry.get("between")
    if (not isinstance(between, list) or len(between) != 2
            or not all(isinstance(n, str) for n in between)):
        raise InputError(f"expected between = [\"name\", \"name\"] in correlation "
                         f"{index + 1}, found {between!r}", here("between"))
    check_input_names(between, names, f"in correlation {index + 1}", here("between"),
                      pair=True)
    r = entry.get("r")
    if isinstance(r, bool) or not isinstance(r, (int, float)) or not math.isfinite(r):
        raise InputError(f"expected a number r in [-1, 1] in correlation {index + 1}, found "
                         f"{r!r}", here("r" if "r" in entry else None))
    if not -1.0 <= r <= 1.0:
        raise InputError(f"expected r in [-1, 1] in correlation {index + 1}, found {r:g}",
                         here("r"))
    return between[0], between[1], float(r)


def _block(entry: dict[str, Any], names: "_Names", here: Callable[..., Location],
           index: int) -> tuple[list[tuple[str, str, float]], np.ndarray, np.ndarray,
                                np.ndarray]:
    """A block of inputs estimated with one correlation matrix: ``between`` n names and
    either ``r`` (every pair) or ``matrix`` (n × n, symmetric, unit diagonal)."""
    check_keys(entry, _KEYS, here, within=f"in correlation {index + 1}")
    between = entry.get("between")
    if (not isinstance(between, list) or len(between) < 2
            or not all(isinstance(n, str) for n in between)):
        raise InputError(f"expected between = [\"name\", \"name\", …] in correlation "
                         f"{index + 1}, found {between!r}", here("between"))
    check_input_names(between, names, f"in correlation {index + 1}", here("between"))
    if ("r" in entry) == ("matrix" in entry):
        raise InputError(f"expected either r (one value for every pair) or matrix in "
                         f"correlation {index + 1} of {len(between)} inputs, found "
                         f"{'both' if 'r' in entry else 'neither'}", here("between"))
    values = _block_matrix(entry, len(between), here, index)
    rows, columns = np.triu_indices(len(between), 1)
    upper = values[rows, columns]
    keep = upper != 0.0
    rows, columns, upper = rows[keep], columns[keep], upper[keep]
    at = np.array([names.index_of[name] for name in between], dtype=np.intp)
    pairs = [(between[i], between[j], r) for i, j, r in
             zip(rows.tolist(), columns.tolist(), upper.tolist())]
    return pairs, at[rows], at[columns], upper


def _block_matrix(entry: dict[str, Any], n: int, here: Callable[..., Location],
                  index: int) -> np.ndarray:
    if "r" in entry:
        r = entry["r"]
        if isinstance(r, bool) or not isinstance(r, (int, float)) or not -1 <= r <= 1:
            raise InputError(f"expected a number r in [-1, 1] in correlation {index + 1}, "
                             f"found {r!r}", here("r"))
        values = np.full((n, n), float(r))
        np.fill_diagonal(values, 1.0)
        return values
    rows = entry["matrix"]
    shape_ok = isinstance(rows, list) and len(rows) == n and all(
        isinstance(row, list) and len(row) == n for row in rows)
    numbers_ok = shape_ok and all(set(map(type, row)) <= {int, float} for row in rows)
    if not numbers_ok:
        raise InputError(f"expected matrix = {n} rows of {n} numbers (one per input of "
                         f"between) in correlation {index + 1}, found another shape or a "
                         "value that is not a number", here("matrix"))
    values = np.array(rows, dtype=float)
    bad = np.argwhere(~np.isfinite(values) | (np.abs(values) > 1.0)
                      | (np.abs(values - values.T) > 1e-12))
    if bad.size or not np.all(np.diag(values) == 1.0):
        i, j = (int(bad[0][0]), int(bad[0][1])) if bad.size else 2 * (int(np.flatnonzero(
            np.diag(values) != 1.0)[0]),)
        raise InputError(f"expected a symmetric matrix with 1 on the diagonal and entries in "
                         f"[-1, 1] in correlation {index + 1}, found {values[i, j]:g} in row "
                         f"{i + 1}, column {j + 1}", here("matrix"))
    return values


def matrix(names: Sequence[str], pairs: Sequence[tuple[str, str, float]]) -> np.ndarray:
    index = {name: i for i, name in enumerate(names)}
    result = np.eye(len(names))
    if pairs:
        first = np.array([index[a] for a, _, _ in pairs], dtype=np.intp)
        second = np.array([index[b] for _, b, _ in pairs], dtype=np.intp)
        r = np.array([r for _, _, r in pairs], dtype=float)
        result[first, second] = r
        result[second, first] = r
    return result


def _check_definite(names: Sequence[str], pairs: Sequence[tuple[str, str, float]],
                    first: np.ndarray, second: np.ndarray, r: np.ndarray,
                    where: Location) -> None:
    """The matrix of the inputs that take part in a pair (rows in the order of
    ``names``) factored once; on failure, the pairs along the offending eigen-direction."""
    involved = np.unique(np.concatenate([first, second]))  # sorted: the order of names
    position = np.empty(len(names), dtype=np.intp)
    position[involved] = np.arange(involved.size)
    sub = np.eye(involved.size)
    sub[position[first], position[second]] = r
    sub[position[second], position[first]] = r
    try:  # positive definite (the usual case): one Cholesky factorization says so
        np.linalg.cholesky(sub)
        return
    except np.linalg.LinAlgError:
        pass
    values, vectors = np.linalg.eigh(sub)
    if values[0] >= -1e-10:
        return
    weight = np.abs(vectors[:, 0])
    culprits = {names[int(involved[i])] for i in np.flatnonzero(weight > 0.1 * weight.max())}
    named = [f"{a}-{b} ({r:g})" for a, b, r in pairs if a in culprits and b in culprits]
    if len(named) > _NAMED:  # a block of 1000 inputs would name 499,500 pairs
        named = named[:_NAMED] + [f"and {len(named) - _NAMED:,} more pairs among "
                                  f"{len(culprits):,} inputs"]
    raise InputError(f"expected a positive semi-definite correlation matrix, found the "
                     f"smallest eigenvalue {values[0]:.3g}; the pairs {', '.join(named)} "
                     f"cannot hold together", where)


_NAMED = 12  # pairs named one by one in the message about a matrix that is not PSD
