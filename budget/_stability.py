"""Stability studies evaluated from data (ISO Guide 35:2017 clause 8).

Method:

* each long-term series: least-squares line of value against time (``certification.trend``),
  slope b₁, s(b₁), t = b₁/s(b₁) with n − 2 degrees of freedom;
* several long-term series (``[[stability.series]]``), as declared:
  - ``"separately"``: each series has its own line; u_lts = s(b₁)·t_shelf of the series
    that gives the largest value (the governing series, named);
  - ``"together"``: one common slope with an intercept per series (the pooled
    within-series regression, as in an analysis of covariance):
    b₁ = Σ_g S_ty,g / Σ_g S_tt,g, s² = Σ residuals² / (N − G − 1),
    s(b₁) = s/√(Σ_g S_tt,g); u_lts = s(b₁)·t_shelf;
* short-term (transport) stability from an isochronous or classical study at the
  transport temperature: the line of value against time at that temperature, and
  u_sts = s(b₁)·t_transport (ISO Guide 35:2017 8.7; same form as u_lts);
* the significance test of each trend: two-sided t-test of b₁ = 0 at 5 %. No significant
  trend: u from the uncertainty of the slope, as above. A significant trend is not a
  matter of uncertainty (ISO Guide 35: the material changes under these conditions): a
  warning names it with the change |b₁|·t it predicts over the period, and the
  uncertainty is still s(b₁)·t, which does not cover that change; the producer must act
  (shorter period of validity, other storage or transport conditions, a correction).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import NDArray

from ._errors import CampaignError, Location

if TYPE_CHECKING:
    from ._campaign import _Reader
    from ._certification import Stability

__all__ = ["SeriesPlan", "StabilityPlan", "PooledTrend", "StabilityStudies",
           "read_stability_plan", "pooled_trend", "evaluate_studies", "EVALUATIONS"]

EVALUATIONS = ("separately", "together")
SIGNIFICANCE = 0.05
Array = NDArray[np.float64]


@dataclass(frozen=True, slots=True, kw_only=True)
class SeriesPlan:
    label: str
    times: Array
    values: Array
    time_unit: str = ""


@dataclass(frozen=True, slots=True, kw_only=True)
class StabilityPlan:
    """Further long-term series, how they are evaluated, and a short-term study."""

    label: str
    series: tuple[SeriesPlan, ...]
    evaluation: str
    short_term: SeriesPlan | None
    temperature: float | None
    transport_time: float


@dataclass(frozen=True, slots=True, kw_only=True)
class PooledTrend:
    """One slope common to several series, an intercept per series."""

    slope: float
    u_slope: float
    t: float
    p_value: float
    dof: int
    intercepts: tuple[float, ...]
    u_lts: float


@dataclass(frozen=True, slots=True, kw_only=True)
class StabilityStudies:
    labels: tuple[str, ...]
    series: tuple[Any, ...]  # certification.Stability, one per long-term series
    evaluation: str
    pooled: PooledTrend | None
    u_lts: float
    governing: str
    short_term: Any  # certification.Stability of the short-term study (shelf_life = t)
    short_term_unit: str
    temperature: float | None
    transport_time: float
    u_sts: float


_SERIES_KEYS = ("label", "data")
_SHORT_KEYS = ("data", "temperature", "transport_time", "label", "time_unit")
TRANSPORT_TIME = ("transport time", "2 week")  # what the key is, an example


def read_stability_plan(r: "_Reader", section: dict[str, Any] | None) -> StabilityPlan | None:
    """The further keys of [stability]; None when it declares none of them."""
    if section is None or not any(k in section for k in ("series", "short_term",
                                                           "evaluation")):
        return None

    evaluation = section.get("evaluation", "separately")
    if evaluation not in EVALUATIONS:
        raise r.fail(f"expected one of {', '.join(EVALUATIONS)}, found {evaluation!r}",
                     "stability", "evaluation")
    entries = section.get("series", [])
    if not isinstance(entries, list):
        raise r.fail("expected [[stability.series]] tables, found a single value",
                     "stability", "series")
    series = []
    for nth, entry in enumerate(entries):
        if not isinstance(entry, dict):
            raise r.fail(f"expected a table, found {entry!r}", "stability.series", None, nth)
        r.known(entry, "stability.series", _SERIES_KEYS, nth)
        label = r.text(entry, "label", "stability.series", nth)
        times, values, _ = _series(r, entry, "stability.series", nth,
                                   section.get("time_unit"))
        series.append(SeriesPlan(label=label, times=times, values=values))
    short, temperature, transport = _short_term(r, section)
    label = str(section.get("label", "data"))
    labels = [label, *(s.label for s in series)]
    if len(set(labels)) < len(labels):
        raise r.fail("expected distinct series labels, found a repeated one",
                     "stability.series", "label")
    return StabilityPlan(label=label, series=tuple(series), evaluation=evaluation,
                         short_term=short, temperature=temperature,
                         transport_time=transport)


def _short_term(r: "_Reader", section: dict[str, Any]
                ) -> tuple[SeriesPlan | None, float | None, float]:
    data = section.get("short_term")
    if data is None:
        return None, None, 0.0
    if not isinstance(data, dict):
        raise r.fail(f"expected a table [stability.short_term], found {data!r}", "stability",
                     "short_term")
    if "u_short_term" in section:
        raise r.fail("expected either 'u_short_term' or a [stability.short_term] study, "
                     "found both", "stability", "u_short_term")
    r.known(data, "stability.short_term", _SHORT_KEYS)
    from ._campaign import _optional_unit, span_unit, time_span

    table = "stability.short_term"
    declared = _optional_unit(r, data, "time_unit", table)
    given = data.get("transport_time")
    own = span_unit(r, given, table, "transport_time", TRANSPORT_TIME) \
        if isinstance(given, str) else None
    times, values, unit = _series(r, data, table, 0, declared, date_unit=declared or own)
    transport = time_span(r, data, table, "transport_time", unit, TRANSPORT_TIME)
    temperature = None
    if "temperature" in data:
        value = data["temperature"]
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise r.fail(f"expected a temperature in °C, found {value!r}",
                         "stability.short_term", "temperature")
        temperature = float(value)
    label = str(data.get("label", "short term"))
    return (SeriesPlan(label=label, times=times, values=values, time_unit=unit),
            temperature, transport)


def _series(r: "_Reader", entry: dict[str, Any], table: str, nth: int,
            time_unit: Any = None, date_unit: str | None = None) -> tuple[Array, Array, str]:
    """A study's times, values and time unit: ``time_unit`` as declared (else the
    header's); dates count in ``date_unit`` from the earliest."""
    relative = r.text(entry, "data", table, nth)
    path = r.confined(relative, table, "data", nth)
    if not path.is_file():
        raise r.fail(f"expected a file '{relative}' beside the campaign file, found none",
                     table, "data", nth)
    import hashlib

    r.files.append((f"{table}.data", str(path), hashlib.sha256(path.read_bytes()).hexdigest()))
    from ._datafiles import FileFormat
    from ._studydata import read_stability

    data = read_stability(path, FileFormat(), str(r.doc.get("unit", "")), None,
                          time_unit if isinstance(time_unit, str) else None, None, str(path),
                          date_unit=date_unit)
    if data.excluded:  # the outputs list exclusions of the main stability table only
        raise CampaignError(f"expected a value in every row, found {data.excluded[0].reason}",
                            Location(file=str(path), line=data.excluded[0].row))
    times = data.times
    if times.size < 3 or np.unique(times).size < 2:
        raise CampaignError(f"expected at least 3 points at 2 or more different times, found "
                            f"{times.size} at {np.unique(times).size}",
                            Location(file=str(path)))
    return times, data.values, data.time_unit


