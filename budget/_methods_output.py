"""Several methods in the outputs: the JSON part, the terminal lines, the report's view.

No arithmetic beyond rounding for display; the numbers come from ``intercomparison``.
"""

from __future__ import annotations

import math
from typing import Any, Callable

from ._formatting import format_dof, format_number, format_pair, format_percent

__all__ = ["methods_document", "methods_lines", "methods_view"]


def _dof(value: float) -> float | None:
    return None if math.isinf(value) else value


def methods_document(m: Any) -> dict[str, Any]:
    """The ``methods`` key of ``certify --json`` (unrounded)."""
    from ._document import result_document

    combined = m.combined
    return {
        "methods": [_method_document(x, result_document) for x in m.methods],
        "labels": [x.label for x in m.methods],
        "covariance": [list(row) for row in m.covariance],
        "correlation": [list(row) for row in m.correlation],
        "monte_carlo_covariance": None if m.monte_carlo_covariance is None
        else [list(row) for row in m.monte_carlo_covariance],
        "shared": {name: [f"{member}.{item}" for member, item in refs]
                   for name, refs in m.shared},
        "consistency": None if m.consistency is None else {
            "chi2": m.consistency.chi2, "dof": m.consistency.dof,
            "p_value": m.consistency.p_value,
            "birge_ratio": None if math.isnan(m.consistency.birge_ratio)
            else m.consistency.birge_ratio},
        "pairs": [{"methods": [p.first, p.second], "difference": p.difference,
                   "covariance": p.covariance, "u_difference": p.u_difference,
                   "u_difference_independent": p.u_difference_independent,
                   "u_difference_monte_carlo": p.u_difference_monte_carlo,
                   "E_n": p.E_n, "zeta": p.zeta, "E_n_independent": p.E_n_independent,
                   "zeta_independent": p.zeta_independent, "agrees": p.agrees}
                  for p in m.pairs],
        "combination": None if combined is None else {
            "rule": combined.rule, "methods": list(m.combined_methods),
            "value": combined.estimate, "u": combined.standard_uncertainty,
            "dof": _dof(m.combined_dof), "weights": dict(zip(m.combined_methods,
                                                              combined.weights)),
            "shares": dict(m.shares), "tau": combined.tau,
            "chi2": combined.consistency.chi2, "chi2_dof": combined.consistency.dof,
            "p_value": combined.consistency.p_value,
            "birge_ratio": None if math.isnan(combined.consistency.birge_ratio)
            else combined.consistency.birge_ratio,
            "monte_carlo": _combined_mc(m.combined_monte_carlo)},
    }


def _combined_mc(s: Any) -> dict[str, Any] | None:
    if s is None:
        return None
    v = s.validation
    return {"trials": s.trials, "mean": s.mean, "u": s.standard_uncertainty,
            "interval": list(s.interval), "coverage": s.coverage_probability,
            "validation": {"tolerance": v.tolerance, "d_low": v.d_low, "d_high": v.d_high,
                           "validated": v.validated}}


def _method_document(x: Any, result_document: Callable[[Any], Any]) -> dict[str, Any]:
    made: dict[str, Any] = {"label": x.label, "kind": x.kind, "value": x.estimate,
                            "u": x.standard_uncertainty, "dof": _dof(x.dof),
                            "k": x.coverage_factor}
    char = x.characterization
    if char is not None:
        made.update({"runs": list(char.runs), "labels": list(char.labels), "s": char.s,
                     "n": char.n, "u_B": char.model_uncertainty,
                     "budget": result_document(char.result)})
    if x.impurities:
        made["impurities"] = [
            {"label": i.label, "value": i.estimate, "u": i.standard_uncertainty,
             "dof": _dof(i.dof),
             "budget": None if (i.characterization or i.result) is None
             else result_document(i.characterization.result if i.characterization
                                  else i.result)}
            for i in x.impurities]
    return made


def methods_lines(m: Any, unit: str, digits: int) -> list[str]:
    """Terminal lines: each method, the comparison matrix, the combination."""
    lines = ["", "methods" + (" (shared inputs: " + ", ".join(n for n, _ in m.shared) + ")"
                              if m.shared else "")]
    for x in m.methods:
        value, u = format_pair(x.estimate, x.standard_uncertainty, digits)
        lines.append(f"  {x.label:28} {value:>12} {unit}  u = {u}")
    lines.append("  pair                                  ζ shared (indep.)   E_n shared "
                 "(indep.)")
    for p in m.pairs:
        pair = f"{p.first} - {p.second}"
        lines.append(f"  {pair:36} {p.zeta:6.2f} ({p.zeta_independent:5.2f})   "
                     f"{p.E_n:6.2f} ({p.E_n_independent:5.2f})"
                     + ("" if p.agrees else "  DOES NOT AGREE"))
    c = m.combined
    if c is None:
        check = m.consistency
        if check is not None:
            lines.append(f"  consistency of all methods: χ² = {check.chi2:.3g}, ν = "
                         f"{check.dof}, p = {check.p_value:.2g}, Birge ratio "
                         f"{check.birge_ratio:.3g}")
        lines.append(f"  certified value from '{m.methods[0].label}'; the others are "
                     "compared only")
        return lines
    value, u = format_pair(c.estimate, c.standard_uncertainty, digits)
    shares = ", ".join(f"{label} {format_percent(s)} %" for label, s in m.shares)
    check = c.consistency
    lines += [f"  combined ({c.rule}): {value} {unit}, u = {u} (the characterization "
              f"component); shares of u²: {shares}",
              f"  consistency: χ² = {check.chi2:.3g}, ν = {check.dof}, p = "
              f"{check.p_value:.2g}, Birge ratio {check.birge_ratio:.3g}"
              + (f"; τ = {format_number(c.tau, digits)} {unit}" if c.tau > 0 else "")]
    s = m.combined_monte_carlo
    if s is not None:
        low, high = (format_pair(x, s.standard_uncertainty, digits + 1)[0]
                     for x in s.interval)
        verdict = "validates" if s.validation.validated else "does NOT validate"
        lines.append(f"  Monte Carlo of the combined value: {s.trials:,} trials, u = "
                     f"{format_number(s.standard_uncertainty, digits)}, "
                     f"{100 * s.coverage_probability:g} % interval [{low}, {high}]; "
                     f"{verdict} the GUM interval (JCGM 101 8.2)")
    return lines


