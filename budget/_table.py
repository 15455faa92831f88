"""The terminal budget table (fits 100 columns): numbers rounded by ``formatting`` only."""

from __future__ import annotations

import math
import textwrap
from typing import Any

from ._analysis import Result
from ._cells import (SHORT_DISTRIBUTION, contribution_cells, result_statement,
                     validation_lines)
from ._formatting import (format_dof, format_number, format_pair, format_percent,
                         format_statistic, shown_share)
from ._gum import MeasurandBudget
from ._montecarlo import MeasurandSimulation
from ._unit_display import spaced_unit, terminal_unit

__all__ = ["render", "render_certification", "result_statement", "contribution_cells",
           "reported_lines",
           "SHORT_DISTRIBUTION"]

WIDTH = 100
_HEAD = ("input", "estimate", "unit", "u(x)", "distribution", "type", "ν", "c",
         "|c|·u(x)", "share %")


def render(result: Result) -> str:
    """The whole terminal output of ``budget run`` (without warnings)."""
    lines = [result.model.title, "=" * min(WIDTH, len(result.model.title))]
    for k, measurand in enumerate(result.budget.measurands):
        simulation = result.simulation.measurands[k] if result.simulation else None
        lines += ["", *_measurand(result, measurand, simulation)]
    if len(result.budget.measurands) > 1:
        lines += ["", *_correlations(result)]
    return "\n".join(lines)


def _measurand(result: Result, b: MeasurandBudget, s: MeasurandSimulation | None) -> list[str]:
    model_measurand = result.model.measurands[[m.name for m in result.model.measurands]
                                              .index(b.name)]
    unit = terminal_unit(b.unit)
    heading = f"{b.name} = {model_measurand.equation}" + (f"   [{unit}]" if unit else "")
    lines = [heading if len(heading) <= WIDTH else heading[:WIDTH - 1] + "…"]
    if model_measurand.description:
        lines.append(model_measurand.description[:WIDTH])
    lines += ["", *_rows(b, result.digits), ""]
    lines += _summary(b, result.digits)
    if result.model.chain:
        from ._chained import stage_lines

        lines += stage_lines(result.model, b)
    if s is not None:
        lines += _monte_carlo(b, s, result.digits)
    chosen = result.reported_for(b.name)
    if chosen.monte_carlo:
        lines += reported_lines(chosen, result.digits)
    return lines


def reported_lines(chosen: Any, digits: int) -> list[str]:
    """The reported result when it is a Monte Carlo interval (JCGM 101 8.2), with its
    method named; the GUM one is the ``GUM:`` line itself."""
    low, high = (format_pair(x, chosen.standard_uncertainty, digits)[0]
                 for x in chosen.interval)
    value, u = format_pair(chosen.estimate, chosen.standard_uncertainty, digits)
    return [f"REPORTED: {chosen.name} = {value} {chosen.unit}, u = {u} {chosen.unit}, "
            f"{chosen.coverage_text} coverage interval [{low}, {high}] "
            f"{chosen.unit}",
            f"      method: {chosen.description}"]


_CELLS = ("input", "estimate", "unit", "u", "distribution", "type", "dof", "sensitivity",
          "contribution", "share")


def _rows(b: MeasurandBudget, digits: int) -> list[str]:
    rows = [list(_HEAD)]
    for c in b.contributions:
        cells = contribution_cells(c, digits)
        cells["unit"] = terminal_unit(c.unit)
        rows.append([cells[key] for key in _CELLS])
    for t in b.correlation_terms:
        rows.append([f"r({t.inputs[0]},{t.inputs[1]})", format_number(t.r, 3), "", "", "", "",
                     "", "", "", format_percent(t.share)])
    widths = [min(max(len(r[i]) for r in rows), 14) for i in range(len(_HEAD))]
    bar_room = WIDTH - (sum(widths) + 2 * (len(widths) - 1)) - 2
    text = []
    for n, row in enumerate(rows):
        padded = [_fit(cell, widths[i], right=i not in (0, 2, 4, 5)) for i, cell in
                  enumerate(row)]
        line = "  ".join(padded)
        if n and bar_room >= 6 and n <= len(b.contributions):
            line += "  " + _bar(b.contributions[n - 1].share, min(bar_room, 20))
        text.append(line.rstrip())
    text.insert(1, "-" * min(WIDTH, max(len(t) for t in text)))
    return text


