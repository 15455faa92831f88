"""Units of inputs and measurands, read by the general-purpose ``pint`` library.

Method: every quantity is computed in coherent SI units. An input written in ``mg``
enters the equations as ``1/1000000 · m`` kilograms, so the symbolic model stays in the
input's own unit and its sensitivity coefficients come out in *measurand unit per input
unit*, as a budget table shows them. A temperature in ``degC`` is the one offset unit
accepted: it may enter the model only as a difference of two such temperatures or as the
argument of a function that declares °C (``air_density``); everything else is checked by
dimension before any number is computed (GUM 4.1: the model must be dimensionally sound).

pint parses every unit string; the common ones were parsed by pint in advance
(``unit_table.py``, checked against pint by the tests), so a typical model runs without
importing pint. While expressions are built, units travel as :class:`Unit` values —
dimension exponents, SI factor and a pint-readable text — so that checking dimensions
needs no registry either.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache
from typing import Any

from ._errors import Location, UnitError
from ._limits import LIMITS_PAGE, MAX_UNIT_CHARS

__all__ = ["Unit", "UnitInfo", "known_unit", "parse_unit", "registry", "dimension_text",
           "DIMENSIONLESS"]

_ORDER = ("[mass]", "[length]", "[time]", "[current]", "[substance]", "[temperature]",
          "[luminosity]")


@lru_cache(maxsize=1)
def registry() -> Any:
    """The shared pint registry, created on first use (it takes half a second)."""
    import pint

    return pint.UnitRegistry(autoconvert_offset_to_baseunit=False)


def _key(item: tuple[str, Fraction]) -> tuple[int, str]:
    name = item[0]
    return (_ORDER.index(name) if name in _ORDER else len(_ORDER), name)


def _bracket(text: str) -> str:
    return f"({text})" if any(c in text for c in "*/ ") else text


@dataclass(frozen=True, slots=True)
class Unit:
    """Dimension exponents, the factor to coherent SI, and a text pint can read again."""

    dims: tuple[tuple[str, Fraction], ...]
    factor: Fraction
    text: str

    @staticmethod
    def make(dims: dict[str, Fraction], factor: Fraction, text: str) -> "Unit":
        cleaned = tuple(sorted(((k, v) for k, v in dims.items() if v != 0), key=_key))
        return Unit(cleaned, factor, text)

    @property
    def dimensionality(self) -> tuple[tuple[str, Fraction], ...]:
        return self.dims

    @property
    def dimensionless(self) -> bool:
        return not self.dims

    def _combine(self, other: "Unit", sign: int) -> dict[str, Fraction]:
        dims = dict(self.dims)
        for name, power in other.dims:
            dims[name] = dims.get(name, Fraction(0)) + sign * power
        return dims

    def __mul__(self, other: "Unit") -> "Unit":
        return _product(self, other)

    def __truediv__(self, other: "Unit") -> "Unit":
        return _quotient(self, other)

    def __pow__(self, power: float | Fraction) -> "Unit":
        exponent = power if isinstance(power, Fraction) else \
            Fraction(power).limit_denominator(1000)
        dims = {name: p * exponent for name, p in self.dims}
        power_of = self.factor ** exponent
        factor = power_of if isinstance(power_of, Fraction) else \
            Fraction(f"{float(power_of):.15g}")
        shown = str(exponent) if exponent.denominator == 1 else f"({exponent})"
        text = "1" if self.text == "1" else f"{_bracket(self.text)}**{shown}"
        return Unit.make(dims, factor, text)

    def __format__(self, spec: str) -> str:
        return self.text

    def __hash__(self) -> int:
        # by the text alone (equal units have equal texts): hashing the exponents would
        # hash Fractions in Python on every cached product of a 10⁴-term model
        return hash(self.text)


DIMENSIONLESS = Unit((), Fraction(1), "1")


@lru_cache(maxsize=4096)  # a model multiplies the same few units thousands of times
def _product(a: Unit, b: Unit) -> Unit:
    text = b.text if a.text == "1" else a.text if b.text == "1" else \
        f"{_bracket(a.text)}*{_bracket(b.text)}"
    return Unit.make(a._combine(b, 1), a.factor * b.factor, text)


@lru_cache(maxsize=4096)
def _quotient(a: Unit, b: Unit) -> Unit:
    text = a.text if b.text == "1" else f"{_bracket(a.text)}/{_bracket(b.text)}"
    return Unit.make(a._combine(b, -1), a.factor / b.factor, text)


def dimension_text(unit: Unit) -> str:
    """Dimensions written as pint writes them, e.g. ``[mass] / [length] ** 3``."""
    if not unit.dims:
        return "dimensionless"

    def term(name: str, power: Fraction) -> str:
        power = abs(power)
        return name if power == 1 else f"{name} ** {power}"

    up = [term(n, p) for n, p in unit.dims if p > 0]
    down = [term(n, p) for n, p in unit.dims if p < 0]
    return " / ".join([" * ".join(up) or "1", *down])


@dataclass(frozen=True, slots=True)
class UnitInfo:
    """A parsed unit: what the user wrote, its :class:`Unit`, and whether it is °C."""

    text: str
    unit: Unit
    factor: Fraction
    offset: bool = False

    @property
    def dimensionality(self) -> Any:
        return self.unit.dims

    @property
    def dimensionless(self) -> bool:
        return not self.offset and self.unit.dimensionless

    def describe(self) -> str:
        """The dimension in words for error messages."""
        if self.offset:
            return "temperature on the Celsius scale"
        return dimension_text(self.unit)


_PARSED: dict[str, UnitInfo] = {}  # successful parses only; errors are raised every time
_ONE = UnitInfo(text="1", unit=DIMENSIONLESS, factor=Fraction(1))


def known_unit(text: str) -> UnitInfo | None:
    """The unit of ``text`` when it was parsed before as it stands (no location needed),
    else None: :func:`parse_unit` then reads it and says where it failed."""
    return _ONE if text in ("", "1") else _PARSED.get(text)


def parse_unit(text: Any, where: Location) -> UnitInfo:
    """Parse a unit string, or raise :class:`UnitError` naming where it was written."""
    if not isinstance(text, str):
        raise UnitError(f"expected a unit string such as \"mg\", found {text!r}", where)
    cleaned = text.strip()
    if len(cleaned) > MAX_UNIT_CHARS:
        raise UnitError(f"expected a unit of at most {MAX_UNIT_CHARS} characters (limits: "
                        f"{LIMITS_PAGE}), found one of {len(cleaned):,}", where)
    if cleaned in ("", "1"):
        return _ONE
    if cleaned not in _PARSED:
        _PARSED[cleaned] = _from_table(cleaned) or _parse(cleaned, where)
    return _PARSED[cleaned]


def _from_table(cleaned: str) -> UnitInfo | None:
    from ._unit_table import TABLE

    if cleaned not in TABLE:
        return None
    dims, factor, offset, _ = TABLE[cleaned]
    if offset:
        kelvin = Unit.make({"[temperature]": Fraction(1)}, Fraction(1), "K")
        return UnitInfo(text=cleaned, unit=kelvin, factor=Fraction(1), offset=True)
    unit = Unit.make({k: Fraction(v) for k, v in dims}, Fraction(factor), cleaned)
    return UnitInfo(text=cleaned, unit=unit, factor=unit.factor)


_SIDE_BY_SIDE = re.compile(r"[^\s*/^(]\s+[^\s*/^)]")


def _refuse_side_by_side(cleaned: str, where: Location) -> None:
    """pint reads ``mass %`` as milliarcsecond·percent: two names side by side are refused."""
    if not _SIDE_BY_SIDE.search(cleaned):
        return
    if "%" in cleaned:
        hint = "'%' (or 'g/g', 'mg/g' for a mass fraction)"
    else:
        joined = re.sub(r"\s+", "*", cleaned)
        hint = f"'{joined}' for a product, or one unit name"
    raise UnitError(f"expected one unit, or units joined by '*' or '/', found '{cleaned}': two "
                    f"names side by side, which pint would read as their product; write "
                    f"{hint}", where)


def _parse(cleaned: str, where: Location) -> UnitInfo:
    _refuse_side_by_side(cleaned, where)
    try:
        return _parse_with_pint(cleaned, where)
    except UnitError:
        raise
    except OverflowError as exc:
        raise UnitError(f"expected a unit whose size in SI base units is a floating-point "
                        f"number, found '{cleaned}' (out of range)", where) from exc
    except Exception as exc:  # pint raises several unrelated types for bad strings
        raise UnitError(f"expected a unit that pint understands, found '{cleaned}' "
                        f"({type(exc).__name__})", where) from exc


def _parse_with_pint(cleaned: str, where: Location) -> UnitInfo:
    reg = registry()
    parsed = reg.Unit(cleaned)
    if any(not reg._units[name].is_multiplicative for name in parsed._units
           if name in reg._units):
        if str(parsed) == "degree_Celsius":
            return _from_table("degC")  # type: ignore[return-value]
        raise UnitError(f"expected a multiplicative unit or degC, found '{cleaned}' "
                        "(offset units other than degC are not supported; use K or degC)",
                        where)
    magnitude = float(reg.Quantity(1.0, parsed).to_base_units().magnitude)
    if not math.isfinite(magnitude) or magnitude == 0.0:
        raise UnitError(f"expected a unit whose size in SI base units is a floating-point "
                        f"number, found '{cleaned}' (out of range)", where)
    dims = {name: Fraction(power).limit_denominator(10 ** 6)
            for name, power in parsed.dimensionality.items()}
    unit = Unit.make(dims, Fraction(f"{magnitude:.15g}"), cleaned)
    return UnitInfo(text=cleaned, unit=unit, factor=unit.factor)
