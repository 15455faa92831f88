"""``[fits.NAME]`` and ``[records.NAME]`` tables → inputs estimated together and definitions.

A fit's coefficients, or the fitted parts of a record (background charge, residual charge,
end point, drift correction), become inputs of the model with their covariance and the
fit's degrees of freedom (Type A); the stated calibration terms of a record become Type B
inputs. Each record also defines its quantity (the charge, the end point, the drift
correction) as a definition over those inputs, so the budget shows every part separately
and the equations stay symbolic. See ``fits.py`` and ``records.py`` for the methods.
"""

from __future__ import annotations

import functools

import math
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np

from ._datafiles import FORMAT_KEYS, parse_declared_format
from ._errors import InputError, Location, did_you_mean
from ._tomlkeys import check_keys
from ._fits import Fit, FitError, polynomial, york
from ._recordfiles import read_columns
from ._records import (
    Series,
    checked_series,
)

__all__ = [
    "FIT_KEYS",
    "RECORD_KEYS",
    "FitView",
    "Generated",
    "Made",
    "RecordView",
    "generate",
]

FIT_KEYS = ("file", "x", "y", "u_x", "u_y", "x_unit", "y_unit", "method", "degree", "x0",
            "coefficients", "covariance", "window", "description") + FORMAT_KEYS
_COMMON = ("file", "kind", "x", "y", "x_unit", "y_unit", "description") + FORMAT_KEYS
_KIND_KEYS = {
    "charge": ("window", "background", "background_window", "residual", "current_u",
               "current_u_relative", "time_u_relative"),
    "end_point": ("method", "windows", "window"),
    "drift": ("before", "after", "titration_time", "give"),
}
RECORD_KEYS = _COMMON + tuple(k for keys in _KIND_KEYS.values() for k in keys)

Where = Callable[[str | None], Location]


@dataclass(frozen=True, slots=True, kw_only=True)
class Made:
    """One generated input: what ``Input`` needs, in the input's own unit."""

    name: str
    estimate: float
    unit: str
    standard_uncertainty: float
    dof: float
    type: str
    basis: str
    source: str
    shape: str = "normal"  # "normal", "rectangular" (of ± half_width) or "exact"
    half_width: float = 0.0  # the rectangular shape's half-width
    table: str = ""  # the [fits.NAME] or [records.NAME] table that made it


@dataclass(frozen=True, slots=True, kw_only=True, eq=False)
class FitView:
    """A fit for the report: data, fitted values, labels."""

    label: str
    fit: Fit
    x_label: str
    y_label: str


@dataclass(frozen=True, slots=True, kw_only=True, eq=False)
class RecordView:
    """What the report says about one fit or record table."""

    table: str
    file: str
    method: str
    produces: tuple[str, ...]
    fits: tuple[FitView, ...]
    notes: tuple[str, ...]


@dataclass(frozen=True, slots=True, kw_only=True, eq=False)
class Generated:
    inputs: list[Made] = field(default_factory=list)
    correlations: list[tuple[str, str, float]] = field(default_factory=list)
    together: list[tuple[tuple[str, ...], float, str]] = field(default_factory=list)
    definitions: dict[str, str] = field(default_factory=dict)
    views: list[RecordView] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)


def generate(document: dict[str, Any], base: Path,
             where: Callable[[str | None, str | None], Location]) -> Generated:
    """Everything the ``fits`` and ``records`` tables of a model produce."""
    made = Generated()
    for group, reader in (("fits", _one_fit), ("records", _one_record)):
        tables = document.get(group, {})
        if not isinstance(tables, dict):
            raise InputError(f"expected [{group}.NAME] tables, found a single value",
                             where(None, group))
        for name, data in tables.items():
            here: Where = functools.partial(where, f"{group}.{name}")
            if not isinstance(data, dict):
                raise InputError(f"expected a table [{group}.{name}], found {data!r}",
                                 here(None))
            if "description" in data and not isinstance(data["description"], str):
                raise InputError(f"expected a string, found {data['description']!r}",
                                 here("description"))
            first = len(made.inputs)
            try:
                reader(name, data, base, here, made)
            except FitError as exc:
                raise InputError(str(exc), here(_blamed(data, str(exc)))) from exc
            made.inputs[first:] = [replace(m, table=f"{group}.{name}")
                                   for m in made.inputs[first:]]
            if isinstance(data.get("description"), str) and made.views:
                view = made.views[-1]
                made.views[-1] = replace(view, notes=(data["description"],) + view.notes)
    return made


