"""The cells of a budget shared by every view: one budget row as display strings and the
result statement (GUM 7.2.6 rounding through ``formatting``). The terminal table
(``_table.py``), the HTML report (``_report.py``) and the notebook use these, so none of
them imports another view."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from ._formatting import format_dof, format_number, format_pair, format_percent
from ._unit_display import display_unit, spaced_unit

if TYPE_CHECKING:
    from ._gum import MeasurandBudget
    from ._montecarlo import Validation

__all__ = ["SHORT_DISTRIBUTION", "contribution_cells", "result_statement", "validation_lines"]

SHORT_DISTRIBUTION = {"normal": "normal", "rectangular": "rectangular",
                      "triangular": "triangular", "arcsine": "arcsine",
                      "trapezoidal": "trapezoidal", "curvilinear_trapezoid": "curv. trap.",
                      "student_t": "t", "exact": "exact",
                      "covered_by_scatter": "in the scatter",
                      "rectangular (atomic weights)": "atomic wts"}


def contribution_cells(c: Any, digits: int) -> dict[str, str]:
    """One budget row as display strings (GUM 7.2.6); the table and the report share it."""
    estimate, u = (format_pair(c.estimate, c.standard_uncertainty, digits)
                   if c.standard_uncertainty > 0 else (f"{c.estimate:.10g}", "0"))
    if c.distribution == "covered_by_scatter":  # never "exact": its term is s/√n of the runs
        u = "in s/√n"
    return {"input": c.input, "estimate": estimate, "unit": c.unit, "u": u,
            "distribution": SHORT_DISTRIBUTION.get(c.distribution, c.distribution),
            "type": c.type, "dof": format_dof(c.dof),
            "sensitivity": format_number(c.sensitivity, 4),
            "contribution": format_number(c.contribution, digits),
            "share": format_percent(c.share)}


def result_statement(b: MeasurandBudget, digits: int, unit: str | None = None) -> str:
    value, expanded = format_pair(b.estimate, b.expanded_uncertainty, digits)
    shown = spaced_unit(display_unit(b.unit) if unit is None else unit)
    return (f"{b.name} = ({value} ± {expanded}){shown}, k = {b.coverage_factor:.2f}, "
            f"coverage probability {100 * b.coverage_probability:g} %")


def validation_lines(v: Validation | None, unit: str, indent: str) -> list[str]:
    """The JCGM 101 8.2 verdict under a Monte Carlo result (terminal and notebook text);
    ``unit`` is already spaced for writing after a number."""
    if v is None:
        return []
    verdict = "validated" if v.validated else "NOT validated"
    lines = [f"{indent}GUM result {verdict} (JCGM 101 8.2): d_low = "
             f"{format_number(v.d_low, 2)}, d_high = {format_number(v.d_high, 2)}, "
             f"δ = {format_number(v.tolerance, 1)}{unit}"]
    if v.reason:
        lines.append(f"{indent}validation not possible: {v.reason}")
    return lines
