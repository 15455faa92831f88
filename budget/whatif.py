"""What-if copies of inputs: the same input with its uncertainty scaled (a frozen copy)."""

from __future__ import annotations

from dataclasses import replace
from typing import Any

from . import distributions as dist

__all__ = ["scaled_input", "scaled_distribution"]


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
                   standard_uncertainty=item.standard_uncertainty * factor,
                   basis=f"{item.basis} (uncertainty × {factor:g}, what-if)")