def _blamed(data: dict[str, Any], message: str) -> str | None:
    for key in ("background_window", "windows", "window", "before", "after"):
        if key in data and key in message:
            return key
    return "file" if "file" in data else None


# ---------------------------------------------------------------- reading keys

def _keys(data: dict[str, Any], allowed: tuple[str, ...], here: Where) -> None:
    check_keys(data, allowed, here)


def _text(data: dict[str, Any], key: str, here: Where, default: str | None = None) -> str:
    value = data.get(key, default)
    if not isinstance(value, str) or not value.strip():
        shown = "none" if value is None else repr(value)
        raise InputError(f"expected a '{key}' string, found {shown}", here(key if key in data
                                                                           else None))
    return value.strip()


def _choice(data: dict[str, Any], key: str, options: tuple[str, ...], here: Where) -> str:
    value = _text(data, key, here, options[0])
    if value not in options:
        raise InputError(f"expected one of {', '.join(options)}, found '{value}'"
                         f"{did_you_mean(value, options)}", here(key))
    return value


def _number(data: dict[str, Any], key: str, here: Where, default: float | None = None,
            positive: bool = False) -> float:
    value = data.get(key, default)
    if isinstance(value, bool) or not isinstance(value, (int, float)) \
            or not math.isfinite(value) or (positive and value <= 0):
        wanted = "a number > 0" if positive else "a finite number"
        raise InputError(f"expected {wanted}, found {'none' if value is None else value!r}",
                         here(key if key in data else None))
    return float(value)


def _pair(data: dict[str, Any], key: str, here: Where,
          required: bool = False) -> tuple[float, float] | None:
    value = data.get(key)
    if value is None and not required:
        return None
    if (not isinstance(value, list) or len(value) != 2 or any(
            isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v)
            for v in value)):
        raise InputError(f"expected {key} = [low, high] (two numbers), found "
                         f"{'none' if value is None else value!r}",
                         here(key if key in data else None))
    if not value[0] < value[1]:
        raise InputError(f"expected {key} = [low, high] with low < high, found {value!r}",
                         here(key))
    return float(value[0]), float(value[1])


def _load(data: dict[str, Any], base: Path, here: Where, names: dict[str, str]
          ) -> tuple[str, dict[str, np.ndarray], dict[str, str], np.ndarray]:
    """Read the named columns; return the shown file, values, units and rows."""
    shown = _text(data, "file", here)
    columns = {role: _text(data, role, here) for role in names if role in data
               or names[role] == "required"}
    def fail(message: str, key: str) -> InputError:
        return InputError(message, here(key))

    fmt = parse_declared_format(data, fail)
    table = read_columns(base / shown, shown, list(columns.values()), here("file"), fmt)
    units = {}
    for role in ("x", "y"):
        stated = data.get(f"{role}_unit")
        header = table.units[columns[role]]
        if stated is not None and header is not None and stated != header:
            raise InputError(f"expected column '{columns[role]}' of '{shown}' in "
                             f"{role}_unit '{stated}', found the header unit '{header}'",
                             here(f"{role}_unit"))
        units[role] = str(stated if stated is not None else header or "1")
    values = {role: table.values[column] for role, column in columns.items()}
    return shown, values, units, table.rows


# ---------------------------------------------------------------- fits

