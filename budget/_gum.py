"""The GUM uncertainty framework: law of propagation of uncertainty (JCGM 100).

Method:

* sensitivity coefficients c_i = ∂f/∂x_i at the estimates, signed (GUM 5.1.3);
* u_c²(y) = Σ (c_i u_i)² + 2 Σ_{i<j} c_i c_j u_i u_j r_ij (GUM 5.1.2 and 5.2.2);
* GUM 5.1.2 note: with ``second_order`` the higher-order terms of eq. (14) for
  uncorrelated inputs, Σ_ij [½(∂²f/∂x_i∂x_j)² + ∂f/∂x_i ∂³f/∂x_i∂x_j²] u_i² u_j²;
* ν_eff by Welch–Satterthwaite, eq. (G.2b), over independent components: inputs
  estimated together and groups of correlated inputs count as one component each
  (``dof.py``; the rule applied is stated in ``dof_rule``);
* k = t_p(ν) with ν_eff (rounded to 0.1) truncated to the next lower integer (GUM G.4.1
  note 1), or the
  normal quantile when ν_eff is infinite; U = k·u_c (GUM 6.2, G.6.4);
* several measurands: the output covariance U_y = J U_x Jᵀ (JCGM 102 6.2.1.3).
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from typing import Any, overload

import numpy as np

from ._dof import Grouping, effective_dof, grouping, pair_indices
from ._errors import Location, PropagationError
from ._model import Model
from ._arguments import keywords_checked

__all__ = ["Contribution", "CorrelationTerm", "CorrelationTerms", "MeasurandBudget", "Budget",
           "propagate", "coverage_factor", "welch_satterthwaite"]


@dataclass(frozen=True, slots=True, kw_only=True)
class Contribution:
    input: str
    estimate: float
    unit: str
    standard_uncertainty: float
    distribution: str
    type: str
    dof: float
    sensitivity: float
    contribution: float
    share: float  # percentage of u_c²


@dataclass(frozen=True, slots=True, kw_only=True)
class CorrelationTerm:
    inputs: tuple[str, str]
    r: float
    variance: float  # 2 c_i c_j u_i u_j r_ij, signed
    share: float  # percentage of u_c²


class CorrelationTerms(Sequence[CorrelationTerm]):
    """The correlation terms of one measurand, kept as columns: a block of 1000 correlated
    inputs has 499,500 of them. Reads as a sequence of :class:`CorrelationTerm` (made when
    asked for); ``names[first[k]]``, ``names[second[k]]`` are the inputs of term k."""

    __slots__ = ("names", "first", "second", "r", "variance", "share")

    def __init__(self, names: Sequence[str], first: np.ndarray, second: np.ndarray,
                 r: np.ndarray, variance: np.ndarray, share: np.ndarray) -> None:
        self.names, self.first, self.second = tuple(names), first, second
        self.r, self.variance, self.share = r, variance, share

    def __len__(self) -> int:
        return int(self.first.size)

    @overload
    def __getitem__(self, k: int) -> CorrelationTerm: ...

    @overload
    def __getitem__(self, k: slice) -> tuple[CorrelationTerm, ...]: ...

    def __getitem__(self, k: int | slice) -> CorrelationTerm | tuple[CorrelationTerm, ...]:
        if isinstance(k, slice):
            return tuple(self[j] for j in range(*k.indices(len(self))))
        j = range(len(self))[k]
        return CorrelationTerm(inputs=(self.names[int(self.first[j])],
                                       self.names[int(self.second[j])]),
                               r=float(self.r[j]), variance=float(self.variance[j]),
                               share=float(self.share[j]))

    def __iter__(self) -> Iterator[CorrelationTerm]:
        names = self.names
        for a, b, r, v, s in zip(self.first.tolist(), self.second.tolist(), self.r.tolist(),
                                 self.variance.tolist(), self.share.tolist()):
            yield CorrelationTerm(inputs=(names[a], names[b]), r=r, variance=v, share=s)

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Sequence):
            return NotImplemented
        return tuple(self) == tuple(other)

    def __hash__(self) -> int:
        return hash(tuple(self))

    def __repr__(self) -> str:
        return f"<{len(self)} correlation terms>"


@dataclass(frozen=True, slots=True, kw_only=True)
class MeasurandBudget:
    name: str
    unit: str
    estimate: float
    contributions: tuple[Contribution, ...]
    correlation_terms: CorrelationTerms
    combined_uncertainty: float
    first_order_uncertainty: float
    second_order_variance: float | None
    dof: float
    dof_rule: str
    coverage_probability: float
    coverage_factor: float
    expanded_uncertainty: float

    @property
    def interval(self) -> tuple[float, float]:
        return (self.estimate - self.expanded_uncertainty,
                self.estimate + self.expanded_uncertainty)

    @property
    def type_a_share(self) -> float:
        """Percentage of the uncorrelated variance that comes from Type A inputs."""
        return math.fsum(c.share for c in self.contributions if c.type == "A")

    def __repr__(self) -> str:
        from ._notebook import short
        from ._unit_display import display_unit, spaced_unit

        value, u = short(self.estimate, self.combined_uncertainty)
        expanded = short(self.estimate, self.expanded_uncertainty)[1]
        unit = spaced_unit(display_unit(self.unit))  # none for a ratio: "y = 1.00 1" misread
        return (f"<MeasurandBudget {self.name}: y = {value}{unit}, u_c = {u}, "
                f"k = {self.coverage_factor:.3g}, U = {expanded} "
                f"({len(self.contributions)} inputs)>")

    def summary(self, digits: int = 2) -> str:
        """The terminal table and the GUM lines."""
        from ._notebook import summary_digits
        from ._table import _rows, _summary

        digits = summary_digits(digits)
        return "\n".join([*_rows(self, digits), "", *_summary(self, digits)])

    def _repr_html_(self) -> str:
        from ._notebook import budget_html

        return budget_html([self], 2)

    def to_frame(self) -> Any:
        """The budget as a DataFrame: one row per input (index ``input``), the JSON keys as
        columns, the totals (``value``, ``u``, ``dof``, ``k``, ``U``) in ``attrs``."""
        from ._notebook import budget_frame

        return budget_frame(self)

    def to_dict(self) -> dict[str, Any]:
        """This measurand's part of the JSON result document."""
        from ._document import measurand_document

        return measurand_document(self, None)


