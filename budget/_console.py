"""Text for a stream whatever its encoding: GUM symbols and bars fall back to ASCII.

A terminal or a redirected file on some systems cannot encode ν, δ, ζ, ∞, ≤ or the block
characters of the share bars (Windows consoles in cp1252, ``PYTHONIOENCODING=ascii``).
Every character the stream cannot encode is written in an ASCII spelling (``nu``,
``delta``, ``inf``, ``<=``, ``#``); anything without one becomes a ``\\u`` escape, so
nothing is lost and nothing raises.
"""

from __future__ import annotations

import codecs
from typing import Any

__all__ = ["ASCII_SPELLINGS", "for_stream", "encodable"]

ASCII_SPELLINGS = {
    "ν": "nu", "δ": "delta", "ζ": "zeta", "ρ": "rho", "σ": "sigma", "χ": "chi",
    "η": "eta", "β": "beta", "μ": "u", "µ": "u", "Δ": "Delta", "Σ": "Sum",
    "∞": "inf", "≤": "<=", "≥": ">=", "≠": "!=", "≈": "~", "±": "+/-", "−": "-",
    "–": "-", "—": "--", "·": "*", "×": "x", "√": "sqrt", "→": "->", "←": "<-",
    "…": "...", "°": "deg", "²": "^2", "³": "^3", "¹": "^1", "⁻": "^-", "₀": "0",
    "₁": "1", "₂": "2", "█": "#", "▌": "+", "▐": "+", "░": ".", "‘": "'", "’": "'",
    "“": '"', "”": '"', "✓": "ok", "✗": "x", "é": "e", "ö": "o", "ü": "u", "ä": "a",
}


def encodable(text: str, encoding: str | None) -> str:
    """``text`` with every character ``encoding`` cannot encode spelt in ASCII."""
    try:
        codecs.lookup(encoding or "utf-8")
        encoding = encoding or "utf-8"
    except LookupError:
        encoding = "ascii"
    try:
        text.encode(encoding)
        return text
    except UnicodeEncodeError:
        pass
    out = []
    for char in text:
        try:
            char.encode(encoding)
            out.append(char)
        except UnicodeEncodeError:
            spelt = ASCII_SPELLINGS.get(char)
            out.append(spelt if spelt is not None and _fits(spelt, encoding) else
                       char.encode("ascii", "backslashreplace").decode("ascii"))
    return "".join(out)


def _fits(text: str, encoding: str) -> bool:
    try:
        text.encode(encoding)
    except UnicodeEncodeError:
        return False
    return True


def for_stream(text: str, stream: Any) -> str:
    """``text`` as ``stream`` (a text stream) can write it."""
    return encodable(text, getattr(stream, "encoding", None))
