"""Effective degrees of freedom with inputs estimated together or correlated (GUM G.4).

Method: the Welch–Satterthwaite formula (GUM eq. G.2b) adds variance estimates that
are *independent*. Its components are therefore not the inputs but the independent
sources of variance estimates:

* an input that is correlated with no other is one component: v_i = (c_i u_i)², ν_i;
* a set of ``[[estimated_together]]`` inputs (one data set, one ν) is one component:
  v_S = Σ_{i,j∈S} c_i c_j u(x_i, x_j), with the set's common ν. For the prediction of a
  least-squares line at a new point this gives the line's ν, as it must (GUM H.3);
* correlated inputs that were not declared as one set form one component too (every
  group of inputs joined by a non-zero correlation): with infinite ν when all of them
  have infinite ν; otherwise no published rule applies without knowing the independent
  sources behind the correlation (R. Willink, Metrologia 44 (2007) 340, needs them), so
  the group counts with the *smallest* ν of its members and a warning says so. ν_eff is
  then never below the smallest ν of the inputs, whatever the signs of the correlations.

ν_eff = u_c⁴ / Σ_g v_g²/ν_g over the components with finite ν and v_g > 0; the rule
applied is stated in words (``dof_rule``) on every output.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = ["Component", "Grouping", "effective_dof", "grouping"]

WS = "Welch-Satterthwaite, GUM eq. (G.2b)"


@dataclass(frozen=True, slots=True, kw_only=True)
class Component:
    """Several inputs counted as one Welch–Satterthwaite component."""

    members: tuple[int, ...]
    dof: float
    declared: bool  # an [[estimated_together]] set (else: joined by correlations)


@dataclass(frozen=True, slots=True, kw_only=True)
class Grouping:
    singles: np.ndarray  # indices of inputs that are components on their own
    groups: tuple[Component, ...]


def grouping(model: Any) -> Grouping:
    """The Welch–Satterthwaite components of ``model``'s inputs."""
    inputs = model.inputs
    index = {item.name: k for k, item in enumerate(inputs)}
    parent = list(range(len(inputs)))

    def root(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    links = [(a, b) for a, b, r in model.correlations if r != 0.0]
    links += [(s.inputs[0], name) for s in model.estimated_together for name in s.inputs[1:]]
    for a, b in links:
        parent[root(index[a])] = root(index[b])
    members: dict[int, list[int]] = {}
    for i in range(len(inputs)):
        members.setdefault(root(i), []).append(i)
    declared = {frozenset(index[n] for n in s.inputs): s.dof for s in model.estimated_together}
    groups = []
    for group in (g for g in members.values() if len(g) > 1):
        key = frozenset(group)
        dof = declared[key] if key in declared else min(inputs[i].dof for i in group)
        groups.append(Component(members=tuple(group), dof=dof, declared=key in declared))
    singles = np.array(sorted(g[0] for g in members.values() if len(g) == 1), dtype=int)
    return Grouping(singles=singles, groups=tuple(groups))


def _variances(model: Any, found: Grouping, parts: np.ndarray) -> list[float]:
    """Σ_{i,j∈g} c_i c_j u_i u_j r_ij for every group (pairs not stated have r = 0)."""
    where = {i: g for g, group in enumerate(found.groups) for i in group.members}
    index = {item.name: k for k, item in enumerate(model.inputs)}
    terms: list[list[float]] = [[float(parts[i]) ** 2 for i in group.members]
                                for group in found.groups]
    for a, b, r in model.correlations:
        i, j = index[a], index[b]
        if r != 0.0:
            terms[where[i]].append(2.0 * float(parts[i] * parts[j]) * r)
    return [max(math.fsum(t), 0.0) for t in terms]


def effective_dof(model: Any, name: str, parts: np.ndarray, combined: float,
                  found: Grouping | None = None) -> tuple[float, str, tuple[str, ...]]:
    """ν_eff of one measurand (``parts`` = c_i·u_i, ``combined`` = u_c), the rule in
    words and the warnings the rule calls for."""
    found = grouping(model) if found is None else found
    dofs = np.array([model.inputs[i].dof for i in found.singles], dtype=float)
    single = np.abs(parts[found.singles]) if found.singles.size else np.zeros(0)
    finite = np.isfinite(dofs) & (single > 0)
    denominator = float(np.sum(single[finite] ** 4 / dofs[finite]))
    kinds: dict[str, list[tuple[str, str]]] = {"set": [], "infinite": [], "smallest": []}
    for group, variance in zip(found.groups, _variances(model, found, parts)):
        if variance <= 0.0:
            continue
        names = ", ".join(model.inputs[i].name for i in group.members)
        shown = "∞" if math.isinf(group.dof) else f"{group.dof:g}"
        kind = "set" if group.declared else "infinite" if math.isinf(group.dof) else \
            "smallest"
        kinds[kind].append((names, shown))
        if math.isfinite(group.dof):
            denominator += variance ** 2 / group.dof
    nu = combined ** 4 / denominator if combined > 0.0 and denominator > 0.0 else math.inf
    notes = [note for kind, found_groups in kinds.items()
             for note in _notes(kind, found_groups)]
    return nu, "; ".join([WS, *notes]), _warnings(name, kinds["smallest"])


_SHOWN = 3  # groups named one by one in the rule and the warning; the rest are counted
_NOTE = {"set": "inputs estimated together ({names}) count as one component with their "
                "common ν = {dof}",
         "infinite": "the correlated inputs ({names}) count as one component with infinite "
                     "degrees of freedom",
         "smallest": "the correlated inputs ({names}) count as one component with their "
                     "smallest ν = {dof}"}


def _notes(kind: str, groups: list[tuple[str, str]]) -> list[str]:
    notes = [_NOTE[kind].format(names=names, dof=dof) for names, dof in groups[:_SHOWN]]
    if len(groups) > _SHOWN:
        notes.append(f"{len(groups) - _SHOWN} more such groups count the same way")
    return notes


def _warnings(name: str, groups: list[tuple[str, str]]) -> tuple[str, ...]:
    if not groups:
        return ()
    if len(groups) == 1:
        names, dof = groups[0]
        return (f"'{name}': inputs {names} are correlated and have finite degrees of "
                "freedom but are not declared [[estimated_together]]; Welch-Satterthwaite "
                "has no rule for them (Willink 2007 needs the independent sources of the "
                f"correlation), so they count as one component with ν = {dof}, their "
                "smallest; declare them estimated together if they come from one data set",)
    listed = "; ".join(names for names, _ in groups[:_SHOWN])
    more = f" and {len(groups) - _SHOWN} more groups" if len(groups) > _SHOWN else ""
    return (f"'{name}': {len(groups)} groups of correlated inputs with finite degrees of "
            f"freedom are not declared [[estimated_together]] ({listed}{more}); "
            "Welch-Satterthwaite has no rule for them (Willink 2007 needs the independent "
            "sources of the correlation), so each counts as one component with its "
            "smallest ν; declare them estimated together if they come from one data set",)