def _fit(cell: str, width: int, right: bool) -> str:
    if len(cell) > width and ":" in cell and not right:  # a chained name: keep its end
        return ("…" + cell[len(cell) - width + 1:]).ljust(width)
    if len(cell) > width:
        cell = cell[:width - 1] + "…"
    return cell.rjust(width) if right else cell.ljust(width)


def _bar(share: float, width: int) -> str:
    cells = max(0.0, min(100.0, shown_share(share))) / 100.0 * width
    full = int(cells)
    return "█" * full + ("▌" if cells - full >= 0.5 else "")


def _summary(b: MeasurandBudget, digits: int) -> list[str]:
    value, u = format_pair(b.estimate, b.combined_uncertainty, digits)
    unit = spaced_unit(terminal_unit(b.unit))
    lines = [f"GUM:  y = {value}{unit}   u_c = {u}{unit}   ν_eff = {format_dof(b.dof)}"
             f"   k = {b.coverage_factor:.3g}",
             f"      {result_statement(b, digits, unit=unit.strip())}"]
    if "; " in b.dof_rule:  # more than Welch-Satterthwaite input by input: say which rule
        lines += textwrap.wrap("ν_eff: " + b.dof_rule.split("; ", 1)[1], WIDTH,
                               initial_indent="      ", subsequent_indent="      ")
    if b.second_order_variance is not None:
        lines.append(f"      includes GUM 5.1.2 higher-order terms "
                     f"(first-order u_c = {format_number(b.first_order_uncertainty, 3)})")
    return lines


def _monte_carlo(b: MeasurandBudget, s: MeasurandSimulation, digits: int) -> list[str]:
    mean, u = format_pair(s.mean, s.standard_uncertainty, digits + 1)
    reference = b.combined_uncertainty if b.combined_uncertainty > 0 else s.standard_uncertainty
    low, high = (format_pair(x, reference, digits + 1)[0] for x in s.interval)
    short_low, short_high = (format_pair(x, reference, digits + 1)[0]
                             for x in s.shortest_interval)
    p = f"{100 * b.coverage_probability:g} %"
    unit = spaced_unit(terminal_unit(b.unit))
    lines = [f"MC:   {s.trials:,} trials   y = {mean}{unit}   u = {u}{unit}",
             f"      {p} interval [{low}, {high}]   shortest [{short_low}, {short_high}]"]
    return lines + validation_lines(s.validation, unit, "      ")


def _correlations(result: Result) -> list[str]:
    names = [m.name for m in result.budget.measurands]
    source = result.simulation.output_correlation if result.simulation else \
        result.budget.output_correlation
    width = max(8, *(len(n) for n in names))
    lines = ["output correlation" + (" (Monte Carlo)" if result.simulation else " (GUM)"),
             " " * width + "".join(n.rjust(width + 2) for n in names)]
    for i, a in enumerate(names):
        cells = "".join(f"{source[i][j]:.3f}".rjust(width + 2) if math.isfinite(source[i][j])
                        else "-".rjust(width + 2) for j in range(len(names)))
        lines.append(a.ljust(width) + cells)
    return lines


def _run_columns(campaign: Any) -> str:
    """Which runs columns set inputs and which are read as labels."""
    labels = [name for name, _ in campaign.runs.labels]
    return (f"  note: run columns giving inputs: {', '.join(campaign.run_inputs)}; read as "
            f"labels: {', '.join(labels) if labels else 'none'}")


def _certified_monte_carlo(cert: Any, unit: str, digits: int) -> list[str]:
    """The Monte Carlo of the certified value, and which interval the certificate states."""
    lines = []
    sim, chosen = cert.simulation, cert.reported_result
    if sim is not None:
        low, high = (format_pair(x, sim.standard_uncertainty, digits + 1)[0]
                     for x in sim.interval)
        short = [format_pair(x, sim.standard_uncertainty, digits + 1)[0]
                 for x in sim.shortest_interval]
        lines.append(f"Monte Carlo of the certified value: {sim.trials:,} trials, u = "
                     f"{format_number(sim.standard_uncertainty, digits)} {unit}, "
                     f"{100 * sim.coverage_probability:g} % interval [{low}, {high}], "
                     f"shortest [{short[0]}, {short[1]}]")
    if chosen.monte_carlo:
        low, high = (format_pair(x, chosen.standard_uncertainty, digits)[0]
                     for x in chosen.interval)
        value = format_pair(chosen.estimate, chosen.standard_uncertainty, digits)[0]
        lines.insert(0, f"certified value (REPORTED): {value} {unit}, {chosen.coverage_text} "
                        f"coverage interval [{low}, {high}] {unit}")
    lines.append(f"reported interval: {chosen.description}")
    return lines


