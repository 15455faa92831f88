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
from dataclasses import dataclass, replace
from typing import Any, Mapping, Sequence

import numpy as np

from ._errors import InputError, Location, did_you_mean
from ._limits import as_float, check_probability, shorten
from ._model import Model
from ._arguments import keywords_checked

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

    def __repr__(self) -> str:
        count = self.estimate.shape[0]
        return (f"<LotBudgets of {', '.join(self.measurands)}: {count:,} "
                f"lot{'s' if count != 1 else ''}, {len(self.inputs)} inputs>")

    def _repr_html_(self) -> str:
        """A table of each lot's y, u_c, ν_eff, k and U (the first 100 lots)."""
        from ._notebook import lots_html

        return lots_html(self)


@keywords_checked
def propagate_lots(model: Model, estimates: Mapping[str, Sequence[float]],
                   uncertainties: Mapping[str, Sequence[float]] | None = None,
                   coverage: float | None = None) -> LotBudgets:
    """The GUM budget of every lot: ``estimates`` (and ``uncertainties``) map input names
    to one value per lot, in the input's own unit; inputs not named keep the model's."""
    from ._arguments import check_model

    check_model(model, "propagate_lots")
    where = Location(file=model.source)
    if model.estimated_together:
        raise InputError("expected a model without [[estimated_together]] sets for many "
                         "lots at once (their joint degrees of freedom are computed lot by "
                         "lot by propagate), found "
                         f"{len(model.estimated_together)}", where)
    coverage = model.settings.coverage_probability if coverage is None else \
        check_probability(coverage, replace(where, key="coverage"))
    given = _table(model, estimates, "estimates", where)
    spreads = _table(model, uncertainties or {}, "uncertainties", where)
    lots = _count(given, spreads, where)
    x = _columns(model, given, lots, lambda i: i.estimate)
    u = np.array(_columns(model, spreads, lots,
                          lambda i: i.standard_uncertainty))  # (inputs, L)
    from ._evaluation import compile_model

    values, jacobian = compile_model(model).gradient_many(x)  # (k, L), (k, n, L)
    _check_finite(model, values, jacobian, estimates, x)
    parts = jacobian * u[None, :, :]  # c_i u_i, (k, n, L)
    variance = np.einsum("knl,knl->kl", parts, parts)
    index = {item.name: j for j, item in enumerate(model.inputs)}
    for a, b, r in model.correlations:
        variance += 2.0 * r * parts[:, index[a], :] * parts[:, index[b], :]
    combined = np.sqrt(np.clip(variance, 0.0, None))
    nu = _welch_satterthwaite(combined, parts, np.array([i.dof for i in model.inputs]))
    k = _coverage_factors(coverage, nu)
    return LotBudgets(measurands=tuple(m.name for m in model.measurands),
                      inputs=tuple(index), estimate=values.T, combined_uncertainty=combined.T,
                      dof=nu.T, coverage_factor=k.T, expanded_uncertainty=(k * combined).T,
                      sensitivity=np.transpose(jacobian, (2, 0, 1)))


def _table(model: Model, table: Any, what: str, where: Location) -> dict[str, np.ndarray]:
    """The columns of ``estimates`` or ``uncertainties`` (a dict or a DataFrame) as finite
    float arrays, each named by an input of the model."""
    if not hasattr(table, "items"):
        raise InputError(f"expected {what} as a mapping of input names to columns (a dict "
                         f"or a pandas DataFrame), found {type(table).__name__} "
                         f"{shorten(repr(table))}", replace(where, key=what))
    names = [i.name for i in model.inputs]
    made = {}
    for name, column in table.items():
        if name not in names:
            raise InputError(f"expected an input of the model, found {shorten(repr(name))}"
                             f"{did_you_mean(str(name), names)}", replace(where, key=what))
        made[name] = _column(column, replace(where, key=f"{what}[{name!r}]"),
                             what == "uncertainties")
    return made


