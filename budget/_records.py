"""Quantities from a laboratory's raw records: charge, end points, drift.

Method (each quantity is a linear or linearised function of fitted coefficients, so its
covariance is G·C·Gᵀ with G the gradient and C the fit covariance, GUM 5.1 and 5.2):

* **charge** from a current–time record by the composite trapezoidal rule over the
  readings inside the integration window, Q = Σ (t_{k+1} − t_k)(i_k + i_{k+1})/2. The
  rule's error is estimated by Richardson's comparison with the rule on every second
  reading, E ≈ (T_h − T_2h)/3 (exact for a quadratic current over an even number of
  equal steps); as GUM 3.2.4 asks for a known systematic effect, E is applied as a
  correction and its whole size kept as a rectangular uncertainty ±|E|. A
  background current is subtracted as its charge over the window: a constant (the mean
  of a background window), a straight line fitted to a background window, or the
  decaying current i(t) = i₀·e^(−(t − t₀)/τ) + i_b fitted to the tail, whose residual
  charge beyond the end of the electrolysis, i_end·τ, is added;
* **end point** of an indication curve by the intersection of two straight lines fitted
  to two stated windows, x_e = (a₂ − a₁ + b₁c₁ − b₂c₂)/(b₁ − b₂) with each line
  a + b(x − c) centred in its window; its ν by Welch–Satterthwaite over the two
  independent fits; or by the inflection point, the extremum of the first derivative
  of a cubic fitted to the stated window around the steepest reading (ν = n − 4);
* **drift** of a titration cell from a background record (time, cumulative charge or
  water) before and after the sample: one common slope with a separate intercept for
  each window (ordinary least squares, ν = n − 3; one window: a straight line,
  ν = n − 2); the correction is the drift rate times the stated titration time.

Messages name the record file and its rows; the caller adds the model file and key.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ._fits import Fit, FitError, decay_jacobian, exponential, polynomial

__all__ = [
    "Derived",
    "Series",
    "charge",
    "drift",
    "inflection",
    "intersection",
    "trapezoid",
]

Array = NDArray[np.float64]


@dataclass(frozen=True, slots=True, kw_only=True, eq=False)
class Series:
    """One record: x (time or charge) and y readings with the file row of each reading."""

    file: str
    x: Array
    y: Array
    rows: NDArray[np.int64]
    x_name: str = "x"

    def window(self, bounds: tuple[float, float] | None, key: str,
               minimum: int) -> Series:
        """The readings inside ``bounds`` (inclusive); refused outside the data or too few."""
        if bounds is None:
            chosen = np.ones(len(self.x), dtype=bool)
        else:
            low, high = bounds
            first, last = float(self.x[0]), float(self.x[-1])
            if not low < high:
                raise FitError(f"expected {key} = [low, high] with low < high, found "
                               f"[{low:g}, {high:g}]")
            if low < first or high > last:
                raise FitError(f"expected {key} [{low:g}, {high:g}] inside the data of "
                               f"'{self.file}' ({self.x_name} from {first:g} to {last:g}), "
                               "found it outside")
            chosen = (self.x >= low) & (self.x <= high)
        count = int(chosen.sum())
        if count < minimum:
            rows = self.rows[chosen]
            span = f" (rows {rows[0]}–{rows[-1]})" if count else ""
            raise FitError(f"expected at least {minimum} readings of '{self.file}' in "
                           f"{key}, found {count}{span}")
        return Series(file=self.file, x=self.x[chosen], y=self.y[chosen],
                      rows=self.rows[chosen], x_name=self.x_name)


def checked_series(file: str, x: Array, y: Array, rows: NDArray[np.int64],
                   x_name: str) -> Series:
    """A record whose x strictly increases; otherwise an error naming the row."""
    steps = np.diff(x)
    bad = np.flatnonzero(~(steps > 0))
    if bad.size:
        k = int(bad[0]) + 1
        raise FitError(f"expected {x_name} to increase from row to row in '{file}', found "
                       f"{x[k]:g} at row {rows[k]} after {x[k - 1]:g} at row {rows[k - 1]}")
    if len(x) < 2:
        raise FitError(f"expected at least 2 readings in '{file}', found {len(x)}")
    return Series(file=file, x=x, y=y, rows=rows, x_name=x_name)


@dataclass(frozen=True, slots=True, kw_only=True, eq=False)
class Derived:
    """Quantities derived together from fits: estimates, covariance, one ν."""

    names: tuple[str, ...]
    estimates: Array
    covariance: Array
    dof: float
    fits: tuple[tuple[str, Fit], ...]  # (what it is, the fit) for the report
    notes: tuple[str, ...] = ()
    # ∂(estimate)/∂(reading): one row per estimate, one column per reading fitted, and the
    # file row of each of those readings (a background fit; used for shared readings)
    influence: Array | None = None
    readings: NDArray[np.int64] | None = None

    @property
    def standard_uncertainties(self) -> Array:
        return np.sqrt(np.diag(self.covariance))


def trapezoid(x: Array, y: Array) -> tuple[float, Array, float]:
    """∫y dx by the trapezoidal rule, the weight of each reading, and the rule's error."""
    steps = np.diff(x)
    total = float(np.sum(steps * (y[:-1] + y[1:])) / 2.0)
    weights = np.zeros_like(x)
    weights[:-1] += steps / 2.0
    weights[1:] += steps / 2.0
    even = (len(x) - 1) // 2 * 2  # an even number of intervals for the coarse rule
    if even < 2:
        return total, weights, 0.0
    fine = float(np.sum(steps[:even] * (y[:even] + y[1:even + 1])) / 2.0)
    wide = x[2:even + 1:2] - x[0:even - 1:2]
    coarse = float(np.sum(wide * (y[0:even - 1:2] + y[2:even + 1:2])) / 2.0)
    return total, weights, (fine - coarse) / 3.0


