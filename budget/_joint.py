"""Several models evaluated as one: shared inputs, one joint Jacobian, one Monte Carlo.

Method: the models are merged into one :class:`~budget._model.Model` whose inputs are the
union of the members' inputs, each renamed ``"<member>:<input>"``, except the inputs
declared shared: the same physical quantity (one atomic-weight table, one balance
calibration) stated in several models becomes ONE input. Each member's measurands keep
their expressions, with their symbols renamed. Then

* the GUM output covariance of the merged model, U_y = J U_x Jᵀ (JCGM 102 6.2.1.3), is
  the covariance of the members' results: a shared input x_s adds
  c_{1,s} c_{2,s} u²(x_s) to cov(y_1, y_2), so u²(y_1 − y_2) = u_1² + u_2² − 2 u_12;
* one Monte Carlo run of the merged model (JCGM 101) draws a shared input once per trial
  for every member, so the joint samples carry the same correlation.

A shared input must mean the same thing in every member that names it: the same
dimension, and the same estimate, standard uncertainty and distribution once converted to
the first member's unit; anything else is refused. The merged input keeps the first
member's statement; other members' symbols are replaced by the shared symbol times the
ratio of the units' factors, so a molar mass in g/mol and one in kg/mol can be shared.

This module is a plain function over models; certification uses it for several methods,
and any chain of models that needs their joint covariance can use it too.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from fractions import Fraction
from collections.abc import Sequence
from typing import Any

from . import _algebra as alg
from ._errors import InputError, Location, NotFoundError, did_you_mean
from ._limits import shorten
from ._model import Input, Measurand, Model
from ._together import Together
from ._units import parse_unit
from ._arguments import keywords_checked

__all__ = ["Member", "Joint", "join", "joint_name"]


@dataclass(frozen=True, slots=True, kw_only=True)
class Member:
    """One model of a joint evaluation, under its own name (no ':' in it)."""

    name: str
    model: Model


@dataclass(frozen=True, slots=True, kw_only=True)
class Joint:
    """The merged model and where each member's inputs and measurands went."""

    model: Model
    inputs: tuple[tuple[tuple[str, str], str], ...]      # ((member, input), joint name)
    measurands: tuple[tuple[tuple[str, str], str], ...]  # ((member, measurand), joint name)
    shared: tuple[tuple[str, tuple[tuple[str, str], ...]], ...]

    def input_name(self, member: str, name: str) -> str:
        """The joint model's name of ``member``'s input ``name`` (a ``KeyError`` listing
        the pairs when there is none)."""
        return _placed(self.inputs, member, name, "input")

    def measurand_index(self, member: str, name: str) -> int:
        joint = _placed(self.measurands, member, name, "measurand")
        return [m.name for m in self.model.measurands].index(joint)


def _placed(pairs: tuple[tuple[tuple[str, str], str], ...], member: str, name: str,
            what: str) -> str:
    found = dict(pairs).get((member, name))
    if found is None:
        known = [f"{m}:{n}" for (m, n), _ in pairs]
        raise NotFoundError(f"no {what} {shorten(repr(name))} of member "
                            f"{shorten(repr(member))}"
                            f"{did_you_mean(f'{member}:{name}', known)}; expected one of "
                            f"{', '.join(known)}")
    return found


def joint_name(member: str, name: str) -> str:
    return f"{member}:{name}"