def _one_fit(name: str, data: dict[str, Any], base: Path, here: Where,
             made: Generated) -> None:
    _keys(data, FIT_KEYS, here)
    method = _choice(data, "method", ("line", "polynomial", "york"), here)
    roles = {"x": "required", "y": "required", "u_x": "optional", "u_y": "optional"}
    if method == "york":
        roles.update(u_x="required", u_y="required")
    shown, values, units, rows = _load(data, base, here, roles)
    series = Series(file=shown, x=values["x"], y=values["y"], rows=rows)
    window = _pair(data, "window", here)
    chosen = np.ones(len(rows), dtype=bool) if window is None else \
        (series.x >= window[0]) & (series.x <= window[1])
    degree = 1 if method != "polynomial" else _degree(data, here)
    names = _coefficient_names(name, data, degree + 1, here)
    covariance = _choice(data, "covariance", ("stated", "scaled"), here)
    if "u_y" not in values and "covariance" in data:
        raise InputError("expected 'covariance' only with a 'u_y' column (ordinary least "
                         "squares always scales by the residuals)", here("covariance"))
    _positive_uncertainties(data, values, chosen, rows, shown, here)
    x, y = values["x"][chosen], values["y"][chosen]
    if method == "york":
        fit = york(x, y, values["u_x"][chosen], values["u_y"][chosen],
                   scaled=covariance == "scaled", names=names)
    else:
        u_y = values["u_y"][chosen] if "u_y" in values else None
        fit = polynomial(x, y, degree, u_y=u_y, x0=_number(data, "x0", here, 0.0),
                         scaled=covariance == "scaled", names=names)
    units_of = _coefficient_units(units["x"], units["y"], degree)
    described = _fit_method(fit, degree)
    for k, coefficient in enumerate(names):
        made.inputs.append(Made(
            name=coefficient, estimate=float(fit.estimates[k]), unit=units_of[k],
            standard_uncertainty=float(fit.standard_uncertainties[k]), dof=fit.dof, type="A",
            basis=f"{described}, {len(x)} points", source=f"fit of {shown}"))
    _together(made, names, fit.estimates, fit.covariance, fit.dof,
              f"coefficients of one fit of {shown} ({described})")
    made.views.append(RecordView(
        table=f"fits.{name}", file=shown, method=described, produces=names,
        fits=(FitView(label=name, fit=fit, x_label=_axis(data["x"], units["x"]),
                      y_label=_axis(data["y"], units["y"])),),
        notes=_fit_notes(fit)))
    if covariance == "stated" and math.isfinite(fit.chi2):
        _chi2_warning(made, name, fit)
    zero_residual_warning(made, f"fits.{name}", fit, "the points", "coefficients")


def _positive_uncertainties(data: dict[str, Any], values: dict[str, np.ndarray],
                            chosen: np.ndarray, rows: np.ndarray, shown: str,
                            here: Where) -> None:
    """Every u_x and u_y of the fitted rows > 0, or an error naming the row of the file."""
    for role in ("u_x", "u_y"):
        if role not in values:
            continue
        bad = np.flatnonzero(chosen & ~(values[role] > 0))
        if bad.size:
            raise InputError(f"expected every {role} > 0 in column '{data[role]}' of "
                             f"'{shown}', found {values[role][bad[0]]:g} at row "
                             f"{rows[bad[0]]}", here("file"))


def _axis(column: str, unit: str) -> str:
    """An axis label, quantity / unit, with the unit as symbols (µA, °C)."""
    from ._unit_display import display_unit

    return f"{column} / {display_unit(unit)}"


def _degree(data: dict[str, Any], here: Where) -> int:
    value = data.get("degree")
    if isinstance(value, bool) or not isinstance(value, int) or not 0 <= value <= 6:
        raise InputError(f"expected a whole number 'degree' from 0 to 6, found "
                         f"{'none' if value is None else repr(value)}",
                         here("degree" if "degree" in data else None))
    return value


def _coefficient_names(name: str, data: dict[str, Any], count: int,
                       here: Where) -> tuple[str, ...]:
    names = data.get("coefficients", [f"{name}_b{k}" for k in range(count)])
    if (not isinstance(names, list) or len(names) != count
            or not all(isinstance(n, str) and n.isidentifier() for n in names)
            or len(set(names)) != count):
        raise InputError(f"expected a list of {count} different names, found {names!r}",
                         here("coefficients"))
    return tuple(names)


def _delta(unit: str) -> str:
    """The unit of a difference: degC differences are kelvin."""
    return "K" if unit in ("degC", "°C", "celsius") else unit


def _coefficient_units(x_unit: str, y_unit: str, degree: int) -> list[str]:
    x, y = _delta(x_unit), _delta(y_unit)
    if x == "1":
        return [y] * (degree + 1)
    wrapped = x if x.isalnum() else f"({x})"
    top = y if y != "1" else "1"
    return [y] + [f"{top}/{wrapped}" if k == 1 else f"{top}/{wrapped}**{k}"
                  for k in range(1, degree + 1)]


def _fit_method(fit: Fit, degree: int) -> str:
    shape = "straight line" if degree == 1 else f"polynomial of degree {degree}"
    if fit.method == "york":
        return ("straight line with uncertainties in x and y (York et al., Am. J. Phys. 72 "
                "(2004) 367)")
    if fit.method == "wls":
        return f"{shape}, weighted least squares"
    return f"{shape}, ordinary least squares"