@dataclass(frozen=True, slots=True, kw_only=True, eq=False)
class Charge:
    """The raw integral and its parts; ``background`` holds the fitted charges (if any)."""

    raw: float
    weights: Array
    rule_error: float
    start: float
    end: float
    count: int
    background: Derived | None
    shared: int = 0  # readings inside both the integration and the background window
    # with shared readings: the correlation matrix of (raw, background parts …) that the
    # shared readings' noise causes (None when the windows share no reading)
    correlation: Array | None = None


def charge(record: Series, window: tuple[float, float] | None, background: str,
           background_window: tuple[float, float] | None, residual: bool) -> Charge:
    """The trapezoidal charge over ``window`` and the background charges to subtract."""
    inside = record.window(window, "window", 2)
    raw, weights, error = trapezoid(inside.x, inside.y)
    start, end = float(inside.x[0]), float(inside.x[-1])
    made = None
    if background != "none":
        tail = record.window(background_window, "background_window",
                             {"constant": 2, "line": 3, "exponential": 4}[background])
        made = _background(tail, background, start, end, residual)
    shared, correlation = _shared_readings(inside.rows, weights, made)
    return Charge(raw=raw, weights=weights, rule_error=error, start=start, end=end,
                  count=len(inside.x), background=made, shared=shared,
                  correlation=correlation)


def _shared_readings(rows: NDArray[np.int64], weights: Array, background: Derived | None
                     ) -> tuple[int, Array | None]:
    """Correlation of the raw integral and the background parts through shared readings.

    The integral is Σ w_k i_k; the background parts are, linearised, Σ h_jk i_k over the
    readings fitted (h: the rows of ``influence``). With independent readings of one
    standard deviation σ, cov = σ²·Σ w_k h_jk over the shared readings (GUM 5.2 applied
    to the readings), u² = σ²·Σ w_k², σ²·Σ h_jk²; σ cancels from the correlations, which
    are those of the vectors w and h_j: the Gram matrix, positive semi-definite by
    construction."""
    if background is None or background.influence is None or background.readings is None:
        return 0, None
    common, in_window, in_fit = np.intersect1d(rows, background.readings,
                                               assume_unique=True, return_indices=True)
    if common.size == 0:
        return 0, None
    vectors = np.zeros((1 + len(background.influence), len(rows) + len(background.readings)
                        - common.size))
    vectors[0, :len(rows)] = weights
    only = np.setdiff1d(np.arange(len(background.readings)), in_fit)
    vectors[1:, in_window] = background.influence[:, in_fit]
    vectors[1:, len(rows):] = background.influence[:, only]
    gram = vectors @ vectors.T
    norms = np.sqrt(np.diag(gram))
    if np.any(norms == 0.0):
        return int(common.size), None
    return int(common.size), np.clip(gram / np.outer(norms, norms), -1.0, 1.0)


