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
from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = ["Component", "Grouping", "effective_dof", "grouping", "pair_indices"]

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
    # the stated correlation pairs as index arrays, and the group of each (-1 when r = 0)
    first: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.intp))
    second: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.intp))
    r: np.ndarray = field(default_factory=lambda: np.zeros(0))
    pair_group: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.intp))


Indexed = tuple[np.ndarray, np.ndarray, np.ndarray]


def pair_indices(model: Any) -> Indexed:
    """``model.correlations`` as arrays: first and second input index, r."""
    from ._correlations import indexed_pairs

    return indexed_pairs(model.correlations, [item.name for item in model.inputs])


def grouping(model: Any, indexed: Indexed | None = None) -> Grouping:
    """The Welch–Satterthwaite components of ``model``'s inputs (``indexed``: the
    correlation pairs as :func:`pair_indices` gives them, if already known)."""
    inputs = model.inputs
    index = {item.name: k for k, item in enumerate(inputs)}
    first, second, r = pair_indices(model) if indexed is None else indexed
    linked = r != 0.0
    sets = [[index[n] for n in s.inputs] for s in model.estimated_together]
    a = np.concatenate([first[linked], *(np.full(len(m) - 1, m[0]) for m in sets)])
    b = np.concatenate([second[linked], *(np.array(m[1:], dtype=np.intp) for m in sets)])
    labels = _components(len(inputs), a.astype(np.intp), b.astype(np.intp))
    counts = np.bincount(labels, minlength=len(inputs))
    singles = np.flatnonzero(counts[labels] == 1)
    roots = np.flatnonzero(counts > 1)  # the smallest member of each group, ascending
    order = np.argsort(labels, kind="stable")
    starts = np.searchsorted(labels[order], roots)
    declared = {frozenset(m): s.dof for m, s in zip(sets, model.estimated_together)}
    dofs = np.array([item.dof for item in inputs], dtype=float)
    groups = []
    for root, start in zip(roots.tolist(), starts.tolist()):
        members = order[start:start + int(counts[root])]
        key = frozenset(members.tolist())
        dof = declared[key] if key in declared else float(dofs[members].min())
        groups.append(Component(members=tuple(members.tolist()), dof=dof,
                                declared=key in declared))
    number = np.full(len(inputs), -1, dtype=np.intp)
    number[roots] = np.arange(roots.size)
    pair_group = np.where(linked, number[labels[first]], -1) if first.size else first
    return Grouping(singles=singles, groups=tuple(groups), first=first, second=second, r=r,
                    pair_group=pair_group)


def _components(n: int, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """The connected components of n nodes joined by the edges (a, b): the smallest node
    of each node's component. Roots are hooked onto smaller roots and paths compressed,
    in whole-array steps (no loop over edges, no recursion)."""
    labels = np.arange(n)
    while a.size:
        la, lb = labels[a], labels[b]
        differ = la != lb
        if not differ.any():
            break
        la, lb = la[differ], lb[differ]
        np.minimum.at(labels, np.maximum(la, lb), np.minimum(la, lb))
        while True:
            jumped = labels[labels]
            if np.array_equal(jumped, labels):
                break
            labels = jumped
    return labels


def _variances(found: Grouping, parts: np.ndarray) -> list[float]:
    """Σ_{i,j∈g} c_i c_j u_i u_j r_ij for every group (pairs not stated have r = 0)."""
    keep = found.pair_group >= 0
    cross = 2.0 * (parts[found.first[keep]] * parts[found.second[keep]]) * found.r[keep]
    owner = found.pair_group[keep]
    order = np.argsort(owner, kind="stable")
    cross, owner = cross[order], owner[order]
    bounds = np.searchsorted(owner, np.arange(len(found.groups) + 1))
    return [max(math.fsum([*(float(parts[i]) ** 2 for i in group.members),
                           *cross[bounds[g]:bounds[g + 1]].tolist()]), 0.0)
            for g, group in enumerate(found.groups)]


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
    for group, variance in zip(found.groups, _variances(found, parts)):
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
