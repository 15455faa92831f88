"""Several characterization methods: their joint covariance, comparisons, combined value.

Method:

* every method is evaluated as the characterization is (``certification``): mean of the
  runs, u² = u_B² + s²/n; an impurity model without runs gives its GUM result at the
  estimates; a stated impurity its value and u;
* a purity by mass balance is w = 1 − Σ_k w_k (1 in the campaign's unit, 100 for %);
* the covariance of the method results: the models at their mean run inputs are merged
  with the declared shared inputs (``joint.join``); the joint GUM output covariance gives
  the covariances of the model parts (JCGM 102 6.2.1.3); the repeatability terms s²/n
  are independent between methods; the mass balance enters through the linear map
  x = A e + b (V = A C Aᵀ, GUM 5.2.2);
* comparison of every pair: d = x_i − x_j, u²(d) = u_i² + u_j² − 2 u_ij;
  ζ = d/u(d) and E_n = d/√(U_i² + U_j² − 2 k_i k_j u_ij) (ISO 13528:2015 9.7, 9.8 with
  the covariance term of GUM 5.2.2), each also without the covariance term, so that the
  effect of the shared inputs is visible;
* one joint Monte Carlo run (JCGM 101) of the merged model draws each shared input once
  and gives the covariance of the model parts as a cross-check;
* the combined value by the declared rule (``combination``); its degrees of freedom by
  Welch–Satterthwaite over the weighted method uncertainties; the share of method i in
  u²(μ) is w_i (V w)_i / u²(μ) (these add to 100 %).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any

import numpy as np

from ._analysis import evaluate
from ._combination import Combined, Consistency, combine, consistency
from ._errors import CampaignError, Location
from ._gum import (correlation_of, coverage_factor, matrix_rows, propagate,
                   welch_satterthwaite)
from ._joint import Member, join

if TYPE_CHECKING:
    from ._campaign import Campaign
    from ._certification import Characterization
    from ._methods import MassBalance, MethodsPlan, ModelMethod

__all__ = ["ImpurityResult", "MethodResult", "PairScore", "MethodsResult",
           "evaluate_methods"]


@dataclass(frozen=True, slots=True, kw_only=True)
class ImpurityResult:
    label: str
    estimate: float
    standard_uncertainty: float
    dof: float
    characterization: Any = None  # Characterization when the impurity has runs
    result: Any = None  # analysis.Result of the model at its estimates (no runs)


@dataclass(frozen=True, slots=True, kw_only=True)
class MethodResult:
    label: str
    kind: str  # "model" or "mass_balance"
    estimate: float
    standard_uncertainty: float
    dof: float
    coverage_factor: float
    characterization: Any = None  # Characterization of a model method
    impurities: tuple[ImpurityResult, ...] = ()


@dataclass(frozen=True, slots=True, kw_only=True)
class PairScore:
    first: str
    second: str
    difference: float
    covariance: float
    u_difference: float  # with the covariance of shared inputs
    u_difference_independent: float
    zeta: float
    zeta_independent: float
    E_n: float
    E_n_independent: float
    u_difference_monte_carlo: float | None
    agrees: bool


@dataclass(frozen=True, slots=True, kw_only=True)
class MethodsResult:
    methods: tuple[MethodResult, ...]
    covariance: tuple[tuple[float, ...], ...]
    correlation: tuple[tuple[float, ...], ...]
    monte_carlo_covariance: tuple[tuple[float, ...], ...] | None
    pairs: tuple[PairScore, ...]
    shared: tuple[tuple[str, tuple[tuple[str, str], ...]], ...]
    rule: str | None
    combined_methods: tuple[str, ...]
    combined: Combined | None
    combined_dof: float
    shares: tuple[tuple[str, float], ...]
    consistency: Consistency | None = None  # of all the methods, combined or not
    combined_monte_carlo: Any = None  # combined_montecarlo.CombinedSimulation

    def method(self, label: str) -> MethodResult:
        return next(m for m in self.methods if m.label == label)


@dataclass(frozen=True, slots=True, kw_only=True)
class _Element:
    """A quantity that enters the method results linearly: a model part or a stated value."""

    member: str | None  # joint member (None for a stated impurity)
    measurand: str
    scale: float
    estimate: float
    variance: float
    repeatability: float  # s²/n, independent of every other element
    dof: float
    runs: int = 0


def evaluate_methods(campaign: "Campaign", primary: "Characterization",
                     trials: int | None, seed: int | None,
                     warnings: list[str]) -> MethodsResult:
    """Every method, the covariance of their results, the pair scores and the combination."""
    plan: MethodsPlan = campaign.methods
    elements: list[_Element] = [_from_char(plan.primary_label, campaign, primary)]
    members = [Member(name=plan.primary_label, model=_at_mean(campaign))]
    results: list[MethodResult] = []
    rows: list[list[tuple[int, float]]] = [[(0, 1.0)]]
    offsets = [0.0]
    k = _k(campaign)
    results.append(_method_result(plan.primary_label, "model", primary.mean,
                                  primary.standard_uncertainty, primary.dof, k,
                                  characterization=primary))
    for method in plan.methods:
        result, row, offset = _one_method(campaign, method, elements, members, trials, seed,
                                          warnings, k)
        results.append(result)
        rows.append(row)
        offsets.append(offset)
    found = _covariance(members, plan, elements, rows, trials, seed,
                        Location(file=campaign.source, table="shared"))
    covariance, mc = found.covariance, found.monte_carlo
    x = np.array([m.estimate for m in results])
    pairs = _pairs(results, covariance, mc)
    for p in pairs:
        if not p.agrees:
            warnings.append(f"methods '{p.first}' and '{p.second}' do not agree (E_n = "
                            f"{p.E_n:.2f}, ζ = {p.zeta:.2f}, with the shared inputs)")
    combined, nu, shares = _combined(plan, results, x, covariance, warnings,
                                     Location(file=campaign.source, table="combination",
                                              key="methods"))
    check = _all_consistent(x, covariance)
    simulation = None
    if combined is not None and found.samples is not None:
        simulation = _combined_mc(campaign, plan, results, combined, nu, found,
                                  np.array(offsets), seed)
    return MethodsResult(methods=tuple(results), covariance=matrix_rows(covariance),
                         correlation=matrix_rows(correlation_of(covariance)),
                         monte_carlo_covariance=None if mc is None else matrix_rows(mc),
                         pairs=pairs, shared=plan.shared, rule=plan.rule,
                         combined_methods=plan.combined, combined=combined, combined_dof=nu,
                         shares=shares, consistency=check, combined_monte_carlo=simulation)


def _k(campaign: "Campaign") -> Any:
    def k_for(dof: float) -> float:
        if campaign.coverage_factor is not None:
            return float(campaign.coverage_factor)
        return coverage_factor(float(campaign.coverage_probability or 0.95), dof)
    return k_for


def _method_result(label: str, kind: str, estimate: float, u: float, dof: float, k: Any,
                   **extra: Any) -> MethodResult:
    return MethodResult(label=label, kind=kind, estimate=estimate, standard_uncertainty=u,
                        dof=dof, coverage_factor=k(dof), **extra)


def _sub_campaign(campaign: "Campaign", method: "ModelMethod") -> "Campaign":
    return replace(campaign, model=method.model, measurand=method.measurand,
                   runs=method.runs, run_inputs=method.run_inputs,
                   scatter_covers=method.scatter_covers, source=campaign.source)


def _at_mean(campaign: "Campaign") -> Any:
    from ._certification import _model_at_mean

    return _model_at_mean(campaign)


def _from_char(member: str, campaign: "Campaign", char: "Characterization") -> _Element:
    from ._certification import _unit_scale

    unit = campaign.model.measurands[[m.name for m in campaign.model.measurands].index(
        campaign.measurand)].unit
    return _Element(member=member, measurand=campaign.measurand,
                    scale=_unit_scale(campaign, unit), estimate=char.mean,
                    variance=_variance(char.standard_uncertainty, member, campaign),
                    repeatability=char.s ** 2 / char.n, dof=char.dof, runs=char.n)


def _one_method(campaign: "Campaign", method: "ModelMethod | MassBalance",
                elements: list[_Element], members: list[Member], trials: int | None,
                seed: int | None, warnings: list[str], k: Any
                ) -> tuple[MethodResult, list[tuple[int, float]], float]:
    from ._methods import ModelMethod

    if isinstance(method, ModelMethod):
        char, element, member = _model_part(campaign, method, trials, seed, warnings)
        elements.append(element)
        members.append(member)
        result = _method_result(method.label, "model", element.estimate,
                                math.sqrt(element.variance), element.dof, k,
                                characterization=char)
        return result, [(len(elements) - 1, 1.0)], 0.0
    one = _one(campaign)
    row: list[tuple[int, float]] = []
    impurities = []
    for impurity in method.impurities:
        if impurity.source is None:
            element = _Element(member=None, measurand=impurity.label, scale=1.0,
                               estimate=impurity.estimate,
                               variance=impurity.standard_uncertainty ** 2, repeatability=0.0,
                               dof=impurity.dof)
            impurities.append(ImpurityResult(label=impurity.label, estimate=impurity.estimate,
                                             standard_uncertainty=impurity.standard_uncertainty,
                                             dof=impurity.dof))
        else:
            char, element, member = _model_part(campaign, impurity.source, trials, seed,
                                                warnings)
            members.append(member)
            impurities.append(ImpurityResult(
                label=impurity.label, estimate=element.estimate,
                standard_uncertainty=math.sqrt(element.variance), dof=element.dof,
                characterization=char if impurity.source.runs is not None else None,
                result=None if impurity.source.runs is not None else char))
        elements.append(element)
        row.append((len(elements) - 1, -1.0))
    estimate = one - math.fsum(i.estimate for i in impurities)
    if estimate < 0.0:  # a unit slip (mg/kg given as %) would certify a negative purity
        _refuse_over_one(campaign, method, impurities, one)
    variance_alone = math.fsum(i.standard_uncertainty ** 2 for i in impurities)
    dof = welch_satterthwaite(math.sqrt(variance_alone),
                              np.array([i.standard_uncertainty for i in impurities]),
                              np.array([i.dof for i in impurities]))
    result = _method_result(method.label, "mass_balance", estimate,
                            math.sqrt(variance_alone), dof, k, impurities=tuple(impurities))
    return result, row, one


def _variance(u: float, label: str, campaign: "Campaign") -> float:
    """u², refused (not an OverflowError) when u is too large for the methods' covariance."""
    from ._limits import LIMITS_PAGE, MAX_METHOD_U

    if not u <= MAX_METHOD_U:
        raise CampaignError(f"expected the result of method '{label}' with a standard "
                            f"uncertainty of at most {MAX_METHOD_U:g} {campaign.unit} (its "
                            f"square enters the covariance of the methods; limits: "
                            f"{LIMITS_PAGE}), found {u:g} {campaign.unit}",
                            Location(file=campaign.source, table="method"))
    return u * u


