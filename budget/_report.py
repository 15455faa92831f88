"""Self-contained HTML reports: the only module that imports jinja2.

The view-models built here hold strings that are already rounded (``formatting``), SVG
charts (``svg``) and MathML typeset from the text the user wrote (``typeset``,
``equations_view``), the auditor's page (``audit_view``); the templates in
``templates/`` only lay them out (autoescaping on, undefined names are errors). The
report loads nothing from the network: no scripts, fonts, images or style sheets.
"""

from __future__ import annotations

import math
from importlib import resources
from typing import Any, Callable

from markupsafe import Markup

from ._analysis import Result
from ._document import CAUTION
from ._formatting import format_dof, format_number, format_pair, format_percent, shown_share
from ._gum import MeasurandBudget
from ._montecarlo import MeasurandSimulation
from ._output import files_of_campaign, files_of_model, write_atomic
from ._provenance import describe
from ._audit_view import audit_view
from ._certificate_page import certificate_page
from ._equations_view import model_view, sensitivity_view
from ._svg import bar_chart, histogram
from ._cells import contribution_cells, result_statement
from ._typeset import equation_mathml, name_html, name_text
from ._unit_display import display_unit, spaced_unit, unit_ratio

__all__ = ["render_report", "write_report", "render_certification_report",
           "write_certification_report", "render_difference_report",
           "write_difference_report", "render_batch_report", "write_batch_report"]


def _environment() -> Any:
    import jinja2

    folder = resources.files("budget.templates")
    return jinja2.Environment(loader=jinja2.FileSystemLoader(str(folder)), autoescape=True,
                              undefined=jinja2.StrictUndefined, trim_blocks=True,
                              lstrip_blocks=True)


def render_report(result: Result) -> str:
    from ._arguments import check_instance

    check_instance(result, Result, "render_report", "result")
    html: str = _environment().get_template("budget.html.j2").render(report=_budget_view(result))
    return html


def write_report(result: Result, path: str) -> None:
    write_atomic(path, render_report(result), protect=files_of_model(result.model))


def _budget_view(result: Result) -> dict[str, Any]:
    model = result.model
    equations = model_view(model)
    measurands = [_measurand_view(result, k, b) for k, b in
                  enumerate(result.budget.measurands)]
    return {
        "title": model.title, "description": model.description, "caution": CAUTION,
        "definitions": equations["definitions"], "equations": equations,
        "measurands": measurands,
        "audit": audit_view(result, [m["sensitivity"] for m in measurands]),
        "correlations": [{"a": Markup(name_html(a)), "b": Markup(name_html(b)), "r": f"{r:g}"}
                         for a, b, r in model.correlations],
        "output_correlation": _output_correlation(result),
        "inputs": [_input_view(i) for i in model.inputs],
        "records": _records_view(model),
        "provenance": _provenance(describe(model, result.simulation), result),
        "certificates": _certificates_view(model, model.measured),
        "chain": _chain_view(result),
        "warnings": list(result.warnings),
    }


def _chain_view(result: Result) -> dict[str, Any] | None:
    """Which earlier model fed which input, and each measurand's u_c² by stage."""
    from ._chained import stages

    model = result.model
    if not model.chain:
        return None
    links = [{"input": link.input, "measurand": link.measurand, "source": link.source,
              "value": f"{format_number(link.estimate, 8)} {link.unit}",
              "shares": ", ".join(f"{a} = {b}" for a, b in link.shares) or "none"}
             for link in model.chain]
    folded = [{"name": b.name, "stages": [
        {"stage": s.label or "this model", "source": s.source,
         "share": format_percent(s.share)} for s in stages(model, b)]}
        for b in result.budget.measurands]
    return {"links": links, "folded": folded}


def _records_view(model: Any) -> list[dict[str, Any]]:
    """Each [fits.NAME] / [records.NAME] table: method, what it gives, notes, fit charts."""
    from ._fitchart import fit_chart

    return [{"table": view.table, "file": view.file, "method": view.method,
             "produces": ", ".join(view.produces), "notes": list(view.notes),
             "charts": [{"label": f.label, "svg": fit_chart(
                 f.fit, x_label=f.x_label, y_label=f.y_label,
                 label=f"{view.table}: {f.label}, data, fit and residuals"),
                 "points": len(f.fit.x), "dof": format_dof(f.fit.dof)}
                        for f in view.fits]}
            for view in model.records]


