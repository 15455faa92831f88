"""The text of the JSON documents, written column by column.

``json_text(document)`` gives exactly the text of
``json.dumps(json_safe(document), indent=2, allow_nan=False)`` (every float that is not
finite written as ``null``), but the standard library writes an indented document one
value at a time in Python, and a budget of 10⁵ inputs, or a correlated block of 1000
inputs (499,500 correlation terms), has millions of values. Here a list of rows (dicts
with the same keys whose values are numbers, strings or lists of them) is written as
columns: the floats of a column formatted in one call (``orjson``, its texts mended to
``repr``'s, or one ``repr`` of the whole list), names encoded once, and the texts of
a chunk of rows joined at once. Any other value takes the general path,
which follows the standard library's rules; ``tests/test_jsontext.py`` compares the two
texts on every shipped model and on hostile values.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cache
from itertools import chain
from json.encoder import encode_basestring_ascii
from typing import Any

__all__ = ["json_text", "json_parts", "Columns", "Spread"]

_INDENT = "  "
_CHUNK = 65_536  # rows formatted at a time, so that their texts never all exist at once


@dataclass(frozen=True)
class Columns:
    """A list of rows given as columns (``columns[k][i]`` is row i's value of
    ``keys[k]``): written as the list of objects it stands for, without making them."""

    keys: tuple[str, ...]
    columns: tuple[Any, ...]  # lists, or Spread for a column of lists of one length


@dataclass(frozen=True)
class Spread:
    """A column of lists of one length given by position (``positions[p][i]`` is item p
    of row i's list): written as those lists without making them."""

    positions: tuple[list[Any], ...]

    def __len__(self) -> int:
        return len(self.positions[0]) if self.positions else 0


def json_text(document: Any) -> str:
    """``document`` as indented JSON text (ASCII; NaN and ±∞ as ``null``)."""
    return "".join(json_parts(document))


def json_parts(document: Any) -> list[str]:
    """The text of :func:`json_text` in parts, to be written one after the other."""
    out: list[str] = []
    _value(document, 0, out)
    return out


def _pad(level: int) -> str:
    return "\n" + _INDENT * level


def _scalar(value: Any) -> str | None:
    """The text of a number, string, boolean or null; None for anything else."""
    if isinstance(value, str):
        return encode_basestring_ascii(value)
    if value is None:
        return "null"
    if value is True:
        return "true"
    if value is False:
        return "false"
    if isinstance(value, int):
        return int.__repr__(value)
    if isinstance(value, float):
        return float.__repr__(value) if math.isfinite(value) else "null"
    return None


def _key(key: Any) -> str:
    """A dict key as the standard library writes it (strings; numbers, booleans and None
    converted; anything else refused)."""
    if isinstance(key, str):
        return encode_basestring_ascii(key)
    if key is True or key is False or key is None:
        return {True: '"true"', False: '"false"', None: '"null"'}[key]
    if isinstance(key, int):
        return f'"{int.__repr__(key)}"'
    if isinstance(key, float):
        return f'"{float.__repr__(key)}"'
    raise TypeError(f"keys must be str, int, float, bool or None, not {type(key).__name__}")


def _value(value: Any, level: int, out: list[str]) -> None:
    text = _scalar(value)
    if text is not None:
        out.append(text)
    elif isinstance(value, dict):
        _object(value, level, out)
    elif isinstance(value, Columns):
        if not value.columns or not value.columns[0]:
            out.append("[]")
        elif not _write_columns(value.keys, list(value.columns), level, out):
            raise TypeError("Columns of values that are not numbers, strings or lists")
    elif isinstance(value, (list, tuple)):
        if not value:
            out.append("[]")
        elif not _rows(value, level, out):
            inner = _pad(level + 1)
            out.append("[")
            for k, item in enumerate(value):
                out.append("," + inner if k else inner)
                _value(item, level + 1, out)
            out.append(_pad(level) + "]")
    else:
        raise TypeError(f"Object of type {type(value).__name__} is not JSON serializable")


def _object(value: dict[Any, Any], level: int, out: list[str]) -> None:
    if not value:
        out.append("{}")
        return
    inner = _pad(level + 1)
    out.append("{")
    for k, (key, item) in enumerate(value.items()):
        out.append(("," if k else "") + inner + _key(key) + ": ")
        _value(item, level + 1, out)
    out.append(_pad(level) + "}")


def _rows(rows: list[Any] | tuple[Any, ...], level: int, out: list[str]) -> bool:
    """Write a list of flat dicts with the same keys column by column; False (nothing
    written) when ``rows`` is not such a list."""
    first = rows[0]
    if type(first) is not dict or not first:
        return False
    keys = tuple(first)
    if not all(type(row) is dict and tuple(row) == keys for row in rows):  # same order
        return False
    return _write_columns(keys, [[row[key] for row in rows] for key in keys], level, out)


def _write_columns(keys: tuple[Any, ...], columns: list[Any], level: int,
                   out: list[str]) -> bool:
    """Rows of scalars (or lists of them) from their columns, a chunk at a time: the
    values' texts and the texts between them laid side by side in one list (a slice
    assignment per column) and joined once, not each row formatted on its own."""
    widths: list[int] = []
    flat: list[Any] = []
    for column in columns:
        if isinstance(column, Spread):
            width = len(column.positions)
            flat += column.positions
        else:
            width = _fixed_width(column)
            if width:  # lists of one length (a pair of names): one column per position
                flat += [[items[i] for items in column] for i in range(width)]
            else:
                flat.append(column)
        widths.append(width)
    columns = flat
    # the text before each value of a row, and after its last
    literals: list[str] = []
    text = "{"
    for k, (key, width) in enumerate(zip(keys, widths)):
        text += ("," if k else "") + _pad(level + 2) + _key(key) + ": "
        if width:
            text += "["
            for i in range(width):
                literals.append(text + ("," if i else "") + _pad(level + 3))
                text = ""
            text = _pad(level + 2) + "]"
        else:
            literals.append(text)
            text = ""
    inner = _pad(level + 1)
    end = text + inner + "}"
    between = end + "," + inner + literals[0]  # one row's end, the next's start
    stride = 2 * len(columns)
    written: list[str] = []
    for start in range(0, len(columns[0]), _CHUNK):
        rows = min(_CHUNK, len(columns[0]) - start)
        stop = stride * rows
        pieces: list[str | None] = [None] * (stop + 1)
        for j, column in enumerate(columns):
            texts = _column(column[start:start + _CHUNK], level + 2)
            if texts is None:
                return False
            pieces[2 * j + 1:stop:stride] = texts
            pieces[2 * j:stop:stride] = [literals[j] if j else between] * rows
        pieces[0], pieces[-1] = literals[0], end
        written.append("".join(pieces))  # type: ignore[arg-type]
    out.append("[" + inner)
    for k, part in enumerate(written):
        out.append("," + inner + part if k else part)
    out.append(_pad(level) + "]")
    return True


def _fixed_width(column: list[Any]) -> int:
    """The common length of a column of non-empty lists of strings, else 0."""
    if type(column[0]) not in (list, tuple) or not column[0]:
        return 0
    width = len(column[0])
    if width > 8 or set(map(type, column)) - {list, tuple} \
            or set(map(len, column)) != {width} \
            or set(map(type, chain.from_iterable(column))) != {str}:
        return 0
    return width


def _column(values: list[Any], level: int) -> list[str] | None:
    """The texts of one column's values (``level``: that of the values), or None."""
    kinds = set(map(type, values))
    if kinds == {float}:
        return _repeated_floats(values) or _floats(values)
    if kinds == {str}:  # names: each encoded once
        known = {v: encode_basestring_ascii(v) for v in set(values)}
        return list(map(known.__getitem__, values))
    if kinds <= {list, tuple}:
        return _lists(values, level)
    texts = []
    for v in values:
        text = _scalar(v)
        if text is None:
            return None
        texts.append(text)
    return texts


def _floats(values: list[float]) -> list[str]:
    """``float.__repr__`` of each value (``null`` where not finite): a long column by
    ``orjson`` where it writes ``repr``'s texts (``_fast_agrees``), else one ``repr``."""
    if len(values) >= _FAST_FROM and _fast_agrees():
        return _fast_floats(values)
    return _repr_floats(values)


def _repr_floats(values: list[float]) -> list[str]:
    """``float.__repr__`` of each value (``null`` where not finite), in one call."""
    texts = repr(values)[1:-1].split(", ")
    if not all(map(math.isfinite, values)):
        texts = [t if math.isfinite(v) else "null" for t, v in zip(texts, values)]
    return texts


# Python's ``repr`` of a float (the shortest text that reads back to it, David Gay's
# algorithm) takes 0.6-1.4 µs here, and a correlated block of 1000 inputs writes 10⁶
# distinct floats. ``orjson`` finds the same shortest digits (Ryu) about 30 times faster;
# its texts differ from repr's in two ways only, mended below: one digit of negative
# exponent (``1.5e-7``, repr ``1.5e-07``), and 10⁻⁵ ≤ |x| < 10⁻⁴ written out
# (``0.00001``, repr ``1e-05``). Its way of writing has changed between releases (before
# 3.11.7: ``1e22`` for ``1e+22``), so it is used only where a probe of every decade
# gives repr's texts exactly.
_FAST_FROM = 32  # a shorter column: one repr costs less than the mending


def _fast_floats(values: list[float]) -> list[str]:
    """The texts of ``values`` by ``orjson``, mended to repr's (``null`` where not
    finite, as orjson writes them)."""
    import orjson

    text = orjson.dumps(values).decode("ascii")
    texts = text[1:-1].split(",")
    if "e-" in text:  # one digit of negative exponent (e-5 … e-9): repr writes two
        texts = [t.replace("e-", "e-0") if t[-2] == "-" else t for t in texts]
    if "0.0000" in text:  # 10⁻⁵ ≤ |x| < 10⁻⁴, written out: repr's own text
        for i, t in enumerate(texts):
            if t.startswith(("0.0000", "-0.0000")):
                texts[i] = float.__repr__(values[i])
    return texts


@cache
def _fast_agrees() -> bool:
    """Whether ``orjson`` is installed and its mended texts are repr's on a probe of
    every decade of doubles (1, 1.5 and just under 10 times each power of ten, with
    their neighbours on either side, negated too), the ends of the range, zeros and the
    non-finite."""
    try:
        import orjson  # noqa: F401
    except ImportError:
        return False
    probe = [0.0, -0.0, 5e-324, -5e-324, 2.2250738585072014e-308, 1.7976931348623157e308,
             math.nan, math.inf, -math.inf, 0.1, 1 / 3, 2 / 3, 100.0, 123456.789]
    for p in range(-323, 309):
        for m in (1.0, 1.5, 9.999999999999998):
            value = float(f"{m!r}e{p}")
            probe += [value, -value, math.nextafter(value, 0.0),
                      math.nextafter(value, math.inf)]
    try:
        return _fast_floats(probe) == _repr_floats(probe)
    except Exception:  # noqa: BLE001 - any failure: repr, which is always right
        return False


_SAMPLE = 256  # values looked at to guess whether a column repeats itself


def _repeated_floats(values: list[float]) -> list[str] | None:
    """The texts of a long column of few distinct values (one r for a whole correlated
    block, the same u·c for every input), each distinct value formatted once; None when
    the column does not look like one (its first values are mostly distinct).

    Values are told apart by their bits, so that -0.0 and 0.0 keep their own texts."""
    if len(values) < 4 * _SAMPLE or 4 * len(set(values[:_SAMPLE])) > _SAMPLE:
        return None
    import numpy as np

    bits = np.array(values, dtype=np.float64).view(np.int64)
    distinct, inverse = np.unique(bits, return_inverse=True)
    if 4 * distinct.size > bits.size:
        return None
    texts = _floats(distinct.view(np.float64).tolist())
    return list(map(texts.__getitem__, inverse.tolist()))


def _lists(values: list[Any], level: int) -> list[str] | None:
    """Lists of scalars (the ``inputs`` of a correlation term, an interval)."""
    start, inner, end = "[" + _pad(level + 1), "," + _pad(level + 1), _pad(level) + "]"
    if {type(item) for items in values for item in items} <= {str}:  # names: once each
        known = {name: encode_basestring_ascii(name)
                 for name in {item for items in values for item in items}}
        return [start + inner.join(map(known.__getitem__, items)) + end if items else "[]"
                for items in values]
    texts = []
    for items in values:
        parts = [_scalar(item) for item in items]
        if any(part is None for part in parts):
            return None
        texts.append(start + inner.join(parts) + end if parts else "[]")  # type: ignore[arg-type]
    return texts
