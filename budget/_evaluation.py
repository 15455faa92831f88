"""Evaluating a model at its estimates: values, sensitivities, higher-order derivatives.

Method: the measurand expressions are compiled once (``program.Program``) per model; the
first derivatives come from one reverse sweep per measurand; the symbolic sensitivity
coefficients (``sympy.diff``) are built only where they are displayed; the second and
third derivatives of GUM eq. (14) are symbolic as well, since they are asked for small
models only.
"""

from __future__ import annotations

import math
from functools import lru_cache
from typing import Any

import numpy as np

from ._errors import Location, PropagationError
from ._model import Model
from ._program import Program

__all__ = ["compile_model", "jacobian_at_estimates", "symbolic_sensitivities",
           "second_order_variances"]


@lru_cache(maxsize=16)
def compile_model(model: Model) -> Program:
    """The measurand expressions of ``model`` as one numeric program."""
    try:
        return Program([m.graph for m in model.measurands], [i.name for i in model.inputs])
    except (ValueError, KeyError) as exc:
        raise PropagationError(f"the equations cannot be compiled: {exc}",
                               Location(file=model.source)) from exc


def estimates(model: Model) -> np.ndarray:
    return np.array([i.estimate for i in model.inputs], dtype=float)


def jacobian_at_estimates(model: Model) -> tuple[np.ndarray, np.ndarray]:
    """Measurand values and ∂y_k/∂x_i at the estimates, refusing non-finite numbers."""
    program = compile_model(model)
    values, jac = program.gradient(estimates(model))
    for k, measurand in enumerate(model.measurands):
        where = Location(file=model.source, table=f"measurands.{measurand.name}",
                         key="equation", line=measurand.line)
        if not math.isfinite(values[k]):
            raise PropagationError(
                f"expected a finite value at the estimates, found {values[k]} (a division by "
                f"zero or a function outside its domain in '{measurand.equation}')", where)
        bad = [i.name for j, i in enumerate(model.inputs) if not math.isfinite(jac[k, j])]
        if bad:
            raise PropagationError(
                f"expected finite sensitivity coefficients at the estimates, found none for "
                f"{', '.join(bad)} (the equation is not differentiable there)", where)
    return values, jac


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
