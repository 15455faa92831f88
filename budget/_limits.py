"""Limits on what a model, a campaign or a command line may ask for, checked before work.

Every limit below is documented in ``docs/limits.md`` with what happens beyond it. A
request beyond a limit is refused with a :class:`BudgetError` that names the limit, before
any expensive work starts: no input can make ``budget`` run unbounded, exhaust memory or
end in a traceback. The helpers here are small and pure; the modules that read files,
expressions and settings call them.
"""

from __future__ import annotations

import math
import numbers
import re
import unicodedata
from typing import Any, Callable

from ._errors import InputError, Location

__all__ = ["MAX_FILE_BYTES", "MAX_DATA_BYTES", "MAX_EXPRESSION_CHARS", "MAX_NESTING",
           "MAX_NUMBER_DIGITS", "MAX_EXPONENT", "MAX_EXACT_DIGITS", "MAX_UNIT_CHARS",
           "MAX_TRIALS", "MAX_KEPT_VALUES", "MAX_SECOND_ORDER_INPUTS", "DIGITS", "PROBABILITY",
           "MIN_RELIABILITY", "MAX_SEED", "LIMITS_PAGE", "check_seed", "check_probability",
           "check_digits", "check_trials", "check_kept", "as_float", "terminal_text",
           "control_character", "shorten", "excerpt", "offset_in", "check_strings",
           "character_name", "parse_number"]

LIMITS_PAGE = "docs/limits.md"
MAX_FILE_BYTES = 16 * 2 ** 20  # a model or campaign file
MAX_DATA_BYTES = 64 * 2 ** 20  # a CSV data file of a campaign
MAX_EXPRESSION_CHARS = 1_000_000  # one expression string
MAX_NESTING = 100  # brackets, powers, calls and signs inside one another in an expression
MAX_NUMBER_DIGITS = 100  # digits of one number written in an expression
MAX_EXPONENT = 1000  # |exponent| of a power whose exponent is a number
MAX_EXACT_DIGITS = 1000  # digits of an exact number that a power of numbers gives
MAX_UNIT_CHARS = 200  # one unit string
# Monte Carlo trials of a run: beyond 10⁷ values a run is streamed, but it still keeps a
# little over 2·(1 − p) of its values for the exact intervals (about 1 byte per trial)
MAX_TRIALS = 250_000_000
MAX_KEPT_VALUES = 100_000_000  # values of a run that keeps all of them (8 bytes each)
MAX_SECOND_ORDER_INPUTS = 20  # inputs with an uncertainty for --second-order (N³ derivatives)
DIGITS = (1, 6)  # significant digits of a reported uncertainty
PROBABILITY = (1e-6, 1.0 - 1e-9)  # coverage probabilities and levels
MIN_RELIABILITY = 1e-100  # smallest reliability: ν = 1/(2 r²) stays a finite number
MAX_SEED = 2 ** 64 - 1  # random seeds are whole numbers in [0, 2**64 - 1]
MAX_METHOD_U = 1e150  # u of a method's result: its square enters the methods' covariance


def check_probability(value: Any, where: Location, what: str = "a coverage probability"
                      ) -> float:
    """A probability in the documented range, or an :class:`InputError` naming it."""
    low, high = PROBABILITY
    number = as_float(value)
    if number is None or not low <= number <= high:
        raise InputError(f"expected {what} in [{low:g}, 1 - {1 - high:.0e}] (limits: "
                         f"{LIMITS_PAGE}), found {_shown(value)}", where)
    return number


def check_digits(value: Any, where: Location) -> int:
    low, high = DIGITS
    if isinstance(value, bool) or not isinstance(value, int) or not low <= value <= high:
        raise InputError(f"expected a whole number of significant digits from {low} to "
                         f"{high}, found {_shown(value)}", where)
    return value


def check_seed(value: Any, where: Location | None = None) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or not 0 <= value <= MAX_SEED:
        raise InputError(f"expected a whole-number seed from 0 to 2**64 - 1, found "
                         f"{_shown(value)}", where)
    return value


def check_trials(trials: int, where: Location | None = None) -> int:
    if trials > MAX_TRIALS:
        raise InputError(f"expected at most {MAX_TRIALS:,} Monte Carlo trials (a run "
                         f"that long keeps about 1 byte per trial for its intervals; limits: "
                         f"{LIMITS_PAGE}; use the adaptive procedure to stop when the "
                         f"results are stable), found {_count(trials)}", where)
    return trials


def check_kept(trials: int, measurands: int, where: Location | None = None) -> None:
    """Refuse a run that keeps every value (8 bytes each) beyond ``MAX_KEPT_VALUES``."""
    if trials * measurands > MAX_KEPT_VALUES:
        raise InputError(f"expected at most {MAX_KEPT_VALUES:,} Monte Carlo values for a "
                         f"run that keeps every one of them (8 bytes each: a coverage "
                         f"probability of ½ or less, or a certification, which combines the "
                         f"values; limits: {LIMITS_PAGE}), found {_count(trials)} trials × "
                         f"{measurands} measurand{'s' if measurands > 1 else ''}", where)


_NUMBER = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")


def parse_number(text: str) -> float | None:
    """A number written in a data file as a finite float, or None. Stricter than
    ``float()``: no '_' digit separators (``9_9.9983``), no 'nan' or 'inf', at most
    MAX_NUMBER_DIGITS digits."""
    cleaned = text.strip()
    if not _NUMBER.fullmatch(cleaned) or len(cleaned) > MAX_NUMBER_DIGITS + 8:
        return None
    number = float(cleaned)
    return number if math.isfinite(number) else None