def pooled_trend(series: list[tuple[Array, Array]], period: float) -> PooledTrend:
    """Common slope, one intercept per series, the t-test of the slope."""
    from ._special import t_two_sided_p

    from ._certification import _mean, _scale

    # deviations in units of the largest (1 for ordinary data), so that times or values
    # near 1e±200 do not make Σ(t − t̄)² ∞ or 0 and the slope 0/0
    dts = [t - _mean(t) for t, _ in series]
    dys = [y - _mean(y) for _, y in series]
    t_scale, y_scale = _scale(np.concatenate(dts)), _scale(np.concatenate(dys))
    sxx = math.fsum(float(np.sum((dt / t_scale) ** 2)) for dt in dts)
    sxy = math.fsum(float(np.sum((dt / t_scale) * (dy / y_scale))) for dt, dy in zip(dts, dys))
    slope = y_scale / t_scale * (sxy / sxx)
    intercepts = tuple(float(_mean(y) - slope * _mean(t)) for t, y in series)
    dof = sum(t.size for t, _ in series) - len(series) - 1
    if t_scale == 1.0 and y_scale == 1.0:
        residual = math.fsum(float(np.sum((y - a - slope * t) ** 2))
                             for (t, y), a in zip(series, intercepts))
        s = math.sqrt(residual / dof)
    else:
        residual = math.fsum(float(np.sum((dy / y_scale - slope * t_scale / y_scale
                                           * (dt / t_scale)) ** 2))
                             for dt, dy in zip(dts, dys))
        s = y_scale * math.sqrt(residual / dof)
    u_slope = s / (t_scale * math.sqrt(sxx))
    from ._certification import zero_residual

    flat = zero_residual(s, np.concatenate([y for _, y in series]))
    t_value = math.nan if flat else slope / u_slope  # not defined: no significance
    p = math.nan if flat else t_two_sided_p(t_value, dof)
    return PooledTrend(slope=slope, u_slope=u_slope, t=t_value, p_value=p, dof=dof,
                       intercepts=intercepts, u_lts=u_slope * period)


