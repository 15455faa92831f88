"""What the result objects show in a notebook: the views behind their display methods.

Every result type (``MeasurandBudget``, ``Budget``, ``MeasurandSimulation``,
``Simulation``, ``Result``, ``Explanation``, ``Certification``) has

* a short ``repr`` (one line, the GUM symbols);
* ``summary()``: the terminal text;
* ``_repr_html_()``: the report's tables and chart, with styles scoped to a
  ``div.budget-nb`` so that they do not restyle the notebook;
* ``to_frame()``: a pandas DataFrame whose columns are the JSON keys, with the totals
  (``value``, ``u``, ``dof``, ``k``, ``U`` …) in ``frame.attrs``;
* ``to_dict()``: the JSON document (or its part for that object).

``LotBudgets`` and ``Batch`` have the ``repr`` and the ``_repr_html_`` (``lots_html``,
``batch_html``).

The methods live on the classes and call the functions here on first use, so that the
engine imports neither pandas nor jinja2 until a notebook asks for them.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from typing import TYPE_CHECKING, Any, Protocol, TypeVar

from ._cells import validation_lines
from ._errors import NotFoundError, did_you_mean
from ._formatting import (format_dof, format_number, format_pair, format_percent,
                          shown_share)
from ._limits import shorten
from ._unit_display import display_unit, spaced_unit

if TYPE_CHECKING:
    from .batch import Batch
    from .lots import LotBudgets
    from ._analysis import Result
    from ._certification import Certification
    from ._explanation import Explanation
    from ._gum import MeasurandBudget
    from ._montecarlo import MeasurandSimulation

__all__ = ["lookup", "frame", "budget_frame", "simulation_frame", "budget_html",
           "simulation_html", "simulation_text", "table_html", "budget_totals", "short"]



class _Named(Protocol):
    @property
    def name(self) -> str: ...


T = TypeVar("T", bound=_Named)


def lookup(items: Iterable[T], name: str, what: str) -> T:
    """The item called ``name``, or a :class:`NotFoundError` with a "did you mean"."""
    found = list(items)
    if not isinstance(name, str):
        article = "an" if what[:1] in "aeiou" else "a"
        raise NotFoundError(f"expected the name of {article} {what} (a string), found "
                            f"{type(name).__name__} {shorten(repr(name))}; expected one of "
                            f"{', '.join(item.name for item in found) or 'none'}")
    for item in found:
        if item.name == name:
            return item
    names = [item.name for item in found]
    raise NotFoundError(f"no {what} '{name}'{did_you_mean(name, names)}; expected one of "
                        f"{', '.join(names) or 'none'}")


def summary_digits(digits: Any) -> int:
    """The ``digits`` of a ``summary()``: a whole number from 1 to 6, as ``--digits``."""
    from ._errors import Location
    from ._limits import check_digits

    return check_digits(digits, Location(file="summary()", key="digits"))


def short(value: float, u: float, digits: int = 2) -> tuple[str, str]:
    """Value and uncertainty rounded together (GUM 7.2.6), or plain when u is 0."""
    if u > 0 and math.isfinite(u):
        return format_pair(value, u, digits)
    return f"{value:.10g}", format_number(u, digits) if u else "0"


def frame(rows: Sequence[dict[str, Any]], index: str | list[str] | None,
          attrs: dict[str, Any]) -> Any:
    import pandas as pd

    table = pd.DataFrame(list(rows))
    if index is not None and len(table):
        table = table.set_index(index)
    table.attrs.update(attrs)
    return table


def _dof(value: float) -> float | None:
    return None if math.isinf(value) else value


def budget_totals(b: MeasurandBudget) -> dict[str, Any]:
    return {"name": b.name, "unit": b.unit, "value": b.estimate, "u": b.combined_uncertainty,
            "dof": _dof(b.dof), "k": b.coverage_factor, "U": b.expanded_uncertainty,
            "coverage": b.coverage_probability}


def budget_rows(b: MeasurandBudget) -> list[dict[str, Any]]:
    return [{"input": c.input, "estimate": c.estimate, "unit": c.unit,
             "u": c.standard_uncertainty, "distribution": c.distribution, "type": c.type,
             "dof": c.dof, "sensitivity": c.sensitivity, "contribution": c.contribution,
             "share": c.share} for c in b.contributions]


def budget_frame(b: MeasurandBudget) -> Any:
    """One row per input (index ``input``); totals in ``attrs``."""
    return frame(budget_rows(b), "input", budget_totals(b))


def simulation_row(s: MeasurandSimulation) -> dict[str, Any]:
    v = s.validation
    return {"name": s.name, "unit": s.unit, "trials": s.trials, "mean": s.mean,
            "u": s.standard_uncertainty, "interval_low": s.interval[0],
            "interval_high": s.interval[1], "shortest_low": s.shortest_interval[0],
            "shortest_high": s.shortest_interval[1],
            "tolerance": None if v is None else v.tolerance,
            "d_low": None if v is None else v.d_low, "d_high": None if v is None else v.d_high,
            "validated": None if v is None else v.validated}


def simulation_frame(items: Sequence[MeasurandSimulation], attrs: dict[str, Any]) -> Any:
    return frame([simulation_row(s) for s in items], "name", attrs)


def budget_html(budgets: Sequence[MeasurandBudget], digits: int,
                simulations: Sequence[MeasurandSimulation | None] | None = None,
                title: str = "") -> str:
    from ._report import budget_view, render_notebook

    sims = list(simulations) if simulations is not None else [None] * len(budgets)
    views = [budget_view(b, digits, s) for b, s in zip(budgets, sims)]
    return render_notebook(title=title, measurands=views, tables=[])


def simulation_text(s: MeasurandSimulation, digits: int = 2) -> str:
    """The Monte Carlo lines of the terminal output, for one measurand."""
    mean, u = short(s.mean, s.standard_uncertainty, digits + 1)
    reference = s.standard_uncertainty
    low, high = (short(x, reference, digits + 1)[0] for x in s.interval)
    short_low, short_high = (short(x, reference, digits + 1)[0] for x in s.shortest_interval)
    unit = spaced_unit(display_unit(s.unit))
    lines = [f"{s.name}: {s.trials:,} trials   y = {mean}{unit}   u = {u}{unit}",
             f"  interval [{low}, {high}]   shortest [{short_low}, {short_high}]"]
    return "\n".join(lines + validation_lines(s.validation, unit, "  "))


def simulation_html(items: Sequence[MeasurandSimulation], digits: int = 2) -> str:
    rows = []
    for s in items:
        mean, u = short(s.mean, s.standard_uncertainty, digits + 1)
        v = s.validation
        verdict = "-" if v is None else ("validated" if v.validated else "not validated")
        unit = spaced_unit(display_unit(s.unit))
        rows.append([s.name, f"{s.trials:,}", f"{mean}{unit}", f"{u}{unit}",
                     f"[{s.interval[0]:.7g}, {s.interval[1]:.7g}]",
                     f"[{s.shortest_interval[0]:.7g}, {s.shortest_interval[1]:.7g}]", verdict])
    return table_html("Monte Carlo (JCGM 101)",
                      ["measurand", "trials", "mean", "u", "interval", "shortest", "GUM result"],
                      rows)


def table_html(caption: str, header: list[str], rows: list[list[str]],
               chart: Any = None, notes: Sequence[str] = ()) -> str:
    from ._report import render_notebook

    return render_notebook(title="", measurands=[], tables=[
        {"caption": caption, "header": header, "rows": rows, "chart": chart,
         "notes": list(notes)}])


def result_html(result: Result) -> str:
    sims = result.simulation.measurands if result.simulation else None
    return budget_html(result.budget.measurands, result.digits, sims, result.model.title)


def explanation_html(e: Explanation, digits: int = 2) -> str:
    rows = [[d.input, format_percent(d.share), d.distribution, d.type,
             f"{format_number(d.standard_uncertainty, digits)}"
             f"{spaced_unit(display_unit(d.unit))}",
             short(e.estimate, d.halved_expanded_uncertainty, digits)[1]]
            for d in e.drivers]
    rows += [[name, format_percent(share), "", "", "", ""] for name, share in e.others]
    notes = [f"Type A {format_percent(e.type_a_share)} % of u_c², Type B "
             f"{format_percent(e.type_b_share)} %", *e.reasons]
    return table_html(f"What dominates u_c²({e.name})",
                      ["input", "share of u_c² / %", "distribution", "type", "u(x_i)",
                       "U if u(x_i) halved" + (f" / {display_unit(e.unit)}"
                                               if display_unit(e.unit) else "")],
                      rows, notes=notes)


def certification_html(cert: Certification, digits: int = 2) -> str:
    from ._svg import bar_chart

    shares = cert.shares
    rows = [[name.replace("_", " "), format_number(u, digits), format_percent(shares[name])]
            for name, u in cert.components]
    value, expanded = short(cert.certified_value, cert.expanded_uncertainty, digits)
    unit = cert.campaign.unit
    rows.append(["u_CRM", format_number(cert.standard_uncertainty, digits), "100"])
    chart = bar_chart([(n.replace("_", " "), s) for n, s in shares.items() if shown_share(s) > 0],
                      "%",
                      "shares of u_CRM²")
    return table_html(f"{cert.campaign.title}: ({value} ± {expanded}) {unit}, "
                      f"k = {cert.coverage_factor:.3g}",
                      ["component", f"u / {unit}", "share of u_CRM² / %"], rows, chart=chart,
                      notes=list(cert.warnings))


LOT_ROWS = 100  # the lots a notebook table shows; every lot stays in the arrays


def lots_html(lots: LotBudgets, digits: int = 2) -> str:
    """The lots' totals, a row per lot and measurand (the first ``LOT_ROWS`` lots)."""
    count = lots.estimate.shape[0]
    rows = []
    for lot in range(min(count, LOT_ROWS)):
        for k, name in enumerate(lots.measurands):
            y, u = float(lots.estimate[lot, k]), float(lots.combined_uncertainty[lot, k])
            value, combined = short(y, u, digits)
            rows.append([f"{lot + 1}", name, value, combined,
                         format_dof(float(lots.dof[lot, k])),
                         f"{lots.coverage_factor[lot, k]:.3g}",
                         short(y, float(lots.expanded_uncertainty[lot, k]), digits)[1]])
    notes = [] if count <= LOT_ROWS else [
        f"the first {LOT_ROWS} of {count:,} lots are shown; every lot is in the arrays "
        "(estimate, combined_uncertainty, dof, coverage_factor, expanded_uncertainty)"]
    return table_html(f"Linear (GUM) budgets of {count:,} lot{'s' if count != 1 else ''}, "
                      f"{len(lots.inputs)} inputs",
                      ["lot", "measurand", "y", "u_c", "ν_eff", "k", "U"], rows, notes=notes)


def batch_html(batch: Batch, digits: int = 2) -> str:
    """The certify-all summary: a row per campaign and the chart of certified values."""
    from ._batch_view import batch_view

    view = batch_view(batch, digits)
    keys = ["date", "campaign", "value", "U", "k", "unit", "status"]
    return table_html(view["title"],
                      ["date", "campaign", "certified value", "U", "k", "unit", "status"],
                      [[row[key] for key in keys] for row in view["rows"]],
                      chart=view["chart"], notes=[view["summary"]])
