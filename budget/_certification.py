"""Certification of a reference-material batch (ISO 17034, ISO Guide 35).

Method:

* characterization: y_i = f(x_i) for each run (row); x̄_char = mean y_i;
  u_char² = u_B² + s²/n, where u_B is the GUM combined standard uncertainty of the model
  at the mean of the run inputs with every stated uncertainty except those the scatter
  of the runs already covers (``scatter_covers``), and s²/n the repeatability of the mean;
* homogeneity: one-way analysis of variance (ISO Guide 35:2017 7.7, Linsinger et al.,
  Accred. Qual. Assur. 6 (2001) 20); n₀ = (N − Σn_i²/N)/(p − 1);
  s_bb = √(max(0, MS_between − MS_within)/n₀); u*_bb = √(MS_within/n₀)·(2/ν_within)^¼;
  u_bb = max(s_bb, u*_bb) (common practice); F and its p-value;
* stability: least-squares line of value against time, slope b₁, s(b₁), t-test of the
  slope; u_lts = s(b₁)·shelf life (ISO Guide 35:2017 8.7);
* certified value: u_CRM² = u_char² + u_bb² + u_lts² + u_sts², U = k·u_CRM; with a
  coverage probability instead of k, k = t_p(ν_eff) with ν_eff by Welch–Satterthwaite;
* comparison (ISO 13528:2015 9.7, 9.8): E_n = (x_char − x)/√(U_char² + U²) with
  U_char = k·u_char, ζ = (x_char − x)/√(u_char² + u²); agreement when |E_n| ≤ 1 and
  |ζ| ≤ 2.

This module drives the engine (``analysis.evaluate``) once; it never reaches up to the
report or the command line.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field, replace
from typing import Any, Callable

import numpy as np

from ._analysis import Result, evaluate
from ._campaign import Campaign, Comparison
from ._certified_mc import CertifiedSimulation, simulate_certified
from ._errors import CampaignError, Location, SimulationError
from ._reported import Reported, gum_reported
from ._special import t_cdf
from ._evaluation import compile_model
from ._gum import coverage_factor, welch_satterthwaite
from ._model import Model
from ._register import date_warnings
from ._studydata import time_words
from ._units import parse_unit
from ._arguments import keywords_checked

__all__ = ["Homogeneity", "Stability", "Characterization", "ComparisonScore",
           "Certification", "anova", "trend", "certify", "zero_residual"]


@dataclass(frozen=True, slots=True, kw_only=True)
class Homogeneity:
    units: tuple[str, ...]
    means: tuple[float, ...]
    counts: tuple[int, ...]
    ms_between: float
    ms_within: float
    n0: float
    s_bb: float
    u_bb_star: float
    u_bb: float
    F: float
    p_value: float
    dof_between: int
    dof_within: int
    reason: str = ""  # why F and p are not computable (NaN), else ""


@dataclass(frozen=True, slots=True, kw_only=True)
class Stability:
    times: tuple[float, ...]
    values: tuple[float, ...]
    intercept: float
    slope: float
    u_slope: float
    residual_sd: float
    t: float
    p_value: float
    dof: int
    shelf_life: float
    u_lts: float
    reason: str = ""  # why t and p are not computable (NaN), else ""
    time_unit: str = ""


@dataclass(frozen=True, slots=True, kw_only=True)
class Characterization:
    runs: tuple[float, ...]
    labels: tuple[str, ...]
    mean: float
    s: float
    n: int
    model_uncertainty: float  # u_B: the model's GUM u_c at the mean run inputs
    model_dof: float
    standard_uncertainty: float  # u_char
    dof: float
    result: Result = field(repr=False, compare=False)


@dataclass(frozen=True, slots=True, kw_only=True)
class ComparisonScore:
    label: str
    estimate: float
    standard_uncertainty: float
    expanded_uncertainty: float
    E_n: float
    zeta: float
    agrees: bool


@dataclass(frozen=True, slots=True, kw_only=True)
class Certification:
    campaign: Campaign
    certified_value: float
    standard_uncertainty: float  # u_CRM
    coverage_factor: float
    expanded_uncertainty: float
    coverage_probability: float | None
    dof: float
    components: tuple[tuple[str, float], ...]
    characterization: Characterization
    homogeneity: Homogeneity | None
    stability: Stability | None
    comparisons: tuple[ComparisonScore, ...]
    warnings: tuple[str, ...] = ()
    run_dates: tuple[dt.date, ...] = ()  # the measurement dates of the runs, if given
    methods: Any = None  # intercomparison.MethodsResult when the campaign has several
    stability_studies: Any = None  # stability.StabilityStudies: series, short-term study
    simulation: CertifiedSimulation | None = None  # Monte Carlo of the certified value
    reported: Reported | None = None  # the certificate's interval and the method behind it

    @property
    def reported_result(self) -> Reported:
        """What the certificate states: the GUM interval unless ``reported_interval``."""
        if self.reported is not None:
            return self.reported
        return gum_reported(self.campaign.measurand, self.campaign.unit, self.certified_value,
                            self.standard_uncertainty, self.coverage_factor,
                            self.coverage_probability)

    def __repr__(self) -> str:
        from ._notebook import short
        from ._unit_display import display_unit, spaced_unit

        value, expanded = short(self.certified_value, self.expanded_uncertainty)
        unit = spaced_unit(display_unit(self.campaign.unit))
        return (f"<Certification {self.campaign.title!r}: ({value} ± {expanded})"
                f"{unit}, k = {self.coverage_factor:.3g}>")

    def summary(self, digits: int | None = None) -> str:
        """The terminal output of ``budget certify``, warnings included."""
        from ._table import render_certification

        from ._notebook import summary_digits

        digits = self.campaign.model.settings.digits if digits is None else \
            summary_digits(digits)
        return "\n".join([render_certification(self, digits),
                          *(f"warning: {w}" for w in self.warnings)])

    def _repr_html_(self) -> str:
        from ._notebook import certification_html

        return certification_html(self)

    def to_frame(self) -> Any:
        """One row per component of u_CRM (``component``, ``u``, ``share``); the certified
        value, ``u``, ``k``, ``U`` and ``unit`` in ``attrs``."""
        from ._notebook import frame

        shares = self.shares
        rows = [{"component": name, "u": u, "share": shares[name]}
                for name, u in self.components]
        return frame(rows, "component", {
            "title": self.campaign.title, "unit": self.campaign.unit,
            "certified_value": self.certified_value, "u": self.standard_uncertainty,
            "k": self.coverage_factor, "U": self.expanded_uncertainty,
            "coverage": self.coverage_probability})

    def to_dict(self) -> dict[str, Any]:
        """The JSON certification document."""
        from ._document import certification_document

        return certification_document(self)

    @property
    def shares(self) -> dict[str, float]:
        total = self.standard_uncertainty
        return {name: 100.0 * (u / total) ** 2 if total > 0 else 0.0
                for name, u in self.components}


def anova(groups: list[np.ndarray], labels: list[str] | None = None) -> Homogeneity:
    """One-way ANOVA between-unit homogeneity (ISO Guide 35), balanced or not."""
    from ._special import f_sf

    counts = np.array([g.size for g in groups])
    p, total = len(groups), int(counts.sum())
    means = np.array([_mean(g) for g in groups])
    grand = _mean(np.concatenate(groups))
    dof_b, dof_w = p - 1, total - p
    # mean squares in units of the largest deviation, so that values near 1e±300 give
    # representable s_bb and u*_bb (the mean squares themselves may then be ∞: JSON null)
    scale = _scale(np.concatenate(groups) - grand)
    ms_b1 = float(np.sum(counts * ((means - grand) / scale) ** 2) / dof_b)
    ms_w1 = float(sum(np.sum(((g - m) / scale) ** 2) for g, m in zip(groups, means)) / dof_w)
    n0 = (total - float(np.sum(counts ** 2)) / total) / dof_b
    s_bb = scale * math.sqrt(max(0.0, ms_b1 - ms_w1) / n0)
    u_star = scale * math.sqrt(ms_w1 / n0) * (2.0 / dof_w) ** 0.25
    with np.errstate(over="ignore"):
        ms_b, ms_w = float(np.float64(ms_b1) * scale * scale), \
            float(np.float64(ms_w1) * scale * scale)
    reason = _zero_within(scale * math.sqrt(ms_w1), scale * math.sqrt(ms_b1), groups)
    f = math.nan if reason else ms_b1 / ms_w1
    p_value = math.nan if reason else f_sf(f, dof_b, dof_w)
    return Homogeneity(reason=reason, units=tuple(labels or (str(i + 1) for i in range(p))),
                       means=tuple(float(m) for m in means),
                       counts=tuple(int(c) for c in counts), ms_between=ms_b, ms_within=ms_w,
                       n0=n0, s_bb=s_bb, u_bb_star=u_star, u_bb=max(s_bb, u_star), F=f,
                       p_value=p_value, dof_between=dof_b, dof_within=dof_w)


def _root_sum_square(parts: list[float]) -> float:
    """√Σx²: the plain sum for ordinary numbers (unchanged to the last bit), hypot (no
    overflow or underflow) when the plain sum is not representable."""
    plain = math.sqrt(math.fsum(x * x for x in parts))
    if math.isfinite(plain) and (plain > 1e-150 or not any(parts)):
        return plain
    return math.hypot(*parts)


def _scale(values: np.ndarray) -> float:
    """1 for ordinary data (results unchanged to the last bit); the largest magnitude for
    data whose squares would overflow or underflow (near 1e±100 and beyond)."""
    largest = float(np.max(np.abs(values), initial=0.0))
    return 1.0 if largest == 0.0 or 1e-100 <= largest <= 1e100 else largest


def _mean(values: np.ndarray) -> float:
    """The mean without overflow: [1e308, 1e308] has the mean 1e308, not ∞."""
    scale = _scale(values)
    return float(values.mean()) if scale == 1.0 else scale * float(np.mean(values / scale))


def _noise(values: np.ndarray) -> float:
    """A spread below rounding noise: 1000 ε of the largest value counts as zero."""
    return 1000.0 * float(np.finfo(float).eps) * float(np.max(np.abs(values), initial=0.0))


def _zero_within(sd_w: float, sd_b: float, groups: list[np.ndarray]) -> str:
    """Why F = MS_between/MS_within is not defined (from √MS_within and √MS_between), or
    '' when it is."""
    noise = _noise(np.concatenate(groups))
    if sd_w > noise:
        return ""
    if sd_b <= noise:
        return ("every value is the same (zero between- and within-unit variance): F = 0/0 "
                "and its p-value are not defined")
    return ("the replicates of each unit agree exactly (zero within-unit variance): "
            "F = MS_between/0 and its p-value are not defined; significance cannot be "
            "judged (s_bb is still computed)")


def zero_residual(residual_sd: float, values: np.ndarray) -> str:
    """Why the t-test of a slope is not defined (the points lie on the line), or ''."""
    if residual_sd > _noise(values):
        return ""
    return ("the points lie exactly on the fitted line (zero residual): s(b₁) = 0, so "
            "t = b₁/s(b₁) and its p-value are not defined and u_lts = 0; significance "
            "cannot be judged")


def trend(times: np.ndarray, values: np.ndarray, shelf_life: float, *,
          time_unit: str = "") -> Stability:
    """Least-squares line, t-test of its slope and u_lts = s(b₁)·shelf life."""
    from ._special import t_two_sided_p

    n = times.size
    t_mean = _mean(times)
    # values and times in units of their largest deviation (1 for ordinary data): times
    # near 1e±200 would otherwise make Σ(t − t̄)² ∞ or 0 and the slope 0/0
    t_scale = _scale(times - t_mean)
    d = (times - t_mean) / t_scale
    sxx = float(np.sum(d ** 2))
    mean = _mean(values)
    scale = _scale(values - mean)  # 1 unless the squares would overflow or underflow
    slope = scale / t_scale * (float(np.sum(d * ((values - mean) / scale))) / sxx)
    intercept = float(mean - slope * t_mean)
    if scale == 1.0 and t_scale == 1.0:
        residuals = values - (intercept + slope * times)
    else:
        residuals = (values - mean) / scale - (slope * t_scale / scale) * d
    s = scale * math.sqrt(float(np.sum(residuals ** 2)) / (n - 2))
    reason = zero_residual(s, values)
    if reason:  # a residual within rounding noise is zero: s(b₁) = 0, as the reason says
        s = 0.0
    u_slope = s / (t_scale * math.sqrt(sxx))
    t = math.nan if reason else slope / u_slope
    p_value = math.nan if reason else t_two_sided_p(t, n - 2)
    return Stability(reason=reason, times=tuple(float(x) for x in times),
                     values=tuple(float(v) for v in values), intercept=intercept,
                     slope=slope, u_slope=u_slope, residual_sd=s, t=t, p_value=p_value,
                     dof=n - 2, shelf_life=shelf_life, u_lts=u_slope * shelf_life,
                     time_unit=time_unit)


@keywords_checked
def certify(campaign: Campaign, *, trials: int | None = None, seed: int | None = None,
            progress: Callable[[int, int], None] | None = None,
            reported_interval: str | None = None) -> Certification:
    """The certified value, its uncertainty budget and the comparisons; with Monte Carlo
    trials also a Monte Carlo of the certified value, whose interval is the reported one
    when ``reported_interval`` (default: the campaign's) asks for it."""
    from ._arguments import check_instance

    check_instance(campaign, Campaign, "certify", "campaign")
    if reported_interval is not None:
        from ._model import check_reported

        check_reported(reported_interval, Location(file="certify()", key="reported_interval"))
    warnings: list[str] = []
    days = _run_dates(campaign)  # the certificates are checked on them (_on_run_dates)
    char = _characterize(campaign, trials, seed, progress, warnings)
    methods, value_from = None, char
    if campaign.methods is not None:
        from ._intercomparison import characterization_value, evaluate_methods

        methods = evaluate_methods(campaign, char, trials, seed, warnings)
        value_from = characterization_value(char, methods)
    homogeneity = None
    if campaign.homogeneity is not None:
        homogeneity = anova([v for _, v in campaign.homogeneity],
                            [u for u, _ in campaign.homogeneity])
        if homogeneity.reason:
            warnings.append(f"homogeneity: F and p not computable: {homogeneity.reason}")
        elif homogeneity.p_value < 0.05:
            warnings.append(f"homogeneity: the between-unit effect is significant (F = "
                            f"{homogeneity.F:.3g}, p = {homogeneity.p_value:.3g} < 0.05)")
    else:
        warnings.append("no homogeneity study: u_bb is taken as 0")
    stability = None
    if campaign.stability is not None:
        stability = trend(*campaign.stability, campaign.shelf_life,
                          time_unit=campaign.time_unit)
        if stability.reason:
            warnings.append(f"stability: t and p not computable: {stability.reason}")
        elif stability.p_value < 0.05:
            warnings.append(f"stability: the trend is significant (slope "
                            f"{stability.slope:.3g} {campaign.unit} per "
                            f"{time_words(campaign.time_unit)}, p = "
                            f"{stability.p_value:.3g} < 0.05)")
    else:
        warnings.append("no stability study: u_lts and u_sts are taken as 0")
    warnings.extend(campaign.warnings)
    warnings.extend(study_warnings(campaign, value_from, homogeneity, stability))
    studies, stability_used, campaign_used = None, stability, campaign
    if campaign.stability_plan is not None and stability is not None:
        from ._stability import evaluate_studies, studies_in_use

        studies = evaluate_studies(campaign.stability_plan, stability, campaign.shelf_life,
                                   campaign.unit, warnings)
        stability_used, campaign_used = studies_in_use(studies, stability, campaign)
    cert = replace(_certified(campaign_used, value_from, homogeneity, stability_used,
                              warnings), run_dates=days, stability=stability,
                   stability_studies=studies)
    if methods is not None:  # several methods: the combined value's own draws, if any
        cert = replace(cert, characterization=char, methods=methods)
    stated = Location(file=campaign.source, key="reported_interval",  # an argument, or
                      table=None if reported_interval else "certificate")  # the file's key
    cert = _with_monte_carlo(cert, char if methods is None or methods.combined is None
                             else None, reported_interval or campaign.reported_interval,
                             math.inf if stability_used is None else float(stability_used.dof),
                             stated)
    return cert


def _with_monte_carlo(cert: Certification, char: Characterization | None,
                      method: str, stability_dof: float, stated: Location) -> Certification:
    """Add the Monte Carlo of the certified value (``certified_mc.py``) and the result
    that the certificate reports (GUM, or a Monte Carlo interval, JCGM 101 8.2); ``stated``:
    where the reported interval was asked for."""
    campaign = cert.campaign
    simulation = _simulate_certified(cert, char, stability_dof)
    if method == "gum":
        chosen = cert.reported_result
        v = simulation.validation if simulation else None
        if v is not None and not v.validated:
            at = simulation.validation_coverage if simulation else None
            where = "" if at is None else f" at {100 * at:.3g} %"
            cert = replace(cert, warnings=(*cert.warnings, (
                f"certified value: the GUM interval is not validated by the Monte Carlo of "
                f"the certified value{where} (d_low = {v.d_low:.2g}, d_high = "
                f"{v.d_high:.2g}, δ = {v.tolerance:.2g} {campaign.unit}, JCGM 101 8.2); "
                "reported_interval = \"monte_carlo\" would state the Monte Carlo interval")))
    elif simulation is None:
        raise SimulationError(
            f"expected a Monte Carlo run of the characterization for \"{method}\" (trials > 0, "
            "one method), found none", stated)
    else:
        interval = simulation.interval if method == "monte_carlo" else \
            simulation.shortest_interval
        chosen = Reported(name=campaign.measurand, unit=campaign.unit, method=method,
                          estimate=simulation.mean,
                          standard_uncertainty=simulation.standard_uncertainty,
                          interval=interval,
                          coverage_probability=simulation.coverage_probability,
                          coverage_factor=None)
    return replace(cert, simulation=simulation, reported=chosen)


def _simulate_certified(cert: Certification, char: Characterization | None,
                        stability_dof: float) -> CertifiedSimulation | None:
    if char is None and cert.methods is not None:  # a combined value (combined_montecarlo)
        from ._combined_montecarlo import certified_from_combined

        return certified_from_combined(cert, stability_dof)
    sim = None if char is None else char.result.simulation
    if char is None or sim is None or not sim.trials:
        return None
    campaign, model = cert.campaign, cert.campaign.model
    index = [m.name for m in model.measurands].index(campaign.measurand)
    used = dict(cert.components)  # the u's that went into u_CRM, with their ν
    h = cert.homogeneity
    components = ((used["homogeneity"], float(h.dof_between) if h else math.inf),
                  (used["long_term_stability"], stability_dof),
                  (used["short_term_stability"], math.inf))
    stated = cert.coverage_probability
    implied = 2.0 * t_cdf(cert.coverage_factor, cert.dof) - 1.0  # what ±k·u_CRM claims
    samples = sim.measurands[index].samples
    assert samples is not None  # kept: _characterize asks for them
    return simulate_certified(
        model_samples=samples,
        model_estimate=char.result.budget.measurands[index].estimate,
        scale=_unit_scale(campaign, model.measurands[index].unit), runs_mean=char.mean,
        s=char.s, n=char.n, components=components,
        coverage=stated if stated is not None else model.settings.coverage_probability,
        seed=sim.seed,
        gum=(cert.certified_value, cert.standard_uncertainty, cert.expanded_uncertainty),
        digits=model.settings.digits, validate_at=stated if stated is not None else implied)


def _run_dates(campaign: Campaign) -> tuple[dt.date, ...]:
    """The dates in the runs table's ``date`` column, if it has one.

    The column was read with the runs file's own declarations (``dates``), like every
    date of a data file: ISO 8601, or a day-first or month-first form when settled.
    """
    if campaign.runs.dates is None:
        return campaign.model.measured
    return campaign.runs.dates


def _certified(campaign: Campaign, char: Characterization, homogeneity: Homogeneity | None,
               stability: Stability | None, warnings: list[str]) -> Certification:
    components = (("characterization", char.standard_uncertainty),
                  ("homogeneity", homogeneity.u_bb if homogeneity else 0.0),
                  ("long_term_stability", stability.u_lts if stability else 0.0),
                  ("short_term_stability", campaign.u_short_term))
    u = _root_sum_square([c for _, c in components])
    dofs = np.array([char.dof, homogeneity.dof_between if homogeneity else math.inf,
                     stability.dof if stability else math.inf, math.inf], dtype=float)
    nu = welch_satterthwaite(u, np.array([c for _, c in components]), dofs)
    k = campaign.coverage_factor if campaign.coverage_factor is not None else \
        coverage_factor(campaign.coverage_probability or 0.95, nu)  # the campaign gives one
    scores = tuple(_score(c, char, k) for c in campaign.comparisons)
    for s in scores:
        if not s.agrees:
            warnings.append(f"comparison with '{s.label}': no agreement (E_n = {s.E_n:.2f}, "
                            f"ζ = {s.zeta:.2f})")
    return Certification(campaign=campaign, certified_value=char.mean,
                         standard_uncertainty=u, coverage_factor=k, expanded_uncertainty=k * u,
                         coverage_probability=campaign.coverage_probability, dof=nu,
                         components=components,
                         characterization=char, homogeneity=homogeneity, stability=stability,
                         comparisons=scores,
                         warnings=tuple(dict.fromkeys([*char.result.warnings, *warnings])))


def _score(comparison: Comparison, char: Characterization, k: float) -> ComparisonScore:
    difference = char.mean - comparison.estimate
    e_n = difference / math.hypot(k * char.standard_uncertainty, comparison.expanded_uncertainty)
    zeta = difference / math.hypot(char.standard_uncertainty, comparison.standard_uncertainty)
    return ComparisonScore(label=comparison.label, estimate=comparison.estimate,
                           standard_uncertainty=comparison.standard_uncertainty,
                           expanded_uncertainty=comparison.expanded_uncertainty, E_n=e_n, zeta=zeta,
                           agrees=bool(abs(e_n) <= 1.0 and abs(zeta) <= 2.0))


def _characterize(campaign: Campaign, trials: int | None, seed: int | None,
                  progress: Callable[[int, int], None] | None,
                  warnings: list[str]) -> Characterization:
    model = campaign.model
    index = [m.name for m in model.measurands].index(campaign.measurand)
    scale = _unit_scale(campaign, model.measurands[index].unit)
    runs = _run_values(campaign, index) * scale
    n = runs.size
    if n < 2:
        raise CampaignError(f"expected at least 2 runs, found {n}",
                            Location(file=campaign.source, table="characterization",
                                     key="runs"))
    s = float(np.std(runs, ddof=1))
    at_mean = _model_at_mean(campaign, s / math.sqrt(n))
    # the certified value's Monte Carlo reuses every value of the model's run
    result = evaluate(at_mean, trials=trials, seed=seed, progress=progress, keep_samples=True)
    gum = result.budget.measurands[index]
    u_b = gum.combined_uncertainty * scale
    u = _root_sum_square([u_b, s / math.sqrt(n)])
    nu = welch_satterthwaite(u, np.array([u_b, s / math.sqrt(n)]),
                             np.array([gum.dof, n - 1.0]))
    labels = _labels(campaign)
    return Characterization(runs=tuple(float(y) for y in runs), labels=labels,
                            mean=float(runs.mean()), s=s, n=n, model_uncertainty=u_b,
                            model_dof=gum.dof, standard_uncertainty=u, dof=nu, result=result)


def _unit_scale(campaign: Campaign, unit: str) -> float:
    where = Location(file=campaign.source, key="unit")
    wanted, given = parse_unit(campaign.unit, where), parse_unit(unit, where)
    if wanted.dimensionality != given.dimensionality or wanted.offset or given.offset:
        from ._errors import UnitError

        raise UnitError(f"expected a unit of the measurand's dimension ('{unit}'), found "
                        f"'{campaign.unit}'", where)
    return float(given.factor / wanted.factor)


def _run_values(campaign: Campaign, index: int) -> np.ndarray:
    model = campaign.model
    values: list[object] = [i.estimate for i in model.inputs]
    names = [i.name for i in model.inputs]
    for name in campaign.run_inputs:
        values[names.index(name)] = campaign.runs.values(name)
    with np.errstate(all="ignore"):
        y = np.broadcast_to(compile_model(model).evaluate(values)[index],
                            (len(campaign.runs),)).astype(float)
    bad = np.flatnonzero(~np.isfinite(y))
    if bad.size:  # the row as a spreadsheet numbers it, in the runs file itself
        measurand = model.measurands[index]
        raise CampaignError(
            f"expected run values for which '{measurand.name}' is a finite number, found "
            f"{y[bad[0]]} (a division by zero or a function outside its domain in "
            f"'{measurand.equation}')",
            Location(file=campaign.runs.source, line=campaign.runs.rows[bad[0]]))
    return y


def _model_at_mean(campaign: Campaign, repeatability: float | None = None) -> Model:
    """The model at the mean run inputs; the inputs the scatter covers are marked so (no
    term of their own: the Type A term s/√n = ``repeatability`` of the runs covers them)."""
    from .distributions import CoveredByScatter

    inputs = []
    for item in campaign.model.inputs:
        if item.name in campaign.run_inputs:
            mean = float(campaign.runs.values(item.name).mean())
            item = replace(item, distribution=replace(item.distribution, estimate=mean))
        if item.name in campaign.scatter_covers:
            item = replace(item, dof=math.inf, type="A",
                           distribution=CoveredByScatter(item.estimate, repeatability),
                           basis=_covered_basis(repeatability, campaign.unit, item.basis))
        inputs.append(item)
    return replace(_on_run_dates(campaign), inputs=tuple(inputs))


def _on_run_dates(campaign: Campaign) -> Model:
    """The campaign's model with its certificates checked on the dates of the runs instead
    of its own ``measured`` dates, so that a certificate not valid then is warned of once.

    A certificate that comes through a chained earlier model keeps that stage's dates.
    """
    model = campaign.model
    days = _run_dates(campaign)
    own = tuple(use for use in model.certificates if use.dates is None)
    superseded = set(date_warnings(own, model.measured))
    what = " (dates of the runs)" if campaign.runs.dates is not None else ""
    return replace(model, measured=days, warnings=date_warnings(own, days, what) + tuple(
        w for w in model.warnings if w not in superseded))


def _covered_basis(repeatability: float | None, unit: str, basis: str) -> str:
    term = "s/√n" if repeatability is None else f"s/√n = {repeatability:.3g} {unit}"
    return (f"covered by the run-to-run scatter: the Type A term {term} of the runs "
            f"includes its variation (stated: {basis})")


def _labels(campaign: Campaign) -> tuple[str, ...]:
    return campaign.runs.label_column()


def study_warnings(campaign: Campaign, char: Characterization,
                   homogeneity: Homogeneity | None, stability: Stability | None) -> list[str]:
    """Homogeneity and stability means consistent with the characterization value."""
    from ._plausibility import consistency_warning

    found = []
    if homogeneity is not None:
        total = sum(homogeneity.counts)
        mean = sum(m * c for m, c in zip(homogeneity.means, homogeneity.counts)) / total
        found.append(consistency_warning("homogeneity", mean,
                                         math.sqrt(homogeneity.ms_between / total),
                                         char.mean, char.standard_uncertainty, campaign.unit,
                                         "homogeneity"))
    if stability is not None:
        values = np.array(stability.values)
        found.append(consistency_warning("stability", float(values.mean()),
                                         stability.residual_sd / math.sqrt(values.size),
                                         char.mean, char.standard_uncertainty, campaign.unit,
                                         "stability"))
    return [w for w in found if w is not None]