def _certificates_view(model: Any, days: Any) -> list[dict[str, str]]:
    """One row per calibration certificate used, with its validity on the dates."""
    import datetime as dt

    from ._register import certificates_document, date_problems

    rows = []
    certificates = {u.certificate.identifier: u.certificate for u in model.certificates}
    for entry in certificates_document(model, tuple(days)):
        dates = entry["measurement_dates"]
        when = f"each of the {len(dates)} measurement dates" if len(dates) > 1 else \
            (dates[0] if dates else "")
        problems = date_problems(certificates[entry["certificate"]],
                                 tuple(dt.date.fromisoformat(d) for d in dates))
        status = "; ".join(problems) if problems else (
            f"valid on {when}" if dates else "no measurement date given")
        rows.append({"number": entry["number"], "instrument": entry["instrument"],
                     "issuer": entry["issuer"],
                     "period": f"{entry['calibrated']} to {entry['valid_until']}",
                     "inputs": ", ".join(i["input"] for i in entry["inputs"]),
                     "status": status, "valid": "no" if entry["problems"] else "yes"})
    return rows


def _input_view(item: Any) -> dict[str, Any]:
    return {"name": item.name, "shown": Markup(name_html(item.name)), "basis": item.basis,
            "source": item.source, "description": item.description,
            "unit": display_unit(item.unit)}


def _row_view(c: Any, unit: str, digits: int) -> dict[str, Any]:
    cells: dict[str, Any] = dict(contribution_cells(c, digits))
    cells["shown"] = Markup(name_html(c.input))
    cells["unit"] = display_unit(c.unit)
    cells["c_unit"] = unit_ratio(unit, cells["unit"])
    return cells


def _reported_statement(result: Result, b: MeasurandBudget, digits: int, unit: str) -> str:
    """The GUM statement, or the Monte Carlo interval when that is the reported one."""
    chosen = result.reported_for(b.name)
    if not chosen.monte_carlo:
        return result_statement(b, digits, unit=unit)
    unit = spaced_unit(unit)
    value = format_pair(chosen.estimate, chosen.standard_uncertainty, digits)[0]
    low, high = (format_pair(x, chosen.standard_uncertainty, digits)[0]
                 for x in chosen.interval)
    return (f"{b.name} = {value}{unit}, {chosen.coverage_text} coverage "
            f"interval [{low}, {high}]{unit}")


def _measurand_view(result: Result, k: int, b: MeasurandBudget) -> dict[str, Any]:
    measurand = result.model.measurands[k]
    simulation = result.simulation.measurands[k] if result.simulation else None
    view = budget_view(b, result.digits, simulation)
    view.update({"description": measurand.description, "equation": measurand.equation,
                 "math": model_view_math(result, k),
                 "statement": _reported_statement(result, b, result.digits, view["unit"]),
                 "method": f"Reported interval: {result.reported_for(b.name).description}.",
                 # a chained model's earlier models are reached through their results
                 "sensitivity": sensitivity_view(
                     result.model, k, {c.input: c.sensitivity for c in b.contributions})})
    return view