def _column(column: Any, where: Location, spread: bool) -> np.ndarray:
    """One column: a sequence of finite numbers (≥ 0 for standard uncertainties)."""
    try:
        values = np.asarray(column)
    except ValueError:  # ragged: [[1.0], [1.0, 2.0]]
        values = np.empty((0, 0))
    expected = "a finite standard uncertainty ≥ 0" if spread else "a finite number"
    if values.ndim != 1 or isinstance(column, (str, bytes)):
        raise InputError(f"expected a column of numbers, one per lot, found "
                         f"{type(column).__name__} {shorten(repr(column))}", where)
    if values.dtype.kind not in "iuf" or not hasattr(column, "dtype"):  # a list: True → 1.0
        items = column.tolist() if hasattr(column, "tolist") else list(column)
        bad = [k for k, item in enumerate(items) if as_float(item) is None]
        if bad:
            raise InputError(f"expected {expected} for every lot, found "
                             f"{shorten(repr(items[bad[0]]))} at {_lot(column, bad[0])}",
                             where)
    numbers = values.astype(float)
    wrong = ~np.isfinite(numbers) | ((numbers < 0) if spread else False)
    if wrong.any():
        k = int(np.argmax(wrong))
        raise InputError(f"expected {expected} for every lot, found {float(numbers[k])!r} at "
                         f"{_lot(column, k)}", where)
    return numbers


def _lot(column: Any, position: int) -> str:
    """Where a lot is: its position, and its row label when the column or table is a
    pandas Series or DataFrame."""
    index = column.index if hasattr(column, "iloc") else None
    label = "" if index is None or len(index) <= position else \
        f", row {shorten(repr(index[position]))}"
    return f"lot {position + 1} (position {position}{label})"


def _count(estimates: dict[str, np.ndarray], uncertainties: dict[str, np.ndarray],
           where: Location) -> int:
    lengths = {len(column) for table in (estimates, uncertainties) for column in table.values()}
    if len(lengths) > 1:
        raise InputError(f"expected one value per lot in every column, found columns of "
                         f"{', '.join(str(n) for n in sorted(lengths))} values", where)
    if lengths == {0}:  # a table filtered to nothing: no budget to give, say so
        raise InputError("expected at least one lot (one value per lot in each column), "
                         "found columns of 0 values",
                         replace(where, key="estimates" if estimates else "uncertainties"))
    return lengths.pop() if lengths else 1


def _columns(model: Model, table: Mapping[str, np.ndarray], lots: int,
             default: object) -> list[np.ndarray]:
    made = []
    for item in model.inputs:
        if item.name in table:
            made.append(table[item.name])
        else:
            made.append(np.full(lots, default(item)))  # type: ignore[operator]
    return made


def _check_finite(model: Model, values: np.ndarray, jacobian: np.ndarray,
                  table: Any, x: Sequence[np.ndarray]) -> None:
    """Refuse a lot whose measurand value or sensitivity coefficients are not finite, as
    ``propagate`` refuses such estimates: never a NaN or ∞ in a lot's budget."""
    from ._evaluation import OVERFLOWS, overflows_at
    from ._limits import excerpt

    def overflow(k: int, lot: int) -> bool:
        return overflows_at(model, k, [float(column[lot]) for column in x])

    for k, measurand in enumerate(model.measurands):
        where = Location(file=model.source, table=f"measurands.{measurand.name}",
                         key="equation", line=measurand.line)
        column = table if hasattr(table, "iloc") else next(iter(table.values()), None)
        wrong = ~np.isfinite(values[k])
        if wrong.any():
            lot = int(np.argmax(wrong))
            equation = excerpt(measurand.equation)
            cause = f"'{equation}' {OVERFLOWS}" if overflow(k, lot) else \
                f"a division by zero or a function outside its domain in '{equation}'"
            raise InputError(f"expected a finite value at the estimates of every lot, found "
                             f"{float(values[k, lot])} at {_lot(column, lot)} ({cause})",
                             where)
        wrong_c = ~np.isfinite(jacobian[k])  # (n, L)
        if wrong_c.any():
            lot = int(np.argmax(wrong_c.any(axis=0)))
            bad = [i.name for j, i in enumerate(model.inputs) if wrong_c[j, lot]]
            cause = (f"the derivative of '{excerpt(measurand.equation)}' {OVERFLOWS}"
                     if overflow(k, lot) else "the equation is not differentiable there")
            raise InputError(f"expected finite sensitivity coefficients at the estimates of "
                             f"every lot, found none for {', '.join(bad)} at "
                             f"{_lot(column, lot)} ({cause})", where)


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
