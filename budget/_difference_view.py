"""How a :class:`~budget._difference.Difference` is shown: terminal text and JSON document.

The first lines answer the auditor's question — why did U change — before any table.
"""

from __future__ import annotations

import math
import re
from typing import Any, Callable

from ._difference import Difference, InputChange, MeasurandChange, MeasurandSide
from ._formatting import format_number, format_percent
from ._unit_display import spaced_unit, terminal_unit

Show = Callable[[str], str]  # a unit as written → as displayed ("" when dimensionless)

__all__ = ["render_difference", "difference_document", "headline", "causes", "through_k",
           "squared_unit"]


def _relative(before: float, after: float) -> str:
    if before == 0:
        return ""
    return f" ({100.0 * (after - before) / before:+.0f} %)"


def squared_unit(unit: str, show: Show = terminal_unit) -> str:
    """The unit of a variance as displayed: ``g²``, ``(mg/mL)²``; "" when dimensionless
    (a dimensionless "1" is never written after a number, where "0.13 1" reads as 0.131)."""
    shown = show(unit)
    if not shown:
        return ""
    return f"{shown}²" if re.fullmatch(r"[^\W\d_]+|%|°C", shown) else f"({shown})²"


def headline(m: MeasurandChange, digits: int, show: Show = terminal_unit) -> str:
    """One line: U, u_c and k before and after."""
    a, b = m.before, m.after
    n = digits
    unit = spaced_unit(show(m.unit))
    big_a, big_b = a.expanded_uncertainty, b.expanded_uncertainty
    u_a, u_b = a.combined_uncertainty, b.combined_uncertainty
    return (f"{m.name}: U {format_number(big_a, n)} → {format_number(big_b, n)}{unit}"
            f"{_relative(big_a, big_b)}; u_c {format_number(u_a, n)} → "
            f"{format_number(u_b, n)}{unit}{_relative(u_a, u_b)}; k "
            f"{a.coverage_factor:.3g} → {b.coverage_factor:.3g}")


def through_k(m: MeasurandChange, show: Show = terminal_unit) -> str:
    """How much of the change of U came through u_c and how much through k."""
    unit = spaced_unit(show(m.unit))
    return (f"U changed by {m.expanded_change_from_uncertainty:+.3g}{unit} through u_c and "
            f"by {m.expanded_change_from_coverage_factor:+.3g}{unit} through k (ν_eff "
            f"{_dof(m.before.dof)} → {_dof(m.after.dof)})")


def causes(m: MeasurandChange, most: int = 5, show: Show = terminal_unit) -> list[str]:
    """The largest causes of the change of u_c², each with its part of the change."""
    total = m.variance_change
    rows = [(c.variance_change, _cause(c)) for c in m.inputs if c.variance_change != 0.0]
    if m.correlation_change:
        what = f" ({'; '.join(m.correlation_what)})" if m.correlation_what else ""
        rows.append((m.correlation_change, "correlation terms" + what))
    if m.higher_order_change:
        rows.append((m.higher_order_change, "higher-order terms"))
    rows.sort(key=lambda r: -abs(r[0]))
    lines = []
    for delta, text in rows[:most]:
        part = f" ({100.0 * delta / total:.0f} % of the change)" if total else ""
        lines.append(f"{delta:+.3g}{spaced_unit(squared_unit(m.unit, show))}{part}: {text}")
    if len(rows) > most:
        lines.append(f"… and {len(rows) - most} smaller changes")
    return lines


def _cause(c: InputChange) -> str:
    if c.status in ("added", "removed"):
        return f"{c.input} {c.status}"
    return f"{c.input}: " + ("; ".join(c.what) if c.what else "unchanged")


def render_difference(diff: Difference, digits: int = 2) -> str:
    """The terminal output of ``budget compare``."""
    lines = [f"A: {diff.before.label}", f"B: {diff.after.label}", ""]
    for m in diff.measurands:
        lines.append(headline(m, digits))
        if m.variance_change == 0.0:
            lines.append("  u_c² is unchanged.")
        else:
            lines.append(f"  u_c² changed by {m.variance_change:+.3g}"
                         f"{spaced_unit(squared_unit(m.unit))}; the largest causes:")
            lines += ["    " + line for line in causes(m)]
        if not math.isclose(m.before.coverage_factor, m.after.coverage_factor, rel_tol=1e-4):
            lines.append("  " + through_k(m))
        lines.append("")
    if diff.notes:
        lines.append("Also different: " + "; ".join(diff.notes))
        lines.append("")
    for m in diff.measurands:
        lines += _table(m)
    return "\n".join(lines).rstrip() + "\n"


def _dof(dof: float) -> str:
    return "∞" if math.isinf(dof) else f"{dof:.3g}"


def _table(m: MeasurandChange) -> list[str]:
    head = f"{'input':<14} {'status':<9} {'share A %':>9} {'share B %':>9} " \
           f"{'Δ(c·u)²' + (' / ' + squared_unit(m.unit) if squared_unit(m.unit) else ''):>16}" \
           "  what changed"
    lines = [f"Inputs of {m.name}, largest change first", head, "-" * len(head)]
    for c in m.inputs:
        lines.append(f"{c.input[:14]:<14} {c.status:<9} {format_percent(c.share_before):>9} "
                     f"{format_percent(c.share_after):>9} {c.variance_change:>+16.3g}  "
                     + "; ".join(c.what))
    lines.append("")
    return lines


def _side_totals(side: MeasurandSide) -> dict[str, Any]:
    """One side's totals under the JSON contract's short keys."""
    from ._document import dof_or_null

    return {"value": side.estimate, "u": side.combined_uncertainty,
            "k": side.coverage_factor, "U": side.expanded_uncertainty,
            "dof": dof_or_null(side.dof)}


def difference_document(diff: Difference) -> dict[str, Any]:
    """The JSON document of ``budget compare --json``."""
    from ._document import SCHEMA_VERSION

    def side(s: Any) -> dict[str, Any]:
        return {"label": s.label, "title": s.title, "model_sha256": s.sha256,
                "settings": {k: v for k, v in s.settings}}

    def measurand(m: MeasurandChange) -> dict[str, Any]:
        a, b = m.before, m.after
        return {
            "name": m.name, "unit": m.unit,
            "before": _side_totals(a), "after": _side_totals(b),
            "variance_change": m.variance_change,
            "U_change_from_u": m.expanded_change_from_uncertainty,
            "U_change_from_k": m.expanded_change_from_coverage_factor,
            "correlation_change": m.correlation_change,
            "higher_order_change": m.higher_order_change,
            "correlations_changed": list(m.correlation_what),
            "causes": causes(m, most=len(m.inputs) + 2),
            "inputs": [{"input": c.input, "status": c.status, "what": list(c.what),
                        "share_before": c.share_before, "share_after": c.share_after,
                        "variance_before": c.before.variance if c.before else 0.0,
                        "variance_after": c.after.variance if c.after else 0.0,
                        "variance_change": c.variance_change,
                        "from_uncertainty": c.from_uncertainty,
                        "from_sensitivity": c.from_sensitivity} for c in m.inputs]}

    return {"schema_version": SCHEMA_VERSION, "before": side(diff.before),
            "after": side(diff.after), "notes": list(diff.notes),
            "measurands": [measurand(m) for m in diff.measurands]}