def budget_view(b: MeasurandBudget, digits: int,
                simulation: MeasurandSimulation | None = None) -> dict[str, Any]:
    """The budget table, GUM lines, chart and Monte Carlo part of one measurand, from the
    budget alone (the report adds the model's equations; the notebook shows this)."""
    unit = display_unit(b.unit)
    value, u = format_pair(b.estimate, b.combined_uncertainty, digits)
    chart_rows = [(name_text(c.input), c.share) for c in
                  sorted(b.contributions, key=lambda c: -c.share) if shown_share(c.share) > 0]
    chart_rows += [(f"r({name_text(t.inputs[0])}, {name_text(t.inputs[1])})",
                    shown_share(t.share)) for t in b.correlation_terms]
    return {
        "name": b.name, "shown": Markup(name_html(b.name)), "unit": unit,
        "statement": result_statement(b, digits, unit=unit),
        "rows": [_row_view(c, unit, digits) for c in b.contributions],
        "correlation_terms": [{"pair": Markup(f"{name_html(t.inputs[0])}, "
                                              f"{name_html(t.inputs[1])}"), "r": f"{t.r:g}",
                               "variance": format_number(t.variance, 3),
                               "share": format_percent(t.share)} for t in b.correlation_terms],
        "value": value, "u": u, "dof": format_dof(b.dof), "dof_rule": b.dof_rule,
        "k": f"{b.coverage_factor:.3f}", "U": format_pair(b.estimate, b.expanded_uncertainty,
                                                          digits)[1],
        "p": f"{100 * b.coverage_probability:g}",
        "second_order": None if b.second_order_variance is None else
        format_number(b.first_order_uncertainty, 3),
        "chart": bar_chart(chart_rows, "%", f"shares of u_c² of {name_text(b.name)}"),
        "mc": _simulation_view(b, simulation, digits, unit) if simulation else None,
    }


def model_view_math(result: Result, k: int) -> Markup:
    measurand = result.model.measurands[k]
    return Markup(equation_mathml(measurand.name, measurand.equation))


def _values(s: MeasurandSimulation) -> Any:
    """Every value of the run, or the fine histogram of a streamed run."""
    return s.samples if s.samples is not None else s.histogram


def _simulation_view(b: MeasurandBudget, s: MeasurandSimulation, digits: int,
                     unit: str) -> dict[str, Any]:
    reference = b.combined_uncertainty or s.standard_uncertainty
    rounded: Callable[[float], str] = lambda x: format_pair(x, reference, digits + 1)[0]  # noqa: E731
    v = s.validation
    return {
        "trials": f"{s.trials:,}", "mean": rounded(s.mean),
        "u": format_pair(s.mean, s.standard_uncertainty, digits + 1)[1],
        "interval": [rounded(x) for x in s.interval],
        "shortest": [rounded(x) for x in s.shortest_interval],
        "gum_interval": [rounded(x) for x in b.interval],
        "validated": None if v is None else v.validated,
        "d_low": format_number(v.d_low, 2) if v else "-",
        "d_high": format_number(v.d_high, 2) if v else "-",
        "tolerance": format_number(v.tolerance, 1) if v else "-",
        "histogram": histogram(_values(s), estimate=b.estimate, u=b.combined_uncertainty,
                               dof=b.dof, gum_interval=b.interval, interval=s.interval,
                               shortest=s.shortest_interval, unit=unit,
                               label=f"Monte Carlo distribution of {name_text(b.name)}"),
    }


def _output_correlation(result: Result) -> dict[str, Any] | None:
    names = [b.name for b in result.budget.measurands]
    if len(names) < 2:
        return None
    tables = [("GUM, from the output covariance J·U_x·Jᵀ (JCGM 102 6.2.1.3)",
               result.budget.output_correlation)]
    if result.simulation is not None and result.simulation.trials:
        tables.append((f"Monte Carlo, {result.simulation.trials:,} trials",
                       result.simulation.output_correlation))
    # "cells", not "values": jinja2 would find the dict's own values() method
    return {"names": names, "tables": [
        {"source": source, "rows": [{"name": a, "cells": [f"{x:.3f}" for x in row]}
                                    for a, row in zip(names, matrix)]}
        for source, matrix in tables]}


def _provenance(data: dict[str, Any], result: Result | None = None) -> list[tuple[str, str]]:
    rows = [("model file", str(data["model_file"])),
            ("model SHA-256", data["model_sha256"] or "none: a changed copy of the file"),
            ("seed", str(data["seed"])), ("Monte Carlo trials", f"{data['trials']:,}"
                                          + (" (adaptive)" if data["adaptive"] else "")),
            ("date", data["date"]),
            ("atomic weights", data["atomic_weights"] or "not used"),
            ("machine", data["machine"])]
    if result is not None:
        rows.append(("significant digits", str(result.digits)))
    rows += [(f"{entry['role']} {entry['path']}", f"SHA-256 {entry['sha256']}")
             for entry in data.get("files", [])]
    rows += [("changed from the file", change) for change in data.get("changes", [])]
    rows += [(f"{name} version", version) for name, version in data["versions"].items()]
    return rows


