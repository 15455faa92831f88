"""The one exception root of the package and the places an error points to.

Every failure a user can cause is a :class:`BudgetError`; the command line catches this
root only, so anything else that escapes is a bug in ``budget`` and shows as one.

::

    BudgetError
    ├── ModelSyntaxError (also ValueError)   TOML syntax, expression grammar, file encoding
    ├── UnknownNameError (also ValueError)   a name that is neither input nor definition
    ├── UnitError        (also ValueError)   unknown unit, dimension mismatch, offset misuse
    ├── InputError       (also ValueError)   missing/invalid keys and numbers, correlations
    ├── CampaignError    (also ValueError)   campaign files and their CSV data
    │   └── DataFileError                    a data table: encoding, separators, cells
    ├── NotFoundError    (also KeyError)     a lookup by a name the result does not have
    ├── PropagationError                     the model cannot be evaluated at the estimates
    └── SimulationError                      Monte Carlo cannot give a result

Suspicious but valid situations are not errors: they travel as plain strings in the
``warnings`` of each result and the command line prints them as ``warning:`` lines.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass
from typing import Iterable

__all__ = [
    "BudgetError", "ModelSyntaxError", "UnknownNameError", "UnitError", "InputError",
    "CampaignError", "DataFileError", "NotFoundError", "PropagationError", "SimulationError",
    "Location",
    "did_you_mean", "close_match",
]


@dataclass(frozen=True, slots=True, kw_only=True)
class Location:
    """Where in which file a problem is: ``file:line: [table] key``."""

    file: str = "<model>"
    table: str | None = None
    key: str | None = None
    line: int | None = None

    def __str__(self) -> str:
        head = self.file if self.line is None else f"{self.file}:{self.line}"
        parts = [head + ":"]
        if self.table:
            parts.append(f"[{self.table}]")
        if self.key:
            parts.append(f"{self.key}:")
        return " ".join(parts)


class BudgetError(Exception):
    """Root of every error a user's input can cause."""

    def __init__(self, message: str, location: Location | None = None) -> None:
        self.message = message
        self.location = location
        super().__init__(f"{location} {message}" if location else message)


class ModelSyntaxError(BudgetError, ValueError):
    """The file or an expression in it does not follow the grammar."""


class UnknownNameError(BudgetError, ValueError):
    """A name that the model does not define."""


class UnitError(BudgetError, ValueError):
    """A unit that cannot be parsed, or dimensions that do not agree."""


class InputError(BudgetError, ValueError):
    """A missing, misspelt or out-of-range key or value."""


class CampaignError(BudgetError, ValueError):
    """A campaign file or its data tables break the campaign contract."""


class DataFileError(CampaignError):
    """A data table (CSV or workbook) that cannot be read as declared."""


class ArgumentError(InputError, TypeError):
    """A Python call with an argument the function does not take (``trial=`` for
    ``trials=``), or too many positional ones."""


class NotFoundError(BudgetError, KeyError):
    """A lookup (``budget.measurand("w")``, ``model.input("x")``) by a name that is not there."""

    def __str__(self) -> str:  # KeyError would show the message in quotes
        return str(self.args[0]) if self.args else ""


class PropagationError(BudgetError):
    """The model cannot be evaluated or differentiated at the estimates."""


class SimulationError(BudgetError):
    """The Monte Carlo simulation cannot give a trustworthy result."""


def close_match(name: str, candidates: Iterable[str]) -> str | None:
    """The candidate closest to ``name`` (difflib ratio ≥ 0.6, or equal ignoring case)."""
    pool = sorted(candidates)
    folded = [c for c in pool if c.lower() == name.lower() and c != name]
    close = folded or difflib.get_close_matches(name, pool, n=1, cutoff=0.6)
    return close[0] if close else None


def did_you_mean(name: str, candidates: Iterable[str]) -> str:
    """A ``" (did you mean 'x'?)"`` suffix, or an empty string when nothing is close."""
    close = close_match(name, candidates)
    return f" (did you mean '{close}'?)" if close else ""
