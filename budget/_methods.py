"""Campaign keys for several characterization methods → a checked :class:`MethodsPlan`.

Read from a campaign file beside ``[characterization]`` (the first method):

* ``[[method]]``: a further method with its own ``model``, ``measurand``, ``runs`` and
  ``scatter_covers`` (as ``[characterization]``), or a purity by mass balance: ``kind =
  "mass_balance"`` with ``[[method.impurity]]`` tables, each an impurity's mass fraction
  from its own model (with or without runs) or a stated ``value`` with ``u`` (or
  ``expanded`` and ``k``) in the campaign's unit;
* ``[shared]``: ``NAME = ["<method>.<input>", …]`` declares inputs that are one physical
  quantity (``"<method>/<impurity>.<input>"`` for an impurity model);
* ``[combination]``: ``rule`` (weighted, mean, dersimonian-laird, paule-mandel) and the
  ``methods`` combined (default: all). Without it the first method gives the certified
  value and the others are only compared with it.

Errors name the campaign file, the table and key, what was expected and what was found.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

from ._campaign import _Reader
from ._combination import RULES
from ._errors import Location, did_you_mean
from ._model import Model, load_model

__all__ = ["ModelMethod", "Impurity", "MassBalance", "MethodsPlan", "read_methods",
           "PRIMARY"]

PRIMARY = "characterization"
_METHOD_KEYS = ("label", "kind", "model", "measurand", "runs", "scatter_covers", "impurity",
                "label_columns")
_IMPURITY_KEYS = ("label", "model", "measurand", "runs", "scatter_covers", "value", "u",
                  "expanded", "k", "dof", "label_columns")
_COMBINATION_KEYS = ("rule", "methods")


@dataclass(frozen=True, slots=True, kw_only=True)
class ModelMethod:
    """A result from a model: its runs' mean (with runs) or the model at its estimates."""

    label: str
    model: Model
    measurand: str
    runs: Any  # studydata.Runs or None
    run_inputs: tuple[str, ...]
    scatter_covers: tuple[str, ...]


@dataclass(frozen=True, slots=True, kw_only=True)
class Impurity:
    """One impurity of a mass balance: from a model, or a stated value (campaign unit)."""

    label: str
    source: ModelMethod | None
    estimate: float = 0.0
    standard_uncertainty: float = 0.0
    dof: float = float("inf")


@dataclass(frozen=True, slots=True, kw_only=True)
class MassBalance:
    """w = 1 − Σ impurities (1 expressed in the campaign's unit)."""

    label: str
    impurities: tuple[Impurity, ...]
    where: Location | None = None  # the [[method]] table, for a sum of impurities over 1


@dataclass(frozen=True, slots=True, kw_only=True)
class MethodsPlan:
    """The further methods, the shared inputs and the combination rule of a campaign."""

    primary_label: str
    methods: tuple[ModelMethod | MassBalance, ...]
    shared: tuple[tuple[str, tuple[tuple[str, str], ...]], ...]
    rule: str | None
    combined: tuple[str, ...]

    @property
    def labels(self) -> tuple[str, ...]:
        return (self.primary_label, *(m.label for m in self.methods))


def read_methods(r: _Reader, primary_label: str) -> MethodsPlan | None:
    """The plan, or None when the campaign declares no further method."""
    entries = r.doc.get("method", [])
    if not isinstance(entries, list):
        raise r.fail("expected [[method]] tables, found a single value", None, "method")
    counter = [0]
    methods = tuple(_method(r, entry, nth, counter) for nth, entry in enumerate(entries))
    labels = [primary_label, *(m.label for m in methods)]
    repeated = [label for label in labels if labels.count(label) > 1]
    if repeated:
        raise r.fail(f"expected distinct method labels, found '{repeated[0]}' twice",
                     "method", "label")
    if not methods:
        for key in ("shared", "combination"):
            if key in r.doc:
                raise r.fail("expected at least one [[method]] beside [characterization], "
                             "found none", None, key)
        return None
    rule, combined = _combination(r, labels)
    plan = MethodsPlan(primary_label=primary_label, methods=methods, shared=(), rule=rule,
                       combined=combined)
    return MethodsPlan(primary_label=primary_label, methods=methods,
                       shared=_shared(r, plan), rule=rule, combined=combined)


