"""Least-squares fits whose coefficients become inputs estimated together.

Method:

* polynomial (straight line = degree 1) by ordinary least squares (OLS): the design matrix
  in powers of (x − x₀) is solved through its QR factorisation; the covariance of the
  coefficients is s²(XᵀX)⁻¹ with s² = Σr²/(n − p), and ν = n − p (GUM H.3, Type A);
* weighted least squares (WLS) with stated standard uncertainties u(y_i): rows scaled by
  1/u(y_i). ``scaled=False`` (default) takes the stated uncertainties as known:
  covariance (XᵀWX)⁻¹ and ν = ∞ (ISO/TS 28037 5.2), with the observed χ² reported against
  its 95 % limit; ``scaled=True`` scales the covariance by χ²/(n − p) (the uncertainties
  are only relative weights) and ν = n − p;
* a straight line with uncertainties in x and y (and optionally their correlation) by the
  iterative solution of D. York, N. M. Evensen, M. López Martínez and J. De Basabe
  Delgado, "Unified equations for the slope, intercept, and standard errors of the best
  straight line", Am. J. Phys. 72 (2004) 367–375, section III (steps 1–7) with the
  standard errors of its eq. (13);
* the exponential decay with an offset, i(t) = i₀·exp(−(t − t₀)/τ) + i_b, by variable
  projection (for a fixed τ the model is linear in i₀ and i_b; τ is found by a
  golden-section search of the residual sum of squares over log τ, then all three are
  polished by Gauss–Newton steps); covariance s²(JᵀJ)⁻¹ from the Jacobian at the solution,
  ν = n − 3 (the covariance ``scipy.optimize.curve_fit`` gives; the tests compare).
  The search starts from a log-linear fit, so the currents must be > 0.

Every fit is a frozen :class:`Fit`; problems are :class:`FitError` messages that say what
was expected and what was found (the caller adds the file and the table).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

__all__ = ["Fit", "FitError", "chi2_limit", "decay_jacobian", "exponential", "polynomial",
           "york"]

Array = NDArray[np.float64]


class FitError(ValueError):
    """A fit that cannot be made; the message says why (no file or key: the caller adds it)."""


@dataclass(frozen=True, slots=True, kw_only=True, eq=False)
class Fit:
    """Estimates, covariance and degrees of freedom of fitted coefficients, with the data."""

    method: str
    parameters: tuple[str, ...]
    estimates: Array
    covariance: Array
    dof: float
    x: Array
    y: Array
    fitted: Array
    chi2: float
    x0: float = 0.0

    @property
    def residuals(self) -> Array:
        return self.y - self.fitted

    @property
    def standard_uncertainties(self) -> Array:
        return np.sqrt(np.diag(self.covariance))

    @property
    def correlation(self) -> Array:
        u = self.standard_uncertainties
        with np.errstate(all="ignore"):
            r = self.covariance / np.outer(u, u)
        r[~np.isfinite(r)] = 0.0
        np.fill_diagonal(r, 1.0)
        return r

    @property
    def residual_sd(self) -> float:
        """s = √(Σr²/(n − p)): the experimental standard deviation of the residuals."""
        n, p = len(self.y), len(self.parameters)
        return math.sqrt(float(np.sum(self.residuals ** 2)) / (n - p)) if n > p else math.nan


def _checked(x: Array, y: Array, p: int, what: str) -> None:
    if len(x) != len(y):
        raise FitError(f"expected as many x as y values, found {len(x)} and {len(y)}")
    if len(x) <= p:
        raise FitError(f"expected at least {p + 1} points for {what} ({p} coefficients and "
                       f"at least one degree of freedom), found {len(x)}")
    if not (np.all(np.isfinite(x)) and np.all(np.isfinite(y))):
        raise FitError("expected finite values, found NaN or infinity")


def _design(x: Array, degree: int, x0: float) -> Array:
    return np.vander(x - x0, degree + 1, increasing=True)


def _solve(design: Array, y: Array, what: str) -> tuple[Array, Array]:
    """Coefficients and (XᵀX)⁻¹ by QR; a rank-deficient design is refused."""
    q, r = np.linalg.qr(design)
    diag = np.abs(np.diag(r))
    if diag.min() <= 1e-12 * max(diag.max(), 1e-300):
        raise FitError(f"expected x values that determine {what}, found too few distinct "
                       "x values")
    coefficients = np.linalg.solve(r, q.T @ y)
    r_inv = np.linalg.inv(r)
    return coefficients, r_inv @ r_inv.T


def polynomial(x: Array, y: Array, degree: int = 1, *, u_y: Array | None = None,
               x0: float = 0.0, scaled: bool = False,
               names: tuple[str, ...] | None = None) -> Fit:
    """OLS (``u_y`` None) or WLS polynomial y = Σ b_k (x − x₀)^k, k = 0 … degree."""
    x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
    p = degree + 1
    what = "a straight line" if degree == 1 else f"a polynomial of degree {degree}"
    _checked(x, y, p, what)
    design = _design(x, degree, x0)
    names = names or tuple(f"b{k}" for k in range(p))
    if u_y is None:
        coefficients, inverse = _solve(design, y, what)
        fitted = design @ coefficients
        s2 = float(np.sum((y - fitted) ** 2)) / (len(y) - p)
        return Fit(method="ols", parameters=names, estimates=coefficients,
                   covariance=s2 * inverse, dof=float(len(y) - p), x=x, y=y, fitted=fitted,
                   chi2=math.nan, x0=x0)
    u = _positive(np.asarray(u_y, dtype=float), "u(y)")
    coefficients, inverse = _solve(design / u[:, None], y / u, what)
    fitted = design @ coefficients
    chi2 = float(np.sum(((y - fitted) / u) ** 2))
    dof = len(y) - p
    covariance = inverse * (chi2 / dof) if scaled else inverse
    return Fit(method="wls", parameters=names, estimates=coefficients, covariance=covariance,
               dof=float(dof) if scaled else math.inf, x=x, y=y, fitted=fitted, chi2=chi2,
               x0=x0)


def _positive(u: Array, what: str) -> Array:
    bad = np.flatnonzero(~(np.isfinite(u) & (u > 0)))
    if bad.size:
        raise FitError(f"expected every {what} > 0, found {u[bad[0]]:g} at point "
                       f"{bad[0] + 1}")
    return u


def chi2_limit(dof: float, p: float = 0.95) -> float:
    """The p-quantile of χ²(ν): the ISO/TS 28037 acceptance limit of the observed χ²."""
    from scipy.stats import chi2

    return float(chi2.ppf(p, dof))


def york(x: Array, y: Array, u_x: Array, u_y: Array, r_xy: Array | None = None, *,
         scaled: bool = False, names: tuple[str, ...] = ("a", "b"),
         tolerance: float = 1e-15, max_iterations: int = 200) -> Fit:
    """Straight line y = a + b x with uncertainties in both x and y (York et al. 2004)."""
    x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
    _checked(x, y, 2, "a straight line")
    w_x = 1.0 / _positive(np.asarray(u_x, dtype=float), "u(x)") ** 2
    w_y = 1.0 / _positive(np.asarray(u_y, dtype=float), "u(y)") ** 2
    r = np.zeros_like(x) if r_xy is None else np.asarray(r_xy, dtype=float)
    alpha = np.sqrt(w_x * w_y)
    b = float(polynomial(x, y, 1).estimates[1])  # step 1: the OLS slope as a start
    for _ in range(max_iterations):
        w = w_x * w_y / (w_x + b * b * w_y - 2.0 * b * r * alpha)  # step 3
        x_bar, y_bar = np.sum(w * x) / np.sum(w), np.sum(w * y) / np.sum(w)  # step 4
        u, v = x - x_bar, y - y_bar
        beta = w * (u / w_y + b * v / w_x - (b * u + v) * r / alpha)  # step 5
        b_new = float(np.sum(w * beta * v) / np.sum(w * beta * u))  # step 6
        if not math.isfinite(b_new):
            raise FitError("expected the York iteration to converge, found a slope that is "
                           "not finite (are the x values all equal?)")
        done = abs(b_new - b) <= tolerance * max(abs(b_new), 1e-300)
        b = b_new
        if done:
            break
    else:
        raise FitError(f"expected the York iteration to converge, found a slope still "
                       f"changing after {max_iterations} iterations")
    return _york_result(x, y, w, beta, b, x_bar, y_bar, scaled, names)


def _york_result(x: Array, y: Array, w: Array, beta: Array, b: float, x_bar: float,
                 y_bar: float, scaled: bool, names: tuple[str, ...]) -> Fit:
    a = y_bar - b * x_bar  # step 7
    adjusted = x_bar + beta  # step 8: the least-squares adjusted points
    mean_adjusted = float(np.sum(w * adjusted) / np.sum(w))
    spread = adjusted - mean_adjusted
    var_b = 1.0 / float(np.sum(w * spread ** 2))  # step 9, eq. (13)
    var_a = 1.0 / float(np.sum(w)) + mean_adjusted ** 2 * var_b
    cov_ab = -mean_adjusted * var_b
    covariance = np.array([[var_a, cov_ab], [cov_ab, var_b]])
    chi2 = float(np.sum(w * (y - b * x - a) ** 2))  # S of York's eq. (14)
    dof = len(x) - 2
    if scaled:
        covariance = covariance * (chi2 / dof)
    return Fit(method="york", parameters=names, estimates=np.array([a, b]),
               covariance=covariance, dof=float(dof) if scaled else math.inf, x=x, y=y,
               fitted=a + b * x, chi2=chi2)


def decay(t: Array, amplitude: float, tau: float, offset: float, t0: float) -> Array:
    """i(t) = i₀·exp(−(t − t₀)/τ) + i_b."""
    return amplitude * np.exp(-(t - t0) / tau) + offset


def exponential(t: Array, i: Array, *, names: tuple[str, ...] = ("i0", "tau", "i_b"),
                t0: float | None = None) -> Fit:
    """i(t) = i₀·exp(−(t − t₀)/τ) + i_b by variable projection; t₀ = first time."""
    t, i = np.asarray(t, dtype=float), np.asarray(i, dtype=float)
    _checked(t, i, 3, "an exponential decay with an offset")
    start = float(t[0]) if t0 is None else t0
    dt = t - start
    guess = _decay_guess(t, i, start)[1]
    low, high = math.log(guess / 50.0), math.log(guess * 50.0)
    log_tau = _golden(lambda v: _profile(dt, i, math.exp(v))[0], low, high)
    if min(log_tau - low, high - log_tau) < 1e-3:
        raise FitError(f"expected the exponential fit to converge, found the best decay "
                       f"constant at the edge of its search range (τ = {math.exp(log_tau):.4g}"
                       "): the readings do not decay exponentially")
    estimates = _gauss_newton(dt, i, math.exp(log_tau))
    jacobian = decay_jacobian(dt, estimates)
    fitted = decay(t, estimates[0], estimates[1], estimates[2], start)
    dof = len(t) - 3
    s2 = float(np.sum((i - fitted) ** 2)) / dof
    covariance = s2 * _inverse_normal(jacobian)
    u_tau = math.sqrt(covariance[1, 1]) if covariance[1, 1] >= 0 else math.inf
    if not np.all(np.isfinite(covariance)) or not u_tau < estimates[1]:
        raise FitError(f"expected the exponential fit to converge, found a decay constant "
                       f"τ = {estimates[1]:.4g} that the readings do not determine "
                       f"(u(τ) = {u_tau:.3g})")
    return Fit(method="exponential", parameters=names, estimates=estimates,
               covariance=covariance, dof=float(dof), x=t, y=i, fitted=fitted,
               chi2=math.nan, x0=start)


def _profile(dt: Array, i: Array, tau: float) -> tuple[float, float, float]:
    """For a fixed τ the model is linear in i₀ and i_b: their least squares and the RSS."""
    e = np.exp(np.maximum(-dt / tau, -300.0))  # no subnormal numbers: they are slow
    # einsum, not the BLAS dot: threaded BLAS is slow for one vector on a busy machine
    n, se, see = float(len(dt)), float(e.sum()), float(np.einsum("i,i->", e, e))
    sy, sey = float(i.sum()), float(np.einsum("i,i->", e, i))
    det = n * see - se * se
    if det <= 0.0:
        return math.inf, 0.0, 0.0
    amplitude = (n * sey - se * sy) / det
    offset = (sy - amplitude * se) / n
    residual = i - amplitude * e - offset
    return float(np.einsum("i,i->", residual, residual)), amplitude, offset


def _golden(f: Callable[[float], float], low: float, high: float) -> float:
    """Minimum of a unimodal f on [low, high] by golden-section search."""
    ratio = (math.sqrt(5.0) - 1.0) / 2.0
    a, b = low, high
    c, d = b - ratio * (b - a), a + ratio * (b - a)
    fc, fd = f(c), f(d)
    for _ in range(90):
        if fc <= fd:
            b, d, fd = d, c, fc
            c = b - ratio * (b - a)
            fc = f(c)
        else:
            a, c, fc = c, d, fd
            d = a + ratio * (b - a)
            fd = f(d)
    return (a + b) / 2.0


def decay_jacobian(dt: Array, p: Array) -> Array:
    """∂i/∂(i₀, τ, i_b) at every dt = t − t₀."""
    e = np.exp(-dt / p[1])
    return np.column_stack([e, p[0] * dt / p[1] ** 2 * e, np.ones_like(dt)])


def _inverse_normal(jacobian: Array) -> Array:
    scale = np.sqrt(np.sum(jacobian ** 2, axis=0))
    if np.any(scale == 0.0):
        return np.full((3, 3), np.inf)
    q, r = np.linalg.qr(jacobian / scale)
    if np.abs(np.diag(r)).min() < 1e-10:
        return np.full((3, 3), np.inf)
    r_inv = np.linalg.inv(r)
    return (r_inv @ r_inv.T) / np.outer(scale, scale)


def _gauss_newton(dt: Array, i: Array, tau: float) -> Array:
    """Polish the profiled solution with a few Gauss–Newton steps on all three parameters."""
    _, amplitude, offset = _profile(dt, i, tau)
    p = np.array([amplitude, tau, offset])
    best = float(np.sum((i - decay(dt, p[0], p[1], p[2], 0.0)) ** 2))
    for _ in range(5):
        jacobian = decay_jacobian(dt, p)
        residual = i - decay(dt, p[0], p[1], p[2], 0.0)
        step, *_ = np.linalg.lstsq(jacobian, residual, rcond=None)
        trial = p + step
        if trial[1] <= 0.0:
            break
        rss = float(np.sum((i - decay(dt, trial[0], trial[1], trial[2], 0.0)) ** 2))
        if rss > best:
            break
        p, best = trial, rss
    return p


def _decay_guess(t: Array, i: Array, t0: float) -> list[float]:
    """Starting values: offset from the last tenth, τ from log(i − offset) over the rest."""
    bad = np.flatnonzero(i <= 0)
    if bad.size:
        raise FitError(f"expected currents > 0 for the exponential fit (its starting values "
                       f"take their logarithm), found {i[bad[0]]:g} at point {bad[0] + 1}")
    tail = max(3, len(i) // 10)
    offset = float(np.min(i[-tail:])) * 0.5
    head = i - offset > 0
    slope, intercept = np.polyfit(t[head] - t0, np.log(i[head] - offset), 1)
    tau = -1.0 / slope if slope < 0 else float(t[-1] - t[0])
    return [float(np.exp(intercept)), float(tau), offset]
