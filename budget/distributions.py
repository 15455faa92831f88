"""Probability distributions of input quantities: standard uncertainty and sampling.

Method: each class states one distribution of JCGM 101 clause 6.4 by its location (the
estimate x_i) and its shape, gives the standard uncertainty that the GUM law of
propagation uses (GUM 4.3.7-4.3.9), and draws M values as one float64 array (JCGM 101
6.4 sampling rules; never one value at a time). ``ppf`` is the inverse distribution
function, used to impose correlation on non-Gaussian inputs through a Gaussian copula;
a distribution without a closed form returns ``None`` from ``has_ppf``.

For the scaled-and-shifted t distribution (JCGM 101 6.4.9) the GUM standard uncertainty
is the *scale* (s/√n for n observations, U/k for a certificate with ν degrees of
freedom), whereas its standard deviation is scale·√(ν/(ν−2)): the two methods are meant
to differ there.

To add a distribution: write a frozen dataclass with ``name``, ``estimate``,
``standard_uncertainty``, ``gaussian``, ``sample`` and ``ppf`` (or ``has_ppf = False``),
then map a spec keyword to it in ``statements.py``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Protocol

import numpy as np

__all__ = [
    "Distribution", "Normal", "Rectangular", "Triangular", "Arcsine", "Trapezoidal",
    "CurvilinearTrapezoid", "StudentT", "Exact", "CoveredByScatter", "AtomicWeightSum",
]

_SQRT3, _SQRT6, _SQRT2 = math.sqrt(3.0), math.sqrt(6.0), math.sqrt(2.0)


class Distribution(Protocol):
    name: str
    estimate: float
    gaussian: bool
    has_ppf: bool

    @property
    def standard_uncertainty(self) -> float: ...

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray: ...

    def ppf(self, p: np.ndarray) -> np.ndarray: ...


def _derive(owner: Any, standard_uncertainty: float, estimate: float | None = None) -> None:
    """Store the standard uncertainty (and a derived estimate) once, when the frozen
    distribution is built: inputs read them on every access, for up to 10⁵ inputs."""
    object.__setattr__(owner, "standard_uncertainty", standard_uncertainty)
    if estimate is not None:
        object.__setattr__(owner, "estimate", estimate)


def _valid(owner: Any, *, widths: tuple[str, ...] = (), fraction: str | None = None,
           dof: str | None = None) -> None:
    """Refuse a distribution that cannot be drawn: a non-finite estimate, a negative or
    non-finite width, a shape parameter outside [0, 1], degrees of freedom ≤ 0."""
    if _plainly_valid(owner, widths, fraction, dof):  # as a file gives them: 10⁵ inputs
        return
    from ._errors import InputError

    kind = type(owner).__name__
    shown = _plain(owner, kind, ("estimate", *widths, *(n for n in (fraction, dof) if n)))
    if not math.isfinite(owner.estimate):
        raise InputError(f"{kind}: expected a finite estimate, found {shown['estimate']}")
    for name in widths:
        value = getattr(owner, name)
        if not (math.isfinite(value) and value >= 0):
            raise InputError(f"{kind}: expected {name} ≥ 0 and finite, found {shown[name]}")
    if fraction is not None and not 0.0 <= getattr(owner, fraction) <= 1.0:
        raise InputError(f"{kind}: expected {fraction} in [0, 1], found {shown[fraction]}")
    if dof is not None and not getattr(owner, dof) > 0:
        raise InputError(f"{kind}: expected {dof} > 0, found {shown[dof]}")
    if dof is not None and math.isinf(getattr(owner, dof)):  # numpy draws NaN for ν = ∞
        raise InputError(f"{kind}: expected a finite {dof} (a t distribution with ν = ∞ is "
                         f"Normal(estimate, sd)), found {shown[dof]}")


def _plainly_valid(owner: Any, widths: tuple[str, ...], fraction: str | None,
                   dof: str | None) -> bool:
    """Every parameter a plain float within its range (nothing to convert or refuse);
    False sends the distribution through the checks that say what is wrong."""
    estimate = owner.estimate
    if type(estimate) is not float or not math.isfinite(estimate):
        return False
    for name in widths:
        width = getattr(owner, name)
        if type(width) is not float or not (math.isfinite(width) and width >= 0):
            return False
    if fraction is not None:
        shape = getattr(owner, fraction)
        if type(shape) is not float or not 0.0 <= shape <= 1.0:
            return False
    if dof is not None:
        nu = getattr(owner, dof)
        if type(nu) is not float or not (nu > 0 and math.isfinite(nu)):
            return False
    return True


def _plain(owner: Any, kind: str, names: tuple[str, ...]) -> dict[str, str]:
    """Store each parameter as a plain float (no Decimal, string or array inside a
    distribution); refuse one that is not a real number. The parameters as given, for
    messages."""
    from ._arguments import real
    from ._errors import InputError
    from ._limits import shorten

    shown = {}
    for name in names:
        value = getattr(owner, name)
        if type(value) is float:  # as a file gives it: nothing to convert (a fast path)
            shown[name] = repr(value)
            continue
        if value is None and name == "repeatability":
            continue
        number = real(value)
        if number is None:
            raise InputError(f"{kind}: expected {name} as a number, found "
                             f"{type(value).__name__} {shorten(repr(value))}")
        object.__setattr__(owner, name, number)
        shown[name] = shorten(repr(value))
    return shown


@dataclass(frozen=True, slots=True)
class Normal:
    estimate: float
    sd: float
    name = "normal"
    gaussian = True
    has_ppf = True

    def __post_init__(self) -> None:
        _valid(self, widths=("sd",))

    @property
    def standard_uncertainty(self) -> float:
        return self.sd

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        return rng.normal(self.estimate, self.sd, size)

    def ppf(self, p: np.ndarray) -> np.ndarray:
        from scipy.special import ndtri

        result: np.ndarray = self.estimate + self.sd * ndtri(p)
        return result


@dataclass(frozen=True, slots=True)
class Rectangular:
    estimate: float
    half_width: float
    standard_uncertainty: float = field(init=False, repr=False, compare=False)
    name = "rectangular"
    gaussian = False
    has_ppf = True

    def __post_init__(self) -> None:
        _valid(self, widths=("half_width",))
        _derive(self, self.half_width / _SQRT3)

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        values = rng.random(size)
        values *= 2.0 * self.half_width
        values += self.estimate - self.half_width
        return values

    def ppf(self, p: np.ndarray) -> np.ndarray:
        return self.estimate + self.half_width * (2.0 * p - 1.0)


@dataclass(frozen=True, slots=True)
class Triangular:
    estimate: float
    half_width: float
    standard_uncertainty: float = field(init=False, repr=False, compare=False)
    name = "triangular"
    gaussian = False
    has_ppf = True

    def __post_init__(self) -> None:
        _valid(self, widths=("half_width",))
        _derive(self, self.half_width / _SQRT6)

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        values = rng.random(size)
        values += rng.random(size)
        values -= 1.0
        values *= self.half_width
        values += self.estimate
        return values

    def ppf(self, p: np.ndarray) -> np.ndarray:
        p = np.asarray(p, dtype=float)
        low = np.sqrt(2.0 * np.minimum(p, 0.5)) - 1.0
        high = 1.0 - np.sqrt(2.0 * (1.0 - np.maximum(p, 0.5)))
        result: np.ndarray = self.estimate + self.half_width * np.where(p < 0.5, low, high)
        return result


@dataclass(frozen=True, slots=True)
class Arcsine:
    estimate: float
    half_width: float
    standard_uncertainty: float = field(init=False, repr=False, compare=False)
    name = "arcsine"
    gaussian = False
    has_ppf = True

    def __post_init__(self) -> None:
        _valid(self, widths=("half_width",))
        _derive(self, self.half_width / _SQRT2)

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        values = rng.random(size)
        values *= 2.0 * math.pi
        np.sin(values, out=values)
        values *= self.half_width
        values += self.estimate
        return values

    def ppf(self, p: np.ndarray) -> np.ndarray:
        return self.estimate - self.half_width * np.cos(math.pi * np.asarray(p, dtype=float))


@dataclass(frozen=True, slots=True)
class Trapezoidal:
    """Symmetric trapezoid with half-width a and top-to-base ratio β (JCGM 101 6.4.4)."""

    estimate: float
    half_width: float
    beta: float
    standard_uncertainty: float = field(init=False, repr=False, compare=False)
    name = "trapezoidal"
    gaussian = False
    has_ppf = True

    def __post_init__(self) -> None:
        _valid(self, widths=("half_width",), fraction="beta")
        _derive(self, self.half_width * math.sqrt((1.0 + self.beta ** 2) / 6.0))

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        values = rng.random(size)
        values *= 1.0 + self.beta
        values += (1.0 - self.beta) * rng.random(size)
        values -= 1.0
        values *= self.half_width
        values += self.estimate
        return values

    def ppf(self, p: np.ndarray) -> np.ndarray:
        """Inverse of the trapezoid's distribution function on [-1, 1], then scaled."""
        p = np.asarray(p, dtype=float)
        beta = self.beta
        q = np.minimum(p, 1.0 - p)  # work in the lower half by symmetry
        ramp = (1.0 - beta) / (1.0 + beta)  # probability of each sloping flank
        ramp_p = ramp / 2.0
        with np.errstate(invalid="ignore", divide="ignore"):
            in_ramp = -1.0 + np.sqrt(2.0 * q * (1.0 - beta ** 2))
            in_top = -beta + (q - ramp_p) * (1.0 + beta)
        x = np.where(q < ramp_p, in_ramp, in_top)
        x = np.where(p > 0.5, -x, x)
        result: np.ndarray = self.estimate + self.half_width * x
        return result


