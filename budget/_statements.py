"""Uncertainty statements of an ``[inputs.NAME]`` table → estimate, distribution, ν.

Method: GUM 4.2 (Type A: mean, s/√n, ν = n − 1), GUM 4.3 (Type B from certificates,
limits and handbook statements), GUM G.4.2 (ν from the reliability of u), JCGM 101 6.4
(which distribution the Monte Carlo method draws). Exactly one statement per input; the
checks say which key is wrong, what was expected and what was found.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Callable, cast

import numpy as np

from . import distributions as dist
from ._chemistry import CONSTANTS, molar_mass
from ._errors import InputError, Location, did_you_mean
from ._tomlkeys import check_keys
from ._limits import LIMITS_PAGE, MIN_RELIABILITY, as_float, check_probability, shorten

__all__ = ["Statement", "read_statement", "INPUT_KEYS", "SHAPES", "STATEMENT_WAYS"]

SHAPES = ("normal", "rectangular", "triangular", "arcsine", "trapezoidal",
          "curvilinear_trapezoid", "student_t")
_WAYS = (("u",), ("expanded",), ("half_width",), ("lower", "upper"), ("observations",),
         ("exact",), ("formula",), ("constant",))
STATEMENT_WAYS = tuple(key for way in _WAYS for key in way)
_WAY_OF = {key: way for way in _WAYS for key in way}
INPUT_KEYS = ("value", "unit", "description", "source", "distribution", "dof",
              "reliability", "u", "expanded", "k", "level", "half_width", "beta",
              "inexactness", "lower", "upper", "observations", "exact", "formula", "constant",
              "certificate", "stated")


@dataclass(frozen=True, slots=True, kw_only=True)
class Statement:
    """What an input table states, in the input's own unit (``unit`` may be defaulted)."""

    distribution: Any
    dof: float
    type: str
    unit: str | None
    basis: str
    si_value: float | None = None  # constants: the value in coherent SI
    si_unit: str | None = None  # constants: the unit of si_value
    molar_mass: Any = None


class _Table:
    """Typed access to one input table with messages that point at the key."""

    def __init__(self, data: dict[str, Any], where: Callable[[str | None], Location]) -> None:
        self.data, self.where = data, where

    def has(self, key: str) -> bool:
        return key in self.data

    def number(self, key: str, *, positive: bool = False, default: Any = None) -> Any:
        if key not in self.data:
            if default is None:
                raise InputError(f"expected a number for '{key}', found none", self.where(None))
            return default
        value = self.data[key]
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise InputError(f"expected a number, found {_shown(value)}", self.where(key))
        if as_float(value) is None:
            wanted = "a number within ±1.8e308" if isinstance(value, int) else \
                "a finite number"
            raise InputError(f"expected {wanted}, found {_shown(value)}", self.where(key))
        if positive and value <= 0:
            raise InputError(f"expected a number > 0, found {value:g}", self.where(key))
        return float(value)

    def fraction(self, key: str, low: float, high: float, closed: bool = False) -> float:
        value = self.number(key)
        inside = low <= value <= high if closed else low < value < high
        if not inside:
            brackets = "[]" if closed else "()"
            raise InputError(f"expected a number in {brackets[0]}{low:g}, {high:g}"
                             f"{brackets[1]}, found {value:g}", self.where(key))
        return float(value)


def _shown(value: Any) -> str:
    if isinstance(value, int) and not isinstance(value, bool) and abs(value) >= 10 ** 24:
        return f"an integer of {_digit_count(value)} digits"
    if isinstance(value, str):
        return f"'{shorten(value)}' (a string)"
    if isinstance(value, bool):
        return f"{str(value).lower()} (a boolean)"
    if isinstance(value, (list, dict)):
        return f"a {'list' if isinstance(value, list) else 'table'}"
    return repr(value)


def _digit_count(value: int) -> str:
    return str(len(str(abs(value)))) if abs(value) < 10 ** 4000 else "over 4000"