def as_float(value: Any) -> float | None:
    """A TOML or CSV number (or, from Python, a numpy scalar or a Fraction) as a finite
    float; None for anything else (bools, strings, Decimal, huge ints)."""
    if type(value) is float:  # most numbers: no abstract-class check (a tenth of an input)
        return value if math.isfinite(value) else None
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        return None
    try:
        number = float(value)
    except OverflowError:
        return None
    return number if math.isfinite(number) else None


def _count(value: int) -> str:
    digits = len(str(abs(value))) if abs(value) < 10 ** 4000 else math.inf
    if digits <= 4:
        return str(value)
    return f"{value:,}" if digits <= 24 else f"a whole number of {digits} digits"


def _shown(value: Any) -> str:
    if isinstance(value, int) and not isinstance(value, bool):
        return _count(value)
    return shorten(repr(value))


def excerpt(text: str, at: int | None = None, width: int = 80) -> str:
    """A source text quoted in a message: whole when at most ``width`` characters, else a
    window of ``width`` characters around position ``at`` (or, without one, the start and
    the end), each cut side marked '…' — a 10⁴-term equation is never quoted in full."""
    if len(text) <= width:
        return text
    if at is None:
        half = (width - 1) // 2
        return f"{text[:half].rstrip()} … {text[-half:].lstrip()}"
    start = min(max(0, at - width // 2), len(text) - width)
    end = start + width
    return ("…" if start > 0 else "") + text[start:end] + ("…" if end < len(text) else "")


def offset_in(text: str, line: int | None, column: int | None) -> int:
    """The character offset in ``text`` of a 1-based line and 0-based column (as in
    ``ast`` nodes and ``SyntaxError``)."""
    lines = text.split("\n")
    before = sum(len(s) + 1 for s in lines[:max(0, (line or 1) - 1)])
    return before + (column or 0)


def shorten(text: str, width: int = 80) -> str:
    """Text for a message: at most ``width`` characters, the rest replaced by '…'."""
    return text if len(text) <= width else text[:width - 1] + "…"


# Characters that must never reach a terminal raw: C0 and C1 controls, DEL, the line and
# paragraph separators and the bidirectional overrides (they reorder what is shown).
_UNSAFE = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029\u202a-\u202e\u2066-\u2069\u200e"
                     "\u200f\u061c]")


def control_character(text: str, allowed: str = "") -> int | None:
    """Position of the first character that could drive a terminal, or None."""
    for found in _UNSAFE.finditer(text):
        if found.group() not in allowed:
            return found.start()
    return None


def terminal_text(text: str, keep: str = "") -> str:
    """``text`` with every unsafe character escaped (``\\x1b``, ``\\u202e``) but ``keep``."""
    def escape(found: re.Match[str]) -> str:
        char = found.group()
        if char in keep:
            return char
        code = ord(char)
        return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"

    return _UNSAFE.sub(escape, text)


_CONTROLS = {0x00: "NULL", 0x07: "BELL", 0x08: "BACKSPACE", 0x09: "TAB",
             0x0A: "LINE FEED", 0x0D: "CARRIAGE RETURN", 0x1B: "ESCAPE", 0x7F: "DELETE",
             0x9B: "CONTROL SEQUENCE INTRODUCER"}


def character_name(char: str) -> str:
    """How a refused character is named in a message: U+001B ESCAPE."""
    code = ord(char)
    return f"U+{code:04X} {_CONTROLS.get(code) or unicodedata.name(char, 'CONTROL')}"


# free-text keys that may hold tabs and line breaks (and every [certificate] field)
_MULTILINE = ("description", "note")


_TEXTUAL = frozenset((str, dict, list))  # what TOML values may hold a string


def check_strings(document: dict[str, Any],
                  where: Callable[[str | None, str | None], Location]) -> None:
    """Refuse control characters in every key and string of a TOML document.

    A newline or an escape sequence in a name, title, unit or label could forge an
    ``error:`` line or drive the terminal; free-text ``description`` and ``note`` values
    may hold tabs and line breaks, nothing else.
    """
    stack: list[tuple[str, Any]] = [("", document)]
    safe: set[str] = set()  # keys and texts seen clean (every input's 'value', 'V')
    while stack:
        path, value = stack.pop()
        if isinstance(value, dict):
            for key, item in value.items():
                if key not in safe:
                    _refuse(str(key), "", where, f"{path}.{key}" if path else str(key),
                            str(key))
                    safe.add(key)
                if type(item) in _TEXTUAL:  # numbers, dates, booleans hold no text
                    stack.append((f"{path}.{key}" if path else str(key), item))
        elif isinstance(value, list):  # numbers (a matrix of 10⁶) need no look
            if not _TEXTUAL.isdisjoint(map(type, value)):
                stack.extend([(path, item) for item in value if type(item) in _TEXTUAL])
        elif isinstance(value, str) and value not in safe:  # a unit written 10⁴ times
            last = path.rsplit(".", 1)[-1]
            free = last in _MULTILINE or path.startswith("certificate.")
            _refuse(value, "\t\n\r" if free else "", where, path, last)
            if not free:  # clean of every control character: clean wherever it stands
                safe.add(value)


def _refuse(text: str, allowed: str, where: Callable[[str | None, str | None], Location],
            path: str, key: str) -> None:
    if _UNSAFE.search(text) is None:  # the usual case, in one scan
        return
    position = control_character(text, allowed)
    if position is None:
        return
    table = path.rsplit(".", 1)[0] if "." in path else None
    raise InputError(f"expected text without control characters, found "
                     f"{character_name(text[position])} at position {position + 1}",
                     where(table, terminal_text(key)))