def _method(r: _Reader, entry: Any, nth: int, counter: list[int]) -> ModelMethod | MassBalance:
    if not isinstance(entry, dict):
        raise r.fail(f"expected a table, found {entry!r}", "method", None, nth)
    r.known(entry, "method", _METHOD_KEYS, nth)
    label = r.text(entry, "label", "method", nth)
    kind = entry.get("kind", "model")
    if kind not in ("model", "mass_balance"):
        raise r.fail(f"expected 'model' or 'mass_balance', found {kind!r}", "method", "kind",
                     nth)
    if kind == "model":
        if "impurity" in entry:
            raise r.fail("expected [[method.impurity]] only with kind = \"mass_balance\"",
                         "method", "kind", nth)
        return _model_method(r, entry, label, "method", nth, runs_required=True)
    for key in ("model", "measurand", "runs", "scatter_covers"):
        if key in entry:
            raise r.fail(f"expected no '{key}' in a mass balance (its impurities have "
                         "models), found one", "method", key, nth)
    items = entry.get("impurity", [])
    if not isinstance(items, list) or not items:
        raise r.fail("expected at least one [[method.impurity]] table, found none", "method",
                     "kind", nth)
    impurities: list[Impurity] = []
    for item in items:
        impurity = _impurity(r, item, label, counter[0])
        if impurity.label in [i.label for i in impurities]:
            raise r.fail(f"expected distinct impurity labels, found '{impurity.label}' twice",
                         "method.impurity", "label", counter[0])
        impurities.append(impurity)
        counter[0] += 1
    return MassBalance(label=label, impurities=tuple(impurities),
                       where=replace(r.where("method", None, nth), key="impurity"))


def _impurity(r: _Reader, item: Any, method: str, nth: int) -> Impurity:
    table = "method.impurity"
    if not isinstance(item, dict):
        raise r.fail(f"expected a table, found {item!r}", table, None, nth)
    r.known(item, table, _IMPURITY_KEYS, nth)
    label = r.text(item, "label", table, nth)
    if "model" in item:
        for key in ("value", "u", "expanded", "k", "dof"):
            if key in item:
                raise r.fail(f"expected either 'model' or a stated value, found '{key}' "
                             "beside 'model'", table, key, nth)
        source = _model_method(r, item, f"{method}/{label}", table, nth, runs_required=False)
        return Impurity(label=label, source=source)
    for key in ("measurand", "runs", "scatter_covers"):
        if key in item:
            raise r.fail(f"expected '{key}' only with a 'model', found it with a stated value",
                         table, key, nth)
    value = r.number(item, "value", table, nth=nth)
    if ("u" in item) == ("expanded" in item):
        raise r.fail("expected either 'u' or 'expanded' with 'k', found "
                     + ("both" if "u" in item else "neither"), table, None, nth)
    if "u" in item:
        u = r.number(item, "u", table, positive=True, nth=nth)
    else:
        u = (r.number(item, "expanded", table, positive=True, nth=nth)
             / r.number(item, "k", table, positive=True, nth=nth))
    whole = _whole(r)
    if whole is not None and u > whole[0]:  # u² would not even be a finite number at 1e300
        raise r.fail(f"expected a standard uncertainty of at most the whole sample, "
                     f"{whole[0]:g} {whole[1]}, found {u:g} {whole[1]}", table,
                     "u" if "u" in item else "expanded", nth)
    dof = r.number(item, "dof", table, positive=True, nth=nth) if "dof" in item \
        else float("inf")
    return Impurity(label=label, source=None, estimate=value, standard_uncertainty=u, dof=dof)


def _whole(r: _Reader) -> tuple[float, str] | None:
    """1 (the whole sample) in the campaign's unit, when that unit is a plain ratio."""
    from ._errors import BudgetError
    from ._units import parse_unit

    text = r.doc.get("unit")
    if not isinstance(text, str):
        return None
    try:
        unit = parse_unit(text, r.where(None, "unit"))
    except BudgetError:  # reported where the campaign's unit is checked
        return None
    if unit.unit.dims or unit.offset:
        return None
    return 1.0 / float(unit.factor), text


def _model_method(r: _Reader, entry: dict[str, Any], label: str, table: str, nth: int, *,
                  runs_required: bool) -> ModelMethod:
    model = load_model(_file(r, entry, "model", table, nth),
                       register=r.register)
    measurand = r.text(entry, "measurand", table, nth)
    names = [m.name for m in model.measurands]
    if measurand not in names:
        raise r.fail(f"expected a measurand of {model.source} ({', '.join(names)}), found "
                     f"'{measurand}'{did_you_mean(measurand, names)}", table, "measurand", nth)
    runs: Any = None
    run_inputs: tuple[str, ...] = ()
    if runs_required or "runs" in entry:
        runs, run_inputs = _runs(r, entry, model, table, nth)
    covers = entry.get("scatter_covers", [])
    inputs = [i.name for i in model.inputs]
    if not isinstance(covers, list) or not all(isinstance(c, str) for c in covers):
        raise r.fail(f"expected a list of input names, found {covers!r}", table,
                     "scatter_covers", nth)
    for name in covers:
        if name not in inputs:
            raise r.fail(f"unknown input '{name}'{did_you_mean(name, inputs)}", table,
                         "scatter_covers", nth)
    if covers and runs is None:
        raise r.fail("expected 'runs' with 'scatter_covers' (only the scatter of runs can "
                     "cover an uncertainty), found none", table, "scatter_covers", nth)
    return ModelMethod(label=label, model=model, measurand=measurand, runs=runs,
                       run_inputs=run_inputs, scatter_covers=tuple(covers))


