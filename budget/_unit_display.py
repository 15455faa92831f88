"""Units as a chemist writes them: ``degC`` → °C, ``kg/m^3`` → kg/m³, ``uA`` → µA.

The one place where a unit string of a model or campaign file becomes the symbol shown in
a report or on a terminal. Only the display changes: the file keeps what was written and
every computation uses the parsed unit. Terminals whose encoding cannot show a symbol get
the unit as written (``display_unit(text, encoding=...)``).
"""

from __future__ import annotations

import codecs
import re
import sys

__all__ = ["DIMENSIONLESS", "display_unit", "spaced_unit", "terminal_unit", "unit_ratio"]

DIMENSIONLESS = ("", "1")
"""Unit texts of a dimensionless quantity: displayed as nothing, as a chemist writes a
ratio or a count, in the terminal and the reports alike."""

_NAMES = {
    "degC": "°C", "degree_Celsius": "°C", "celsius": "°C", "degF": "°F", "deg": "°",
    "degree": "°", "percent": "%", "permille": "‰", "angstrom": "Å", "ohm": "Ω",
    "ohms": "Ω", "delta_degC": "°C",
}
_PREFIXES = {"k": "k", "M": "M", "G": "G", "m": "m", "u": "µ", "n": "n", "p": "p"}
# unit symbols that may follow the micro prefix written as 'u'
_MICRO_BASES = {"A", "V", "g", "L", "l", "m", "s", "mol", "S", "W", "F", "C", "J", "Pa",
                "K", "Hz", "N", "H", "T", "Wb", "Gy", "Sv", "kat", "M"}
_SUPERSCRIPT = str.maketrans("0123456789-+.", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻⁺·")
_TOKEN = re.compile(r"\s*(\*\*|\^|[*/()·+-]|[A-Za-z_%‰°µΩ]+|[0-9.]+)")


def _name(word: str) -> str:
    if word in _NAMES:
        return _NAMES[word]
    if word.endswith("ohm") and word[:-3] in _PREFIXES:
        return _PREFIXES[word[:-3]] + "Ω"
    if word.startswith("u") and word[1:] in _MICRO_BASES:
        return "µ" + word[1:]
    return word


def _exponent(tokens: list[str], i: int) -> tuple[str, int]:
    """The exponent after ``**`` or ``^`` at ``tokens[i]``, and the index after it."""
    if i < len(tokens) and tokens[i] == "(":
        close = tokens.index(")", i) if ")" in tokens[i:] else len(tokens)
        text = "".join(tokens[i + 1:close])
        i = close + 1
    else:
        sign = ""
        if i < len(tokens) and tokens[i] in "+-":
            sign, i = tokens[i], i + 1
        text, i = sign + (tokens[i] if i < len(tokens) else ""), i + 1
    if re.fullmatch(r"[+-]?\d+", text):
        return text.lstrip("+").translate(_SUPERSCRIPT), i
    return "^" + text, i


def _symbols(text: str) -> str:
    tokens = [m.group(1) for m in _TOKEN.finditer(text)]
    if "".join(tokens) != re.sub(r"\s+", "", text):
        return text  # something this display does not know: show it as written
    out: list[str] = []
    i = 0
    while i < len(tokens):
        token = tokens[i]
        if token in ("**", "^"):
            power, i = _exponent(tokens, i + 1)
            out.append(power)
            continue
        if token in ("*", "·"):
            out.append("·")
        elif token[0].isalpha() or token[0] in "%‰°µΩ_":
            if out and (out[-1][-1].isalnum() or out[-1][-1] in "%°Ω")\
                    and out[-1] not in ("/", "·", "("):
                out.append("·")  # 'kg m' written with a space
            out.append(_name(token))
        else:
            out.append(token)
        i += 1
    return "".join(out)


def display_unit(text: str, encoding: str | None = None) -> str:
    """The unit as symbols; with ``encoding``, as written when the symbols do not fit it."""
    stripped = text.strip()
    if stripped in DIMENSIONLESS:
        return ""
    shown = _symbols(stripped)
    if encoding is not None:
        try:
            codecs.lookup(encoding)
            shown.encode(encoding)
        except (LookupError, UnicodeEncodeError):
            return stripped
    return shown


def spaced_unit(shown: str) -> str:
    """A displayed unit to write after a number: ``" g"``, or nothing when dimensionless."""
    return f" {shown}" if shown else ""


def terminal_unit(text: str) -> str:
    """A unit as symbols (°C, kg/m³, Ω) when standard output can encode them, else as
    written; the one function through which the terminal shows units."""
    return display_unit(text, encoding=getattr(sys.stdout, "encoding", None) or "utf-8")


def unit_ratio(numerator: str, denominator: str) -> str:
    """The unit of a derivative, numerator unit per denominator unit, both as displayed:
    ``unit_ratio("%", "g")`` → ``%/g``; ``unit_ratio("%", "kg/m³")`` → ``%·m³/kg``."""
    if denominator in DIMENSIONLESS:
        return numerator
    if numerator == denominator:
        return ""
    simple_den = not any(c in denominator for c in "/·()")
    if numerator in DIMENSIONLESS:
        return f"1/{denominator}" if simple_den else f"1/({denominator})"
    top = f"({numerator})" if "/" in numerator else numerator
    if simple_den:
        return f"{top}/{denominator}"
    if denominator.count("/") == 1 and not any(c in denominator for c in "·()") \
            and "/" not in numerator:
        up, down = denominator.split("/")
        return f"{numerator}·{down}/{up}"
    return f"{top}/({denominator})"
