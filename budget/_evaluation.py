"""Evaluating a model at its estimates: values, sensitivities, higher-order derivatives.

Method: the measurand expressions are compiled once (``program.Program``) per model; the
first derivatives come from one reverse sweep per measurand; the symbolic sensitivity
coefficients (``sympy.diff``) are built only where they are displayed; the second and
third derivatives of GUM eq. (14) are symbolic as well, since they are asked for small
models only.
"""

from __future__ import annotations

import math
from typing import Any, Sequence

import numpy as np

from ._errors import Location, PropagationError
from ._model import Model
from ._program import Program

__all__ = ["compile_model", "jacobian_at_estimates", "symbolic_sensitivities",
           "second_order_variances"]


# The programs of the last few models compiled, by the model object itself: an
# ``lru_cache`` would hash the whole model (every input, definition and graph: 6-8 ms for
# 10⁴ inputs) at each of a run's look-ups. The model is kept with its program, so that
# its id is never another's while the entry stands.
_COMPILED: dict[int, tuple[Model, Program]] = {}
_COMPILED_KEPT = 16


def compile_model(model: Model) -> Program:
    """The measurand expressions of ``model`` as one numeric program (compiled once)."""
    found = _COMPILED.get(id(model))
    if found is not None and found[0] is model:
        return found[1]
    try:
        program = Program([m.graph for m in model.measurands],
                          [i.name for i in model.inputs])
    except (ValueError, KeyError) as exc:
        raise PropagationError(f"the equations cannot be compiled: {exc}",
                               Location(file=model.source)) from exc
    while len(_COMPILED) >= _COMPILED_KEPT:  # the oldest first
        _COMPILED.pop(next(iter(_COMPILED)), None)
    _COMPILED[id(model)] = (model, program)
    return program


def estimates(model: Model) -> np.ndarray:
    return np.array([i.estimate for i in model.inputs], dtype=float)


def jacobian_at_estimates(model: Model) -> tuple[np.ndarray, np.ndarray]:
    """Measurand values and ∂y_k/∂x_i at the estimates, refusing non-finite numbers."""
    values, jac, _ = evaluated_at_estimates(model)
    return values, jac


def evaluated_at_estimates(model: Model) -> tuple[np.ndarray, np.ndarray, frozenset[str]]:
    """As :func:`jacobian_at_estimates`, with the names of the measurands whose value or
    derivatives underflowed on the way (a result below the smallest normal double,
    2.2e-308, lost its digits or became 0)."""
    program = compile_model(model)
    events: set[str] = set()
    values, jac = program.gradient(estimates(model), events)
    for k in range(len(model.measurands)):
        if not (math.isfinite(values[k]) and np.all(np.isfinite(jac[k]))):
            _refuse(model, k, values, jac, _events_of(model, k, events))
    if "underflow" not in events:
        return values, jac, frozenset()
    return values, jac, frozenset(m.name for k, m in enumerate(model.measurands)
                                  if "underflow" in _events_of(model, k, events))


def _events_of(model: Model, k: int, events: set[str]) -> set[str]:
    """The floating-point events of measurand ``k`` alone (one more evaluation, made only
    when something went wrong in a model of several measurands)."""
    if len(model.measurands) == 1:
        return events
    own: set[str] = set()
    _measurand_gradient(model, k, estimates(model), own)
    return own


def _measurand_gradient(model: Model, k: int, point: Sequence[float] | np.ndarray,
                        events: set[str]
                        ) -> tuple[np.ndarray, np.ndarray]:
    """Value and gradient of measurand ``k`` alone at ``point``, its floating-point
    events collected in ``events``."""
    return Program([model.measurands[k].graph], [i.name for i in model.inputs]
                   ).gradient(point, events)


OVERFLOWS = ("overflows: a result beyond ±1.8e308 from finite numbers; rescale the units "
             "so that the numbers stay within about 1e±300")


def _overflowed(events: set[str], value: float, row: np.ndarray) -> bool:
    """Whether a value or derivative that is not finite came from an overflow rather than
    from a division by zero or a function outside its domain."""
    return "divide by zero" not in events and (
        "overflow" in events or math.isinf(value) or bool(np.any(np.isinf(row))))


def overflows_at(model: Model, k: int, point: Sequence[float]) -> bool:
    """:func:`_overflowed` for measurand ``k`` at input values ``point`` (a lot)."""
    events: set[str] = set()
    values, jac = _measurand_gradient(model, k, point, events)
    return _overflowed(events, float(values[0]), jac[0])


def _refuse(model: Model, k: int, values: np.ndarray, jac: np.ndarray,
            events: set[str]) -> None:
    """The error for a value or sensitivity coefficient that is not finite: an overflow
    (a result beyond ±1.8e308 from finite numbers) is told apart from a division by zero
    or a function outside its domain."""
    from ._limits import excerpt

    measurand = model.measurands[k]
    where = Location(file=model.source, table=f"measurands.{measurand.name}",
                     key="equation", line=measurand.line)
    equation = excerpt(measurand.equation)
    overflow = _overflowed(events, values[k], jac[k])
    if not math.isfinite(values[k]):
        cause = (f"'{equation}' {OVERFLOWS}" if overflow else
                 f"a division by zero or a function outside its domain in '{equation}'")
        raise PropagationError(f"expected a finite value at the estimates, found {values[k]} "
                               f"({cause})", where)
    bad = [i.name for j, i in enumerate(model.inputs) if not math.isfinite(jac[k, j])]
    cause = (f"the derivative of '{equation}' {OVERFLOWS}" if overflow else
             "the equation is not differentiable there")
    raise PropagationError(f"expected finite sensitivity coefficients at the estimates, found "
                           f"none for {', '.join(bad)} ({cause})", where)


def symbolic_sensitivities(model: Model, name: str) -> dict[str, Any]:
    """c_i = ∂f/∂x_i as sympy expressions (for display), keyed by input name."""
    import sympy

    measurand = next(m for m in model.measurands if m.name == name)
    return {i.name: sympy.diff(measurand.expression, i.symbol) for i in model.inputs}


def second_order_variances(model: Model) -> np.ndarray:
    """The GUM eq. (14) higher-order terms for each measurand (uncorrelated inputs)."""
    import sympy

    point = {i.symbol: i.estimate for i in model.inputs}
    active = [i for i in model.inputs if i.standard_uncertainty > 0]
    result = []
    for measurand in model.measurands:
        f = measurand.expression
        where = Location(file=model.source, table=f"measurands.{measurand.name}",
                         key="equation", line=measurand.line)
        total = 0.0
        first = {i.name: sympy.diff(f, i.symbol) for i in active}
        for a in active:
            for b in active:
                d_ab = sympy.diff(first[a.name], b.symbol)
                d_abb = sympy.diff(d_ab, b.symbol)
                value = (0.5 * _at(d_ab, point, where) ** 2
                         + _at(first[a.name], point, where) * _at(d_abb, point, where))
                total += value * a.standard_uncertainty ** 2 * b.standard_uncertainty ** 2
        result.append(total)
    return np.array(result)


def _at(expr: Any, point: dict[str, Any], where: Location) -> float:
    if expr == 0:
        return 0.0
    import sympy

    # sympy.N also takes the plain float that replacing a bare symbol leaves (d(a·b)/da = b)
    value = complex(sympy.N(expr.xreplace(point)))
    if value.imag != 0.0 or not math.isfinite(value.real):
        raise PropagationError(f"expected higher-order derivatives finite at the estimates, "
                               f"found {expr} = {value:g}", where)
    return value.real
