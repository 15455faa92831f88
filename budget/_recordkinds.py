"""The three kinds of ``[records.NAME]``: ``charge``, ``end_point`` and ``drift``.

Each reader turns the numbers of ``records.py`` into generated inputs (``Made``), a
definition where the quantity has several parts, and a view for the report.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import replace
from typing import Any

import numpy as np

from ._errors import InputError
from ._recordinputs import (
    FitView,
    Generated,
    Made,
    RecordView,
    Where,
    _choice,
    _delta,
    _number,
    _pair,
    _together,
)
from ._records import Charge, Derived, Series, charge, drift, inflection, intersection

__all__ = ["KINDS"]

Labels = tuple[str, str]


def _optional(data: dict[str, Any], key: str, here: Where) -> float | None:
    if key not in data:
        return None
    value = _number(data, key, here)
    if value < 0:
        raise InputError(f"expected a number ≥ 0, found {value:g}", here(key))
    return value


def _required(data: dict[str, Any], key: str, here: Where) -> tuple[float, float]:
    """A ``[low, high]`` window that must be given."""
    pair = _pair(data, key, here, required=True)
    if pair is None:  # _pair refuses a missing required window; this keeps the type plain
        raise InputError(f"expected {key} = [low, high], found none", here(None))
    return pair


def _derived_inputs(made: Generated, derived: Derived, names: tuple[str, ...],
                    units: tuple[str, ...], basis: str, source: str) -> None:
    u = derived.standard_uncertainties
    for k, name in enumerate(names):
        made.inputs.append(Made(name=name, estimate=float(derived.estimates[k]),
                                unit=units[k], standard_uncertainty=float(u[k]),
                                dof=derived.dof, type="A",
                                basis=basis, source=source))
    _together(made, names, derived.estimates, derived.covariance, derived.dof,
              f"parts derived from one fit of {source}")


def _exact_fits(made: Generated, name: str, derived: Derived, gives: str) -> None:
    """A warning for each fit of a record whose readings lie exactly on it."""
    from ._recordinputs import zero_residual_warning

    for what, fit in derived.fits:
        zero_residual_warning(made, f"records.{name}", fit, f"the readings of the {what}",
                              gives)


def _views(derived: Derived, labels: Labels) -> tuple[FitView, ...]:
    return tuple(FitView(label=what, fit=fit, x_label=labels[0], y_label=labels[1])
                 for what, fit in derived.fits)


def _charge_options(data: dict[str, Any], here: Where
                    ) -> tuple[tuple[float, float] | None, str, tuple[float, float] | None,
                               bool]:
    """window, background, background_window and residual, checked together."""
    window = _pair(data, "window", here)
    background = _choice(data, "background", ("none", "constant", "line", "exponential"),
                         here)
    tail = _pair(data, "background_window", here, required=background != "none")
    if background == "none" and "background_window" in data:
        raise InputError("expected 'background_window' only with a background, found "
                         "background = \"none\"", here("background_window"))
    residual = data.get("residual", True)
    if not isinstance(residual, bool):
        raise InputError(f"expected true or false, found {residual!r}", here("residual"))
    if "residual" in data and background != "exponential":
        raise InputError("expected 'residual' only with background = \"exponential\", "
                         f"found background = \"{background}\"", here("residual"))
    return window, background, tail, residual


def _charge(name: str, data: dict[str, Any], record: Series, units: dict[str, str],
            labels: Labels, here: Where, made: Generated) -> None:
    window, background, tail, residual = _charge_options(data, here)
    result = charge(record, window, background, tail, residual)
    unit = f"{_delta(units['y'])}*{_delta(units['x'])}"
    source = f"record {record.file}"
    span = f"{result.count} readings, {result.start:g} to {result.end:g} {units['x']}"
    parts = _raw_part(name, data, result.raw, result.weights, unit, span, source, here)
    made.inputs.append(parts)
    _gap_warning(made, name, record.window(window, "window", 2), units["x"])
    inner = [parts.name]
    notes = [f"trapezoidal rule over {span}: {result.raw:.8g} {unit}",
             f"integration-rule error estimate (Richardson, (T_h − T_2h)/3): "
             f"{result.rule_error:.3g} {unit}, applied as a correction ± its size "
             "(rectangular)"]
    views: tuple[FitView, ...] = ()
    if result.background is not None:
        names = tuple(f"{name}_{part}" for part in result.background.names)
        _derived_inputs(made, result.background, names, (unit,) * len(names),
                        f"{background} background fitted to {background_window_text(tail)}",
                        source)
        inner += [f"- {names[0]}"] + [f"+ {n}" for n in names[1:]]
        notes.extend(result.background.notes)
        views = _views(result.background, labels)
        notes.extend(_shared(made, result, parts, names))
        _unstated_noise(made, name, data, result.background, units["y"])
        _exact_fits(made, name, result.background, "background charge")
    text = _corrections(name, data, here, made, source, f"({' '.join(inner)})")
    if result.rule_error != 0.0:
        made.inputs.append(Made(name=f"{name}_rule", estimate=result.rule_error, unit=unit,
                                standard_uncertainty=abs(result.rule_error) / math.sqrt(3.0),
                                half_width=abs(result.rule_error), dof=math.inf, type="B",
                                basis="trapezoidal-rule correction (Richardson), ± its "
                                      "size",
                                source=source, shape="rectangular"))
        text = f"{text} + {name}_rule"
    made.definitions[name] = text
    made.views.append(RecordView(table=f"records.{name}", file=record.file,
                                 method=f"charge by the trapezoidal rule, {background} "
                                        "background", produces=(name,), fits=views,
                                 notes=tuple(notes)))


GAP_FACTOR = 10.0  # a step this many times the median step of a record is a gap


def _gap_warning(made: Generated, name: str, inside: Series, unit: str) -> None:
    """A logger that stopped for a while leaves a gap the trapezoidal rule bridges with a
    straight line; the Richardson estimate, made from the same readings, cannot tell what
    the current did there."""
    steps = np.diff(inside.x)
    usual = float(np.median(steps))
    k = int(np.argmax(steps))
    if steps[k] > GAP_FACTOR * usual:
        made.warnings.append(
            f"[records.{name}]: {inside.file} has a gap in {inside.x_name}: "
            f"from {inside.x[k]:g} {unit} at row {inside.rows[k]} to {inside.x[k + 1]:g} "
            f"{unit} at row {inside.rows[k + 1]}, {steps[k] / usual:.3g} times the usual step of "
            f"{usual:g} {unit}; the trapezoidal rule bridges it with a straight line, and "
            "what the current did there is not known: check that no readings were lost")


def _shared(made: Generated, result: Charge, raw: Made, names: tuple[str, ...]
            ) -> list[str]:
    """When the integral and the background fit share readings, their correlation.

    The integral (with its per-reading u) and the background parts become one set
    estimated together: the correlations are those ``records.charge`` computed from the
    shared readings, and the set counts with the fit's ν (the integral's own u is stated,
    ν = ∞; the smaller ν of the two estimates of the readings' noise is the cautious one).
    """
    if (result.correlation is None or raw.standard_uncertainty == 0.0
            or result.background is None):
        return []
    members = (raw.name,) + names
    made.correlations[:] = [c for c in made.correlations
                            if c[0] not in members or c[1] not in members]
    made.together[:] = [t for t in made.together if set(t[0]) != set(names)]
    dof = result.background.dof
    made.inputs[made.inputs.index(raw)] = replace(
        raw, dof=dof, basis=f"{raw.basis}; shares {result.shared} readings with the "
                            "background fit, so estimated together with it (its ν)")
    for i in range(len(members)):
        for j in range(i + 1, len(members)):
            made.correlations.append((members[i], members[j],
                                      float(result.correlation[i, j])))
    made.together.append((members, dof, f"integral and background from {result.shared} "
                                        f"shared readings of {raw.source}"))
    shown = ", ".join(f"r({raw.name}, {n}) = {result.correlation[0, k + 1]:.3f}"
                      for k, n in enumerate(names))
    return [f"{result.shared} readings lie in both the integration and the background "
            f"window: {shown} (from the shared readings, GUM 5.2)"]


def _unstated_noise(made: Generated, name: str, data: dict[str, Any], background: Derived,
                    unit: str) -> None:
    """Without ``current_u`` the integral counts its readings as exact: say so when the
    background fit shows that they scatter."""
    if "current_u" in data:
        return
    s = background.fits[0][1].residual_sd
    if math.isfinite(s) and s > 0.0:
        made.warnings.append(
            f"[records.{name}]: no current_u, so the integrated readings are taken as "
            f"exact, yet the readings of the background fit scatter by s = {s:.3g} {unit}; "
            "state current_u (the standard uncertainty of each reading)")


def _corrections(name: str, data: dict[str, Any], here: Where, made: Generated,
                 source: str, text: str) -> str:
    """The relative calibration factors of the current and the time base, when stated."""
    for suffix, key, what in (("cal", "current_u_relative", "current calibration"),
                              ("time", "time_u_relative", "time base")):
        value = _optional(data, key, here)
        if value:
            made.inputs.append(Made(name=f"{name}_{suffix}", estimate=1.0, unit="1",
                                    standard_uncertainty=value,
                                    dof=math.inf, type="B", basis=f"relative {what}",
                                    source=source))
            text = f"{name}_{suffix} * {text}"
    return text


def background_window_text(pair: tuple[float, float] | None) -> str:
    return "the whole record" if pair is None else f"[{pair[0]:g}, {pair[1]:g}]"


def _raw_part(name: str, data: dict[str, Any], raw: float, weights: np.ndarray, unit: str,
              span: str, source: str, here: Where) -> Made:
    per_reading = _optional(data, "current_u", here)
    if not per_reading:
        return Made(name=f"{name}_int", estimate=raw, unit=unit, standard_uncertainty=0.0,
                    dof=math.inf,
                    type="B", basis=f"trapezoidal integral, {span}", source=source,
                    shape="exact")
    u = per_reading * float(np.sqrt(np.sum(weights ** 2)))
    return Made(name=f"{name}_int", estimate=raw, unit=unit, standard_uncertainty=u,
                dof=math.inf,
                type="B",
                basis=f"trapezoidal integral, {span}; u of each reading {per_reading:g}",
                source=source)


def _end_point(name: str, data: dict[str, Any], record: Series, units: dict[str, str],
               labels: Labels, here: Where, made: Generated) -> None:
    method = _choice(data, "method", ("intersection", "inflection"), here)
    if method == "intersection":
        windows = data.get("windows")
        if "window" in data:
            raise InputError("expected 'windows' (two of them) for the intersection, found "
                             "'window'", here("window"))
        if not isinstance(windows, list) or len(windows) != 2:
            raise InputError(f"expected windows = [[low, high], [low, high]], found "
                             f"{'none' if windows is None else repr(windows)}",
                             here("windows" if "windows" in data else None))
        first = _required({"windows": windows[0]}, "windows", here)
        second = _required({"windows": windows[1]}, "windows", here)
        derived = intersection(record, first, second)
        described = "intersection of two fitted straight segments"
    else:
        if "windows" in data:
            raise InputError("expected one 'window' for the inflection, found 'windows'",
                             here("windows"))
        window = _required(data, "window", here)
        derived = inflection(record, window)
        described = "inflection point (extremum of the first derivative of a local cubic)"
    _derived_inputs(made, derived, (name,), (units["x"],), f"end point, {described}",
                    f"record {record.file}")
    _exact_fits(made, name, derived, "end point")
    made.views.append(RecordView(table=f"records.{name}", file=record.file,
                                 method=f"end point: {described}", produces=(name,),
                                 fits=_views(derived, labels),
                                 notes=derived.notes + (f"ν = {derived.dof:.3g}",)))


def _drift(name: str, data: dict[str, Any], record: Series, units: dict[str, str],
           labels: Labels, here: Where, made: Generated) -> None:
    before = _required(data, "before", here)
    after = _pair(data, "after", here)
    give = _choice(data, "give", ("correction", "rate"), here)
    derived = drift(record, before, after)
    _exact_fits(made, name, derived, "drift rate")
    rate, u_rate = float(derived.estimates[0]), float(derived.standard_uncertainties[0])
    x_unit, y_unit = _delta(units["x"]), _delta(units["y"])
    notes = [f"drift rate {rate:.6g} {y_unit}/{x_unit}, u = {u_rate:.2g}, ν = {derived.dof:g}"]
    if give == "correction":
        duration = _number(data, "titration_time", here, positive=True)
        estimate, u, unit = rate * duration, u_rate * duration, y_unit
        notes.append(f"correction = rate × titration time {duration:g} {x_unit}")
    else:
        if "titration_time" in data:
            raise InputError("expected no 'titration_time' with give = \"rate\"",
                             here("titration_time"))
        estimate, u, unit = rate, u_rate, f"{y_unit}/{x_unit}"
    made.inputs.append(Made(name=name, estimate=estimate, unit=unit, standard_uncertainty=u,
                            dof=derived.dof,
                            type="A", basis="drift rate, common slope of the background "
                            "windows" + (" × titration time" if give == "correction" else ""),
                            source=f"record {record.file}"))
    made.views.append(RecordView(table=f"records.{name}", file=record.file,
                                 method="drift of the titration cell", produces=(name,),
                                 fits=_views(derived, labels), notes=tuple(notes)))


KINDS: dict[str, Callable[..., None]] = {"charge": _charge, "end_point": _end_point,
                                         "drift": _drift}
