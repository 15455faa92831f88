"""Monte Carlo of the certified value itself (JCGM 101 applied to ISO Guide 35).

Method: the certified value is x_CRM = x_char + δ_bb + δ_lts + δ_sts (ISO Guide 35:2017
eq. (1)), the δ's with expectation zero. Each trial draws

* x_char: the mean of the runs, shifted by the Monte Carlo deviation of the
  characterization model at the mean run inputs from its estimate (the model's own
  distribution, u_B, with the trials of ``char.result``, in trial order), plus the Type A
  repeatability of the mean, s/√n times a t with n − 1 degrees of freedom;
* δ_bb: u_bb times a t with the between-unit ν of the ANOVA (ν = p − 1);
* δ_lts: u_lts times a t with the stability fit's ν (n − 2);
* δ_sts: u_sts times a standard Gaussian (a stated value, ν infinite);

— the rule of ``docs/uncertainty-rules.md``: a component with finite ν is a scaled and
shifted t (JCGM 101 6.4.9). The coverage intervals are JCGM 101 7.7.2 (probabilistically
symmetric) and 7.7.3 (shortest); when the certificate states a coverage probability, the
GUM certificate interval x ± k·u_CRM is validated against the symmetric one (8.2) at that
probability, else at the probability its k implies (t with ν_eff of u_CRM).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ._montecarlo import Validation, coverage_interval, shortest_interval, tolerance

__all__ = ["CertifiedSimulation", "simulate_certified"]

_STREAM = (1 << 40) + 17  # a spawn key apart from the model's blocks (0, 1, 2, …)


@dataclass(frozen=True, slots=True, kw_only=True)
class CertifiedSimulation:
    trials: int
    mean: float
    standard_uncertainty: float
    interval: tuple[float, float]
    shortest_interval: tuple[float, float]
    coverage_probability: float
    validation: Validation | None
    validation_coverage: float | None = None  # the p at which the GUM interval was checked


def _t(rng: np.random.Generator, dof: float, size: int) -> np.ndarray:
    if math.isinf(dof):
        return rng.standard_normal(size)
    return rng.standard_t(dof, size)


def simulate_certified(*, model_samples: np.ndarray, model_estimate: float, scale: float,
                       runs_mean: float, s: float, n: int,
                       components: tuple[tuple[float, float], ...], coverage: float,
                       seed: int, gum: tuple[float, float, float] | None,
                       digits: int, validate_at: float | None = None) -> CertifiedSimulation:
    """``components``: (u, ν) of δ_bb, δ_lts, δ_sts; ``gum``: (value, u, U) to validate at
    the coverage probability ``validate_at`` (default ``coverage``): the stated one, or the
    one a certificate's k implies."""
    rng = np.random.Generator(np.random.PCG64(np.random.SeedSequence(
        seed, spawn_key=(_STREAM,))))
    size = model_samples.size
    values = (model_samples - model_estimate) * scale
    values += runs_mean
    values += (s / math.sqrt(n)) * _t(rng, n - 1.0, size)
    for u, dof in components:
        if u > 0.0:
            values += u * _t(rng, dof, size)
    mean, sd = float(values.mean()), float(values.std(ddof=1))
    interval = coverage_interval(values.copy(), coverage)
    shortest = shortest_interval(values, coverage)
    validation = None
    at = coverage if validate_at is None else validate_at
    if gum is not None:
        value, u_gum, expanded = gum
        ends = interval if at == coverage else coverage_interval(values.copy(), at)
        delta = tolerance(u_gum, digits)
        d_low = abs(value - expanded - ends[0])
        d_high = abs(value + expanded - ends[1])
        validation = Validation(tolerance=delta, d_low=d_low, d_high=d_high,
                                validated=bool(d_low <= delta and d_high <= delta))
    return CertifiedSimulation(trials=size, mean=mean, standard_uncertainty=sd,
                               interval=interval, shortest_interval=shortest,
                               coverage_probability=coverage, validation=validation,
                               validation_coverage=None if gum is None else at)


def certified_document(sim: Any) -> dict[str, Any] | None:
    """The JSON of the Monte Carlo of the certified value (``None`` without one)."""
    if sim is None:
        return None
    v = sim.validation
    return {"trials": sim.trials, "mean": sim.mean, "u": sim.standard_uncertainty,
            "interval": list(sim.interval), "shortest_interval": list(sim.shortest_interval),
            "coverage": sim.coverage_probability,
            "validation_coverage": sim.validation_coverage,
            "validation": None if v is None else {
                "tolerance": v.tolerance, "d_low": v.d_low, "d_high": v.d_high,
                "validated": v.validated}}