def read_statement(data: dict[str, Any], where: Callable[[str | None], Location],
                   convention: str) -> Statement:
    """Read one input table; ``where(key)`` gives the location of a key (None: the table)."""
    check_keys(data, INPUT_KEYS, where)
    table = _Table(data, where)
    found = {_WAY_OF[key] for key in data if key in _WAY_OF}  # a table's few keys
    ways = [w for w in _WAYS if w in found] if len(found) > 1 else list(found)
    if not ways:
        raise InputError("expected one way of stating the uncertainty (u, expanded, "
                         "half_width, lower + upper, observations, exact, formula or "
                         "constant), found none", where(None))
    if len(ways) > 1:
        first, second = (" + ".join(w) for w in ways[:2])
        raise InputError(f"expected one way of stating the uncertainty, found both "
                         f"'{first}' and '{second}'", where(ways[1][0]))
    unit = data.get("unit")
    shape = _shape(table)
    dof = _dof(table)
    reader = _READERS[ways[0][0]]
    return reader(table, shape, dof, unit, convention)


def _shape(table: _Table) -> str:
    shape = table.data.get("distribution", "normal")
    if shape not in SHAPES:
        raise InputError(f"expected a distribution, one of {', '.join(SHAPES)}, found "
                         f"{_shown(shape)}{did_you_mean(str(shape), SHAPES)}",
                         table.where("distribution"))
    return str(shape)


def _dof(table: _Table) -> float:
    if table.has("dof") and table.has("reliability"):
        raise InputError("expected either 'dof' or 'reliability', found both",
                         table.where("reliability"))
    if table.has("reliability"):
        r = table.fraction("reliability", 0.0, 1.0)
        if r < MIN_RELIABILITY:
            raise InputError(f"expected a reliability of at least {MIN_RELIABILITY:g} (then "
                             f"ν = 1/(2 r²) is a finite number; limits: {LIMITS_PAGE}), "
                             f"found {r:g}", table.where("reliability"))
        return 1.0 / (2.0 * r * r)  # GUM G.4.2, eq. (G.3)
    return float(table.number("dof", positive=True, default=math.inf))


def _no_keys(table: _Table, keys: tuple[str, ...], why: str) -> None:
    for key in keys:
        if table.has(key):
            raise InputError(f"'{key}' does not apply {why}", table.where(key))


def _from_u(table: _Table, shape: str, dof: float, unit: Any, _: str) -> Statement:
    estimate = table.number("value")
    u = table.number("u", positive=True)
    _no_keys(table, ("k", "level", "lower", "upper"), "to a stated standard uncertainty 'u'")
    if shape in ("normal", "student_t"):  # widths of bounded shapes only: never ignored
        _no_keys(table, ("beta", "inexactness"), f"to a {shape} distribution")
    if shape == "normal":  # finite ν: a scaled and shifted t (JCGM 101 6.4.9)
        made: Any = dist.Normal(estimate, u) if math.isinf(dof) else \
            dist.StudentT(estimate, u, dof)
    elif shape == "student_t":
        if math.isinf(dof):
            raise InputError("expected 'dof' for a student_t distribution, found none",
                             table.where(None))
        made = dist.StudentT(estimate, u, dof)
    else:
        made = _bounded(table, shape, estimate, half_width=None, u=u)
    drawn = f"t with ν = {dof:.4g}" if isinstance(made, dist.StudentT) else shape
    return Statement(distribution=made, dof=dof, type="B", unit=unit,
                     basis=f"standard uncertainty, {drawn}")


def _from_expanded(table: _Table, shape: str, dof: float, unit: Any, _: str) -> Statement:
    estimate = table.number("value")
    expanded = table.number("expanded", positive=True)
    if shape not in ("normal", "student_t"):
        raise InputError(f"expected distribution 'normal' with 'expanded', found '{shape}'",
                         table.where("distribution"))
    _no_keys(table, ("beta", "inexactness", "lower", "upper"),
             "to an expanded uncertainty 'expanded'")
    if table.has("k") == table.has("level"):
        raise InputError("expected exactly one of 'k' or 'level' with 'expanded', found "
                         + ("both" if table.has("k") else "neither"), table.where("expanded"))
    if table.has("k"):
        k = table.number("k", positive=True)
        basis = f"expanded uncertainty, k = {k:g}"
    else:
        level = check_probability(table.number("level"), table.where("level"),
                                  "a coverage probability 'level'")
        k = _coverage_factor(level, dof)
        basis = f"expanded uncertainty at {100 * level:g} %"
    u = expanded / k
    made = dist.Normal(estimate, u) if math.isinf(dof) else dist.StudentT(estimate, u, dof)
    return Statement(distribution=made, dof=dof, type="B", unit=unit, basis=basis)


def _coverage_factor(level: float, dof: float) -> float:
    from ._special import normal_ppf, t_ppf

    tail = 0.5 + level / 2.0
    return normal_ppf(tail) if math.isinf(dof) else t_ppf(tail, dof)