@dataclass(frozen=True, slots=True, kw_only=True)
class Budget:
    """The GUM result for every measurand of a model."""

    model: Model
    measurands: tuple[MeasurandBudget, ...]
    output_covariance: tuple[tuple[float, ...], ...]
    output_correlation: tuple[tuple[float, ...], ...]
    jacobian: tuple[tuple[float, ...], ...]
    warnings: tuple[str, ...] = field(default=())

    def measurand(self, name: str) -> MeasurandBudget:
        """The budget of measurand ``name`` (a ``KeyError`` with a "did you mean")."""
        from ._notebook import lookup

        return lookup(self.measurands, name, "measurand")

    def __repr__(self) -> str:
        names = ", ".join(m.name for m in self.measurands)
        return f"<Budget of {names}: {len(self.model.inputs)} inputs>"

    def summary(self, digits: int = 2) -> str:
        return "\n\n".join(f"{m.name} [{m.unit}]\n{m.summary(digits)}"
                           for m in self.measurands)

    def _repr_html_(self) -> str:
        from ._notebook import budget_html

        return budget_html(self.measurands, 2, title=self.model.title)

    def to_frame(self) -> Any:
        """All measurands' budgets, indexed by (``measurand``, ``input``); the totals of
        each measurand in ``attrs["measurands"]``."""
        from ._notebook import budget_rows, budget_totals, frame

        rows = [{"measurand": m.name, **row} for m in self.measurands for row in budget_rows(m)]
        return frame(rows, ["measurand", "input"],
                     {"measurands": {m.name: budget_totals(m) for m in self.measurands}})

    def to_dict(self) -> dict[str, Any]:
        from ._document import measurand_document

        return {"measurands": [measurand_document(m, None) for m in self.measurands]}


