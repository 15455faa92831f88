"""Tables for a quality system: the budget and the certification components as CSV/xlsx.

The columns carry the names of the JSON documents (``shared/spec/cli.md`` and
``certification.md``) and the numbers are unrounded, exactly as in the JSON; CSV files
are UTF-8, comma-separated, with a decimal point. Workbooks (the optional ``xlsx``
extra) hold the same table on their first sheet and the totals on a second one.
"""

from __future__ import annotations

import csv
import io
from typing import Any, Sequence

from ._output import write_atomic

__all__ = ["budget_tables", "certification_tables", "write_tables"]

Sheet = tuple[str, list[str], list[list[Any]]]


def _cell(value: Any) -> Any:
    if isinstance(value, (list, tuple)):
        return " ".join(str(v) for v in value)
    return value


def budget_tables(document: dict[str, Any]) -> list[Sheet]:
    """The budget table (one row per measurand and input, then one per correlation term,
    as in the terminal and JSON budgets) and the measurands' totals."""
    keys: list[str] = []
    for measurand in document["measurands"]:
        for row in measurand["contributions"]:
            keys += [k for k in row if k not in keys]
    correlated = any(m.get("correlation_terms") for m in document["measurands"])
    extra = ["r", "variance"] if correlated else []
    rows = []
    for m in document["measurands"]:
        rows += [[m["name"], m["unit"], *(_cell(c.get(k)) for k in keys),
                  *([None] * len(extra))] for c in m["contributions"]]
        rows += [_term_row(m, t, keys) for t in m.get("correlation_terms") or []]
    totals_keys = ["name", "unit", "value", "u", "dof", "k", "U"]
    totals = [[m.get(k) for k in totals_keys] + [*m["interval"]]
              for m in document["measurands"]]
    return [("budget", ["measurand", "measurand_unit", *keys, *extra], rows),
            ("measurands", [*totals_keys, "interval_low", "interval_high"], totals)]


def _term_row(m: dict[str, Any], term: dict[str, Any], keys: list[str]) -> list[Any]:
    """A correlation term 2·c_i·c_j·r·u_i·u_j as a budget row: named ``r(x_i, x_j)``, its
    share of u_c² in ``share``, r and the term in the ``r`` and ``variance`` columns."""
    a, b = term["inputs"]
    known = {"input": f"r({a}, {b})", "distribution": "correlation", "share": term["share"]}
    return [m["name"], m["unit"], *(known.get(k) for k in keys), term["r"], term["variance"]]


def certification_tables(document: dict[str, Any]) -> list[Sheet]:
    """The components of u_CRM with their shares, and the certified value."""
    unit = document["unit"]
    rows = [[name, u, document["shares"][name], unit]
            for name, u in document["components"].items()]
    summary = [[key, document[key]] for key in ("title", "unit", "certified_value", "u", "k",
                                                 "U", "coverage", "dof")]
    excluded = [[e["file"], e["row"], e["column"], e["reason"]]
                for e in document.get("excluded", [])]
    return [("components", ["component", "u", "share", "unit"], rows),
            ("certified_value", ["key", "value"], summary),
            ("excluded", ["file", "row", "column", "reason"], excluded)]


def csv_text(header: Sequence[str], rows: Sequence[Sequence[Any]]) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    for row in rows:
        writer.writerow(["" if v is None else repr(v) if isinstance(v, float) else v
                         for v in row])
    return buffer.getvalue()


def write_tables(sheets: list[Sheet], csv_file: str | None, xlsx_file: str | None) -> None:
    """The first table to ``csv_file``; every table, one per sheet, to ``xlsx_file``."""
    if xlsx_file:
        from ._workbooks import write_workbook

        write_atomic(xlsx_file, write_workbook(xlsx_file, sheets))
    if csv_file:
        name, header, rows = sheets[0]
        write_atomic(csv_file, csv_text(header, rows))