def methods_view(m: Any, unit: str, digits: int,
                 budget_view: Callable[[Any], dict[str, Any]]) -> dict[str, Any]:
    """The report's view of the methods (rounded strings, no arithmetic left)."""
    c = m.combined
    labels = [x.label for x in m.methods]
    return {
        "methods": [_method_view(x, unit, digits, budget_view) for x in m.methods],
        "shared": [(name, ", ".join(f"{a}.{b}" for a, b in refs)) for name, refs in m.shared],
        "labels": labels,
        "correlation": [[f"{r:.3f}" for r in row] for row in m.correlation],
        "pairs": [{"pair": f"{p.first} − {p.second}",
                   "difference": format_number(p.difference, digits + 1),
                   "u": format_number(p.u_difference, digits),
                   "u_independent": format_number(p.u_difference_independent, digits),
                   "u_mc": None if p.u_difference_monte_carlo is None
                   else format_number(p.u_difference_monte_carlo, digits),
                   "zeta": f"{p.zeta:.2f}", "zeta_independent": f"{p.zeta_independent:.2f}",
                   "E_n": f"{p.E_n:.2f}", "E_n_independent": f"{p.E_n_independent:.2f}",
                   "agrees": p.agrees} for p in m.pairs],
        "combined": None if c is None else {
            "rule": c.rule, "value": format_pair(c.estimate, c.standard_uncertainty, digits)[0],
            "u": format_number(c.standard_uncertainty, digits),
            "dof": format_dof(m.combined_dof), "tau": format_number(c.tau, digits),
            "chi2": f"{c.consistency.chi2:.3g}", "chi2_dof": c.consistency.dof,
            "p": f"{c.consistency.p_value:.2g}",
            "birge": f"{c.consistency.birge_ratio:.3g}",
            "rows": [{"label": label, "weight": f"{w:.4f}", "share": format_percent(s)}
                     for label, w, (_, s) in zip(m.combined_methods, c.weights, m.shares)],
            "mc": _mc_view(m.combined_monte_carlo, digits)},
        "first": labels[0],
        "consistency": None if m.consistency is None else {
            "chi2": f"{m.consistency.chi2:.3g}", "dof": m.consistency.dof,
            "p": f"{m.consistency.p_value:.2g}",
            "birge": f"{m.consistency.birge_ratio:.3g}"},
    }


def _mc_view(s: Any, digits: int) -> dict[str, Any] | None:
    if s is None:
        return None
    return {"trials": f"{s.trials:,}", "u": format_number(s.standard_uncertainty, digits),
            "low": format_pair(s.interval[0], s.standard_uncertainty, digits + 1)[0],
            "high": format_pair(s.interval[1], s.standard_uncertainty, digits + 1)[0],
            "p": f"{100 * s.coverage_probability:g}", "validated": s.validation.validated,
            "delta": f"{s.validation.tolerance:.2g}", "d_low": f"{s.validation.d_low:.2g}",
            "d_high": f"{s.validation.d_high:.2g}"}


def _method_view(x: Any, unit: str, digits: int,
                 budget_view: Callable[[Any], dict[str, Any]]) -> dict[str, Any]:
    value, u = format_pair(x.estimate, x.standard_uncertainty, digits)
    char = x.characterization
    return {
        "label": x.label, "kind": "mass balance" if x.kind == "mass_balance" else "model",
        "value": value, "u": u, "dof": format_dof(x.dof),
        "runs": None if char is None else char.n,
        "s": None if char is None else format_number(char.s, digits),
        "u_B": None if char is None else format_number(char.model_uncertainty, digits),
        "budget": None if char is None else budget_view(char.result),
        "impurities": [{"label": i.label,
                        "value": format_pair(i.estimate, i.standard_uncertainty, digits)[0],
                        "u": format_number(i.standard_uncertainty, digits),
                        "from": "stated" if (i.characterization or i.result) is None
                        else "model" + (f", {i.characterization.n} runs"
                                        if i.characterization else "")}
                       for i in x.impurities],
    }
