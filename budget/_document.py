"""The JSON result document of ``budget run --json`` (shared/spec/cli.md), unrounded.

Keys of the contract come first and keep their meaning; the extensions (``dof_rule``,
``correlation_terms``, ``shortest`` details, ``atomic_weights``, ``provenance`` and the
``caution``) add to it. An infinite number of degrees of freedom is ``null``.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

from ._analysis import Result
from ._gum import CorrelationTerms, MeasurandBudget
from ._chained import chain_document
from ._register import certificates_document, traceability_statement

if TYPE_CHECKING:  # loaded only for a run with trials
    from ._montecarlo import MeasurandSimulation

__all__ = ["result_document", "certification_document", "CAUTION", "SCHEMA_VERSION",
           "dof_or_null"]

#: The layout version of every JSON document (``budget/schemas/*.schema.json``).
SCHEMA_VERSION = "1"

CAUTION = ("These results were computed by software from the model and data supplied. "
           "They must be reviewed and approved within the laboratory's quality system "
           "(ISO/IEC 17025, ISO 17034) before they are used on a certificate.")


def dof_or_null(dof: float) -> float | None:
    return None if math.isinf(dof) else float(dof)


def result_document(result: Result, *, columns: bool = False) -> dict[str, Any]:
    """The JSON result document (``columns``: the correlation terms as a
    :class:`~budget._jsontext.Columns` for :func:`~budget._jsontext.json_text`, not a
    list of objects; the text is the same)."""
    from ._analysis import Result
    from ._arguments import check_instance

    check_instance(result, Result, "result_document", "result")
    from . import _provenance as provenance

    model = result.model
    simulation = result.simulation
    seed = simulation.seed if simulation else model.settings.seed
    names = [m.name for m in result.budget.measurands]
    matrix = simulation.output_correlation if simulation and simulation.trials else \
        result.budget.output_correlation
    return {
        "schema_version": SCHEMA_VERSION,
        "title": model.title,
        "model_sha256": model.sha256 or None,
        "coverage": result.budget.measurands[0].coverage_probability,
        "seed": seed,
        "measurands": [
            {**measurand_document(b, simulation.measurands[k] if simulation else None,
                                  columns=columns),
             "reported": reported_document(result.reported_for(b.name))}
            for k, b in enumerate(result.budget.measurands)],
        "reported_interval": (result.reported[0].method if result.reported else "gum"),
        "output_correlation": {a: {b: matrix[i][j] for j, b in enumerate(names)}
                               for i, a in enumerate(names)},
        "output_correlation_gum": {a: {b: result.budget.output_correlation[i][j]
                                       for j, b in enumerate(names)}
                                   for i, a in enumerate(names)},
        "output_covariance_gum": {a: {b: result.budget.output_covariance[i][j]
                                      for j, b in enumerate(names)}
                                  for i, a in enumerate(names)},
        "warnings": list(result.warnings),
        "certificates": certificates_document(model, model.measured),
        "estimated_together": [{"inputs": list(s.inputs), "dof": dof_or_null(s.dof),
                                "note": s.note} for s in model.estimated_together],
        "chain": None if not model.chain else {
            b.name: chain_document(model, b) for b in result.budget.measurands},
        "digits": result.digits,
        "records": records_document(model),
        "atomic_weights": _convention(result),
        "provenance": provenance.describe(model, simulation),
        "caution": CAUTION,
    }


def records_document(model: Any) -> list[dict[str, Any]] | None:
    """Each [fits.NAME] / [records.NAME] table: method, inputs made, and every fit."""
    if not model.records:
        return None
    return [{"table": view.table, "file": view.file, "method": view.method,
             "produces": list(view.produces), "notes": list(view.notes),
             "fits": [{"label": f.label, "method": f.fit.method, "points": len(f.fit.x),
                       "parameters": list(f.fit.parameters),
                       "estimates": [float(v) for v in f.fit.estimates],
                       "covariance": [[float(v) for v in row] for row in f.fit.covariance],
                       "dof": None if math.isinf(f.fit.dof) else f.fit.dof,
                       "residual_sd": f.fit.residual_sd}
                      for f in view.fits]}
            for view in model.records]


def certified_document(sim: Any) -> dict[str, Any] | None:
    from ._certified_mc import certified_document as made

    return made(sim)


def reported_document(chosen: Any) -> dict[str, Any]:
    """The reported result and the method that gave it (``reported.py``)."""
    return {"method": chosen.method, "description": chosen.description,
            "value": chosen.estimate, "u": chosen.standard_uncertainty,
            "interval": list(chosen.interval), "coverage": chosen.coverage_probability,
            "k": chosen.coverage_factor}


def _convention(result: Result) -> str | None:
    used = [i for i in result.model.inputs if i.molar_mass is not None]
    return result.model.settings.atomic_weights if used else None


def measurand_document(budget: MeasurandBudget, simulation: MeasurandSimulation | None,
                       *, columns: bool = False) -> dict[str, Any]:
    document: dict[str, Any] = {
        "name": budget.name,
        "unit": budget.unit,
        "value": budget.estimate,
        "u": budget.combined_uncertainty,
        "dof": dof_or_null(budget.dof),
        "k": budget.coverage_factor,
        "U": budget.expanded_uncertainty,
        "interval": list(budget.interval),
        "contributions": [_contribution(c) for c in budget.contributions],
        "correlation_terms": (_correlation_columns(budget.correlation_terms) if columns
                              else _correlation_rows(budget.correlation_terms)),
        "dof_rule": budget.dof_rule,
        "u_first_order": budget.first_order_uncertainty,
        "second_order_variance": budget.second_order_variance,
        "type_a_share": budget.type_a_share,
    }
    if simulation is not None:
        document["monte_carlo"] = simulation_document(simulation)
    return document


def _correlation_rows(terms: Any) -> list[dict[str, Any]]:
    """One object per correlated pair, made from the columns in one pass."""
    if not isinstance(terms, CorrelationTerms):
        return [{"inputs": list(t.inputs), "r": t.r, "variance": t.variance,
                 "share": t.share} for t in terms]
    names = terms.names
    return [{"inputs": [names[a], names[b]], "r": r, "variance": v, "share": s}
            for a, b, r, v, s in zip(terms.first.tolist(), terms.second.tolist(),
                                     terms.r.tolist(), terms.variance.tolist(),
                                     terms.share.tolist())]


def _correlation_columns(terms: Any) -> Any:
    """The correlation terms as columns: the same JSON text without an object per pair."""
    from ._jsontext import Columns, Spread

    if not isinstance(terms, CorrelationTerms):
        return _correlation_rows(terms)
    names = terms.names
    pairs = Spread((list(map(names.__getitem__, terms.first.tolist())),
                    list(map(names.__getitem__, terms.second.tolist()))))
    return Columns(keys=("inputs", "r", "variance", "share"),
                   columns=(pairs, terms.r.tolist(), terms.variance.tolist(),
                            terms.share.tolist()))


def _contribution(c: Any) -> dict[str, Any]:
    return {"input": c.input, "estimate": c.estimate, "unit": c.unit,
            "u": c.standard_uncertainty, "distribution": c.distribution, "type": c.type,
            "dof": dof_or_null(c.dof), "sensitivity": c.sensitivity,
            "contribution": c.contribution, "share": c.share}


def simulation_document(s: MeasurandSimulation) -> dict[str, Any]:
    document: dict[str, Any] = {
        "trials": s.trials, "mean": s.mean, "u": s.standard_uncertainty,
        "interval": list(s.interval), "shortest_interval": list(s.shortest_interval),
    }
    if s.validation is not None:
        v = s.validation
        document["validation"] = {"tolerance": v.tolerance, "d_low": v.d_low,
                                  "d_high": v.d_high, "validated": v.validated}
        if v.reason:
            document["validation"]["reason"] = v.reason
    return document


def certification_document(cert: Any) -> dict[str, Any]:
    """The JSON document of ``budget certify --json`` (shared/spec/certification.md)."""
    from ._arguments import check_instance
    from ._certification import Certification

    check_instance(cert, Certification, "certification_document", "cert")
    from . import _provenance as provenance

    campaign, char = cert.campaign, cert.characterization
    h, s = cert.homogeneity, cert.stability
    document = {
        "schema_version": SCHEMA_VERSION,
        "title": campaign.title,
        "unit": campaign.unit,
        "certified_value": cert.certified_value,
        "reported": reported_document(cert.reported_result),
        "reported_interval": cert.reported_result.method,
        "monte_carlo": certified_document(cert.simulation),
        "u": cert.standard_uncertainty,
        "k": cert.coverage_factor,
        "U": cert.expanded_uncertainty,
        "components": dict(cert.components),
        "characterization": {
            "runs": list(char.runs), "mean": char.mean, "s": char.s, "n": char.n,
            "u_B": char.model_uncertainty, "u": char.standard_uncertainty,
            "labels": list(char.labels),
            "run_inputs": list(campaign.run_inputs),
            "label_columns": [name for name, _ in campaign.runs.labels],
            "dof": dof_or_null(char.dof), "dof_B": dof_or_null(char.model_dof),
            "scatter_covers": list(campaign.scatter_covers),
            "repeatability": char.s / math.sqrt(char.n),  # s/√n, covers scatter_covers
            "budget": result_document(char.result)},
        "homogeneity": None if h is None else {
            "ms_between": h.ms_between, "ms_within": h.ms_within, "n0": h.n0,
            "s_bb": h.s_bb, "u_bb_star": h.u_bb_star, "u_bb": h.u_bb, "F": h.F,
            "p_value": h.p_value, **_reason("F", h.reason), "units": list(h.units),
            "means": list(h.means),
            "counts": list(h.counts)},
        "stability": None if s is None else {
            "slope": s.slope, "u_slope": s.u_slope, "p_value": s.p_value, "u_lts": s.u_lts,
            "intercept": s.intercept, "t": s.t, "dof": s.dof, "shelf_life": s.shelf_life,
            "time_unit": s.time_unit or None, **_reason("t", s.reason)},
        "comparisons": [{"label": c.label, "E_n": c.E_n, "zeta": c.zeta, "agrees": c.agrees,
                         "value": c.estimate, "u": c.standard_uncertainty,
                         "U": c.expanded_uncertainty} for c in cert.comparisons],
        "warnings": list(cert.warnings),
        "excluded": [{"file": e.file, "row": e.row, "column": e.column, "reason": e.reason}
                     for e in campaign.excluded],
        "material": campaign.material,
        "coverage": cert.coverage_probability,
        "dof": dof_or_null(cert.dof),
        "shares": cert.shares,
        "certificate": dict(campaign.certificate),
        "provenance": {**provenance.describe(campaign.model, char.result.simulation),
                       "campaign_file": campaign.source, "campaign_sha256": campaign.sha256,
                       "files": [{"role": "campaign", "path": campaign.source,
                                  "sha256": campaign.sha256},
                                 *provenance.files(campaign.model),
                                 *({"role": role, "path": path, "sha256": digest}
                                   for role, path, digest in campaign.data_files)]},
        "certificates": certificates_document(campaign.model, cert.run_dates),
        "traceability_generated": traceability_statement(campaign.model.certificates),
        "caution": CAUTION,
    }
    if cert.methods is not None:  # several methods (methods_output.py)
        from ._methods_output import methods_document

        document["methods"] = methods_document(cert.methods)
    if cert.stability_studies is not None:  # several series, short-term study
        from ._studies_output import studies_document

        document["stability_studies"] = studies_document(cert.stability_studies)
    return document


def _reason(statistic: str, reason: str) -> dict[str, str]:
    """``{"F_reason": …, "p_value_reason": …}`` beside statistics that are null."""
    return {f"{statistic}_reason": reason, "p_value_reason": reason} if reason else {}


def json_safe(document: Any) -> Any:
    """A copy of ``document`` in which every float that is not finite is ``None``.

    JSON has no inf or NaN; a statistic that cannot be computed is ``null`` and its reason
    is stated beside it where the engine knows one (``F_reason``, ``p_value_reason``).
    """
    if isinstance(document, float):
        return document if math.isfinite(document) else None
    if isinstance(document, dict):
        return {key: json_safe(value) for key, value in document.items()}
    if isinstance(document, (list, tuple)):
        return [json_safe(value) for value in document]
    return document
