"""The auditor's answer: what dominates the uncertainty, why, and what would reduce it.

This module computes; ``explanation_view`` writes the answer as text and as JSON.

Method:

* ranking by the share 100·(c_i u_i)²/u_c² of the GUM budget (JCGM 100 5.1.3), Type A
  and Type B shares, the share of the correlation terms;
* what-if: each leading input's uncertainty halved (or set to reach a target U) and the
  GUM budget evaluated again on the changed copy of the model — nothing is extrapolated;
* why Monte Carlo does or does not validate the GUM result (JCGM 101 8.2): a dominant
  non-Gaussian input, a dominant input with few degrees of freedom, nonlinearity (a
  shifted Monte Carlo mean or standard deviation);
* variance-based first-order sensitivity indices S_i = V[E(Y|X_i)]/V(Y), estimated by the
  Monte Carlo estimator of A. Saltelli et al., "Variance based sensitivity analysis of
  model output", Comput. Phys. Commun. 181 (2010) 259, Table 2 (b):
  S_i V(Y) ≈ (1/N) Σ_j f(B)_j [f(A_B^(i))_j − f(A)_j], for independent inputs only.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ._analysis import Result
from ._evaluation import compile_model
from ._formatting import format_number, format_percent
from ._gum import propagate
from ._model import Model
from ._montecarlo import heavy_tailed
from ._unit_display import display_unit, spaced_unit
from ._arguments import keywords_checked

__all__ = ["Driver", "SobolIndex", "Explanation", "explain", "draw_inputs"]


@dataclass(frozen=True, slots=True, kw_only=True)
class Driver:
    input: str
    share: float
    contribution: float
    distribution: str
    type: str
    standard_uncertainty: float
    unit: str
    halved_expanded_uncertainty: float
    needed_standard_uncertainty: float | None = None
    reached_expanded_uncertainty: float | None = None


@dataclass(frozen=True, slots=True, kw_only=True)
class SobolIndex:
    input: str
    first_order: float
    standard_error: float
    linear_share: float  # the GUM budget's share of u_c², %


@dataclass(frozen=True, slots=True, kw_only=True)
class Explanation:
    name: str
    unit: str
    estimate: float
    combined_uncertainty: float
    expanded_uncertainty: float
    coverage_factor: float
    drivers: tuple[Driver, ...]
    others: tuple[tuple[str, float], ...]
    type_a_share: float
    type_b_share: float
    correlation_share: float
    validated: bool | None
    reasons: tuple[str, ...]
    sobol: tuple[SobolIndex, ...]
    sobol_notes: tuple[str, ...]
    target: float | None

    def __repr__(self) -> str:
        lead = ", ".join(f"{d.input} {format_percent(d.share)} %" for d in self.drivers)
        return f"<Explanation of {self.name}: {lead} of u_c²>"

    def summary(self, digits: int = 2) -> str:
        """The plain-language answer of ``budget explain``."""
        from ._explanation_view import render
        from ._notebook import summary_digits

        return render((self,), summary_digits(digits))

    def _repr_html_(self) -> str:
        from ._notebook import explanation_html

        return explanation_html(self)

    def to_frame(self) -> Any:
        """One row per input named (leading inputs first), columns as in the JSON."""
        from ._notebook import frame

        document = self.to_dict()
        rows = [*document["drivers"], *document["others"]]
        totals = {key: document[key] for key in ("name", "unit", "value", "u", "U", "k",
                                                 "type_a_share", "type_b_share",
                                                 "correlation_share", "validated")}
        return frame(rows, "input", totals)

    def to_dict(self) -> dict[str, Any]:
        """This measurand's part of the ``budget explain --json`` document."""
        from ._explanation_view import explanation_document

        measurand: dict[str, Any] = explanation_document((self,))["measurands"][0]
        return measurand


MAX_SOBOL_TRIALS = 10_000_000  # draws per matrix of the variance-based indices (memory)


