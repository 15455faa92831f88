"""Stability studies in the outputs: the JSON part, the terminal lines, the report's view."""

from __future__ import annotations

import math
from typing import Any

from ._formatting import format_number, format_statistic
from ._studydata import time_words

__all__ = ["studies_document", "studies_lines", "studies_view"]


def _fit(label: str, fit: Any, period: float) -> dict[str, Any]:
    return {"label": label, "slope": fit.slope, "u_slope": fit.u_slope, "t": fit.t,
            "p_value": fit.p_value, "dof": fit.dof, "period": period, "u": fit.u_lts,
            "significant": fit.p_value < 0.05}


def studies_document(s: Any) -> dict[str, Any]:
    """The ``stability_studies`` key of ``certify --json`` (unrounded)."""
    pooled = s.pooled
    return {
        "evaluation": s.evaluation,
        "series": [_fit(label, fit, fit.shelf_life) for label, fit in zip(s.labels, s.series)],
        "together": None if pooled is None else {
            "slope": pooled.slope, "u_slope": pooled.u_slope, "t": pooled.t,
            "p_value": pooled.p_value, "dof": pooled.dof,
            "intercepts": dict(zip(s.labels, pooled.intercepts)), "u_lts": pooled.u_lts,
            "significant": pooled.p_value < 0.05},
        "u_lts": s.u_lts, "governing": s.governing,
        "short_term": None if s.short_term is None else {
            **_fit("short term", s.short_term, s.transport_time),
            "temperature": s.temperature, "transport_time": s.transport_time,
            "u_sts": s.u_sts},
    }


def studies_lines(s: Any, unit: str, digits: int) -> list[str]:
    lines = [f"stability series ({s.evaluation}): u_lts = {format_number(s.u_lts, digits)} "
             f"{unit} from {s.governing}"]
    for label, fit in zip(s.labels, s.series):
        lines.append(f"  {label:28} slope {format_number(fit.slope, digits)} ± "
                     f"{format_number(fit.u_slope, digits)} (p = "
                     f"{format_statistic(fit.p_value, '.2g')}), "
                     f"s(b1)·t = {format_number(fit.u_lts, digits)}")
    if s.pooled is not None:
        p = s.pooled
        lines.append(f"  {'together (common slope)':28} slope {format_number(p.slope, digits)}"
                     f" ± {format_number(p.u_slope, digits)} (p = "
                     f"{format_statistic(p.p_value, '.2g')})")
    if s.short_term is not None:
        f = s.short_term
        where = "" if s.temperature is None else f" at {s.temperature:g} °C"
        lines.append(f"short-term study{where}: slope {format_number(f.slope, digits)} ± "
                     f"{format_number(f.u_slope, digits)} (p = "
                     f"{format_statistic(f.p_value, '.2g')}), u_sts = "
                     f"{format_number(s.u_sts, digits)} {unit} for "
                     f"{time_words(s.short_term_unit, s.transport_time)}")
    return lines


def studies_view(s: Any, digits: int) -> dict[str, Any]:
    def row(label: str, fit: Any, period: float) -> dict[str, Any]:
        return {"label": label, "slope": format_number(fit.slope, digits),
                "u_slope": format_number(fit.u_slope, digits),
                "p": format_statistic(fit.p_value, ".2g"),
                "dof": str(fit.dof), "period": f"{period:g}",
                "u": format_number(fit.u_lts, digits), "significant": fit.p_value < 0.05}

    rows = [row(label, fit, fit.shelf_life) for label, fit in zip(s.labels, s.series)]
    if s.pooled is not None:
        p = s.pooled
        rows.append({"label": "together (common slope)",
                     "slope": format_number(p.slope, digits),
                     "u_slope": format_number(p.u_slope, digits),
                     "p": format_statistic(p.p_value, ".2g"),
                     "dof": str(p.dof), "period": f"{s.series[0].shelf_life:g}",
                     "u": format_number(p.u_lts, digits), "significant": p.p_value < 0.05})
    short = None
    if s.short_term is not None:
        short = row("short term", s.short_term, s.transport_time)
        short["temperature"] = None if s.temperature is None else f"{s.temperature:g}"
    return {"evaluation": s.evaluation, "rows": rows, "governing": s.governing,
            "u_lts": format_number(s.u_lts, digits), "short": short,
            "u_sts": format_number(s.u_sts, digits) if not math.isnan(s.u_sts) else ""}
