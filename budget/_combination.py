"""Combining the results of several methods into one value, with a consistency check.

Method (x = the n method results, V = their n×n covariance matrix, 1 = a column of ones):

* generalized least squares (``"weighted"``): the best linear unbiased estimate of a
  common value, μ = (1ᵀV⁻¹1)⁻¹ 1ᵀV⁻¹x, u²(μ) = (1ᵀV⁻¹1)⁻¹ (Aitken 1935; the design
  J = 1 of (Jᵀ V⁻¹ J)⁻¹); the weights w = V⁻¹1/(1ᵀV⁻¹1) may be negative when two results
  are strongly correlated (Cox, Metrologia 39 (2002) 589, procedure A with covariance);
* plain mean (``"mean"``): μ = x̄, u²(μ) = 1ᵀV1/n² (the covariance is kept);
* random effects, for results that disagree by more than their uncertainties allow: a
  between-method variance τ² is added to every variance, V + τ²I, and μ is the GLS mean
  under it. τ² by DerSimonian and Laird (Control. Clin. Trials 7 (1986) 177; the moment
  estimator τ² = max(0, (Q − (n − 1))/tr P), P = W − W11ᵀW/(1ᵀW1), W = V⁻¹, which is
  their Σw − Σw²/Σw for a diagonal V) or Paule and Mandel (J. Res. NBS 87 (1982) 377;
  τ² ≥ 0 with Q(τ²) = n − 1, solved by bisection since Q falls with τ²);
* consistency before combining: Q = χ² = rᵀV⁻¹r with r = x − μ_GLS and n − 1 degrees of
  freedom, its p-value, and the Birge ratio R_B = √(χ²/(n − 1)) (Birge, Phys. Rev. 40
  (1932) 207; Cox 2002). A warning is raised when the weighted mean or the plain mean is
  chosen though χ² is significant at 5 %, and when a random-effects rule is chosen for
  results that are consistent (τ² = 0: it then equals the weighted mean).

Pure functions of float64 arrays; no model, file or engine import.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ._errors import Location, PropagationError
from ._limits import shorten
from ._arguments import keywords_checked

__all__ = ["RULES", "Consistency", "Combined", "gls_mean", "plain_mean", "consistency",
           "dersimonian_laird", "paule_mandel", "combine"]

RULES = ("weighted", "mean", "dersimonian-laird", "paule-mandel")
SIGNIFICANCE = 0.05

Array = NDArray[np.float64]


@dataclass(frozen=True, slots=True, kw_only=True)
class Consistency:
    """The χ² test of n results against one common value."""

    chi2: float
    dof: int
    p_value: float
    birge_ratio: float

    @property
    def consistent(self) -> bool:
        return self.p_value >= SIGNIFICANCE


@dataclass(frozen=True, slots=True, kw_only=True)
class Combined:
    """One value from several results, by ``rule``, with its standard uncertainty."""

    rule: str
    estimate: float
    standard_uncertainty: float
    weights: tuple[float, ...]
    tau: float
    consistency: Consistency
    warnings: tuple[str, ...] = ()


def _checked(values: Array | list[float], covariance: Array | list[list[float]]
             ) -> tuple[Array, Array]:
    x = _numbers(values, "values")
    v = np.atleast_2d(_numbers(covariance, "covariance"))
    if x.ndim != 1 or x.size < 1:
        raise PropagationError(f"expected the values as a list of at least one number, found "
                               f"an array of shape {x.shape}")
    if v.shape != (x.size, x.size):
        raise PropagationError(f"expected {x.size} values and a {x.size}×{x.size} "
                               f"covariance matrix, found the shape {v.shape}")
    if not (np.all(np.isfinite(x)) and np.all(np.isfinite(v))):
        raise PropagationError("expected finite values and covariances, found a non-finite "
                               "number")
    if not np.allclose(v, v.T, rtol=1e-12, atol=0.0):
        raise PropagationError("expected a symmetric covariance matrix of the results")
    return x, v


def _numbers(given: Any, what: str) -> Array:
    """``given`` as a float array when every entry is a real number (no text, no bool, no
    None: ``"1"`` is not converted), else a :class:`PropagationError` naming ``what``."""
    from ._arguments import real

    try:
        array: Array | None = np.asarray(given)
    except ValueError:  # ragged rows
        array = None
    if array is not None and array.dtype.kind in "iuf" and isinstance(given, np.ndarray):
        return np.asarray(array, dtype=float)
    if array is not None and array.dtype.kind in "iufb" and not isinstance(given, np.ndarray):
        array = np.asarray(given, dtype=object)  # a list: [True, 2] is no list of numbers
    found = given
    if array is not None and array.dtype == object:
        items = [real(item) for item in array.ravel()]
        if None not in items:
            return np.asarray(items, dtype=float).reshape(array.shape)
        found = array.ravel()[items.index(None)]
    raise PropagationError(f"expected {what} as numbers, found {type(found).__name__} "
                           f"{shorten(repr(found))}")


def _inverse(v: Array) -> Array:
    try:
        factor = np.linalg.cholesky(v)
    except np.linalg.LinAlgError as exc:
        raise PropagationError("the covariance matrix of the results is not positive "
                               "definite (two results fully correlated, or a result "
                               "without uncertainty); the weighted mean is not defined"
                               ) from exc
    inverse_factor = np.linalg.inv(factor)
    return np.asarray(inverse_factor.T @ inverse_factor, dtype=float)


def gls_mean(values: Array | list[float], covariance: Array | list[list[float]]
             ) -> tuple[float, float, Array]:
    """μ, u(μ) and the weights of the generalized-least-squares mean."""
    x, v = _checked(values, covariance)
    w = _inverse(v)
    column = w.sum(axis=1)
    total = float(column.sum())
    if total <= 0.0:
        raise PropagationError("the covariance matrix of the results gives no weighted "
                               "mean (1ᵀV⁻¹1 ≤ 0)")
    weights = column / total
    return float(weights @ x), math.sqrt(1.0 / total), weights


def plain_mean(values: Array | list[float], covariance: Array | list[list[float]]
               ) -> tuple[float, float, Array]:
    """μ = x̄ with u²(μ) = 1ᵀV1/n² (covariances included)."""
    x, v = _checked(values, covariance)
    n = x.size
    return float(x.mean()), math.sqrt(max(0.0, float(v.sum())) / (n * n)), np.full(n, 1 / n)


def consistency(values: Array | list[float], covariance: Array | list[list[float]]
                ) -> Consistency:
    """χ² = (x − μ)ᵀ V⁻¹ (x − μ) about the GLS mean, ν = n − 1, p-value, Birge ratio."""
    from scipy.stats import chi2 as chi2_distribution

    x, v = _checked(values, covariance)
    mu, _, _ = gls_mean(x, v)
    r = x - mu
    q = float(r @ _inverse(v) @ r)
    dof = x.size - 1
    if dof == 0:
        return Consistency(chi2=0.0, dof=0, p_value=1.0, birge_ratio=math.nan)
    return Consistency(chi2=q, dof=dof, p_value=float(chi2_distribution.sf(q, dof)),
                       birge_ratio=math.sqrt(q / dof))


def dersimonian_laird(values: Array | list[float], covariance: Array | list[list[float]]
                      ) -> float:
    """The DerSimonian–Laird moment estimate of the between-method variance τ²."""
    x, v = _checked(values, covariance)
    if x.size < 2:
        return 0.0
    w = _inverse(v)
    column = w.sum(axis=1)
    trace_p = float(np.trace(w) - column @ column / column.sum())
    q = consistency(x, v).chi2
    return max(0.0, (q - (x.size - 1)) / trace_p) if trace_p > 0 else 0.0


def _q(x: Array, v: Array, tau2: float) -> float:
    shifted = v + tau2 * np.eye(x.size)
    mu, _, _ = gls_mean(x, shifted)
    r = x - mu
    return float(r @ _inverse(shifted) @ r)


def paule_mandel(values: Array | list[float], covariance: Array | list[list[float]],
                 *, tolerance: float = 1e-12) -> float:
    """The Paule–Mandel τ²: Q(τ²) = n − 1, or 0 when Q(0) ≤ n − 1 already."""
    x, v = _checked(values, covariance)
    target = x.size - 1
    if x.size < 2 or _q(x, v, 0.0) <= target:
        return 0.0
    low, high = 0.0, max(float(np.var(x, ddof=1)), float(np.max(np.diag(v))), 1e-300)
    while _q(x, v, high) > target:
        low, high = high, 2.0 * high
    while high - low > tolerance * high:
        middle = 0.5 * (low + high)
        if _q(x, v, middle) > target:
            low = middle
        else:
            high = middle
    return 0.5 * (low + high)


@keywords_checked
def combine(values: Array | list[float], covariance: Array | list[list[float]],
            rule: str = "weighted", *, where: Location | None = None) -> Combined:
    """One value from the results by ``rule`` (one of :data:`RULES`) and its check;
    ``where`` (the file and table that chose the results) is given to every error."""
    try:
        return _combine(values, covariance, rule)
    except PropagationError as exc:
        if where is None or exc.location is not None:
            raise
        raise PropagationError(exc.message, where) from exc


def _combine(values: Array | list[float], covariance: Array | list[list[float]],
             rule: str) -> Combined:
    if rule not in RULES:
        raise PropagationError(f"expected a combination rule of {', '.join(RULES)}, found "
                               f"'{rule}'")
    x, v = _checked(values, covariance)
    check = consistency(x, v)
    tau2 = 0.0
    if rule == "mean":
        mu, u, weights = plain_mean(x, v)
    else:
        if rule == "dersimonian-laird":
            tau2 = dersimonian_laird(x, v)
        elif rule == "paule-mandel":
            tau2 = paule_mandel(x, v)
        mu, u, weights = gls_mean(x, v + tau2 * np.eye(x.size))
    return Combined(rule=rule, estimate=mu, standard_uncertainty=u,
                    weights=tuple(float(w) for w in weights), tau=math.sqrt(tau2),
                    consistency=check, warnings=_fit_warnings(rule, check, weights))


def _fit_warnings(rule: str, check: Consistency, weights: Array) -> tuple[str, ...]:
    found: list[str] = []
    if check.dof == 0:
        return ()
    stated = (f"χ² = {check.chi2:.3g} with {check.dof} degrees of freedom, p = "
              f"{check.p_value:.3g}, Birge ratio {check.birge_ratio:.3g}")
    if rule in ("weighted", "mean") and not check.consistent:
        found.append(f"combination: the results are not consistent ({stated}); the "
                     f"'{rule}' rule assumes they are: consider a random-effects rule or "
                     "look for the cause")
    if rule in ("dersimonian-laird", "paule-mandel") and check.consistent:
        found.append(f"combination: the results are consistent ({stated}); the "
                     f"random-effects rule '{rule}' adds no between-method variance unless "
                     "χ² exceeds its degrees of freedom")
    if np.any(weights < 0):
        found.append("combination: a weight of the generalized-least-squares mean is "
                     "negative (two results strongly correlated); the mean lies outside "
                     "the range of the results")
    return tuple(found)