def render_certification(cert: Any, digits: int = 2) -> str:
    """Terminal summary of ``budget certify``."""
    from ._studydata import time_words

    campaign, char = cert.campaign, cert.characterization
    unit = terminal_unit(campaign.unit)
    value, expanded = format_pair(cert.certified_value, cert.expanded_uncertainty, digits)
    lines = [campaign.title, "=" * min(WIDTH, len(campaign.title))]
    if campaign.material:
        lines.append(campaign.material)
    p = cert.coverage_probability
    gum_label = "GUM result, for comparison" if cert.reported_result.monte_carlo else \
        "certified value"
    lines += ["", f"{gum_label}: ({value} ± {expanded}) {unit}, "
              f"k = {cert.coverage_factor:.3g}"
              + (f", coverage probability {100 * p:g} %" if p else "")]
    monte_carlo = _certified_monte_carlo(cert, unit, digits)
    if cert.reported_result.monte_carlo:  # the reported interval comes first
        lines[-1:-1] = monte_carlo[:1]
        monte_carlo = monte_carlo[1:]
    lines += monte_carlo
    lines += ["", "component                 u / " + unit + "      share of u_CRM²"]
    for name, u in cert.components:
        share = cert.shares[name]
        lines.append(f"{name.replace('_', ' '):24}  {format_number(u, digits):>10}    "
                     f"{format_percent(share):>6} %  {_bar(share, 20)}")
    lines.append(f"{'u_CRM':24}  {format_number(cert.standard_uncertainty, digits):>10}")
    lines += ["", f"characterization: {char.n} runs, mean {format_number(char.mean, 8)}, "
              f"s = {format_number(char.s, digits)}, "
              f"u_B = {format_number(char.model_uncertainty, digits)},"
              f" u_char = {format_number(char.standard_uncertainty, digits)} {unit}"]
    lines.append(_run_columns(campaign))
    if campaign.scatter_covers:
        lines.append(f"  covered by the run-to-run scatter (Type A, s/√n = "
                     f"{format_number(char.s / math.sqrt(char.n), digits)} {unit}), no term "
                     f"of their own in u_B: {', '.join(campaign.scatter_covers)}")
    if cert.homogeneity:
        h = cert.homogeneity
        lines.append(f"homogeneity: {len(h.units)} units, F = {format_statistic(h.F, '.3g')} (p = "
                     f"{format_statistic(h.p_value, '.2g')}),"
                     f" s_bb = {format_number(h.s_bb, digits)}, u*_bb = "
                     f"{format_number(h.u_bb_star, digits)} {unit}")
    if cert.stability:
        s = cert.stability
        lines.append(f"stability: slope {format_number(s.slope, digits)} ± "
                     f"{format_number(s.u_slope, digits)} {unit} per "
                     f"{time_words(s.time_unit)} (p = "
                     f"{format_statistic(s.p_value, '.2g')}), u_lts = "
                     f"{format_number(s.u_lts, digits)} {unit} over "
                     f"{time_words(s.time_unit, s.shelf_life)}")
    for c in cert.comparisons:
        verdict = "agrees" if c.agrees else "DOES NOT AGREE"
        lines.append(f"comparison with {c.label}: E_n = {c.E_n:.2f}, ζ = {c.zeta:.2f}, "
                     f"{verdict}")
    if cert.methods is not None:  # several methods (methods_output.py)
        from ._methods_output import methods_lines

        lines += methods_lines(cert.methods, unit, digits)
    if cert.stability_studies is not None:  # several series, short-term study
        from ._studies_output import studies_lines

        lines += studies_lines(cert.stability_studies, unit, digits)
    if campaign.excluded:
        lines += ["", f"rows left out ({len(campaign.excluded)}):"]
        lines += [f"  {item}" for item in campaign.excluded]
    return "\n".join(lines)