@keywords_checked
def join(members: Sequence[Member],
         shared: Sequence[tuple[str, Sequence[tuple[str, str]]]] = (), *,
         title: str = "", where: Location | None = None) -> Joint:
    """Merge ``members``; ``shared`` lists (name, [(member, input), …]) to make one input."""
    where = where or Location(file="<joint>")
    _check_members(members, shared, where)
    by_name = {m.name: m for m in members}
    if len(by_name) != len(members):
        raise InputError("expected distinct member names, found a repeated one", where)
    rename: dict[tuple[str, str], str] = {}
    factor: dict[tuple[str, str], Fraction] = {}
    merged: dict[str, Input] = {}
    for name, uses in shared:
        first = _shared_input(name, uses, by_name, where)
        merged[name] = replace(first, name=name)
        for member, input_name in uses:
            if (member, input_name) in rename:
                raise InputError(f"expected each input in one shared set, found "
                                 f"'{member}:{input_name}' twice", where)
            rename[(member, input_name)] = name
            factor[(member, input_name)] = _ratio(first, by_name[member].model.input(
                input_name), where)
    for one in members:
        for item in one.model.inputs:
            key = (one.name, item.name)
            if key not in rename:
                rename[key] = joint_name(*key)
                merged[rename[key]] = replace(item, name=rename[key])
    return _assemble(members, merged, rename, factor, shared, title, where)


def _check_members(members: Any, shared: Any, where: Location) -> None:
    """At least one ``Member`` whose model is a ``Model`` and whose name has no ':'; each
    shared set a (name, [(member, input), …]) pair of strings."""
    if isinstance(members, (str, bytes)) or not isinstance(members, Sequence) or not members:
        raise InputError(f"expected members as a list of at least one budget.Member, found "
                         f"{shorten(repr(members))}", where)
    for member in members:
        if not isinstance(member, Member):
            raise InputError(f"expected each member as budget.Member(name=…, model=…), "
                             f"found {type(member).__name__} {shorten(repr(member))}", where)
        if not isinstance(member.name, str) or not member.name or ":" in member.name:
            raise InputError(f"expected a member name without ':', found "
                             f"{shorten(repr(member.name))}", where)
        if not isinstance(member.model, Model):
            raise InputError(f"member '{member.name}': expected a budget.Model "
                             f"(budget.load_model(path) reads one), found "
                             f"{type(member.model).__name__} {shorten(repr(member.model))}",
                             where)
    for entry in shared:
        if not (isinstance(entry, (tuple, list)) and len(entry) == 2
                and isinstance(entry[0], str) and isinstance(entry[1], (tuple, list))
                and all(isinstance(use, (tuple, list)) and len(use) == 2
                        and all(isinstance(part, str) for part in use) for use in entry[1])):
            raise InputError(f"expected each shared set as (name, [(member, input), …]), "
                             f"found {shorten(repr(entry))}", where)


def _assemble(members: Sequence[Member], merged: dict[str, Input],
              rename: dict[tuple[str, str], str], factor: dict[tuple[str, str], Fraction],
              shared: Sequence[tuple[str, Sequence[tuple[str, str]]]], title: str,
              where: Location) -> Joint:
    measurands: list[Measurand] = []
    placed: list[tuple[tuple[str, str], str]] = []
    correlations: list[tuple[str, str, float]] = []
    sets: list[Together] = []
    for member in members:
        swap = {item.name: _scaled(rename[(member.name, item.name)],
                                   factor.get((member.name, item.name), Fraction(1)))
                for item in member.model.inputs}
        for m in member.model.measurands:
            name = joint_name(member.name, m.name)
            measurands.append(replace(m, name=name, graph=alg.substitute(m.graph, swap),
                                      opaque_graph=alg.substitute(m.opaque_graph, swap)))
            placed.append(((member.name, m.name), name))
        correlations.extend((rename[(member.name, a)], rename[(member.name, b)], r)
                            for a, b, r in member.model.correlations)
        sets.extend(replace(s, inputs=tuple(rename[(member.name, n)] for n in s.inputs))
                    for s in member.model.estimated_together)
    first = members[0].model
    names = ", ".join(m.name for m in members)
    model = Model(title=title or "joint evaluation of " + names, description="",
                  inputs=tuple(merged.values()), definitions=(),
                  measurands=tuple(measurands), correlations=_distinct(correlations, where),
                  estimated_together=_sets(sets, where), settings=first.settings,
                  source="joint evaluation of " + ", ".join(m.model.source for m in members))
    return Joint(model=model, inputs=tuple(rename.items()), measurands=tuple(placed),
                 shared=tuple((n, tuple(u)) for n, u in shared))


