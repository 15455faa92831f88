"""View-model of the certification report: rounded strings and charts, no arithmetic left
for the template. The confidence band of the stability line is the usual 95 % band of a
least-squares line, ŷ(t) ± t_0.975(n−2)·s·√(1/n + (t − t̄)²/S_tt) (common practice)."""

from __future__ import annotations

import math
from typing import Any, Callable

import numpy as np

from ._formatting import (format_dof, format_number, format_pair, format_percent,
                         format_statistic, shown_share)
from ._unit_display import display_unit
from ._svg import bar_chart, points_with_bars, trend_plot

__all__ = ["certification_view"]

_LABELS = {"characterization": "characterization (u_char)", "homogeneity": "between-unit "
           "homogeneity (u_bb)", "long_term_stability": "long-term stability (u_lts)",
           "short_term_stability": "short-term stability (u_sts)"}


def certification_view(cert: Any) -> dict[str, Any]:
    campaign, char = cert.campaign, cert.characterization
    digits = campaign.model.settings.digits
    unit = display_unit(campaign.unit)
    value, expanded = format_pair(cert.certified_value, cert.expanded_uncertainty, digits)
    rounded: Callable[[float], str] = lambda x: format_number(x, digits)  # noqa: E731
    return {
        "title": campaign.title, "material": campaign.material, "unit": unit,
        "extra": list(campaign.extra),
        "statement": {"value": value, "U": expanded, "k": f"{cert.coverage_factor:.3g}",
                      "coverage": None if cert.coverage_probability is None
                      else f"{100 * cert.coverage_probability:g}",
                      "u": rounded(cert.standard_uncertainty), "dof": format_dof(cert.dof)},
        "reported": _reported(cert, unit, digits),
        "certificate": [(key.replace("_", " "), text) for key, text in campaign.certificate],
        "components": [{"name": _LABELS[name], "u": rounded(u),
                        "share": format_percent(cert.shares[name])}
                       for name, u in cert.components],
        "component_chart": bar_chart([(_LABELS[n].split(" (")[0], shown_share(cert.shares[n]))
                                      for n, _ in cert.components], "%",
                                     "shares of u_CRM²"),
        "characterization": _characterization(char, campaign.scatter_covers, unit, digits),
        "homogeneity": _homogeneity(cert.homogeneity, unit, digits),
        "stability": _stability(cert.stability, unit, digits),
        "comparisons": _comparisons(cert, unit, digits),
        "warnings": list(cert.warnings),
        "excluded": [str(item) for item in campaign.excluded],
    }


def _characterization(char: Any, covers: tuple[str, ...], unit: str,
                      digits: int) -> dict[str, Any]:
    return {"runs": [{"label": label, "value": format_number(y, 9)}
                     for label, y in zip(char.labels, char.runs)],
            "mean": format_pair(char.mean, char.standard_uncertainty, digits + 1)[0],
            "s": format_number(char.s, digits),
            "n": char.n, "repeatability": format_number(char.s / math.sqrt(char.n), digits),
            "u_B": format_number(char.model_uncertainty, digits),
            "u": format_number(char.standard_uncertainty, digits),
            "dof": format_dof(char.dof), "covers": _covers(char, covers, unit, digits),
            "chart": points_with_bars([(label, y, 0.0) for label, y in
                                       zip(char.labels, char.runs)], centre=char.mean,
                                      unit=unit, label="results of the determinations")}


def _reported(cert: Any, unit: str, digits: int) -> dict[str, Any]:
    """The certificate's interval when Monte Carlo gave it, the method, the cross-check."""
    chosen, sim = cert.reported_result, cert.simulation
    view: dict[str, Any] = {"monte_carlo": chosen.monte_carlo,
                            "method": f"Reported interval: {chosen.description}.",
                            "simulation": None}
    if chosen.monte_carlo:
        value = format_pair(chosen.estimate, chosen.standard_uncertainty, digits)[0]
        low, high = (format_pair(x, chosen.standard_uncertainty, digits)[0]
                     for x in chosen.interval)
        view["statement"] = (f"{value} {unit}, {chosen.coverage_text} coverage interval "
                             f"[{low}, {high}] {unit}")
    if sim is not None:
        low, high = (format_pair(x, sim.standard_uncertainty, digits + 1)[0]
                     for x in sim.interval)
        mean = format_pair(sim.mean, sim.standard_uncertainty, digits + 1)[0]
        view["simulation"] = (
            f"Monte Carlo of the certified value (characterization model, repeatability, "
            f"between-unit and stability components each drawn from its distribution): "
            f"{sim.trials:,} trials, mean {mean} {unit}, u = "
            f"{format_number(sim.standard_uncertainty, digits)} {unit}, "
            f"{100 * sim.coverage_probability:g} % interval [{low}, {high}] {unit}.")
    return view


