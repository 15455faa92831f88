"""The column-wise JSON writer gives exactly the standard library's text.

Reference: ``json.dumps(json_safe(document), indent=2, allow_nan=False)`` (Python's own
encoder, the form the documents had before the writer existed), on the documents of
shipped models, on a correlated block, and on random documents with hostile values.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from budget._analysis import evaluate
from budget._document import json_safe, result_document
from budget import _jsontext as jsontext
from budget._jsontext import json_text
from budget._model import load_model, parse_model

ROOT = Path(__file__).resolve().parent.parent


def _reference(document: Any) -> str:
    return json.dumps(json_safe(document), indent=2, allow_nan=False)


@pytest.mark.parametrize("path", ["models/vics-as-25a/coulometric-purity.toml",
                                  "models/reference/gum-h1-end-gauge.toml",
                                  "models/reference/eurachem-a2-naoh.toml"])
def test_shipped_models_are_written_as_the_standard_library_writes_them(path: str) -> None:
    document = result_document(evaluate(load_model(ROOT / path), trials=2000, seed=1))
    assert json_text(document) == _reference(document)


def test_a_correlated_block_is_written_as_the_standard_library_writes_it(
        monkeypatch: pytest.MonkeyPatch) -> None:
    names = ", ".join(f'"x_{i}"' for i in range(12))
    text = ('title = "block"\n[measurands.y]\nequation = "'
            + " + ".join(f"{i + 1} * x_{i}" for i in range(12)) + '"\n'
            + "".join(f"[inputs.x_{i}]\nvalue = {i}.5\nu = 0.{i + 1}\n" for i in range(12))
            + f"[[correlations]]\nbetween = [{names}]\nr = 0.3\n")
    result = evaluate(parse_model(text), trials=0)
    document = result_document(result)
    assert len(document["measurands"][0]["correlation_terms"]) == 66
    assert json_text(document) == _reference(document)
    # the command line's form: correlation terms as columns, written in chunks
    monkeypatch.setattr(jsontext, "_CHUNK", 5)
    assert json_text(result_document(result, columns=True)) == _reference(document)


def test_a_block_of_one_r_is_written_as_the_standard_library_writes_it(
        monkeypatch: pytest.MonkeyPatch) -> None:
    """1225 correlation terms whose r, variance and share repeat: each distinct value is
    formatted once (``_repeated_floats``), and the text is still the standard library's."""
    n = 50
    names = ", ".join(f'"x_{i}"' for i in range(n))
    text = ('title = "block"\n[measurands.y]\nequation = "'
            + " + ".join(f"x_{i}" for i in range(n)) + '"\n'
            + "".join(f"[inputs.x_{i}]\nvalue = {i}.5\nu = 0.{1 + i % 3}\n"
                      for i in range(n))
            + f"[[correlations]]\nbetween = [{names}]\nr = 0.3\n")
    result = evaluate(parse_model(text), trials=0)
    document = result_document(result)
    terms = document["measurands"][0]["correlation_terms"]
    # 50·49/2 pairs; u takes 3 values, so at most 6 distinct products: the repeating case
    # (the text itself is checked against the standard library's json.dumps below)
    assert len(terms) == 1225 and len({t["variance"] for t in terms}) <= 6
    assert json_text(document) == _reference(document)
    monkeypatch.setattr(jsontext, "_CHUNK", 1100)  # the second chunk too short to look at
    assert json_text(result_document(result, columns=True)) == _reference(document)


def test_long_columns_of_few_values_keep_every_value_s_text() -> None:
    """-0.0 beside 0.0, NaN and ±∞ (null), the smallest subnormal, and a column whose first
    values repeat but whose whole does not (formatted value by value)."""
    few = [0.0, -0.0, math.nan, math.inf, -math.inf, 5e-324, 0.1, 1e308]
    rows = [{"v": few[i % len(few)], "w": 0.3} for i in range(3000)]
    mostly = [{"v": 0.25 if i < 300 else i / 7} for i in range(3000)]
    for document in (rows, mostly, {"columns": jsontext.Columns(
            keys=("v", "p"), columns=([few[i % 8] for i in range(2000)],
                                      jsontext.Spread((["a"] * 2000, ["b"] * 2000))))}):
        expected = document if not isinstance(document, dict) else {"columns": [
            {"v": few[i % 8], "p": ["a", "b"]} for i in range(2000)]}
        assert json_text(document) == _reference(expected)


def _doubles(seed: int) -> list[float]:
    """Doubles of every kind: random bit patterns (every exponent, subnormals), random
    mantissas over every decade, 1 to 17 significant digits, and each power of ten with
    its neighbours, negated too; NaN and ±∞."""
    rng = np.random.default_rng(seed)
    bits = rng.integers(0, 2**64 - 1, 20_000, dtype=np.uint64, endpoint=True)
    spread = rng.random(20_000) * 10.0 ** rng.integers(-330, 309, 20_000).astype(float)
    digits = [float(f"{m:.{d}e}") * 10.0 ** e for m, d, e in zip(
        rng.random(10_000) * 10, rng.integers(0, 17, 10_000),
        rng.integers(-12, 20, 10_000).astype(float))]
    decades = [v for p in range(-323, 309) for v in (
        float(f"1e{p}"), math.nextafter(float(f"1e{p}"), 0.0),
        math.nextafter(float(f"1e{p}"), math.inf))]
    values = [*bits.view(np.float64).tolist(), *spread.tolist(), *digits, *decades]
    values += [-v for v in values[::3]] + [0.0, -0.0, 5e-324, math.nan, math.inf,
                                            -math.inf]
    return [float(v) for v in values]


