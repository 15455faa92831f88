"""Rounding for display only: numbers in, strings out (GUM 7.2.6).

Method: the uncertainty is rounded to ``digits`` significant digits (two by default) and
the estimate to the same decimal place (GUM 7.2.6: "the numerical values of the estimate
y and its standard uncertainty u_c(y) or expanded uncertainty U should not be given with
an excessive number of digits"). Rounding is half-up in decimal arithmetic, so 0.0125
shows as 0.013 and binary floating-point never turns 2.675 into 2.67. The JSON document
keeps every number unrounded; only tables and reports call this module.
"""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Decimal, localcontext

__all__ = ["decimal_exponent", "round_pair", "format_pair", "format_number",
           "format_dof", "format_percent", "format_statistic", "shown_share", "SHARE_FLOOR"]


def decimal_exponent(u: float, digits: int = 2) -> int:
    """The power of ten of the last shown digit when u has ``digits`` significant digits."""
    exponent = math.floor(math.log10(abs(u))) - (digits - 1)
    # a value such as 0.0999 rounds up to 0.10: one digit fewer after the point
    if Decimal(repr(abs(u))).quantize(Decimal(1).scaleb(exponent), ROUND_HALF_UP) \
            >= Decimal(10) ** (exponent + digits):
        exponent += 1
    return exponent


def round_pair(value: float, u: float, digits: int = 2) -> tuple[Decimal, Decimal]:
    """Value and uncertainty rounded to the uncertainty's last significant digit."""
    if not math.isfinite(u) or u <= 0.0 or not math.isfinite(value):
        return Decimal(repr(value)), Decimal(0)
    exponent = decimal_exponent(u, digits)
    quantum = Decimal(1).scaleb(exponent)
    # a double holds 17 significant digits: a value is never shown with more, however
    # small its uncertainty (y = 1 with u = 1e-200 is 1.0000000000000000, not 200 zeros)
    if value != 0.0:
        exponent = max(exponent, math.floor(math.log10(abs(value))) - 16)
    with localcontext() as context:  # room for a value far larger than its uncertainty
        context.prec = 800
        return (Decimal(repr(value)).quantize(Decimal(1).scaleb(exponent), ROUND_HALF_UP),
                Decimal(repr(u)).quantize(quantum, ROUND_HALF_UP))


def format_pair(value: float, u: float, digits: int = 2) -> tuple[str, str]:
    """``("99.9866", "0.0027")`` for the value and its uncertainty, as GUM 7.2.6 shows them."""
    if not math.isfinite(u) or u <= 0.0:
        return format_number(value, 10), "0"
    rounded_value, rounded_u = round_pair(value, u, digits)
    return _plain(rounded_value), _plain(rounded_u)


def _plain(number: Decimal) -> str:
    exponent = number.as_tuple().exponent
    if isinstance(exponent, int) and (exponent < -12 or number.adjusted() > 12):
        return f"{number:.{max(0, number.adjusted() - exponent)}E}"
    return f"{number:f}"


def format_number(x: float, significant: int = 4) -> str:
    """A number with ``significant`` digits, plain where readable, else with an exponent."""
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return "-"
    if math.isinf(x):
        return "∞" if x > 0 else "-∞"
    if x == 0:
        return "0"
    magnitude = math.floor(math.log10(abs(x)))
    if -4 <= magnitude < 7:
        decimals = max(0, significant - 1 - magnitude)
        return f"{x:.{decimals}f}"
    return f"{x:.{significant - 1}e}"


def format_dof(dof: float) -> str:
    """Degrees of freedom: ∞, or to one decimal (whole numbers without the decimal)."""
    if math.isinf(dof):
        return "∞"
    if dof >= 1000:
        return f"{dof:.3g}" if dof < 1e6 else "> 10⁶"
    return f"{dof:.0f}" if abs(dof - round(dof)) < 1e-9 else f"{dof:.1f}"


def format_statistic(x: float, spec: str) -> str:
    """A test statistic or p-value; 'not computable' when it is not defined (NaN)."""
    return "not computable" if math.isnan(x) else format(x, spec)


SHARE_FLOOR = 1e-12
"""Shares (in % of u_c²) smaller than this in magnitude are shown as 0: what is left of a
zero or cancelled contribution after floating-point rounding, not a contribution."""


def shown_share(share: float) -> float:
    """The share as displayed: 0 below :data:`SHARE_FLOOR` (JSON keeps the number)."""
    return 0.0 if abs(share) < SHARE_FLOOR else share


def format_percent(share: float) -> str:
    share = shown_share(share)
    if share == 0:
        return "0"
    if abs(share) < 0.1:
        return "< 0.1" if share > 0 else f"{share:.1g}"
    return f"{share:.1f}"
