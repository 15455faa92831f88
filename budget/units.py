"""Units of inputs and measurands, read by the general-purpose ``pint`` library.

Method: every quantity is computed in coherent SI units. An input written in ``mg``
enters the equations as ``1/1000000 · m`` kilograms, so the symbolic model stays in the
input's own unit and its sensitivity coefficients come out in *measurand unit per input
unit*, as a budget table shows them. A temperature in ``degC`` is the one offset unit
accepted: it may enter the model only as a difference of two such temperatures or as the
argument of a function that declares °C (``air_density``); everything else is checked by
dimension before any number is computed (GUM 4.1: the model must be dimensionally sound).
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache
from typing import Any

from .errors import Location, UnitError

__all__ = ["UnitInfo", "parse_unit", "registry", "DIMENSIONLESS"]


@lru_cache(maxsize=1)
def registry() -> Any:
    """The shared pint registry, created on first use (it takes a moment to build)."""
    import pint

    return pint.UnitRegistry(autoconvert_offset_to_baseunit=False)


@dataclass(frozen=True, slots=True)
class UnitInfo:
    """A parsed unit: what the user wrote, the pint unit, and its SI scale factor."""

    text: str
    unit: Any
    factor: Fraction
    offset: bool = False

    @property
    def dimensionality(self) -> Any:
        return self.unit.dimensionality

    @property
    def dimensionless(self) -> bool:
        return not self.offset and self.unit.dimensionless

    def describe(self) -> str:
        """The dimension in words for error messages."""
        if self.offset:
            return "temperature on the Celsius scale"
        return dimension_text(self.unit)


def dimension_text(unit: Any) -> str:
    dims = unit.dimensionality
    return "dimensionless" if not dims else str(dims)


def _round_factor(value: float) -> Fraction:
    """SI factor as an exact fraction; pint's float products are rounded to 15 digits."""
    return Fraction(f"{value:.15g}")


def parse_unit(text: Any, where: Location) -> UnitInfo:
    """Parse a unit string, or raise :class:`UnitError` naming where it was written."""
    if not isinstance(text, str):
        raise UnitError(f"expected a unit string such as \"mg\", found {text!r}", where)
    cleaned = text.strip()
    if cleaned in ("", "1"):
        return UnitInfo(text=cleaned or "1", unit=registry().dimensionless, factor=Fraction(1))
    return _parse(cleaned, where)


def _parse(cleaned: str, where: Location) -> UnitInfo:
    reg = registry()
    try:
        unit = reg.Unit(cleaned)
    except Exception as exc:  # pint raises several unrelated types for bad strings
        raise UnitError(f"expected a unit that pint understands, found '{cleaned}' "
                        f"({type(exc).__name__})", where) from exc
    if _has_offset_part(unit):
        return _offset_unit(cleaned, unit, where)
    magnitude = reg.Quantity(1.0, unit).to_base_units().magnitude
    return UnitInfo(text=cleaned, unit=unit, factor=_round_factor(float(magnitude)))


def _has_offset_part(unit: Any) -> bool:
    reg = registry()
    return any(not reg._units[name].is_multiplicative for name in unit._units
               if name in reg._units)


def _offset_unit(cleaned: str, unit: Any, where: Location) -> UnitInfo:
    if str(unit) == "degree_Celsius":
        return UnitInfo(text=cleaned, unit=registry().kelvin, factor=Fraction(1), offset=True)
    raise UnitError(f"expected a multiplicative unit or degC, found '{cleaned}' "
                    "(offset units other than degC are not supported; use K or degC)", where)