@pytest.mark.parametrize("seed", [1, 2])
def test_long_float_columns_by_orjson_are_repr_s_texts(seed: int) -> None:
    """A long column of floats is formatted by orjson (a dependency, at a version whose
    texts the probe accepts) and mended to ``float.__repr__``'s texts exactly.

    Source: Python's own ``float.__repr__`` (the shortest round-trip text, the standard
    library) and ``json.dumps``, the references of this module, on about 80,000
    doubles of every kind; no number here is typed in."""
    jsontext._fast_agrees.cache_clear()
    assert jsontext._fast_agrees()
    values = _doubles(seed)
    expected = [float.__repr__(v) if math.isfinite(v) else "null" for v in values]
    assert jsontext._floats(values) == expected
    assert jsontext._fast_floats(values) == expected
    rows = [{"v": v} for v in values[:5000]]
    assert json_text(rows) == _reference(rows)


def test_a_formatter_that_writes_otherwise_is_not_used(
        monkeypatch: pytest.MonkeyPatch) -> None:
    """orjson before 3.11.7 wrote ``1e22`` for repr's ``1e+22`` (seen here with 3.9.15
    and 3.11.6 installed; a fact of that library, not a published value): such a
    formatter fails the probe, and every column is then written by repr, with the same
    text as ``json.dumps`` (the reference)."""
    import sys
    import types

    import orjson

    older = types.ModuleType("orjson")
    older.dumps = lambda values: orjson.dumps(values).replace(b"e+", b"e")  # type: ignore[attr-defined]
    monkeypatch.setitem(sys.modules, "orjson", older)
    jsontext._fast_agrees.cache_clear()
    try:
        assert not jsontext._fast_agrees()
        values = _doubles(3)[:5000] + [1e22, -3.5e100]
        assert jsontext._fast_floats(values) != jsontext._repr_floats(values)
        rows = [{"v": v} for v in values]
        assert json_text(rows) == _reference(rows)
        monkeypatch.setitem(sys.modules, "orjson", None)  # not installed: repr too
        jsontext._fast_agrees.cache_clear()
        assert not jsontext._fast_agrees()
        assert json_text(rows) == _reference(rows)
    finally:
        monkeypatch.undo()
        jsontext._fast_agrees.cache_clear()


HOSTILE: dict[str, Any] = {
    "floats": [math.nan, math.inf, -math.inf, 0.1, -0.0, 1e308, 5e-324, np.float64(2.5)],
    "rows": [{"a": 1.0, "b": math.nan, "c": "x\x7f\u202e\n\"", "d": [1, "t", None]},
             {"a": math.inf, "b": 2, "c": "é", "d": []}],
    "same keys, a nested table": [{"k": {"z": 1}}, {"k": {"z": 2}}],
    "different keys": [{"k": 1}, {"j": 2}],
    "empty": [[], {}, [{}], ""],
    "tuple rows": ({"x": (1.5, math.nan)}, {"x": (2, 3)}),
    "100%": [{"50%": True, "e": False}, {"50%": False, "e": None}],
    "pairs": [{"a": ["x", "y"], "n": 1, "b": ("p", "q", "r")},
              {"a": ["z", "\u00e9"], "n": 2, "b": ("s", "t", "u")}],
    "uneven": [{"a": ["x", "y"]}, {"a": ["z"]}, {"a": []}],
    1: "int key", 2.5: "float key", None: "null key", False: "bool key",
}


def test_hostile_values_are_written_as_the_standard_library_writes_them() -> None:
    assert json_text(HOSTILE) == _reference(HOSTILE)


def test_unwritable_values_are_refused_as_the_standard_library_refuses_them() -> None:
    for bad in ({"x": object()}, [{"a": {1, 2}}, {"a": {3}}], {(1, 2): 1}):
        with pytest.raises(TypeError):
            _reference(bad)
        with pytest.raises(TypeError):
            json_text(bad)


_SCALARS = (st.none() | st.booleans() | st.integers() | st.floats()
            | st.text(max_size=6))
_DOCUMENTS = st.recursive(
    _SCALARS,
    lambda inner: (st.lists(inner, max_size=4)
                   | st.dictionaries(st.text(max_size=4), inner, max_size=4)
                   | st.lists(st.fixed_dictionaries({"a": inner, "b": _SCALARS,
                                                     "c": st.lists(_SCALARS, max_size=3)}),
                              max_size=4)),
    max_leaves=30)


@settings(max_examples=300, deadline=None)
@given(_DOCUMENTS)
def test_random_documents_are_written_as_the_standard_library_writes_them(
        document: Any) -> None:
    assert json_text(document) == _reference(document)


def test_the_command_line_writes_the_same_text(tmp_path: Path) -> None:
    import re

    from click.testing import CliRunner

    from budget._cli import main

    names = ", ".join(f'"x_{i}"' for i in range(5))
    path = tmp_path / "block.toml"
    path.write_text('title = "block"\n[measurands.y]\nequation = "x_0 + 2 * x_1 + x_2 - x_3 '
                    '+ x_4"\n' + "".join(f"[inputs.x_{i}]\nvalue = {i}.5\nu = 0.{i + 1}\n"
                                         for i in range(5))
                    + f"[[correlations]]\nbetween = [{names}]\nr = 0.4\n", encoding="utf-8")
    shown = CliRunner().invoke(main, ["run", str(path), "--json", "--trials", "0"])
    assert shown.exit_code == 0
    document = result_document(evaluate(load_model(path), trials=0))
    undated = re.compile(r'"date": "[^"]*"')
    assert undated.sub("", shown.stdout) == undated.sub("", _reference(document) + "\n")