@dataclass(frozen=True, slots=True)
class CurvilinearTrapezoid:
    """Rectangular whose half-width is itself inexact by ±d (JCGM 101 6.4.3)."""

    estimate: float
    half_width: float
    inexactness: float
    standard_uncertainty: float = field(init=False, repr=False, compare=False)
    name = "curvilinear_trapezoid"
    gaussian = False
    has_ppf = False

    def __post_init__(self) -> None:
        _valid(self, widths=("half_width", "inexactness"))
        _derive(self, math.sqrt(self.half_width ** 2 / 3.0 + self.inexactness ** 2 / 9.0))

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        lower = self.estimate - self.half_width
        upper = self.estimate + self.half_width
        a_s = (lower - self.inexactness) + 2.0 * self.inexactness * rng.random(size)
        b_s = lower + upper - a_s
        return a_s + (b_s - a_s) * rng.random(size)

    def ppf(self, p: np.ndarray) -> np.ndarray:
        raise NotImplementedError("the curvilinear trapezoid has no closed-form inverse")


@dataclass(frozen=True, slots=True)
class StudentT:
    """Scaled and shifted t distribution t_ν(estimate, scale²) (JCGM 101 6.4.9)."""

    estimate: float
    scale: float
    dof: float
    name = "student_t"
    gaussian = False
    has_ppf = True

    def __post_init__(self) -> None:
        _valid(self, widths=("scale",), dof="dof")

    @property
    def standard_uncertainty(self) -> float:
        return self.scale

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        values = rng.standard_t(self.dof, size)
        values *= self.scale
        values += self.estimate
        return values

    def ppf(self, p: np.ndarray) -> np.ndarray:
        from scipy.special import stdtrit

        result: np.ndarray = self.estimate + self.scale * stdtrit(self.dof, p)
        return result


