"""View-model of the auditor's page: what dominates the uncertainty, why, what reduces it.

It lays out the analysis of ``explanation`` (ranking by share of u_c², Type A/B shares, the
reasons why Monte Carlo does or does not validate the GUM result, the what-if reruns) and
adds what a report can show better than a terminal: the chain of derivatives that
amplifies the dominant input, and each molar mass's u(M) broken down by element,
u(M)² = Σ_E (n_E·u(A_E))² (the n atoms of one element fully correlated, IUPAC convention
as in ``chemistry``), so that the atomic weight that matters is named.
"""

from __future__ import annotations

import math
from typing import Any

from markupsafe import Markup

from ._formatting import format_number, format_pair, format_percent
from ._typeset import name_html
from ._unit_display import display_unit

__all__ = ["audit_view", "element_rows"]


def audit_view(result: Any, chains: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """One auditor's answer per measurand; ``chains[k]`` is measurand k's sensitivity view."""
    from ._explanation import explain

    digits = result.digits
    formulas = {i.name: i for i in result.model.inputs if i.molar_mass is not None}
    out = []
    for k, e in enumerate(explain(result, sobol_trials=1 << 12)):
        budget = result.budget.measurands[k]
        unit = display_unit(e.unit)
        lead = e.drivers[0]
        contribution = next(c for c in budget.contributions if c.input == lead.input)
        item = result.model.input(lead.input)
        chain = next((c for c in chains[k]["chains"] if c["input"] == lead.input), None)
        expanded = format_pair(e.estimate, e.expanded_uncertainty, digits)[1]
        out.append({
            "name": Markup(name_html(e.name)), "unit": unit,
            "lead": {"name": Markup(name_html(lead.input)), "written": lead.input,
                     "share": format_percent(lead.share), "distribution": lead.distribution,
                     "type": lead.type, "basis": item.basis,
                     "u": format_number(lead.standard_uncertainty, digits),
                     "input_unit": display_unit(lead.unit),
                     "c": format_number(contribution.sensitivity, 4),
                     "contribution": format_number(lead.contribution, digits),
                     "chain": chain},
            "drivers": [{"name": Markup(name_html(d.input)), "share": format_percent(d.share),
                         "distribution": d.distribution, "type": d.type,
                         "contribution": format_number(d.contribution, digits),
                         "halved": format_pair(e.estimate, d.halved_expanded_uncertainty,
                                               digits)[1]}
                        for d in e.drivers],
            "others": [{"name": Markup(name_html(n)), "share": format_percent(s)}
                       for n, s in e.others],
            "type_a": format_percent(e.type_a_share), "type_b": format_percent(e.type_b_share),
            "correlation": format_percent(e.correlation_share) if e.correlation_share else None,
            "validated": e.validated, "reasons": list(e.reasons), "U": expanded,
            "elements": [element_rows(formulas[c.input], c.sensitivity,
                                      budget.combined_uncertainty, digits, e.unit)
                         for c in budget.contributions
                         if c.input in formulas and c.standard_uncertainty > 0],
        })
    return out


def element_rows(item: Any, sensitivity: float, u_c: float, digits: int,
                 unit: str) -> dict[str, Any]:
    """u(M) of a formula input by element: n·u(A_r), its share of u(M)² and of u_c²."""
    mass = item.molar_mass
    u_m = mass.standard_uncertainty
    rows = []
    for (symbol, n), weight in zip(mass.counts, mass.weights):
        part = n * weight.standard_uncertainty
        rows.append({"element": symbol, "n": n,
                     "A_r": format_pair(weight.estimate, weight.standard_uncertainty, 2)[0],
                     "u_A": format_number(weight.standard_uncertainty, 2),
                     "n_u": format_number(part, 2),
                     "share_M": format_percent(100 * part ** 2 / u_m ** 2) if u_m else "0",
                     "share_c": format_percent(100 * (sensitivity * part) ** 2 / u_c ** 2)
                     if u_c else "0",
                     "part": part})
    rows.sort(key=lambda r: -float(r["part"]))
    top = rows[0] if rows else None
    return {"name": Markup(name_html(item.name)), "formula": mass.formula,
            "convention": mass.convention, "u_M": format_number(u_m, 2),
            "check": format_number(math.sqrt(math.fsum(float(r["part"]) ** 2 for r in rows)), 2),
            "rows": rows, "top": top, "unit": display_unit(unit)}