def _refuse_over_one(campaign: "Campaign", method: "MassBalance",
                     impurities: list[ImpurityResult], one: float) -> None:
    unit = campaign.unit
    each = ", ".join(f"{i.label} {i.estimate:.6g} {unit}" for i in impurities)
    total = math.fsum(i.estimate for i in impurities)
    raise CampaignError(f"expected impurities that sum to at most {one:g} {unit}, found "
                        f"{total:.6g} {unit} ({each}): the mass balance would give a "
                        "negative purity; is a value in another unit?",
                        method.where or Location(file=campaign.source, table="method"))


def _one(campaign: "Campaign") -> float:
    from ._certification import _unit_scale

    return _unit_scale(campaign, "1")


def _model_part(campaign: "Campaign", method: "ModelMethod", trials: int | None,
                seed: int | None, warnings: list[str]) -> tuple[Any, _Element, Member]:
    """The method's result (Characterization, or Result without runs) and its element."""
    from ._certification import _characterize, _unit_scale

    sub = _sub_campaign(campaign, method)
    index = [m.name for m in method.model.measurands].index(method.measurand)
    scale = _unit_scale(sub, method.model.measurands[index].unit)
    if method.runs is not None:
        char = _characterize(sub, trials, seed, None, warnings)
        warnings.extend(f"method '{method.label}': {w}" for w in char.result.warnings)
        element = _from_char(method.label, sub, char)
        return char, element, Member(name=method.label, model=_at_mean(sub))
    result = evaluate(method.model, trials=trials, seed=seed)
    gum = result.budget.measurands[index]
    warnings.extend(f"method '{method.label}': {w}" for w in result.warnings)
    element = _Element(member=method.label, measurand=method.measurand, scale=scale,
                       estimate=gum.estimate * scale,
                       variance=_variance(gum.combined_uncertainty * scale, method.label,
                                          campaign), repeatability=0.0,
                       dof=gum.dof)
    return result, element, Member(name=method.label, model=method.model)