def evaluate_studies(plan: StabilityPlan, main: "Stability", shelf_life: float, unit: str,
                     warnings: list[str]) -> StabilityStudies:
    """Every long-term series, their u_lts as declared, and the short-term study."""
    from ._certification import trend

    series = [main, *(trend(s.times, s.values, shelf_life, time_unit=main.time_unit)
                      for s in plan.series)]
    labels = (plan.label, *(s.label for s in plan.series))
    for label, fit in zip(labels[1:], series[1:]):
        _significance(f"stability series '{label}'", fit.slope, fit.p_value, shelf_life,
                      unit, warnings, main.time_unit)
    pooled = None
    if plan.evaluation == "together" and len(series) > 1:
        pooled = pooled_trend([(np.array(f.times), np.array(f.values)) for f in series],
                              shelf_life)
        _significance("stability (series together)", pooled.slope, pooled.p_value,
                      shelf_life, unit, warnings, main.time_unit)
        u_lts, governing = pooled.u_lts, "together"
    else:
        position = int(np.argmax([f.u_lts for f in series]))
        u_lts, governing = series[position].u_lts, labels[position]
    short, u_sts = None, 0.0
    if plan.short_term is not None:
        short = trend(plan.short_term.times, plan.short_term.values, plan.transport_time)
        u_sts = short.u_lts
        _significance("short-term stability", short.slope, short.p_value,
                      plan.transport_time, unit, warnings, plan.short_term.time_unit)
    return StabilityStudies(labels=labels, series=tuple(series), evaluation=plan.evaluation,
                            pooled=pooled, u_lts=u_lts, governing=governing,
                            short_term=short, temperature=plan.temperature,
                            transport_time=plan.transport_time, u_sts=u_sts,
                            short_term_unit="" if plan.short_term is None
                            else plan.short_term.time_unit)


def _significance(what: str, slope: float, p_value: float, period: float, unit: str,
                  warnings: list[str], time_unit: str = "") -> None:
    from ._studydata import time_words

    over = time_words(time_unit, period) if time_unit else f"{period:g}"
    if p_value < SIGNIFICANCE:
        warnings.append(
            f"{what}: the trend is significant (slope {slope:.3g} {unit} per "
            f"{time_words(time_unit)}, p = {p_value:.3g} < 0.05): it predicts a change of "
            f"{abs(slope) * period:.3g} {unit} over {over}, which the uncertainty s(b₁)·t "
            "does not cover (ISO Guide 35: shorten the period, change the conditions or "
            "correct for the change)")


def studies_in_use(studies: StabilityStudies, main: "Stability", campaign: Any
                   ) -> tuple["Stability", Any]:
    """The stability and campaign values the certified value uses: u_lts (and its ν) of
    the declared evaluation, u_sts of the short-term study when there is one."""
    from dataclasses import replace

    if studies.pooled is not None:
        dof = studies.pooled.dof
    else:
        dof = studies.series[list(studies.labels).index(studies.governing)].dof
    used = replace(main, u_lts=studies.u_lts, dof=dof)
    if studies.short_term is not None:
        campaign = replace(campaign, u_short_term=studies.u_sts)
    return used, campaign
