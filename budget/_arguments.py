"""Checks of the Python API's arguments (``evaluate``, ``simulate``, ``propagate``, …).

A file's keys are checked where they are read (``_model``, ``_campaign``); a notebook
passes the same settings as arguments, and a careless one (a string for a number, a float
for a count, a path for a model) must meet the same kind of message — the argument named,
what was expected and what was found — not a numpy or attribute error from deep inside.
"""

from __future__ import annotations

import functools
import inspect
import math
import numbers
import operator
from decimal import Decimal
from typing import Any, Callable, ParamSpec, TypeVar

import numpy as np

from ._errors import ArgumentError, InputError, Location, did_you_mean
from ._limits import MAX_TRIALS, check_seed, shorten

__all__ = ["whole", "real", "check_count", "check_instance", "check_positive", "check_model",
           "check_trials_argument", "check_seed_argument", "check_workers", "check_progress",
           "check_flag", "check_not_both", "check_budget_of"]

MAX_WORKERS = 256  # as `--workers` on the command line

P = ParamSpec("P")
R = TypeVar("R")


def keywords_checked(function: Callable[P, R]) -> Callable[P, R]:
    """``function`` refusing a keyword it does not take (with a "did you mean") and too
    many positional arguments, as a :class:`ArgumentError` (a ``BudgetError`` and a
    ``TypeError``) naming the function, instead of Python's bare ``TypeError``."""
    parameters = inspect.signature(function).parameters.values()
    names = [p.name for p in parameters if p.kind is not p.VAR_KEYWORD]
    positional = sum(p.kind in (p.POSITIONAL_ONLY, p.POSITIONAL_OR_KEYWORD)
                     for p in parameters)
    takes_any = any(p.kind is p.VAR_KEYWORD for p in parameters)
    own = 1 if names[:1] == ["self"] else 0  # a method: self is not the caller's to count
    where = Location(file=f"{function.__name__}()")

    @functools.wraps(function)
    def checked(*args: P.args, **kwargs: P.kwargs) -> R:
        if len(args) > positional:
            most = positional - own
            raise ArgumentError(f"expected at most {most} positional argument"
                                f"{'s' if most > 1 else ''} (give the others by "
                                f"name: {', '.join(f'{n}=…' for n in names[positional:])}), "
                                f"found {len(args) - own}", where)
        for key in kwargs:
            if key not in names and not takes_any:
                raise ArgumentError(f"expected one of the arguments {', '.join(names[own:])}, "
                                    f"found {key!r}{did_you_mean(key, names[own:])}", where)
        return function(*args, **kwargs)

    return checked



def whole(value: Any) -> int | None:
    """An int, a numpy integer or a 0-d integer array as an int; None for anything else
    (bools, floats — even 1e6 — strings, lists)."""
    if isinstance(value, (bool, np.bool_)):
        return None
    if isinstance(value, int):
        return value
    if isinstance(value, (np.integer, np.ndarray)):
        try:
            return operator.index(value)
        except TypeError:
            return None
    return None


def real(value: Any) -> float | None:
    """A real number (int, float, Fraction, Decimal, numpy scalar or 0-d array) as a
    float; None for a bool, a string, a list or anything else."""
    if isinstance(value, np.ndarray) and value.ndim == 0 and value.dtype.kind in "iuf":
        value = value.item()
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (numbers.Real, Decimal)):
        return None
    try:
        return float(value)
    except OverflowError:  # an int beyond 1.8e308: refused as not finite
        return math.inf


def _found(value: Any) -> str:
    if type(value).__module__.startswith("budget."):  # its repr may be pages long
        return f"a budget.{type(value).__name__}"
    return f"{type(value).__name__} {shorten(repr(value))}"


_MADE_BY = {"Result": "budget.evaluate(model)", "Certification": "budget.certify(campaign)",
            "Campaign": "budget.load_campaign(path)", "Model": "budget.load_model(path)",
            "Batch": "budget.batch.certify_folder(folder)"}


def check_instance(value: Any, kind: type, function: str, argument: str) -> None:
    """Refuse anything but a ``kind`` (a Result, a Certification …) as an argument."""
    if not isinstance(value, kind):
        made = _MADE_BY.get(kind.__name__)
        prefix = "budget.batch" if kind.__module__ == "budget.batch" else "budget"
        raise InputError(f"expected a {prefix}.{kind.__name__}"
                         f"{f' ({made} gives one)' if made else ''}, found {_found(value)}",
                         Location(file=f"{function}()", key=argument))


def check_positive(value: Any, function: str, argument: str) -> float:
    """A positive finite number (a target uncertainty, …)."""
    number = real(value)
    if number is None or not (math.isfinite(number) and number > 0):
        raise InputError(f"expected a positive finite number, found {_found(value)}",
                         Location(file=f"{function}()", key=argument))
    return number


