"""The check of a saved result document (``budget run --json``) before it is read: by
chained budgets (``result_of = "x.json"``) and by ``budget compare``. A field missing or
of the wrong kind is named by its path, never by Python's own words."""

from __future__ import annotations

import json
import math
from typing import Any

# (key, kind): kind "name" (a non-empty string), "text" (a string), "list", "number"
# (finite), "u" (finite, ≥ 0), "u?" (the same or null) or "dof" (> 0 or null); a key
# ending in "?" may be left out
Fields = tuple[tuple[str, str], ...]

_EXPECTED = {"name": "a string", "text": "a string", "list": "a list",
             "number": "a finite number", "u": "a finite number ≥ 0",
             "u?": "a finite number ≥ 0 or null", "dof": "a number > 0 or null"}


def misshapen(document: Any, measurand_fields: Fields, input_fields: Fields,
              term_fields: Fields) -> str | None:
    """What the document lacks or holds of the wrong kind, as 'measurands[0].u = -1
    (expected a finite number ≥ 0)'; None when every field named is there and sound."""
    if not isinstance(document, dict):
        return f"a JSON {type(document).__name__} instead of an object"
    if "measurands" not in document:
        return "a JSON document without 'measurands'"
    measurands = document["measurands"]
    if not isinstance(measurands, list) or not measurands:
        return f"measurands = {json.dumps(measurands)[:40]} (expected a list of measurands)"
    seen: set[str] = set()
    for k, m in enumerate(measurands):
        wrong = _measurand(m, f"measurands[{k}]", measurand_fields, input_fields,
                           term_fields)
        if wrong is None and m["name"] in seen:
            wrong = f"measurands[{k}].name = {json.dumps(m['name'])} a second time"
        if wrong:
            return wrong
        seen.add(m["name"])
    return None


def _measurand(m: Any, where: str, fields: Fields, input_fields: Fields,
               term_fields: Fields) -> str | None:
    wrong = _wrong_fields(m, where, fields)
    for key in ("contributions", "correlation_terms"):
        if wrong is None and not isinstance(m.get(key, []), list):
            wrong = f"{where}.{key} that is not a list"
    for j, c in enumerate(m.get("contributions", []) if wrong is None else ()):
        wrong = wrong or _wrong_fields(c, f"{where}.contributions[{j}]", input_fields)
    for j, t in enumerate(m.get("correlation_terms", []) if wrong is None else ()):
        term = f"{where}.correlation_terms[{j}]"
        if not isinstance(t, dict) or not (isinstance(t.get("inputs"), list)
                                           and len(t["inputs"]) == 2):
            wrong = wrong or f"{term} without a pair of 'inputs'"
        wrong = wrong or _wrong_fields(t, term, term_fields)
    return wrong


def _wrong_fields(node: Any, where: str, fields: Fields) -> str | None:
    if not isinstance(node, dict):
        return f"{where} that is not an object"
    for field_name, kind in fields:
        key = field_name.rstrip("?")
        if key not in node:
            if key == field_name:
                return f"{where} without '{key}'"
            continue
        if not _sound(node[key], kind):
            return f"{where}.{key} = {json.dumps(node[key])[:40]} (expected {_EXPECTED[kind]})"
    return None


def _sound(value: Any, kind: str) -> bool:
    if kind in ("name", "text"):
        return isinstance(value, str) and (kind == "text" or bool(value))
    if kind == "list":
        return isinstance(value, list)
    if kind in ("dof", "u?") and value is None:
        return True
    if isinstance(value, bool) or not isinstance(value, (int, float)) \
            or not math.isfinite(value):
        return False
    return kind == "number" or (value >= 0 if kind.startswith("u") else value > 0)
