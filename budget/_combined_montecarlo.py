"""Monte Carlo cross-check of a combined value (JCGM 101 applied to the combination).

Method: one joint Monte Carlo run of the methods' models (``joint``) gives, trial by
trial, the model part of every method result, with each shared input drawn once. To each
trial's model part (in the campaign's unit, shifted so that it is centred like the GUM
estimate, the mean of the runs) is added the repeatability of the mean of the runs,
drawn as a scaled-and-shifted t with n − 1 degrees of freedom (JCGM 101 6.4.9); a stated
impurity is drawn as a normal (or t with its ν); a random-effects rule adds a normal
between-method deviation with variance τ² to every method. The method results follow by
the same linear map as the GUM side (x = A e + b, the mass balance 1 − Σ impurities), and
μ = Σ w_i x_i with the weights of the declared rule. The standard deviation and the 95 %
(or declared) probabilistically symmetric interval of μ are compared with the GUM
μ ± k·u(μ) by the JCGM 101 8.2 validation.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import NDArray

from ._montecarlo import Validation, coverage_interval, tolerance

if TYPE_CHECKING:
    from ._certified_mc import CertifiedSimulation

__all__ = ["CombinedSimulation", "combined_simulation"]

Array = NDArray[np.float64]


@dataclass(frozen=True, slots=True, kw_only=True)
class CombinedSimulation:
    trials: int
    mean: float
    standard_uncertainty: float
    interval: tuple[float, float]
    coverage_probability: float
    validation: Validation
    samples: Array = field(repr=False, compare=False)  # μ per trial, in trial order


@dataclass(frozen=True, slots=True, kw_only=True)
class Part:
    """One element of the linear map: its joint measurand (or none) and how it is drawn."""

    row: int  # index of the joint measurand, -1 for a stated value
    scale: float
    shift: float  # estimate − scale × (model value at the mean inputs)
    repeatability: float  # s²/n, drawn as a t with runs − 1 degrees of freedom
    runs: int
    estimate: float
    standard_uncertainty: float  # of a stated value
    dof: float


def combined_simulation(samples: Array, parts: list[Part], a: Array, offsets: Array,
                        weights: Array, tau: float, seed: int, coverage: float,
                        gum: tuple[float, float, float], digits: int) -> CombinedSimulation:
    """μ per trial and its summary; ``gum`` = (μ, u(μ), k) for the validation."""
    trials = samples.shape[1]
    rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(14,)))
    e = np.empty((len(parts), trials))
    for j, part in enumerate(parts):
        e[j] = _draw(part, samples, rng, trials)
    x = a @ e + offsets[:, None]
    if tau > 0:
        x += tau * rng.standard_normal(x.shape)
    mu = weights @ x
    return _summary(mu, coverage, gum, digits)


def _draw(part: Part, samples: Array, rng: np.random.Generator, trials: int) -> Array:
    if part.row < 0:
        return part.estimate + part.standard_uncertainty * _standard(rng, part.dof, trials)
    values = part.scale * samples[part.row] + part.shift
    if part.repeatability > 0 and part.runs >= 2:
        values = values + math.sqrt(part.repeatability) * rng.standard_t(part.runs - 1,
                                                                          trials)
    return np.asarray(values, dtype=float)


def _standard(rng: np.random.Generator, dof: float, trials: int) -> Array:
    if math.isinf(dof):
        return rng.standard_normal(trials)
    return np.asarray(rng.standard_t(dof, trials), dtype=float)


def _summary(mu: Array, coverage: float, gum: tuple[float, float, float],
             digits: int) -> CombinedSimulation:
    value, u, k = gum
    low, high = coverage_interval(mu.copy(), coverage)
    delta = tolerance(u, digits)
    d_low, d_high = abs(value - k * u - low), abs(value + k * u - high)
    return CombinedSimulation(
        trials=int(mu.size), mean=float(mu.mean()), standard_uncertainty=float(mu.std(ddof=1)),
        interval=(low, high), coverage_probability=coverage,
        validation=Validation(tolerance=delta, d_low=d_low, d_high=d_high,
                              validated=bool(d_low <= delta and d_high <= delta)),
        samples=mu)


def parts_for(elements: list[Any], index: list[int], gum_values: Array) -> list[Part]:
    """The elements of ``intercomparison`` as parts to draw."""
    parts = []
    for element, row in zip(elements, index):
        shift = element.estimate - element.scale * float(gum_values[row]) if row >= 0 else 0.0
        parts.append(Part(row=row, scale=element.scale, shift=shift,
                          repeatability=element.repeatability, runs=element.runs,
                          estimate=element.estimate,
                          standard_uncertainty=math.sqrt(element.variance), dof=element.dof))
    return parts


def certified_from_combined(cert: Any, stability_dof: float
                            ) -> "CertifiedSimulation | None":
    """The Monte Carlo of the certified value (``certified_mc``) when its characterization
    is a combined value: the combined value's trials (which already hold each method's
    repeatability) take the place of the characterization model's, with no further
    repeatability term; None without Monte Carlo trials."""
    from ._certified_mc import simulate_certified

    combined = cert.methods.combined_monte_carlo
    if combined is None:
        return None
    used = dict(cert.components)
    h = cert.homogeneity
    components = ((used["homogeneity"], float(h.dof_between) if h else math.inf),
                  (used["long_term_stability"], stability_dof),
                  (used["short_term_stability"], math.inf))
    stated = cert.coverage_probability
    model = cert.campaign.model
    value = cert.methods.combined.estimate
    return simulate_certified(
        model_samples=combined.samples, model_estimate=value, scale=1.0, runs_mean=value,
        s=0.0, n=2, components=components,
        coverage=stated if stated is not None else model.settings.coverage_probability,
        seed=model.settings.seed, gum=None if stated is None else (
            cert.certified_value, cert.standard_uncertainty, cert.expanded_uncertainty),
        digits=model.settings.digits)
