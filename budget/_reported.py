"""Which result is reported: the GUM interval or a Monte Carlo coverage interval.

Method: by default the reported result is the GUM one (JCGM 100): y, u_c and the
interval y ± k·u_c. When Monte Carlo does not validate it, JCGM 101 8.2 says the Monte
Carlo coverage interval is the one to report; the setting ``reported_interval`` (model
``[settings]``, campaign ``[certificate]``, command-line ``--reported-interval``) makes it
so. The reported result is then the Monte Carlo estimate (the mean of the model values,
JCGM 101 7.6), its standard uncertainty (their standard deviation) and the
probabilistically symmetric (7.7.2) or the shortest (7.7.3) interval. Every output names
the method that gave the reported interval.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ._errors import InputError, Location, SimulationError

__all__ = ["METHODS", "Reported", "reported", "gum_reported"]

METHODS = {
    "gum": "GUM law of propagation (JCGM 100): y ± k·u_c",
    "monte_carlo": "Monte Carlo, probabilistically symmetric coverage interval "
                   "(JCGM 101 7.7.2)",
    "monte_carlo_shortest": "Monte Carlo, shortest coverage interval (JCGM 101 7.7.3)",
}


@dataclass(frozen=True, slots=True, kw_only=True)
class Reported:
    """The result that goes on the certificate, and the method that gave it."""

    name: str
    unit: str
    method: str  # a key of METHODS
    estimate: float
    standard_uncertainty: float
    interval: tuple[float, float]
    coverage_probability: float | None  # None: a certificate stated by k alone
    coverage_factor: float | None  # the GUM's k; None for a Monte Carlo interval

    @property
    def description(self) -> str:
        return METHODS[self.method]

    @property
    def coverage_text(self) -> str:
        """The coverage probability as "95 %" (empty when only k was stated)."""
        p = self.coverage_probability
        return "" if p is None else f"{100 * p:g} %"

    @property
    def monte_carlo(self) -> bool:
        return self.method != "gum"


def gum_reported(name: str, unit: str, estimate: float, u: float, k: float,
                 coverage: float | None) -> Reported:
    return Reported(name=name, unit=unit, method="gum", estimate=estimate,
                    standard_uncertainty=u, interval=(estimate - k * u, estimate + k * u),
                    coverage_probability=coverage, coverage_factor=k)


def reported(budget: Any, simulation: Any, method: str, where: Location) -> Reported:
    """The reported result of one measurand (``budget``: MeasurandBudget, ``simulation``:
    MeasurandSimulation or None); ``where``: the file and key that chose ``method``."""
    if method not in METHODS:
        raise InputError(f"expected one of {', '.join(METHODS)}, found {method!r}", where)
    if method == "gum":
        return gum_reported(budget.name, budget.unit, budget.estimate,
                            budget.combined_uncertainty, budget.coverage_factor,
                            budget.coverage_probability)
    if simulation is None:
        raise SimulationError(f"expected Monte Carlo trials for \"{method}\", found "
                              "trials = 0", where)
    interval = simulation.interval if method == "monte_carlo" else simulation.shortest_interval
    return Reported(name=budget.name, unit=budget.unit, method=method,
                    estimate=simulation.mean,
                    standard_uncertainty=simulation.standard_uncertainty,
                    interval=(float(interval[0]), float(interval[1])),
                    coverage_probability=budget.coverage_probability, coverage_factor=None)
