"""Many lots of one model at once: the GUM linear budget of every lot in one pass.

Method: the same law of propagation as ``gum.propagate`` (JCGM 100 5.1.2, 5.2.2, G.2b,
G.4.1), evaluated on arrays instead of one lot at a time. The model is read and compiled
once; each input may take a different estimate (and standard uncertainty) per lot, given
as a column of a table; the measurand values and every sensitivity coefficient of all lots
come from one reverse sweep on arrays (``Program.gradient_many``); then

* u_c² = Σ (c_i u_i)² + Σ_pairs 2 r_ij c_i u_i c_j u_j, per lot;
* ν_eff = u_c⁴ / Σ (c_i u_i)⁴ / ν_i (GUM G.2b), the correlation terms with infinite
  degrees of freedom, as ``propagate`` does for models without ``[[estimated_together]]``
  sets (models with such sets are refused here: their joint degrees of freedom are
  ``propagate``'s job, lot by lot);
* k = t_p(ν_eff) at ν_eff rounded to 0.1 and truncated (GUM G.4.1 note 1), U = k u_c.

The Python cost per lot is then a few array operations shared by all lots, which is what
lets a laboratory re-evaluate thousands of lots in the time a spreadsheet takes for one.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

from ._errors import InputError, Location
from ._model import Model

__all__ = ["LotBudgets", "propagate_lots"]


@dataclass(frozen=True, slots=True, kw_only=True)
class LotBudgets:
    """The linear budget of L lots: arrays with one row per lot."""

    measurands: tuple[str, ...]
    inputs: tuple[str, ...]
    estimate: np.ndarray  # (L, measurands)
    combined_uncertainty: np.ndarray  # (L, measurands)
    dof: np.ndarray  # (L, measurands)
    coverage_factor: np.ndarray  # (L, measurands)
    expanded_uncertainty: np.ndarray  # (L, measurands)
    sensitivity: np.ndarray  # (L, measurands, inputs), signed


def propagate_lots(model: Model, estimates: Mapping[str, Sequence[float]],
                   uncertainties: Mapping[str, Sequence[float]] | None = None,
                   coverage: float | None = None) -> LotBudgets:
    """The GUM budget of every lot: ``estimates`` (and ``uncertainties``) map input names
    to one value per lot, in the input's own unit; inputs not named keep the model's."""
    where = Location(file=model.source)
    if model.estimated_together:
        raise InputError("expected a model without [[estimated_together]] sets for many "
                         "lots at once (their joint degrees of freedom are computed lot by "
                         "lot by propagate), found "
                         f"{len(model.estimated_together)}", where)
    lots = _count(model, estimates, uncertainties or {}, where)
    x = _columns(model, estimates, lots, lambda i: i.estimate)
    u = np.array(_columns(model, uncertainties or {}, lots,
                          lambda i: i.standard_uncertainty))  # (inputs, L)
    from ._evaluation import compile_model

    values, jacobian = compile_model(model).gradient_many(x)  # (k, L), (k, n, L)
    parts = jacobian * u[None, :, :]  # c_i u_i, (k, n, L)
    variance = np.einsum("knl,knl->kl", parts, parts)
    index = {item.name: j for j, item in enumerate(model.inputs)}
    for a, b, r in model.correlations:
        variance += 2.0 * r * parts[:, index[a], :] * parts[:, index[b], :]
    combined = np.sqrt(np.clip(variance, 0.0, None))
    nu = _welch_satterthwaite(combined, parts, np.array([i.dof for i in model.inputs]))
    coverage = model.settings.coverage_probability if coverage is None else coverage
    k = _coverage_factors(coverage, nu)
    return LotBudgets(measurands=tuple(m.name for m in model.measurands),
                      inputs=tuple(index), estimate=values.T, combined_uncertainty=combined.T,
                      dof=nu.T, coverage_factor=k.T, expanded_uncertainty=(k * combined).T,
                      sensitivity=np.transpose(jacobian, (2, 0, 1)))


def _count(model: Model, estimates: Mapping[str, Sequence[float]],
           uncertainties: Mapping[str, Sequence[float]], where: Location) -> int:
    names = {i.name for i in model.inputs}
    lengths = set()
    for table in (estimates, uncertainties):
        for name, column in table.items():
            if name not in names:
                from ._errors import did_you_mean

                raise InputError(f"expected an input of the model, found '{name}'"
                                 f"{did_you_mean(name, sorted(names))}", where)
            lengths.add(len(column))
    if len(lengths) > 1:
        raise InputError(f"expected one value per lot in every column, found columns of "
                         f"{', '.join(str(n) for n in sorted(lengths))} values", where)
    return lengths.pop() if lengths else 1


def _columns(model: Model, table: Mapping[str, Sequence[float]], lots: int,
             default: object) -> list[np.ndarray]:
    made = []
    for item in model.inputs:
        if item.name in table:
            made.append(np.asarray(table[item.name], dtype=float))
        else:
            made.append(np.full(lots, default(item)))  # type: ignore[operator]
    return made


def _welch_satterthwaite(combined: np.ndarray, parts: np.ndarray,
                         dofs: np.ndarray) -> np.ndarray:
    """GUM G.2b per lot and measurand; ∞ where every ν_i is ∞ or u_c = 0."""
    finite = np.isfinite(dofs)
    if not finite.any():
        return np.full(combined.shape, math.inf)
    fourth = np.abs(parts[:, finite, :]) ** 4 / dofs[finite][None, :, None]
    denominator = fourth.sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        nu = np.where((denominator > 0) & (combined > 0), combined ** 4 / denominator,
                      math.inf)
    return nu


def _coverage_factors(coverage: float, nu: np.ndarray) -> np.ndarray:
    """k = t_p(ν) for each lot, computed once per distinct truncated ν."""
    from ._gum import coverage_factor

    key = np.where(np.isfinite(nu), np.maximum(1.0, np.floor(np.round(nu, 1))), math.inf)
    k = np.empty_like(key)
    for value in np.unique(key):
        k[key == value] = coverage_factor(coverage, float(value))
    return k