def render_certification_report(cert: Any) -> str:
    from ._arguments import check_instance
    from ._certification import Certification

    check_instance(cert, Certification, "render_certification_report", "cert")
    html: str = _environment().get_template("certificate.html.j2").render(
        report=_certification_view(cert))
    return html


def write_certification_report(cert: Any, path: str) -> None:
    write_atomic(path, render_certification_report(cert),
                 protect=files_of_campaign(cert.campaign))



def _certification_view(cert: Any) -> dict[str, Any]:
    from ._certification_view import certification_view

    view = certification_view(cert)
    view["budget"] = _budget_view(cert.characterization.result)
    view["provenance"] = _provenance({**describe(cert.campaign.model,
                                                 cert.characterization.result.simulation)},
                                     cert.characterization.result) + [
        ("campaign file", cert.campaign.source), ("campaign SHA-256", cert.campaign.sha256)]
    view["caution"] = CAUTION
    view["page"] = certificate_page(cert)
    view["certificates"] = _certificates_view(cert.campaign.model, cert.run_dates)
    from ._register import traceability_statement

    view["traceability_generated"] = traceability_statement(cert.campaign.model.certificates)
    if cert.methods is not None:  # several methods (methods_output.py, methods.html.j2)
        from ._methods_output import methods_view

        view["methods"] = methods_view(cert.methods, cert.campaign.unit,
                                       cert.campaign.model.settings.digits, _budget_view)
    if cert.stability_studies is not None:  # studies_output.py, studies.html.j2
        from ._studies_output import studies_view

        view["stability_studies"] = studies_view(cert.stability_studies,
                                                 cert.campaign.model.settings.digits)
    return view


def render_notebook(*, title: str, measurands: list[dict[str, Any]],
                    tables: list[dict[str, Any]]) -> str:
    """An HTML fragment for a notebook: the report's tables and charts, scoped styles."""
    html: str = _environment().get_template("notebook.html.j2").render(
        title=title, measurands=measurands, tables=tables)
    return html


def render_difference_report(difference: Any, digits: int = 2) -> str:
    """The HTML page of ``budget compare --html``."""
    from ._difference_view import causes, headline, squared_unit, through_k

    def measurand(m: Any) -> dict[str, Any]:
        a, b = m.before, m.after
        via_k = "" if math.isclose(a.coverage_factor, b.coverage_factor,
                                   rel_tol=1e-4) else through_k(m, display_unit) + "."
        return {"name": m.name, "unit_squared": squared_unit(m.unit, display_unit),
                "headline": headline(m, digits, display_unit),
                "causes": causes(m, show=display_unit) if m.variance_change else [],
                "through_k": via_k,
                "inputs": [{"input": c.input, "status": c.status,
                            "share_before": format_percent(c.share_before),
                            "share_after": format_percent(c.share_after),
                            "delta": f"{c.variance_change:+.3g}", "what": "; ".join(c.what)}
                           for c in m.inputs]}

    view = {"title": f"{difference.before.title or difference.before.label} → "
                     f"{difference.after.title or difference.after.label}",
            "before": difference.before.label, "after": difference.after.label,
            "caution": CAUTION, "notes": list(difference.notes),
            "measurands": [measurand(m) for m in difference.measurands]}
    return str(_environment().get_template("compare.html.j2").render(report=view))


def write_difference_report(difference: Any, path: str, digits: int = 2) -> None:
    write_atomic(path, render_difference_report(difference, digits))


def render_batch_report(batch: Any, digits: int = 2) -> str:
    """The HTML page of ``budget certify-all --html``: a trend chart and the table."""
    from ._batch_view import batch_view

    view = batch_view(batch, digits)
    view["caution"] = CAUTION
    return str(_environment().get_template("batch.html.j2").render(report=view))


def write_batch_report(batch: Any, path: str, digits: int = 2) -> None:
    write_atomic(path, render_batch_report(batch, digits))