def check_count(value: Any, function: str, argument: str, low: int, high: int) -> int:
    """A whole number from ``low`` to ``high``."""
    number = whole(value)
    if number is None or not low <= number <= high:
        raise InputError(f"expected a whole number from {low:,} to {high:,}, found "
                         f"{_found(value)}", Location(file=f"{function}()", key=argument))
    return number


def check_model(value: Any, function: str) -> None:
    """Refuse anything but a :class:`Model` (a path, a dict, None) as ``function``'s model."""
    from ._model import Model

    if not isinstance(value, Model):
        inner = isinstance(getattr(value, "model", None), Model)  # a Joint, a Result
        raise InputError(f"expected a budget.Model (budget.load_model(path) reads one), "
                         f"found {_found(value)}{' (its .model is one)' if inner else ''}",
                         Location(file=f"{function}()", key="model"))


def check_trials_argument(value: Any, where: Location) -> int:
    """A whole number of Monte Carlo trials, 0 to ``MAX_TRIALS``."""
    number = whole(value)
    if number is None or number < 0:
        hint = " (a float such as 1e5 is refused: write 100_000)" \
            if isinstance(value, float) else ""
        raise InputError(f"expected a whole number of trials ≥ 0{hint}, found "
                         f"{_found(value)}", where)
    if number > MAX_TRIALS:
        from ._limits import check_trials

        check_trials(number, where)
    return number


def check_seed_argument(value: Any, where: Location) -> int:
    """A seed as the file's ``seed`` key takes it (numpy integers too)."""
    number = whole(value)
    return check_seed(value if number is None else number, where)


def check_workers(value: Any, where: Location) -> int | None:
    """None (the default) or a whole number of threads or processes, 1 to 256."""
    if value is None:
        return None
    number = whole(value)
    if number is None or not 1 <= number <= MAX_WORKERS:
        raise InputError(f"expected None or a whole number of workers from 1 to "
                         f"{MAX_WORKERS}, found {_found(value)}", where)
    return number


def check_progress(value: Any, where: Location) -> None:
    """None or a function called with (done, total) as the run advances."""
    if value is not None and not callable(value):
        raise InputError(f"expected None or a function f(done, total), found "
                         f"{_found(value)}", where)
    try:
        if value is not None:
            inspect.signature(value).bind(0, 1)
    except TypeError as exc:  # it would fail in a worker, halfway through the run
        raise InputError(f"expected a function f(done, total) of two arguments, found one "
                         f"that cannot take them ({exc})", where) from exc
    except ValueError:  # a builtin without a signature: trusted
        pass


def check_flag(value: Any, where: Location, none: bool = False) -> None:
    """A yes/no argument: True or False (or None where it means "the default")."""
    if isinstance(value, (bool, np.bool_)) or (none and value is None):
        return
    allowed = "True, False or None" if none else "True or False"
    raise InputError(f"expected {allowed}, found {_found(value)}", where)


def check_not_both(trials: Any, adaptive: Any, where: Location) -> None:
    """``trials`` and ``adaptive=True`` together: which was meant cannot be guessed (the
    adaptive procedure chooses the number of trials itself), as on the command line."""
    if adaptive and trials is not None:
        raise InputError(f"expected either trials=… or adaptive=True, found both (trials = "
                         f"{shorten(repr(trials))}): the adaptive procedure chooses the "
                         f"number of trials itself", where)


def check_budget_of(budget: Any, model: Any, coverage: float, where: Location) -> None:
    """Refuse a GUM budget that is not the one of ``model`` (another model, or the model
    before a what-if) at ``coverage``: the Monte Carlo result would be validated against
    wrong numbers."""
    from ._gum import Budget

    if budget is None:
        return
    if not isinstance(budget, Budget):
        raise InputError(f"expected None or the budget.Budget of this model "
                         f"(budget.propagate(model)), found {_found(budget)}", where)
    if budget.model is not model and _fingerprint(budget.model) != _fingerprint(model):
        raise InputError("expected the budget of this model (budget.propagate(model)), "
                         f"found the budget of another model or of the model before a "
                         f"what-if ('{budget.model.title}')", where)
    at = {m.coverage_probability for m in budget.measurands}
    if any(not math.isclose(p, coverage, rel_tol=1e-6) for p in at):  # float32 0.95: same
        raise InputError(f"expected the budget at the coverage probability of the "
                         f"simulation ({coverage:g}), found one at {min(at):g} "
                         f"(budget.propagate(model, coverage={coverage:g}))", where)


def _fingerprint(model: Any) -> tuple[Any, ...]:
    return (tuple((m.name, m.equation) for m in model.measurands),
            tuple((i.name, i.estimate, i.standard_uncertainty, i.dof) for i in model.inputs),
            tuple(model.correlations))