def _covers(char: Any, covers: tuple[str, ...], unit: str, digits: int) -> str:
    if not covers:
        return "none"
    term = format_number(char.s / math.sqrt(char.n), digits)
    return (f"{', '.join(covers)}: covered by the run-to-run scatter, their variation is "
            f"in the Type A term s/√n = {term} {unit}")


def _homogeneity(h: Any, unit: str, digits: int) -> dict[str, Any] | None:
    if h is None:
        return None
    within = math.sqrt(h.ms_within)
    rows = [(name, mean, within / math.sqrt(n)) for name, mean, n in
            zip(h.units, h.means, h.counts)]
    return {"units": len(h.units), "ms_between": format_number(h.ms_between, 3),
            "ms_within": format_number(h.ms_within, 3), "n0": format_number(h.n0, 3),
            "s_bb": format_number(h.s_bb, digits), "u_bb_star": format_number(h.u_bb_star, digits),
            "u_bb": format_number(h.u_bb, digits), "F": format_statistic(h.F, ".3g"),
            "p": format_statistic(h.p_value, ".2g"), "significant": h.p_value < 0.05,
            "dof": f"{h.dof_between}, {h.dof_within}",
            "chart": points_with_bars(rows, centre=float(np.average(h.means, weights=h.counts)),
                                      unit=unit, label="unit means with ± s_wb/√n")}


def _stability(s: Any, unit: str, digits: int) -> dict[str, Any] | None:
    if s is None:
        return None
    from ._special import t_ppf

    times = np.array(s.times)
    t_mean, sxx = times.mean(), float(np.sum((times - times.mean()) ** 2))
    t_q = t_ppf(0.975, s.dof)
    band = []
    for t in np.linspace(times.min(), times.max(), 25):
        half = t_q * s.residual_sd * math.sqrt(1 / times.size + (t - t_mean) ** 2 / sxx)
        fit = s.intercept + s.slope * t
        band.append((float(t), fit - half, fit + half))
    from ._studydata import time_words

    return {"slope": format_number(s.slope, digits), "u_slope": format_number(s.u_slope, digits),
            "t": format_statistic(s.t, ".3g"), "p": format_statistic(s.p_value, ".2g"),
            "significant": s.p_value < 0.05,
            "dof": s.dof, "shelf_life": time_words(s.time_unit, s.shelf_life),
            "per": time_words(s.time_unit),
            "u_lts": format_number(s.u_lts, digits),
            "chart": trend_plot(s.times, s.values, intercept=s.intercept, slope=s.slope,
                                band=band, unit=unit,
                                time_label=f"time / {s.time_unit}" if s.time_unit else "time",
                                label="stability: values against time")}


def _comparisons(cert: Any, unit: str, digits: int) -> dict[str, Any] | None:
    if not cert.comparisons:
        return None
    char = cert.characterization
    rows = [("this characterization", char.mean,
             cert.coverage_factor * char.standard_uncertainty)]
    rows += [(c.label, c.estimate, c.expanded_uncertainty) for c in cert.comparisons]
    shown = [format_pair(c.estimate, c.expanded_uncertainty, digits) for c in cert.comparisons]
    return {"rows": [{"label": c.label, "value": value, "U": expanded, "E_n": f"{c.E_n:.2f}",
                      "zeta": f"{c.zeta:.2f}", "agrees": c.agrees}
                     for c, (value, expanded) in zip(cert.comparisons, shown)],
            "chart": points_with_bars(rows, centre=None, unit=unit,
                                      label="comparison with independent results (± U)")}