class _AtItsEstimate:
    """What every distribution without spread shares: u = 0, drawn at its estimate."""

    __slots__ = ()
    estimate: float
    gaussian = True
    has_ppf = True

    @property
    def standard_uncertainty(self) -> float:
        return 0.0

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        return np.full(size, self.estimate)

    def ppf(self, p: np.ndarray) -> np.ndarray:
        return np.full(np.shape(p), self.estimate)


@dataclass(frozen=True, slots=True)
class Exact(_AtItsEstimate):
    estimate: float
    name = "exact"

    def __post_init__(self) -> None:
        _valid(self)


@dataclass(frozen=True, slots=True)
class CoveredByScatter(_AtItsEstimate):
    """An input whose variation is already in the scatter of the runs of a
    characterization (``scatter_covers``): no term of its own in u_B, because the Type A
    term s/√n of the runs (``repeatability``) covers it; drawn at its estimate."""

    estimate: float
    repeatability: float | None  # s/√n of the runs, in the campaign's unit
    name = "covered_by_scatter"

    def __post_init__(self) -> None:
        _valid(self)
        if self.repeatability is not None:
            _valid(self, widths=("repeatability",))


@dataclass(frozen=True, slots=True)
class AtomicWeightSum:
    """A molar mass Σ n_E·A_E with each atomic weight A_E rectangular (centre ± half)."""

    counts: tuple[float, ...]
    centres: tuple[float, ...]
    half_widths: tuple[float, ...]
    scale: float = 1.0  # g/mol → the input's unit
    estimate: float = field(init=False, repr=False, compare=False)
    standard_uncertainty: float = field(init=False, repr=False, compare=False)
    name = "rectangular (atomic weights)"
    gaussian = False
    has_ppf = False

    def __post_init__(self) -> None:
        from ._errors import InputError

        if not len(self.counts) == len(self.centres) == len(self.half_widths):
            raise InputError(f"AtomicWeightSum: expected as many counts, centres and "
                             f"half-widths, found {len(self.counts)}, {len(self.centres)} "
                             f"and {len(self.half_widths)}")
        from ._arguments import real

        given = (*self.counts, *self.centres, *self.half_widths, self.scale)
        if any(real(x) is None for x in given):
            raise InputError(f"AtomicWeightSum: expected numbers, found {given!r:.200}")
        numbers = (*self.counts, *self.centres, self.scale)
        if not all(math.isfinite(x) for x in numbers) or min(self.counts, default=0) < 0:
            raise InputError(f"AtomicWeightSum: expected finite counts ≥ 0, centres and "
                             f"scale, found {numbers!r}")
        if not all(math.isfinite(h) and h >= 0 for h in self.half_widths):
            raise InputError(f"AtomicWeightSum: expected half_widths ≥ 0 and finite, found "
                             f"{self.half_widths!r}")
        _derive(self, self.scale * math.sqrt(math.fsum(
                    (n * a / _SQRT3) ** 2 for n, a in zip(self.counts, self.half_widths))),
                estimate=self.scale * math.fsum(n * c for n, c in zip(self.counts,
                                                                      self.centres)))

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        total = np.full(size, self.estimate)
        for n, half in zip(self.counts, self.half_widths):
            if half > 0.0:
                draw = rng.random(size)
                draw *= 2.0 * half * n * self.scale
                draw -= half * n * self.scale
                total += draw
        return total

    def ppf(self, p: np.ndarray) -> np.ndarray:
        raise NotImplementedError("a sum of rectangular atomic weights has no closed form")