def _background(tail: Series, kind: str, start: float, end: float,
                residual: bool) -> Derived:
    duration = end - start
    if kind in ("constant", "line"):
        degree = 0 if kind == "constant" else 1
        centre = float(np.mean(tail.x))
        fit = polynomial(tail.x, tail.y, degree, x0=centre)
        gradient = np.array([duration, ((end - centre) ** 2 - (start - centre) ** 2) / 2.0])
        g = gradient[:degree + 1]
        value = float(g @ fit.estimates)
        design = np.vander(tail.x - centre, degree + 1, increasing=True)
        return Derived(names=("bg",), estimates=np.array([value]),
                       covariance=np.atleast_2d(g @ fit.covariance @ g), dof=fit.dof,
                       fits=((f"background {kind}", fit),),
                       influence=np.atleast_2d(g @ np.linalg.pinv(design)),
                       readings=tail.rows)
    positive = np.flatnonzero(tail.y <= 0)
    if positive.size:
        k = int(positive[0])
        raise FitError(f"expected currents > 0 in background_window of '{tail.file}' for "
                       f"the exponential fit (its starting values take a logarithm), found "
                       f"{tail.y[k]:g} at row {tail.rows[k]}")
    try:
        fit = exponential(tail.x, tail.y)
    except FitError as exc:
        raise FitError(f"{exc} (background_window of '{tail.file}', rows {tail.rows[0]}–"
                       f"{tail.rows[-1]})") from exc
    amplitude, tau, offset = (float(v) for v in fit.estimates)
    decay = math.exp(-(end - fit.x0) / tau)
    g = np.array([[0.0, 0.0, duration],
                  [tau * decay, amplitude * decay * (1.0 + (end - fit.x0) / tau), 0.0]])
    if not residual:
        g = g[:1]
    values = np.array([offset * duration, amplitude * decay * tau])[:len(g)]
    notes = (f"decay fitted to {len(tail.x)} readings: τ = {tau:.6g}, i_b = {offset:.6g}, "
             f"i_end = {amplitude * decay:.6g}",)
    jacobian = decay_jacobian(tail.x - fit.x0, fit.estimates)
    return Derived(names=("bg", "res")[:len(g)], estimates=values,
                   covariance=g @ fit.covariance @ g.T, dof=fit.dof,
                   fits=(("exponential decay", fit),), notes=notes,
                   influence=g @ np.linalg.pinv(jacobian), readings=tail.rows)


def intersection(record: Series, first: tuple[float, float],
                 second: tuple[float, float]) -> Derived:
    """End point where two straight lines fitted to two windows cross."""
    one = record.window(first, "the first window", 3)
    two = record.window(second, "the second window", 3)
    c1, c2 = float(np.mean(one.x)), float(np.mean(two.x))
    fit1, fit2 = polynomial(one.x, one.y, 1, x0=c1), polynomial(two.x, two.y, 1, x0=c2)
    (a1, b1), (a2, b2) = fit1.estimates, fit2.estimates
    slope = b1 - b2
    u_slope = math.sqrt(fit1.covariance[1, 1] + fit2.covariance[1, 1])
    if abs(slope) <= 3.0 * u_slope or slope == 0.0:
        raise FitError(f"expected two segments of '{record.file}' with different slopes, "
                       f"found {b1:.4g} and {b2:.4g} (difference {slope:.3g} within three "
                       f"standard uncertainties, {3 * u_slope:.3g}): no clear intersection")
    x_e = (a2 - a1 + b1 * c1 - b2 * c2) / slope
    g1 = np.array([-1.0, (c1 - x_e)]) / slope
    g2 = np.array([1.0, (x_e - c2)]) / slope
    part1, part2 = float(g1 @ fit1.covariance @ g1), float(g2 @ fit2.covariance @ g2)
    variance = part1 + part2
    dof = variance ** 2 / (part1 ** 2 / fit1.dof + part2 ** 2 / fit2.dof) \
        if variance > 0 else math.inf
    return Derived(names=("x",), estimates=np.array([x_e]),
                   covariance=np.array([[variance]]), dof=dof,
                   fits=(("first segment", fit1), ("second segment", fit2)),
                   notes=(f"windows [{first[0]:g}, {first[1]:g}] and [{second[0]:g}, "
                          f"{second[1]:g}]; ν by Welch–Satterthwaite over the two fits",))