def coverage_factor(coverage: float, dof: float) -> float:
    """k_p = t_p(ν) at the integer below ν (GUM G.4.1 note 1); normal when ν = ∞.

    ν is rounded to one decimal before it is truncated, so that 18.999 counts as 19, as in
    the GUM's own G.4.1 example (ν_eff = 19.0, t_95(19) = 2.09).
    """
    from ._special import normal_ppf, t_ppf

    tail = 0.5 + coverage / 2.0
    if math.isinf(dof):
        return normal_ppf(tail)
    return t_ppf(tail, max(1.0, math.floor(round(dof, 1))))


def welch_satterthwaite(combined: float, components: np.ndarray, dofs: np.ndarray) -> float:
    """ν_eff = u_c⁴ / Σ u_i⁴/ν_i (GUM eq. G.2b); ∞ when every ν_i is ∞ or u_c = 0."""
    finite = np.isfinite(dofs) & (components > 0)
    if combined <= 0.0 or not finite.any():
        return math.inf
    # in units of u_c, so that u ≈ 1e±100 neither overflows nor underflows in the 4th power
    denominator = float(np.sum((components[finite] / combined) ** 4 / dofs[finite]))
    return 1.0 / denominator if denominator > 0 else math.inf


@keywords_checked
def propagate(model: Model, coverage: float | None = None, *,
              second_order: bool = False) -> Budget:
    """The GUM budget of every measurand of ``model``."""
    from ._gcpause import paused_collection

    with paused_collection():
        return _propagate(model, coverage, second_order)


def _propagate(model: Model, coverage: float | None, second_order: bool) -> Budget:
    from ._evaluation import evaluated_at_estimates

    from ._arguments import check_flag, check_model
    from ._limits import check_probability

    check_model(model, "propagate")
    where = Location(file=model.source, table="settings" if coverage is None else None,
                     key="coverage")  # the file's setting, or an argument
    coverage = model.settings.coverage_probability if coverage is None else \
        check_probability(coverage, where)
    check_flag(second_order, Location(file=model.source, key="second_order"))
    values, jac, underflowed = evaluated_at_estimates(model)
    u = np.array([i.standard_uncertainty for i in model.inputs])
    pairs = _Pairs(model)
    groups = grouping(model, (pairs.first, pairs.second, pairs.r))
    warnings: list[str] = list(model.warnings)
    extra = _second_order(model, second_order, warnings)
    budgets = tuple(
        _one(model, k, float(values[k]), jac[k], u, groups, pairs, coverage,
             None if extra is None else float(extra[k]),
             model.measurands[k].name in underflowed, warnings)
        for k in range(len(model.measurands)))
    core, scale = _scaled_covariance(jac, u, pairs, extra)
    with np.errstate(over="ignore"):
        covariance = core * scale * scale  # entries beyond ±1.8e308 are ∞ (JSON: null)
    return Budget(model=model, measurands=budgets, output_covariance=matrix_rows(covariance),
                  output_correlation=matrix_rows(correlation_of(core)),
                  jacobian=matrix_rows(jac),
                  warnings=tuple(warnings))