def _sets(sets: list[Together], where: Location) -> tuple[Together, ...]:
    """The members' ``[[estimated_together]]`` sets, renamed; one set per input."""
    made: dict[frozenset[str], Together] = {}
    owner: dict[str, frozenset[str]] = {}
    for item in sets:
        key = frozenset(item.inputs)
        for name in item.inputs:
            if owner.setdefault(name, key) != key:
                raise InputError(f"expected a shared input in one set of inputs estimated "
                                 f"together, found '{name}' in two different sets", where)
        made.setdefault(key, item)
    return tuple(made.values())


def _distinct(pairs: list[tuple[str, str, float]], where: Location
              ) -> tuple[tuple[str, str, float], ...]:
    seen: dict[frozenset[str], tuple[str, str, float]] = {}
    for a, b, r in pairs:
        key = frozenset((a, b))
        if key in seen and not math.isclose(seen[key][2], r, rel_tol=1e-12):
            raise InputError(f"expected one correlation between the shared inputs '{a}' and "
                             f"'{b}', found {seen[key][2]:g} and {r:g}", where)
        seen[key] = (a, b, r)
    return tuple(seen.values())


def _shared_input(name: str, uses: Sequence[tuple[str, str]], by_name: dict[str, Member],
                  where: Location) -> Input:
    if not name.isidentifier():
        raise InputError(f"expected a shared name of letters, digits and '_', found "
                         f"'{name}'", where)
    if len(uses) < 2:
        raise InputError(f"shared input '{name}': expected at least two members' inputs, "
                         f"found {len(uses)}", where)
    found: list[Input] = []
    for member, input_name in uses:
        if member not in by_name:
            raise InputError(f"shared input '{name}': unknown member '{member}'"
                             f"{did_you_mean(member, by_name)}", where)
        model = by_name[member].model
        names = [i.name for i in model.inputs]
        if input_name not in names:
            raise InputError(f"shared input '{name}': expected an input of {model.source}, "
                             f"found '{input_name}'{did_you_mean(input_name, names)}", where)
        found.append(model.input(input_name))
    for (member, _), item in zip(uses[1:], found[1:]):
        _same(name, found[0], item, member, where)
    return found[0]


def _same(name: str, first: Input, other: Input, member: str, where: Location) -> None:
    scale = float(_ratio(first, other, where))  # other's value = scale · first's value
    pairs = ((first.estimate, other.estimate / scale),
             (first.standard_uncertainty, other.standard_uncertainty / scale))
    same = all(math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-300) for a, b in pairs)
    if not same or first.distribution.name != other.distribution.name:
        raise InputError(
            f"shared input '{name}': expected the same estimate, standard uncertainty and "
            f"distribution in every model, found {first.estimate:.10g} ± "
            f"{first.standard_uncertainty:.3g} {first.unit} ({first.distribution.name}) and "
            f"{other.estimate:.10g} ± {other.standard_uncertainty:.3g} {other.unit} "
            f"({other.distribution.name}) in '{member}'", where)


def _scaled(name: str, factor: Fraction) -> alg.Node:
    symbol = alg.symbol(name)
    return symbol if factor == 1 else symbol * alg.number(factor)


def _ratio(first: Input, other: Input, where: Location) -> Fraction:
    """The factor s with other's symbol = s · first's symbol (same quantity, two units)."""
    a, b = parse_unit(first.unit, where), parse_unit(other.unit, where)
    if a.dimensionality != b.dimensionality or a.offset or b.offset:
        raise InputError(f"shared input: expected one dimension, found '{first.name}' in "
                         f"'{first.unit}' and '{other.name}' in '{other.unit}'", where)
    return Fraction(a.factor / b.factor)
