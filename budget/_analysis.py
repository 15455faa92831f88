"""One evaluation of a model: the GUM budget and its Monte Carlo cross-check together.

This is the pipeline of ``budget run``: ``propagate`` (JCGM 100) then, unless the number
of trials is 0, ``simulate`` (JCGM 101) validating the GUM result (JCGM 101 8.2).
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any, Callable

from ._errors import Location, PropagationError
from ._arguments import check_model, check_not_both, check_trials_argument
from ._limits import LIMITS_PAGE, check_digits, check_probability
from ._gum import Budget, MeasurandBudget, propagate
from ._model import Model
from ._reported import Reported, gum_reported, reported
from ._arguments import keywords_checked

if TYPE_CHECKING:  # the Monte Carlo module is loaded only for a run with trials
    from ._montecarlo import Simulation

__all__ = ["Result", "evaluate"]


@dataclass(frozen=True, slots=True, kw_only=True)
class Result:
    model: Model
    budget: Budget
    simulation: Simulation | None
    digits: int
    reported: tuple[Reported, ...] = ()  # per measurand: the result to report, and how
    notes: tuple[str, ...] = ()  # warnings of the evaluation itself

    def reported_for(self, name: str) -> Reported:
        """The reported result of one measurand (GUM unless ``reported_interval`` says)."""
        for item in self.reported:
            if item.name == name:
                return item
        b = self.budget.measurand(name)
        return gum_reported(b.name, b.unit, b.estimate, b.combined_uncertainty,
                            b.coverage_factor, b.coverage_probability)

    @property
    def warnings(self) -> tuple[str, ...]:
        extra = self.simulation.warnings if self.simulation else ()
        return tuple(dict.fromkeys(self.budget.warnings + extra + self.notes))

    def measurand(self, name: str) -> MeasurandBudget:
        """The GUM budget of measurand ``name`` (a ``KeyError`` with a "did you mean")."""
        return self.budget.measurand(name)

    def __repr__(self) -> str:
        trials = f"{self.simulation.trials:,} Monte Carlo trials" if self.simulation \
            else "no Monte Carlo"
        parts = "; ".join(repr(m)[1:-1] for m in self.budget.measurands)
        return f"<Result {self.model.title!r}: {parts}; {trials}>"

    def summary(self) -> str:
        """The terminal output of ``budget run``, warnings included."""
        from ._table import render

        return "\n".join([render(self), *(f"warning: {w}" for w in self.warnings)])

    def _repr_html_(self) -> str:
        from ._notebook import result_html

        return result_html(self)

    def to_frame(self) -> Any:
        """The budget as a DataFrame (``Budget.to_frame``; one measurand: its own)."""
        if len(self.budget.measurands) == 1:
            return self.budget.measurands[0].to_frame()
        return self.budget.to_frame()

    def to_dict(self) -> dict[str, Any]:
        """The JSON result document."""
        from ._document import result_document

        return result_document(self)


@keywords_checked
def evaluate(model: Model, *, coverage: float | None = None, trials: int | None = None,
             adaptive: bool = False, seed: int | None = None, digits: int | None = None,
             second_order: bool = False, workers: int | None = None,
             progress: Callable[[int, int], None] | None = None,
             reported_interval: str | None = None,
             keep_samples: bool | None = None) -> Result:
    """GUM budget and (unless ``trials == 0``) the Monte Carlo cross-check of ``model``;
    ``reported_interval`` (default: the model's setting) picks the reported result;
    ``keep_samples`` as for ``simulate``."""
    check_model(model, "evaluate")
    given = coverage  # None: the file's [settings] coverage, and errors say so
    coverage = model.settings.coverage_probability if coverage is None else coverage
    digits = model.settings.digits if digits is None else digits
    where = Location(file=model.source)
    check_probability(coverage, replace(where, key="coverage"))  # limits, also for the API
    check_digits(digits, replace(where, key="digits"))
    check_not_both(trials, adaptive, replace(where, key="trials"))
    if trials is not None:
        trials = check_trials_argument(trials, replace(where, key="trials"))
    if trials is None and not adaptive and model.settings.trials == 0:
        trials = 0
    try:
        budget = propagate(model, given, second_order=second_order)
        simulation = None
        if adaptive or trials != 0:
            from ._montecarlo import simulate

            simulation = simulate(model, budget, trials=None if adaptive else trials,
                                  adaptive=adaptive, seed=seed, coverage=given,
                                  digits=digits, workers=workers, progress=progress,
                                  keep_samples=keep_samples)
    except RecursionError as exc:  # a safety net: the engine walks without recursion
        raise PropagationError(f"expected a model nested less deeply (limits: "
                               f"{LIMITS_PAGE}), found one too deep to evaluate", where
                               ) from exc
    method = reported_interval or model.settings.reported_interval
    notes: tuple[str, ...] = ()
    if simulation is None and method != "gum" and reported_interval is None:
        notes = (f"{model.source}: [settings] reported_interval = \"{method}\" but no Monte "
                 "Carlo run (trials = 0): the GUM interval is reported",)
        method = "gum"
    stated = replace(where, key="reported_interval",  # an argument, or the file's setting
                     table=None if reported_interval else "settings")
    chosen = tuple(
        reported(b, simulation.measurands[k] if simulation else None, method, stated)
        for k, b in enumerate(budget.measurands))
    return Result(model=model, budget=budget, simulation=simulation, digits=digits,
                  reported=chosen, notes=notes)