def _chi2_warning(made: Generated, name: str, fit: Fit) -> None:
    """ISO/TS 28037: residuals larger than the stated uncertainties explain are a warning."""
    from ._fits import chi2_limit

    dof = len(fit.y) - len(fit.parameters)
    limit = chi2_limit(dof)
    if fit.chi2 > limit:
        made.warnings.append(
            f"[fits.{name}]: χ² = {fit.chi2:.4g} exceeds its 95 % limit {limit:.4g} for "
            f"ν = {dof}: the residuals are larger than the stated uncertainties explain "
            "(check the data, or state covariance = \"scaled\")")


def zero_residual_warning(made: Generated, table: str, fit: Fit, points: str,
                          gives: str) -> None:
    """Points exactly on the curve give what is fitted no uncertainty, as if exact."""
    from ._certification import _noise

    if fit.method == "ols" and fit.residual_sd <= _noise(np.asarray(fit.y)):
        made.warnings.append(
            f"[{table}]: {points} lie exactly on the fitted curve (zero residual, "
            f"s = {fit.residual_sd:.2g}): ordinary least squares then gives the fit no "
            f"uncertainty, and it adds none to the {gives}; are the readings rounded, copied "
            "or calculated rather than measured?")


def _fit_notes(fit: Fit) -> tuple[str, ...]:
    notes = [f"ν = {fit.dof:g}" if math.isfinite(fit.dof) else
             "ν = ∞ (stated uncertainties taken as known)"]
    if fit.method == "ols":
        notes.append(f"residual standard deviation s = {fit.residual_sd:.4g}")
    elif math.isfinite(fit.chi2):
        from ._fits import chi2_limit

        dof = len(fit.y) - len(fit.parameters)
        limit = chi2_limit(dof)
        verdict = "consistent with" if fit.chi2 <= limit else "NOT consistent with"
        notes.append(f"χ² = {fit.chi2:.4g} for ν = {dof} (95 % limit {limit:.4g}): "
                     f"residuals {verdict} the stated uncertainties")
    return tuple(notes)


def _together(made: Generated, names: tuple[str, ...], estimates: np.ndarray,
              covariance: np.ndarray, dof: float, note: str = "") -> None:
    """Record a set of inputs estimated together: correlations and the set's ν."""
    u = np.sqrt(np.diag(covariance))
    for i in range(len(names)):
        for j in range(i + 1, len(names)):
            if u[i] > 0 and u[j] > 0:
                r = float(np.clip(covariance[i, j] / (u[i] * u[j]), -1.0, 1.0))
                made.correlations.append((names[i], names[j], r))
    if len(names) > 1:
        made.together.append((names, dof, note or "fitted together from one record"))


# ---------------------------------------------------------------- records

def _one_record(name: str, data: dict[str, Any], base: Path, here: Where,
                made: Generated) -> None:
    kind = _choice(data, "kind", tuple(_KIND_KEYS), here) if "kind" in data else None
    if kind is None:
        raise InputError(f"expected a 'kind', one of {', '.join(_KIND_KEYS)}, found none",
                         here(None))
    _keys(data, _COMMON + _KIND_KEYS[kind], here)
    shown, values, units, rows = _load(data, base, here, {"x": "required",
                                                          "y": "required"})
    series = checked_series(shown, values["x"], values["y"], rows, str(data["x"]))
    labels = (_axis(data["x"], units["x"]), _axis(data["y"], units["y"]))
    from ._recordkinds import KINDS

    KINDS[kind](name, data, series, units, labels, here, made)


def made_input(item: Made, in_set: bool) -> Any:
    """The model ``Input`` of a generated input (a lone Type A input draws a t, 6.4.9)."""
    from . import distributions as dist
    from ._model import Input

    distribution: Any
    u = item.standard_uncertainty
    if item.shape == "exact" or u == 0.0:
        distribution = dist.Exact(item.estimate)
    elif item.shape == "rectangular":
        distribution = dist.Rectangular(item.estimate, item.half_width)
    elif math.isfinite(item.dof) and not in_set:
        distribution = dist.StudentT(item.estimate, u, item.dof)
    else:
        distribution = dist.Normal(item.estimate, u)
    return Input(name=item.name, unit=item.unit, distribution=distribution, dof=item.dof,
                 type=item.type, basis=item.basis, source=item.source)