@dataclass(frozen=True, slots=True, kw_only=True)
class _Found:
    """The covariance of the method results (GUM, Monte Carlo) and what the draws need."""

    covariance: np.ndarray
    monte_carlo: np.ndarray | None
    a: np.ndarray
    parts: list[Any]
    samples: np.ndarray | None
    seed: int


def _covariance(members: list[Member], plan: "MethodsPlan", elements: list[_Element],
                rows: list[list[tuple[int, float]]], trials: int | None, seed: int | None,
                where: Location) -> _Found:
    joint = join(members, plan.shared, title="several methods", where=where)
    budget = propagate(joint.model)
    gum = np.array(budget.output_covariance)
    index = [joint.measurand_index(e.member, e.measurand) if e.member is not None else -1
             for e in elements]
    c = _element_covariance(elements, index, gum)
    mc, samples = None, None
    if trials != 0 and (trials is not None or joint.model.settings.trials != 0):
        from ._montecarlo import simulate

        simulation = simulate(joint.model, trials=trials, seed=seed, keep_samples=True)
        sd = np.array([m.standard_uncertainty for m in simulation.measurands])
        covariance = np.array(simulation.output_correlation) * np.outer(sd, sd)
        mc = _element_covariance(elements, index, covariance, keep_diagonal=False)
        samples = np.array([m.samples for m in simulation.measurands])
    a = np.zeros((len(rows), len(elements)))
    for i, row in enumerate(rows):
        for j, weight in row:
            a[i, j] = weight
    from ._combined_montecarlo import parts_for

    values = np.array([m.estimate for m in budget.measurands])
    return _Found(covariance=a @ c @ a.T, monte_carlo=None if mc is None else a @ mc @ a.T,
                  a=a, parts=parts_for(elements, index, values), samples=samples,
                  seed=joint.model.settings.seed if seed is None else seed)