def _one(model: Model, k: int, estimate: float, c: np.ndarray, u: np.ndarray,
         groups: Grouping, pairs: "_Pairs", coverage: float, extra: float | None,
         underflowed: bool, warnings: list[str]) -> MeasurandBudget:
    measurand = model.measurands[k]
    parts = _parts(measurand.name, model, c, u)
    # sums of squares in units of the largest contribution, so that contributions of
    # 1e200 or 1e-200 give a representable u_c instead of ∞ or 0
    scale = float(np.max(np.abs(parts), initial=0.0)) or 1.0
    scaled = parts / scale
    terms = pairs.terms(scaled)
    first = float(np.sum(scaled ** 2)) + math.fsum(terms.tolist())
    if first < 0.0:
        raise PropagationError(f"the variance of '{measurand.name}' came out negative "
                               f"({first * scale * scale:.3g}); check the correlations",
                               _equation(model, measurand))
    variance = first + (extra or 0.0) / scale / scale
    combined = scale * math.sqrt(variance)
    share = (100.0 * scaled ** 2 / variance) if variance > 0 else np.zeros_like(parts)
    if not math.isfinite(combined):
        raise PropagationError(f"the combined standard uncertainty of '{measurand.name}' is "
                               "beyond the floating-point range (±1.8e308)",
                               _equation(model, measurand))
    with np.errstate(over="ignore"):
        terms = terms * scale * scale
        first, variance = first * scale * scale, variance * scale * scale
    # ν_eff does not depend on the scale: computed in units of the largest contribution
    nu, rule, notes = effective_dof(model, measurand.name, scaled, combined / scale, groups)
    warnings.extend(notes)
    if extra:
        rule += "; the second-order terms are taken with infinite degrees of freedom"
    _warn(measurand.name, combined, nu, warnings,
          underflowed or _lost(c, u, parts))
    k_p = coverage_factor(coverage, nu)
    if not math.isfinite(k_p * combined):
        raise PropagationError(f"the expanded uncertainty U = k·u_c of '{measurand.name}' "
                               f"overflows: beyond the floating-point range (±1.8e308) with k "
                               f"= {k_p:.3g} and u_c = {combined:.3g}; rescale the units",
                               _equation(model, measurand))
    contributions = tuple(  # the columns as Python floats in one call each
        Contribution(input=i.name, estimate=i.estimate, unit=i.unit,
                     standard_uncertainty=i.standard_uncertainty,
                     distribution=i.distribution.name, type=i.type, dof=i.dof,
                     sensitivity=sensitivity, contribution=part, share=percent)
        for i, sensitivity, part, percent in zip(
            model.inputs, c.tolist(), np.abs(parts).tolist(), share.tolist()))
    correlation_terms = CorrelationTerms(
        pairs.names, pairs.first, pairs.second, pairs.r, terms,
        100.0 * (terms / combined) / combined if combined > 0 else np.zeros_like(terms))
    return MeasurandBudget(
        name=measurand.name, unit=measurand.unit, estimate=estimate,
        contributions=contributions, correlation_terms=correlation_terms,
        combined_uncertainty=combined,
        first_order_uncertainty=math.sqrt(first) if math.isfinite(first) else combined,
        second_order_variance=extra, dof=nu, dof_rule=rule, coverage_probability=coverage,
        coverage_factor=k_p, expanded_uncertainty=k_p * combined)


def _scaled_covariance(jac: np.ndarray, u: np.ndarray, pairs: "_Pairs",
                       extra: np.ndarray | None) -> tuple[np.ndarray, float]:
    """U_y = J U_x Jᵀ as (core, scale) with U_y = core·scale², free of overflow."""
    parts = jac * u  # each row finite: checked measurand by measurand in _one
    scale = float(np.max(np.abs(parts), initial=0.0)) or 1.0
    scaled = parts / scale
    core = pairs.covariance(scaled)
    if extra is not None:
        core = core + np.diag(np.asarray(extra) / scale / scale)
    return core, scale


def _equation(model: Model, measurand: Any) -> Location:
    """Where a measurand's equation is written, for an error about its result."""
    return Location(file=model.source, table=f"measurands.{measurand.name}", key="equation",
                    line=measurand.line)


def _parts(name: str, model: Model, c: np.ndarray, u: np.ndarray) -> np.ndarray:
    """c_i·u(x_i), refused when one is beyond the floating-point range."""
    with np.errstate(over="ignore", invalid="ignore"):
        parts: np.ndarray = np.asarray(c * u, dtype=float)
    bad = np.flatnonzero(~np.isfinite(parts))
    if bad.size:
        culprit = model.inputs[int(bad[0])]
        raise PropagationError(f"the contribution c·u(x) of '{culprit.name}' to '{name}' "
                               "overflows: beyond the floating-point range (±1.8e308); "
                               "rescale the units",
                               Location(file=model.source, table=f"inputs.{culprit.name}",
                                        line=culprit.line))
    return parts