def _from_half_width(table: _Table, shape: str, dof: float, unit: Any, _: str) -> Statement:
    estimate = table.number("value")
    half = table.number("half_width", positive=True)
    made = _bounded(table, shape, estimate, half_width=half, u=None)
    return Statement(distribution=made, dof=dof, type="B", unit=unit,
                     basis=f"half-width {half:g}, {shape}")


def _from_limits(table: _Table, shape: str, dof: float, unit: Any, _: str) -> Statement:
    lower, upper = table.number("lower"), table.number("upper")
    if not upper > lower:
        raise InputError(f"expected 'upper' > 'lower', found lower = {lower:g}, upper = "
                         f"{upper:g}", table.where("upper"))
    middle = (lower + upper) / 2.0 if math.isfinite(lower + upper) else lower / 2 + upper / 2
    if table.has("value"):
        value = table.number("value")
        if not math.isclose(value, middle, rel_tol=1e-12, abs_tol=1e-300):
            raise InputError(f"expected 'value' at the midpoint {middle:g} of [lower, upper] "
                             f"(asymmetric limits are not supported), found {value:g}",
                             table.where("value"))
    width = upper - lower  # beyond the largest double for limits near ±1.8e308
    made = _bounded(table, shape, middle, u=None,
                    half_width=width / 2.0 if math.isfinite(width) else upper / 2 - lower / 2)
    return Statement(distribution=made, dof=dof, type="B", unit=unit,
                     basis=f"limits [{lower:g}, {upper:g}], {shape}")


def _bounded(table: _Table, shape: str, estimate: float, *, half_width: float | None,
             u: float | None) -> Any:
    """A bounded shape from its half-width, or from its standard uncertainty u."""
    if shape in ("normal", "student_t"):
        key = "distribution" if table.has("distribution") else \
            ("half_width" if table.has("half_width") else "lower")
        raise InputError(f"expected a bounded distribution (rectangular, triangular, "
                         f"arcsine, trapezoidal, curvilinear_trapezoid) for limits or a "
                         f"half-width, found '{shape}'", table.where(key))
    if shape != "trapezoidal":
        _no_keys(table, ("beta",), f"to a {shape} distribution")
    if shape != "curvilinear_trapezoid":
        _no_keys(table, ("inexactness",), f"to a {shape} distribution")
    divisor = {"rectangular": math.sqrt(3.0), "triangular": math.sqrt(6.0),
               "arcsine": math.sqrt(2.0)}
    if shape in divisor:
        half = cast(float, half_width) if u is None else u * divisor[shape]
        _check_span(table, estimate, half)
        return {"rectangular": dist.Rectangular, "triangular": dist.Triangular,
                "arcsine": dist.Arcsine}[shape](estimate, half)
    if shape == "trapezoidal":
        beta = table.fraction("beta", 0.0, 1.0, closed=True)
        half = cast(float, half_width) if u is None else u / math.sqrt((1.0 + beta ** 2) / 6.0)
        _check_span(table, estimate, half)
        return dist.Trapezoidal(estimate, half, beta)
    d = table.number("inexactness", positive=True)
    if u is not None:
        square = 3.0 * (u * u - d * d / 9.0)
        if square <= 0:
            raise InputError(f"expected 'inexactness' < 3·u = {3 * u:g}, found {d:g}",
                             table.where("inexactness"))
        half_width = math.sqrt(square)
    half_width = cast(float, half_width)
    _check_span(table, estimate, half_width)
    if d > half_width:
        raise InputError(f"expected 'inexactness' ≤ the half-width {half_width:g}, found "
                         f"{d:g}", table.where("inexactness"))
    return dist.CurvilinearTrapezoid(estimate, half_width, d)


def _check_span(table: _Table, estimate: float, half: float) -> None:
    """Refuse a bounded shape whose limits x ± a or width 2a pass the largest double:
    its draws would overflow to ±inf (limits: docs/limits.md)."""
    if all(math.isfinite(v) for v in (2.0 * half, estimate - half, estimate + half)):
        return
    key = next(k for k in ("half_width", "upper", "u") if table.has(k))
    raise InputError(f"expected limits x ± a and a width 2a within ±1.8e308 (limits: "
                     f"{LIMITS_PAGE}), found x = {estimate:g}, a = {half:g}", table.where(key))