@keywords_checked
def explain(result: Result, *, target: float | None = None, leading: int = 3,
            sobol_trials: int = 1 << 15) -> tuple[Explanation, ...]:
    """One explanation per measurand of an evaluated model."""
    from ._analysis import Result
    from ._arguments import check_count, check_instance, check_positive

    check_instance(result, Result, "explain", "result")
    target = None if target is None else check_positive(target, "explain", "target")
    leading = check_count(leading, "explain", "leading", 1, 1000)
    sobol_trials = check_count(sobol_trials, "explain", "sobol_trials", 2, MAX_SOBOL_TRIALS)
    model = result.model
    coverage = result.budget.measurands[0].coverage_probability
    made = []
    for k, budget in enumerate(result.budget.measurands):
        ranked = sorted(budget.contributions, key=lambda c: -c.share)
        lead = [c for c in ranked if c.share >= 1.0][:leading] or ranked[:1]
        drivers = tuple(_driver(model, k, budget, c, coverage, target) for c in lead)
        others = tuple((c.input, c.share) for c in ranked[len(lead):] if c.share > 0)
        simulation = result.simulation.measurands[k] if result.simulation else None
        sobol, notes = _sobol(result, k, sobol_trials) if simulation else ((), ())
        made.append(Explanation(
            name=budget.name, unit=budget.unit, estimate=budget.estimate,
            combined_uncertainty=budget.combined_uncertainty,
            expanded_uncertainty=budget.expanded_uncertainty,
            coverage_factor=budget.coverage_factor, drivers=drivers, others=others,
            type_a_share=budget.type_a_share,
            type_b_share=math.fsum(c.share for c in budget.contributions if c.type == "B"),
            correlation_share=math.fsum(t.share for t in budget.correlation_terms),
            validated=None if simulation is None or simulation.validation is None
            else simulation.validation.validated,
            reasons=_reasons(model, budget, simulation, ranked), sobol=sobol,
            sobol_notes=notes, target=target))
    return tuple(made)


def _driver(model: Model, k: int, budget: Any, c: Any, coverage: float,
            target: float | None) -> Driver:
    halved = propagate(model.with_uncertainty(c.input, factor=0.5), coverage).measurands[k]
    needed = reached = None
    if target is not None and c.standard_uncertainty > 0 and c.sensitivity != 0:
        rest = math.sqrt(max(budget.combined_uncertainty ** 2 - c.contribution ** 2, 0.0))
        wanted = target / budget.coverage_factor
        if wanted > rest:  # (wanted - rest)(wanted + rest): no square of a huge target
            needed = math.sqrt(wanted - rest) * math.sqrt(wanted + rest) / abs(c.sensitivity)
            factor = needed / c.standard_uncertainty
            if math.isfinite(factor):  # a target near the largest double: no rerun
                reached = propagate(model.with_uncertainty(c.input, factor=factor),
                                    coverage).measurands[k].expanded_uncertainty
    return Driver(input=c.input, share=c.share, contribution=c.contribution,
                  distribution=c.distribution, type=c.type,
                  standard_uncertainty=c.standard_uncertainty, unit=c.unit,
                  halved_expanded_uncertainty=halved.expanded_uncertainty,
                  needed_standard_uncertainty=needed, reached_expanded_uncertainty=reached)