def inflection(record: Series, window: tuple[float, float]) -> Derived:
    """End point at the inflection: the extremum of dy/dx of a cubic fitted to the window."""
    part = record.window(window, "window", 5)
    slopes = np.gradient(part.y, part.x)
    centre = float(part.x[int(np.argmax(np.abs(slopes)))])
    fit = polynomial(part.x, part.y, 3, x0=centre)
    _, c1, c2, c3 = (float(v) for v in fit.estimates)
    if c3 == 0.0 or c1 * c3 >= 0.0:
        raise FitError(f"expected the cubic fitted to window [{window[0]:g}, {window[1]:g}] "
                       f"of '{record.file}' to have a steepest point, found none (the "
                       "window must hold the steep part of the curve and both bends)")
    x_e = centre - c2 / (3.0 * c3)
    if not window[0] <= x_e <= window[1]:
        raise FitError(f"expected the inflection point inside window [{window[0]:g}, "
                       f"{window[1]:g}] of '{record.file}', found it at {x_e:.6g}")
    g = np.array([0.0, 0.0, -1.0 / (3.0 * c3), c2 / (3.0 * c3 ** 2)])
    return Derived(names=("x",), estimates=np.array([x_e]),
                   covariance=np.atleast_2d(g @ fit.covariance @ g), dof=fit.dof,
                   fits=(("cubic around the steepest reading", fit),),
                   notes=(f"window [{window[0]:g}, {window[1]:g}], cubic centred at "
                          f"{centre:.6g}",))


def drift(record: Series, before: tuple[float, float],
          after: tuple[float, float] | None) -> Derived:
    """The drift rate: a common slope fitted to one or two background windows."""
    one = record.window(before, "before", 3)
    if after is None:
        fit = polynomial(one.x, one.y, 1, x0=float(np.mean(one.x)))
        return Derived(names=("rate",), estimates=fit.estimates[1:],
                       covariance=fit.covariance[1:, 1:], dof=fit.dof,
                       fits=(("drift line", fit),))
    two = record.window(after, "after", 3)
    x = np.concatenate([one.x, two.x])
    y = np.concatenate([one.y, two.y])
    centre = float(np.mean(x))
    design = np.zeros((len(x), 3))
    design[:len(one.x), 0] = 1.0
    design[len(one.x):, 1] = 1.0
    design[:, 2] = x - centre
    coefficients, _, rank, _ = np.linalg.lstsq(design, y, rcond=None)
    if rank < 3:
        raise FitError(f"expected the windows of '{record.file}' to determine a drift, found "
                       "too few distinct times")
    fitted = design @ coefficients
    dof = len(y) - 3
    s2 = float(np.sum((y - fitted) ** 2)) / dof
    covariance = np.asarray(s2 * np.linalg.inv(design.T @ design), dtype=np.float64)
    fit = Fit(method="ols", parameters=("before", "after", "rate"), estimates=coefficients,
              covariance=covariance, dof=float(dof), x=x, y=y, fitted=fitted,
              chi2=math.nan, x0=centre)
    return Derived(names=("rate",), estimates=coefficients[2:],
                   covariance=covariance[2:, 2:], dof=float(dof),
                   fits=(("common drift slope, two intercepts", fit),))