def _combined_mc(campaign: "Campaign", plan: "MethodsPlan", results: list[MethodResult],
                 combined: Combined, nu: float, found: _Found, offsets: np.ndarray,
                 seed: int | None) -> Any:
    """The combined value drawn from the joint Monte Carlo trials (combined_montecarlo)."""
    from ._combined_montecarlo import combined_simulation

    labels = [m.label for m in results]
    weights = np.zeros(len(results))
    for label, w in zip(plan.combined, combined.weights):
        weights[labels.index(label)] = w
    coverage = float(campaign.coverage_probability or 0.95)
    k = coverage_factor(coverage, nu)
    samples = found.samples if found.samples is not None else np.empty((0, 0))
    return combined_simulation(samples, found.parts, found.a, offsets, weights,
                               combined.tau, found.seed, coverage,
                               (combined.estimate, combined.standard_uncertainty, k),
                               campaign.model.settings.digits)


def _element_covariance(elements: list[_Element], index: list[int], model_cov: np.ndarray,
                        keep_diagonal: bool = True) -> np.ndarray:
    """C_ef = s_e s_f cov(model parts) off the diagonal; the full u² on it."""
    n = len(elements)
    c = np.zeros((n, n))
    for e in range(n):
        for f in range(n):
            if index[e] < 0 or index[f] < 0:
                continue
            c[e, f] = elements[e].scale * elements[f].scale * model_cov[index[e], index[f]]
    for e in range(n):
        if keep_diagonal or index[e] < 0:
            c[e, e] = elements[e].variance
        else:
            c[e, e] += elements[e].repeatability
    return c