def _file(r: _Reader, entry: dict[str, Any], key: str, table: str, nth: int) -> Path:
    relative = r.text(entry, key, table, nth)
    path = r.confined(relative, table, key, nth)
    if not path.is_file():
        raise r.fail(f"expected a file '{relative}' beside the campaign file, found none",
                     table, key, nth)
    import hashlib

    try:
        digest = hashlib.sha256(path.read_bytes()).hexdigest()
    except OSError as exc:
        raise r.fail(f"expected a readable file '{relative}', found {exc.strerror}", table,
                     key, nth) from exc
    r.files.append((f"{table}.{key}", str(path), digest))
    return path


def _runs(r: _Reader, entry: dict[str, Any], model: Model, table: str, nth: int
          ) -> tuple[Any, tuple[str, ...]]:
    from ._campaign import label_columns, read_runs_file
    from ._datafiles import FileFormat

    path = _file(r, entry, "runs", table, nth)
    runs = read_runs_file(r, path, FileFormat(), model, table, nth,
                          label_columns(r, entry, table, nth))
    return runs, runs.names


def _combination(r: _Reader, labels: list[str]) -> tuple[str | None, tuple[str, ...]]:
    data = r.doc.get("combination")
    if data is None:
        return None, ()
    if not isinstance(data, dict):
        raise r.fail(f"expected a table [combination], found {data!r}", None, "combination")
    r.known(data, "combination", _COMBINATION_KEYS)
    rule = r.text(data, "rule", "combination")
    if rule not in RULES:
        raise r.fail(f"expected one of {', '.join(RULES)}, found '{rule}'"
                     f"{did_you_mean(rule, RULES)}", "combination", "rule")
    chosen = r.names(data.get("methods", labels), labels, "combination", "methods",
                     ("method", "method labels"))
    if len(set(chosen)) < 2:
        raise r.fail(f"expected at least 2 distinct methods to combine, found "
                     f"{len(set(chosen))}", "combination", "methods")
    return rule, tuple(dict.fromkeys(chosen))


def _shared(r: _Reader, plan: MethodsPlan) -> tuple[tuple[str, tuple[tuple[str, str], ...]],
                                                     ...]:
    data = r.doc.get("shared", {})
    if not isinstance(data, dict):
        raise r.fail(f"expected a table [shared], found {data!r}", None, "shared")
    members = _members(plan)
    made = []
    for name, refs in data.items():
        if not isinstance(refs, list) or len(refs) < 2 or not all(
                isinstance(x, str) for x in refs):
            raise r.fail(f"expected a list of at least 2 \"<method>.<input>\" names, found "
                         f"{refs!r}", "shared", name)
        made.append((name, tuple(_reference(r, name, ref, members) for ref in refs)))
    return tuple(made)


def _members(plan: MethodsPlan) -> dict[str, ModelMethod | None]:
    """Joint member names → their model method (None: the primary, filled in later)."""
    found: dict[str, ModelMethod | None] = {plan.primary_label: None}
    for method in plan.methods:
        if isinstance(method, ModelMethod):
            found[method.label] = method
        else:
            for impurity in method.impurities:
                if impurity.source is not None:
                    found[impurity.source.label] = impurity.source
    return found


def _reference(r: _Reader, name: str, ref: str, members: dict[str, ModelMethod | None]
               ) -> tuple[str, str]:
    member, dot, input_name = ref.rpartition(".")
    if not dot or member not in members:
        raise r.fail(f"expected \"<method>.<input>\" with a method of "
                     f"{', '.join(members)}, found '{ref}'"
                     f"{did_you_mean(member, members) if dot else ''}", "shared", name)
    method = members[member]
    if method is not None:
        names = [i.name for i in method.model.inputs]
        if input_name not in names:
            raise r.fail(f"expected an input of {method.model.source}, found '{input_name}'"
                         f"{did_you_mean(input_name, names)}", "shared", name)
        if input_name in method.run_inputs:
            raise r.fail(f"expected an input common to all runs, found '{input_name}', a "
                         "column of the runs", "shared", name)
    return member, input_name


def check_primary_references(r: _Reader, plan: MethodsPlan, model: Model,
                             run_inputs: tuple[str, ...]) -> None:
    """Check the shared inputs that name the first method against its model."""
    names = [i.name for i in model.inputs]
    for name, refs in plan.shared:
        for member, input_name in refs:
            if member != plan.primary_label:
                continue
            if input_name not in names:
                raise r.fail(f"expected an input of {model.source}, found '{input_name}'"
                             f"{did_you_mean(input_name, names)}", "shared", name)
            if input_name in run_inputs:
                raise r.fail(f"expected an input common to all runs, found '{input_name}', "
                             "a column of the runs", "shared", name)
    if plan.shared:  # the statements must agree: checked now, before anything is computed
        from ._joint import Member, join

        members = [Member(name=plan.primary_label, model=model)]
        members += [Member(name=label, model=method.model)
                    for label, method in _members(plan).items() if method is not None]
        join(members, plan.shared, where=r.where("shared"))