def _reasons(model: Model, budget: Any, simulation: Any, ranked: list[Any]) -> tuple[str, ...]:
    if simulation is None or simulation.validation is None:
        return ("no Monte Carlo run (trials = 0): the linear approximation was not checked",)
    v = simulation.validation
    unit = spaced_unit(display_unit(budget.unit))
    reasons = []
    top = ranked[0]
    item = model.input(top.input)
    gum_width = 2 * budget.expanded_uncertainty
    mc_width = simulation.interval[1] - simulation.interval[0]
    if v.reason:
        return (f"Monte Carlo cannot validate the GUM result: {v.reason}",)
    if v.validated:
        return (f"Monte Carlo validates the GUM result: both interval ends agree within "
                f"δ = {format_number(v.tolerance, 1)}{unit} (JCGM 101 8.2)",)
    side = "wider" if gum_width > mc_width else "narrower"
    reasons.append(f"the GUM interval is {side} than the Monte Carlo one "
                   f"({format_number(gum_width, 3)} vs {format_number(mc_width, 3)}"
                   f"{unit}; d_low = {format_number(v.d_low, 2)}, d_high = "
                   f"{format_number(v.d_high, 2)}, δ = {format_number(v.tolerance, 1)})")
    if top.share >= 40 and not item.distribution.gaussian and item.distribution.name != "student_t":
        shape = "flatter" if item.distribution.name.startswith(("rectangular", "arcsine",
                                                                 "trapezoidal",
                                                                 "curvilinear")) else "other"
        reasons.append(f"a dominant non-Gaussian input: {top.input} ({top.distribution}) "
                       f"carries {format_percent(top.share)} % of u_c², so the distribution "
                       f"of {budget.name} is {'flatter than' if shape == 'flatter' else 'not'}"
                       " a Gaussian and k·u_c does not give the stated coverage")
    if (top.share >= 40 and math.isfinite(item.dof) and item.dof < 10
            and item.distribution.name == "student_t"):
        reasons.append(f"a dominant input with few degrees of freedom: {top.input} "
                       f"(ν = {item.dof:g}) is drawn from a t distribution with heavy tails")
    linear = is_linear(model, budget.name)
    k = next(j for j, m in enumerate(model.measurands) if m.name == budget.name)
    heavy = heavy_tailed(model, None, k)
    # no nonlinearity read from a standard deviation that an input with ν ≤ 2 leaves undefined
    found = None if linear or heavy else _nonlinearity(budget, simulation, v.tolerance, unit)
    reasons += [found] if found else []
    if len(reasons) == 1:
        reasons.append("no single cause stands out; "
                       + ("the model is linear in its uncertain inputs, so nonlinearity is "
                          "not one; " if linear else "")
                       + "a longer run (the adaptive procedure of JCGM 101 7.9) shows whether "
                       "the difference is Monte Carlo noise")
    return tuple(reasons)


def _nonlinearity(budget: Any, simulation: Any, tolerance: float, unit: str) -> str | None:
    """The nonlinearity reason, given only when the Monte Carlo mean or standard deviation
    differs from the GUM figure by more than both the numerical tolerance δ (JCGM 101 8.2)
    and three standard errors of that Monte Carlo figure (its own noise)."""
    n = max(simulation.trials, 2)
    s = simulation.standard_uncertainty
    shift = abs(simulation.mean - budget.estimate)
    spread = abs(s - budget.combined_uncertainty)
    noise_mean = 3 * s / math.sqrt(n)
    noise_sd = 3 * _sd_standard_error(simulation.samples, s, n)
    if shift <= max(tolerance, noise_mean) and spread <= max(tolerance, noise_sd):
        return None
    return (f"nonlinearity: the Monte Carlo mean differs from the estimate by "
            f"{format_number(shift, 2)} and its standard deviation from u_c by "
            f"{format_number(spread, 2)}{unit}, beyond δ and three standard errors of the "
            f"Monte Carlo figures ({format_number(noise_mean, 2)}, "
            f"{format_number(noise_sd, 2)})")


def _sd_standard_error(samples: Any, s: float, n: int) -> float:
    """Standard error of a sample standard deviation: s·√((κ − 1)/(4n)), κ the kurtosis
    of the samples when kept, else 3 (Gaussian) — the delta method [M]."""
    kurtosis = 3.0
    if samples is not None and np.ndim(samples) == 1 and len(samples) > 3 and s > 0:
        centred = (np.asarray(samples, dtype=float) - float(np.mean(samples))) / s
        kurtosis = float(np.mean(centred ** 4))
    return s * math.sqrt(max(kurtosis - 1.0, 0.0) / (4 * n))


