"""What-if copies of inputs (frozen copies, nothing mutated): another uncertainty (set or
scaled), another estimate, another distribution. Bad values are :class:`InputError`."""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Any

from . import distributions as dist
from ._errors import InputError, Location, did_you_mean

__all__ = ["scaled_input", "scaled_distribution", "input_with_uncertainty",
           "input_with_value", "input_with_distribution"]


def scaled_distribution(distribution: Any, factor: float) -> Any:
    """The same shape and estimate with every width multiplied by ``factor``."""
    if isinstance(distribution, dist.Normal):
        return replace(distribution, sd=distribution.sd * factor)
    if isinstance(distribution, dist.StudentT):
        return replace(distribution, scale=distribution.scale * factor)
    if isinstance(distribution, dist.Trapezoidal):
        return replace(distribution, half_width=distribution.half_width * factor)
    if isinstance(distribution, dist.CurvilinearTrapezoid):
        return replace(distribution, half_width=distribution.half_width * factor,
                       inexactness=distribution.inexactness * factor)
    if isinstance(distribution, (dist.Rectangular, dist.Triangular, dist.Arcsine)):
        return replace(distribution, half_width=distribution.half_width * factor)
    if isinstance(distribution, dist.AtomicWeightSum):
        return replace(distribution,
                       half_widths=tuple(h * factor for h in distribution.half_widths))
    return distribution  # exact: nothing to scale


def scaled_input(item: Any, factor: float) -> Any:
    distribution = scaled_distribution(item.distribution, factor)
    return replace(item, distribution=distribution,
                   basis=f"{item.basis} (uncertainty × {factor:g}, what-if)")


_WHERE = "<what-if>"
_BY_U = {"normal": (dist.Normal, 1.0), "rectangular": (dist.Rectangular, math.sqrt(3.0)),
         "triangular": (dist.Triangular, math.sqrt(6.0)),
         "arcsine": (dist.Arcsine, math.sqrt(2.0))}
_KINDS = (dist.Normal, dist.Rectangular, dist.Triangular, dist.Arcsine, dist.Trapezoidal,
          dist.CurvilinearTrapezoid, dist.StudentT, dist.Exact)


def _where(item: Any, key: str) -> Location:
    return Location(file=_WHERE, table=f"inputs.{item.name}", key=key)


def _number(item: Any, key: str, value: Any, *, width: bool) -> float:
    """A finite real number (numpy scalars, Fraction and Decimal too) as a float."""
    from ._arguments import real

    number = real(value)
    if number is None or not math.isfinite(number):
        raise InputError(f"expected a finite number, found {value!r}", _where(item, key))
    if width and number < 0:
        raise InputError(f"expected a number ≥ 0, found {number:g}", _where(item, key))
    return number


def input_with_uncertainty(item: Any, *, u: float | None = None,
                           factor: float | None = None) -> Any:
    """The input with standard uncertainty ``u`` or its uncertainty times ``factor``."""
    if (u is None) == (factor is None):
        raise InputError("expected exactly one of u= (set) or factor= (scale), found "
                         f"{'both' if u is not None else 'neither'}", _where(item, "u"))
    if u is not None:
        u = _number(item, "u", u, width=True)
        if item.standard_uncertainty == 0.0:
            if u == 0.0:
                return item
            raise InputError("expected an input with an uncertainty to change, found an "
                             "exact one (give it a distribution with with_distribution)",
                             _where(item, "u"))
        factor = u / item.standard_uncertainty
        if not math.isfinite(factor):  # the widths would pass the largest float
            raise InputError(f"expected a standard uncertainty whose widths are finite "
                             f"numbers, found {u:g} ({factor:g} times the present "
                             f"{item.standard_uncertainty:g})", _where(item, "u"))
    factor = _number(item, "factor", factor, width=True)
    if item.standard_uncertainty == 0.0 and factor != 1.0:  # × F of nothing: still exact
        raise InputError(f"expected an input with an uncertainty to scale, found an exact "
                         f"one (× {factor:g} would change nothing; give it a distribution "
                         f"with with_distribution)", _where(item, "factor"))
    return scaled_input(item, factor)


def input_with_value(item: Any, value: float) -> Any:
    """The input with estimate ``value``; the distribution moves, its widths stay."""
    value = _number(item, "value", value, width=False)
    if isinstance(item.distribution, dist.AtomicWeightSum):
        raise InputError("expected an input with its own estimate, found a formula whose "
                         "molar mass comes from the atomic weights", _where(item, "value"))
    return replace(item, distribution=replace(item.distribution, estimate=value),
                   basis=f"{item.basis} (estimate {value:g}, what-if)")


def input_with_distribution(item: Any, distribution: Any) -> Any:
    """The input drawn from another shape (same estimate and u) or a given distribution."""
    if isinstance(distribution, str):
        if distribution not in _BY_U:
            raise InputError(f"expected one of {', '.join(_BY_U)}, found '{distribution}'"
                             f"{did_you_mean(distribution, _BY_U)} (or pass a distribution "
                             "object)", _where(item, "distribution"))
        kind, divisor = _BY_U[distribution]
        distribution = kind(item.estimate, item.standard_uncertainty * divisor)
    elif not isinstance(distribution, _KINDS):
        raise InputError(f"expected a shape name or a budget.distributions object, found "
                         f"{distribution!r}", _where(item, "distribution"))
    dof = distribution.dof if isinstance(distribution, dist.StudentT) else item.dof
    return replace(item, distribution=distribution, dof=dof,
                   basis=f"{distribution.name} (what-if)")