def _pairs(results: list[MethodResult], v: np.ndarray, mc: np.ndarray | None
           ) -> tuple[PairScore, ...]:
    made = []
    for i in range(len(results)):
        for j in range(i + 1, len(results)):
            a, b = results[i], results[j]
            d = a.estimate - b.estimate
            alone = v[i, i] + v[j, j]
            joint = alone - 2.0 * v[i, j]
            ka, kb = a.coverage_factor, b.coverage_factor
            big_alone = (ka * a.standard_uncertainty) ** 2 + (kb * b.standard_uncertainty) ** 2
            big = big_alone - 2.0 * ka * kb * v[i, j]
            u_mc = None if mc is None else math.sqrt(max(0.0, mc[i, i] + mc[j, j]
                                                          - 2.0 * mc[i, j]))
            e_n, zeta = _ratio(d, big), _ratio(d, joint)
            made.append(PairScore(
                first=a.label, second=b.label, difference=d, covariance=float(v[i, j]),
                u_difference=math.sqrt(max(0.0, joint)),
                u_difference_independent=math.sqrt(alone), zeta=zeta,
                zeta_independent=_ratio(d, alone), E_n=e_n,
                E_n_independent=_ratio(d, big_alone), u_difference_monte_carlo=u_mc,
                agrees=bool(abs(e_n) <= 1.0 and abs(zeta) <= 2.0)))
    return tuple(made)


def _all_consistent(x: np.ndarray, v: np.ndarray) -> Consistency | None:
    """χ² of every method about their weighted mean; None when V has no inverse."""
    from ._errors import PropagationError

    try:
        return consistency(x, v)
    except PropagationError:
        return None


def _ratio(difference: float, variance: float) -> float:
    if variance > 0:
        return difference / math.sqrt(variance)
    return 0.0 if difference == 0 else math.copysign(math.inf, difference)


def _combined(plan: "MethodsPlan", results: list[MethodResult], x: np.ndarray,
              v: np.ndarray, warnings: list[str], where: Location
              ) -> tuple[Combined | None, float, tuple[tuple[str, float], ...]]:
    if plan.rule is None:
        return None, math.inf, ()
    labels = [m.label for m in results]
    chosen = [labels.index(label) for label in plan.combined]
    sub = v[np.ix_(chosen, chosen)]
    combined = combine(x[chosen], sub, plan.rule, where=where)
    warnings.extend(combined.warnings)
    w = np.array(combined.weights)
    used = sub + combined.tau ** 2 * np.eye(len(chosen))
    total = combined.standard_uncertainty ** 2
    share = w * (used @ w) / total if total > 0 else np.zeros_like(w)
    dofs = np.array([results[i].dof for i in chosen])
    nu = welch_satterthwaite(combined.standard_uncertainty,
                             np.abs(w) * np.sqrt(np.diag(used)), dofs)
    return combined, nu, tuple((plan.combined[n], 100.0 * float(share[n]))
                               for n in range(len(chosen)))


def characterization_value(primary: "Characterization", methods: MethodsResult
                           ) -> "Characterization":
    """The characterization the certified value comes from: the combined value when a
    rule is declared (u_char = u(μ), ν by Welch–Satterthwaite), else the first method."""
    if methods.combined is None:
        return primary
    return replace(primary, mean=methods.combined.estimate,
                   standard_uncertainty=methods.combined.standard_uncertainty,
                   dof=methods.combined_dof)