def is_linear(model: Model, name: str) -> bool:
    """True when the measurand is an affine function of the inputs that have an
    uncertainty (definitions substituted): every second derivative is then zero, so the
    GUM law is exact and nonlinearity cannot explain a Monte Carlo difference
    (JCGM 100 5.1.2). Decided on the expression graph in one pass; a product or power that
    happens to cancel counts as nonlinear (the safe side)."""
    from . import _algebra as alg

    uncertain = {i.name for i in model.inputs if i.standard_uncertainty > 0}
    graph = next(m.graph for m in model.measurands if m.name == name)

    def step(node: alg.Node, args: list[int]) -> int:  # 0 constant, 1 affine, 2 other
        if node.kind == "symbol":
            return int(node.name in uncertain)
        if node.kind == "add":
            return max(args, default=0)
        if node.kind == "mul":
            return 2 if max(args, default=0) == 2 or args.count(1) > 1 else max(args, default=0)
        if node.kind == "pow":
            unit_power = node.args[1].kind == "number" and alg.exact_value(node.args[1]) == 1
            return 0 if max(args) == 0 else (args[0] if unit_power and args[1] == 0 else 2)
        return 0 if max(args, default=0) == 0 else 2  # number; call of a function

    return alg.fold(graph, step) < 2


def draw_inputs(model: Model, rng: np.random.Generator, size: int) -> list[Any]:
    return [i.estimate if i.standard_uncertainty == 0 else i.distribution.sample(rng, size)
            for i in model.inputs]


def _sobol(result: Result, k: int, n: int) -> tuple[tuple[SobolIndex, ...], tuple[str, ...]]:
    model = result.model
    if model.correlations:
        return (), ("variance-based indices are not estimated for correlated inputs "
                    "(the estimator assumes independence)",)
    heavy = heavy_tailed(model, result.budget, k)
    if heavy:
        return (), (f"variance-based indices are not defined: {heavy[0][0]} (ν = "
                    f"{heavy[0][1]:g}) is drawn from a t distribution with ν ≤ 2, so "
                    f"'{model.measurands[k].name}' has no finite variance to apportion",)
    program = compile_model(model)
    seed = result.simulation.seed if result.simulation else model.settings.seed
    rng = np.random.Generator(np.random.PCG64(np.random.SeedSequence(seed, spawn_key=(1 << 30,))))
    a, b = draw_inputs(model, rng, n), draw_inputs(model, rng, n)
    f_a = np.broadcast_to(program.evaluate(a)[k], (n,))
    f_b = np.broadcast_to(program.evaluate(b)[k], (n,))
    centre = float(np.mean(np.concatenate([f_a, f_b])))  # centring leaves the estimator's
    f_a, f_b = f_a - centre, f_b - centre  # expectation unchanged and tames its variance
    variance = float(np.var(np.concatenate([f_a, f_b])))
    budget = result.budget.measurands[k]
    indices, notes = [], []
    if variance <= 0 or not math.isfinite(variance):
        return (), ("the Monte Carlo variance is zero or not finite; no indices",)
    for j, item in enumerate(model.inputs):
        if item.standard_uncertainty == 0:
            continue
        mixed = list(a)
        mixed[j] = b[j]
        f_ab = np.broadcast_to(program.evaluate(mixed)[k], (n,)) - centre
        terms = f_b * (f_ab - f_a)
        s_i = float(np.mean(terms)) / variance
        se = float(np.std(terms, ddof=1)) / math.sqrt(n) / variance
        linear = budget.contributions[j].share / 100.0
        indices.append(SobolIndex(input=item.name, first_order=s_i, standard_error=se,
                                  linear_share=100.0 * linear))
        if abs(s_i - linear) > max(0.05, 3 * se):
            notes.append(f"{item.name}: variance-based index {s_i:.2f} ± {se:.2f} differs "
                         f"from the linear share {linear:.2f} of u_c² (nonlinearity or "
                         "interaction)")
    indices.sort(key=lambda s: -s.first_order)
    return tuple(indices), tuple(notes)
