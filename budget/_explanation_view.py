"""The auditor's answer as plain language (``budget explain``) and as the JSON document
(``budget explain --json``); the analysis itself is in ``explanation``."""

from __future__ import annotations

from typing import Any

from ._explanation import Driver, Explanation
from ._formatting import format_number, format_pair, format_percent
from ._unit_display import spaced_unit, terminal_unit

__all__ = ["render", "explanation_document"]


def render(explanations: tuple[Explanation, ...], digits: int = 2) -> str:
    """Plain-language answer, most important first."""
    blocks = [_text(e, digits) for e in explanations]
    return "\n\n".join(blocks)


def _text(e: Explanation, digits: int) -> str:
    value, expanded = format_pair(e.estimate, e.expanded_uncertainty, digits)
    unit = spaced_unit(terminal_unit(e.unit))
    lines = [f"{e.name} = ({value} ± {expanded}){unit}  (k = {e.coverage_factor:.3g})", ""]
    first = e.drivers[0]
    lines.append(f"1. {first.input} dominates: {format_percent(first.share)} % of u_c² "
                 f"({first.distribution}, Type {first.type}).")
    for n, d in enumerate(e.drivers[1:], start=2):
        lines.append(f"{n}. then {d.input}: {format_percent(d.share)} % ({d.distribution}, "
                     f"Type {d.type}).")
    if e.others:
        rest = ", ".join(f"{name} {format_percent(share)} %" for name, share in e.others[:6])
        lines.append(f"   the others: {rest}{' …' if len(e.others) > 6 else ''}")
    lines.append(f"Type A inputs give {format_percent(e.type_a_share)} % of u_c², Type B "
                 f"{format_percent(e.type_b_share)} %"
                 + (f", correlation terms {format_percent(e.correlation_share)} %."
                    if e.correlation_share else "."))
    lines += ["", "Linear approximation (GUM) against Monte Carlo (JCGM 101):"]
    lines += [f"  - {r}" for r in e.reasons]
    lines += ["", "What would reduce U:"]
    for d in e.drivers:
        halved = format_pair(e.estimate, d.halved_expanded_uncertainty, digits)[1]
        lines.append(f"  - halving u({d.input}) gives U = {halved}{unit} (now {expanded})")
        if e.target is not None:
            lines.append("    " + _target_text(e, d, digits))
    if e.sobol:
        lines += ["", "Variance-based first-order indices (Saltelli et al. 2010), Monte Carlo:"]
        for s in e.sobol[:6]:
            lines.append(f"  - {s.input}: S = {s.first_order:.3f} ± {s.standard_error:.3f} "
                         f"(linear share {format_percent(s.linear_share)} %)")
    lines += [f"  note: {n}" for n in e.sobol_notes]
    return "\n".join(lines)


def _target_text(e: Explanation, d: Driver, digits: int) -> str:
    target = format_pair(e.estimate, e.target or 0.0, digits)[1]
    unit = spaced_unit(terminal_unit(e.unit))
    if d.needed_standard_uncertainty is None:
        return f"U = {target}{unit} cannot be reached by improving {d.input} alone"
    rerun = "" if d.reached_expanded_uncertainty is None else \
        f"; rerun gives U = {format_pair(e.estimate, d.reached_expanded_uncertainty, digits)[1]}"
    needed = format_number(d.needed_standard_uncertainty, 2)
    return (f"for U = {target}{unit}: u({d.input}) ≤ {needed}"
            f"{spaced_unit(terminal_unit(d.unit))} "
            f"(now {format_number(d.standard_uncertainty, 2)}{rerun})")


def explanation_document(explanations: tuple[Explanation, ...]) -> dict[str, Any]:
    def driver(d: Driver) -> dict[str, Any]:
        return {"input": d.input, "share": d.share, "contribution": d.contribution,
                "distribution": d.distribution, "type": d.type, "u": d.standard_uncertainty,
                "unit": d.unit, "U_if_halved": d.halved_expanded_uncertainty,
                "u_needed": d.needed_standard_uncertainty,
                "U_reached": d.reached_expanded_uncertainty}

    return {"measurands": [{
        "name": e.name, "unit": e.unit, "value": e.estimate, "u": e.combined_uncertainty,
        "U": e.expanded_uncertainty, "k": e.coverage_factor,
        "drivers": [driver(d) for d in e.drivers],
        "others": [{"input": n, "share": s} for n, s in e.others],
        "type_a_share": e.type_a_share, "type_b_share": e.type_b_share,
        "correlation_share": e.correlation_share, "validated": e.validated,
        "reasons": list(e.reasons), "target": e.target,
        "sobol": [{"input": s.input, "first_order": s.first_order,
                   "standard_error": s.standard_error, "linear_share": s.linear_share}
                  for s in e.sobol],
        "sobol_notes": list(e.sobol_notes)} for e in explanations]}
