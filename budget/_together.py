"""Inputs estimated together: ``[[estimated_together]]`` sets (one source of ν).

Method: estimates taken from one data set (the intercept and slope of one least-squares
line, several corrections from one regression) share one estimate of variance and so one
number of degrees of freedom ν. Their variance estimates are not independent, which is
what the Welch–Satterthwaite formula (GUM G.2b) assumes; the set is therefore one
component of it, with the set's common ν (``dof.py``). Monte Carlo draws the set as one
multivariate t with ν degrees of freedom (JCGM 101 6.4.9 for one input, JCGM 102 6.5 for
several), or as one multivariate Gaussian (JCGM 101 6.4.8) when ν is infinite.

A set names at least two inputs, each input belongs to one set at most, every member is
stated with a normal or t distribution (``u``, ``expanded`` or ``observations``) and
every member states the same ν; anything else is refused with its location.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

from ._errors import InputError, Location
from ._tomlkeys import check_input_names, check_keys

__all__ = ["KEY", "Together", "read"]

KEY = "estimated_together"
_KEYS = ("inputs", "note")
_DRAWN_JOINTLY = ("normal", "student_t")


@dataclass(frozen=True, slots=True, kw_only=True)
class Together:
    """A set of inputs estimated together from one data set, with their common ν."""

    inputs: tuple[str, ...]
    dof: float
    note: str = ""


def read(entries: Any, inputs: Sequence[Any],
         where: Callable[..., Location]) -> tuple[Together, ...]:
    """Checked sets from the ``[[estimated_together]]`` tables (``inputs``: Input values)."""
    if not isinstance(entries, list):
        raise InputError(f"expected [[{KEY}]] tables, found a single value",
                         where(None, KEY))
    by_name = {item.name: item for item in inputs}
    seen: dict[str, int] = {}
    sets = []
    for index, entry in enumerate(entries):
        here = _pointer(where, index)
        names = _names(entry, list(by_name), here, index)
        for name in names:
            if name in seen:
                raise InputError(f"expected each input in one set at most, found '{name}' "
                                 f"in sets {seen[name] + 1} and {index + 1}", here("inputs"))
            seen[name] = index
        members = [by_name[name] for name in names]
        _check_shapes(members, here, index)
        sets.append(Together(inputs=tuple(names), dof=_common_dof(members, here, index),
                             note=str(entry.get("note", ""))))
    return tuple(sets)


def _pointer(where: Callable[..., Location], index: int) -> Callable[..., Location]:
    def here(key: str | None = None) -> Location:
        return where(KEY, key, index)
    return here


def _names(entry: Any, names: list[str], here: Callable[..., Location],
           index: int) -> list[str]:
    if not isinstance(entry, dict):
        raise InputError(f"expected a table in set {index + 1}, found {entry!r}", here())
    check_keys(entry, _KEYS, here, within=f"in set {index + 1}")
    listed = entry.get("inputs")
    if (not isinstance(listed, list) or len(listed) < 2
            or not all(isinstance(n, str) for n in listed)):
        raise InputError(f"expected inputs = [\"name\", \"name\", …] (at least two) in set "
                         f"{index + 1}, found {listed!r}", here("inputs" if listed else None))
    check_input_names(listed, names, f"in set {index + 1}", here("inputs"))
    if "note" in entry and not isinstance(entry["note"], str):
        raise InputError(f"expected a string, found {entry['note']!r}", here("note"))
    return list(listed)


def _check_shapes(members: list[Any], here: Callable[..., Location], index: int) -> None:
    for item in members:
        if item.standard_uncertainty <= 0 or item.distribution.name not in _DRAWN_JOINTLY:
            raise InputError(
                f"expected inputs stated with a normal or t distribution (u, expanded or "
                f"observations) in set {index + 1}, found '{item.name}' "
                f"({item.distribution.name})", here("inputs"))


def _common_dof(members: list[Any], here: Callable[..., Location], index: int) -> float:
    dofs = {item.dof for item in members}
    if len(dofs) > 1:
        stated = ", ".join(f"{item.name} ν = {_shown(item.dof)}" for item in members)
        raise InputError(f"expected one common ν for the inputs of set {index + 1} (they "
                         f"come from one data set), found {stated}", here("inputs"))
    return float(members[0].dof)


def _shown(dof: float) -> str:
    return "∞" if math.isinf(dof) else f"{dof:g}"