def _lost(c: np.ndarray, u: np.ndarray, parts: np.ndarray) -> bool:
    """Whether a contribution c·u(x) that matters underflowed: below the smallest normal
    double (2.2e-308) although c and u are not 0, and within 2⁻⁵³ of the largest."""
    lost = (c != 0.0) & (u != 0.0) & (np.abs(parts) < np.finfo(float).tiny)
    if not lost.any():
        return False
    largest = float(np.max(np.abs(parts)))
    size = np.log2(np.abs(c[lost])) + np.log2(u[lost])  # log₂ of the exact |c·u|
    return largest == 0.0 or float(np.max(size)) > math.log2(largest) - 53.0


def _warn(name: str, combined: float, nu: float, warnings: list[str],
          underflowed: bool = False) -> None:
    if underflowed:
        zero = " (u_c = 0 here is not a stationary point)" if combined == 0.0 else ""
        warnings.append(f"'{name}': floating-point underflow at the estimates: a value, "
                        "sensitivity coefficient or contribution c·u(x) fell below the "
                        "smallest normal double (2.2e-308) and lost its digits, so the "
                        "budget's zeros and smallest numbers are not to be trusted"
                        f"{zero}; rescale the units so that the numbers stay within about "
                        "1e±300")
    if combined == 0.0 and not underflowed:
        warnings.append(f"'{name}': the combined standard uncertainty is zero to first "
                        "order (try the second-order terms or Monte Carlo)")
    elif nu < 3.0:
        warnings.append(f"'{name}': effective degrees of freedom {nu:.2g} < 3; the coverage "
                        "factor from the t-distribution is very uncertain")


class _Pairs:
    """The stated correlations as index arrays: no n × n matrix for n inputs, so the
    cost of the correlation terms grows with the number of pairs, not with n²."""

    def __init__(self, model: Model) -> None:
        self.names = tuple(item.name for item in model.inputs)
        self.first, self.second, self.r = pair_indices(model)
        self.pairs = bool(self.r.size)

    def terms(self, parts: np.ndarray) -> np.ndarray:
        """2 c_a u_a c_b u_b r_ab for each stated pair (a, b)."""
        terms: np.ndarray = 2.0 * (parts[self.first] * parts[self.second]) * self.r
        return terms

    def covariance(self, scaled: np.ndarray) -> np.ndarray:
        """J U_x Jᵀ from the columns c_i u_i of ``scaled`` (measurands × inputs)."""
        covariance: np.ndarray = scaled @ scaled.T
        if self.pairs:
            left = scaled[:, self.first] * self.r
            right = scaled[:, self.second]
            cross = left @ right.T
            covariance = covariance + cross + cross.T
        return covariance


def _second_order(model: Model, wanted: bool, warnings: list[str]) -> np.ndarray | None:
    if not wanted:
        return None
    if model.correlations:
        warnings.append("second-order terms not added: the GUM 5.1.2 higher-order terms "
                        "hold for uncorrelated inputs only")
        return None
    from ._evaluation import second_order_variances
    from ._limits import LIMITS_PAGE, MAX_SECOND_ORDER_INPUTS

    count = sum(1 for i in model.inputs if i.standard_uncertainty > 0)
    if count > MAX_SECOND_ORDER_INPUTS:
        raise PropagationError(f"expected at most {MAX_SECOND_ORDER_INPUTS} inputs with an "
                               f"uncertainty for the second-order terms (they need N² second "
                               f"and N³ third derivatives; limits: {LIMITS_PAGE}), found {count}",
                               Location(file=model.source))
    return second_order_variances(model)


def correlation_of(covariance: np.ndarray) -> np.ndarray:
    """The correlation matrix of a covariance matrix (0 where a variance is 0)."""
    sd = np.sqrt(np.clip(np.diag(covariance), 0.0, None))
    with np.errstate(all="ignore"):
        result = covariance / np.outer(sd, sd)
    result[~np.isfinite(result)] = 0.0
    np.fill_diagonal(result, 1.0)
    return result


def matrix_rows(array: np.ndarray) -> tuple[tuple[float, ...], ...]:
    """A matrix as the nested tuples of plain floats kept by the frozen results."""
    return tuple(tuple(float(x) for x in row) for row in np.atleast_2d(array))