def _from_observations(table: _Table, shape: str, dof: float, unit: Any, _: str) -> Statement:
    values = table.data["observations"]
    where = table.where("observations")
    if not isinstance(values, list) or len(values) < 2:
        raise InputError(f"expected a list of at least 2 numbers, found {_shown(values)}"
                         + (f" of length {len(values)}" if isinstance(values, list) else ""),
                         where)
    for i, v in enumerate(values):
        if as_float(v) is None:
            raise InputError(f"expected finite numbers within ±1.8e308, found {_shown(v)} "
                             f"at position {i + 1}", where)
    _no_keys(table, ("value", "dof", "reliability", "k", "level", "beta", "inexactness"),
             "to observations (they give the estimate and ν = n − 1)")
    if table.has("distribution") and shape not in ("normal", "student_t"):
        raise InputError(f"expected no distribution with observations (Type A), found "
                         f"'{shape}'", table.where("distribution"))
    data = np.asarray([float(v) for v in values])
    n = data.size
    s = _scaled_sd(data)
    mean = _scaled_mean(data)
    if s == 0.0:
        raise InputError(f"expected observations that are not all equal, found {n} times "
                         f"{data[0]:g}", where)
    made = dist.StudentT(mean, s / math.sqrt(n), float(n - 1))
    return Statement(distribution=made, dof=float(n - 1), type="A", unit=unit,
                     basis=f"mean of {n} observations, s = {s:.3g}")


def _scaled_mean(data: np.ndarray) -> float:
    """The mean without overflow: [1e308, 1e308] has the mean 1e308, not inf."""
    scale = float(np.max(np.abs(data)))
    return scale * float(np.mean(data / scale)) if scale > 0 else 0.0


def _scaled_sd(data: np.ndarray) -> float:
    """The sample standard deviation without overflow or underflow of the squares."""
    scale = float(np.max(np.abs(data - _scaled_mean(data))))
    if scale == 0.0 or not math.isfinite(scale):
        scale = float(np.max(np.abs(data)))
    if scale == 0.0:
        return 0.0
    scaled = data / scale
    return scale * float(np.std(scaled, ddof=1))


def _from_exact(table: _Table, shape: str, dof: float, unit: Any, _: str) -> Statement:
    if table.data["exact"] is not True:
        raise InputError(f"expected exact = true, found {_shown(table.data['exact'])}",
                         table.where("exact"))
    _no_keys(table, ("distribution", "dof", "reliability", "k", "level", "beta",
                     "inexactness"), "to an exact quantity")
    return Statement(distribution=dist.Exact(table.number("value")), dof=math.inf,
                     type="B", unit=unit, basis="exact")


def _from_formula(table: _Table, shape: str, dof: float, unit: Any,
                  convention: str) -> Statement:
    _no_keys(table, ("value", "distribution", "dof", "reliability", "k", "level", "beta",
                     "inexactness"), "to a formula (its atomic weights give the estimate)")
    mass = molar_mass(table.data["formula"], convention, table.where("formula"))
    made = dist.AtomicWeightSum(tuple(float(n) for _, n in mass.counts),
                                tuple(w.estimate for w in mass.weights),
                                tuple(w.half_width for w in mass.weights))
    return Statement(distribution=made, dof=math.inf, type="B", unit=unit or "g/mol",
                     basis=f"{mass.formula}, atomic weights {convention}", molar_mass=mass)


def _from_constant(table: _Table, shape: str, dof: float, unit: Any, _: str) -> Statement:
    name = table.data["constant"]
    if not isinstance(name, str) or name not in CONSTANTS:  # a list or table is no name
        raise InputError(f"expected a built-in constant, one of {', '.join(CONSTANTS)}, "
                         f"found {_shown(name)}{did_you_mean(str(name), CONSTANTS)}",
                         table.where("constant"))
    _no_keys(table, ("value", "distribution", "dof", "reliability", "k", "level"),
             "to a built-in constant (exact in the SI since 2019)")
    value, si_unit, description = CONSTANTS[name]
    return Statement(distribution=dist.Exact(value), dof=math.inf, type="B",
                     unit=unit or si_unit, basis=description, si_value=value,
                     si_unit=si_unit)


_READERS = {"u": _from_u, "expanded": _from_expanded, "half_width": _from_half_width,
            "lower": _from_limits, "observations": _from_observations, "exact": _from_exact,
            "formula": _from_formula, "constant": _from_constant}
