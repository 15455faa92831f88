"""Chained budgets: an input that is the result of another model, correlations kept.

Method: when a model's input X is the measurand y = f(w) of an earlier model (a titrant
standardised against a certified standard, itself certified by its own budget), the
earlier model's inputs w join the current evaluation and X is replaced by f(w). The
current measurand is then one function of all base inputs, so the GUM law of propagation
works on one Jacobian (JCGM 100 5.1.2, 5.2.2) and the Monte Carlo method draws every base
input once per trial (JCGM 101 5.9): an input that both stages use — the same molar mass,
the same balance — is ONE input (declared with ``shares``) and its correlation between
the stages is carried, where pasting the earlier result as an independent number would
lose it. Inputs of the earlier model keep their names behind the chained input's name,
``X:name``; the earlier model's own chains nest the same way.

A saved result (the JSON document of ``budget run --json``) can stand in for the earlier
model: its value, u and ν, and — when it lists its contributions — its base inputs with
their sensitivities, so that y is taken as the linear function y₀ + Σ c_i (x_i − x_i₀) of
them (exact for the GUM; Monte Carlo then draws the base inputs with the shapes the
document names, a normal distribution where it names none it can rebuild).

The merging itself is :func:`budget._joint.join`; this module only replaces X.
"""

from __future__ import annotations

import json
import math
import os
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

from ._errors import InputError, Location
from . import _algebra as alg
from ._joint import Member, join, joint_name
from ._model import Input, Model
from ._savedresult import misshapen
from ._units import parse_unit

__all__ = ["Link", "PendingLink", "read_link", "resolve", "CHAIN_KEYS"]

CHAIN_KEYS = ("result_of", "measurand", "shares")
BETWEEN_STAGES = "correlations between stages"  # the folded row of cross-stage terms
_THIS = "__stage"  # the current model's member name inside the join (never shown)


@dataclass(frozen=True, slots=True, kw_only=True)
class PendingLink:
    """What an input table with ``result_of`` says, before the models are merged."""

    input: str
    upstream: Model
    measurand: str
    shares: tuple[tuple[str, str], ...]  # (this model's input, the earlier model's input)
    where: Location


@dataclass(frozen=True, slots=True, kw_only=True)
class Link:
    """One stage of a chain, for reports: which model's result fed which input."""

    input: str
    source: str
    sha256: str | None
    measurand: str
    estimate: float
    unit: str
    inputs: tuple[str, ...]  # the names the earlier model's inputs have in this model
    shares: tuple[tuple[str, str], ...]


def read_link(name: str, data: dict[str, Any], base: Path, where: Any,
              loading: tuple[str, ...]) -> tuple[PendingLink, Input]:
    """The link an input states and the placeholder input that stands for it meanwhile."""
    from .distributions import Exact
    from ._statements import INPUT_KEYS
    from ._tomlkeys import check_keys

    check_keys(data, (*INPUT_KEYS, *CHAIN_KEYS), where)
    for key in data:
        if key not in (*CHAIN_KEYS, "unit", "description", "source"):
            raise InputError(f"'{key}' does not apply to an input that is the result of "
                             f"another model (its uncertainty comes from that model)",
                             where(key))
    for key in ("description", "source"):
        if not isinstance(data.get(key, ""), str):
            raise InputError(f"expected a text string, found {data[key]!r}"[:200], where(key))
    relative = data["result_of"]
    if not isinstance(relative, str) or not relative.strip():
        raise InputError(f"expected the path of a model file or a saved JSON result, found "
                         f"{relative!r}", where("result_of"))
    path = Path(os.path.normpath(base / relative.strip()))
    if str(path.resolve()) in loading:
        raise InputError(f"expected a chain without cycles, found '{relative}' again",
                         where("result_of"))
    upstream = _upstream(path, where("result_of"), loading)
    measurand = _measurand(upstream, data.get("measurand"), where("measurand"))
    shares = _shares(data.get("shares", {}), upstream, where("shares"))
    item = upstream.measurands[[m.name for m in upstream.measurands].index(measurand)]
    unit_text = data.get("unit", item.unit)
    unit = parse_unit(unit_text, where("unit"))
    theirs = parse_unit(item.unit, where("unit"))
    if unit.dimensionality != theirs.dimensionality or unit.offset != theirs.offset:
        raise InputError(f"expected a unit of {theirs.describe()} like measurand "
                         f"'{measurand}' of {upstream.source} ('{item.unit}'), found "
                         f"'{unit.text}'", where("unit"))
    estimate = _value(upstream, measurand) * float(theirs.factor / unit.factor)
    placeholder = Input(name=name, unit=unit.text, distribution=Exact(estimate),
                        dof=math.inf, type="B", basis=f"result of {upstream.source}",
                        description=str(data.get("description", "")),
                        source=str(data.get("source", upstream.source)))
    return PendingLink(input=name, upstream=upstream, measurand=measurand, shares=shares,
                       where=where("result_of")), placeholder


def _upstream(path: Path, where: Location, loading: tuple[str, ...]) -> Model:
    if path.suffix.lower() == ".json":
        return saved_result_model(path, where)
    from ._model import load_model_in_chain

    return load_model_in_chain(path, (*loading, str(path.resolve())), where)


def _measurand(upstream: Model, name: Any, where: Location) -> str:
    names = [m.name for m in upstream.measurands]
    if name is None:
        if len(names) == 1:
            return names[0]
        raise InputError(f"expected 'measurand', one of {', '.join(names)} of "
                         f"{upstream.source}, found none", where)
    if name not in names:
        from ._errors import did_you_mean

        raise InputError(f"expected a measurand of {upstream.source} ({', '.join(names)}), "
                         f"found {name!r}{did_you_mean(str(name), names)}", where)
    return str(name)


def _shares(value: Any, upstream: Model, where: Location) -> tuple[tuple[str, str], ...]:
    if not isinstance(value, dict):
        raise InputError(f"expected a table {{ this_input = \"earlier_input\", … }}, found "
                         f"{value!r}", where)
    names = [i.name for i in upstream.inputs]
    for theirs in value.values():
        if theirs not in names:
            from ._errors import did_you_mean

            raise InputError(f"expected an input of {upstream.source}, found {theirs!r}"
                             f"{did_you_mean(str(theirs), names)}", where)
    return tuple((str(ours), str(theirs)) for ours, theirs in value.items())


def _value(model: Model, measurand: str) -> float:
    from ._evaluation import jacobian_at_estimates

    values, _ = jacobian_at_estimates(model)
    return float(values[[m.name for m in model.measurands].index(measurand)])


def resolve(model: Model, links: tuple[PendingLink, ...]) -> Model:
    """The model with each linked input replaced by the earlier model's result."""
    for link in links:
        model = _one(model, link)
    return model


def _one(model: Model, link: PendingLink) -> Model:
    own = {i.name for i in model.inputs}
    for ours, _ in link.shares:
        if ours not in own or ours == link.input:
            raise InputError(f"expected an input of this model to share, found {ours!r}",
                             link.where)
    shared = [(ours, [(_THIS, ours), (link.input, theirs)]) for ours, theirs in link.shares]
    joint = join([Member(name=_THIS, model=model), Member(name=link.input,
                                                          model=link.upstream)],
                 shared, title=model.title, where=link.where)
    final = {joint_name: _plain(joint_name) for _, joint_name in joint.inputs}
    swap = {a: alg.symbol(b) for a, b in final.items() if a != b}
    result = joint.model.measurands[joint.measurand_index(link.input, link.measurand)]
    placeholder = model.input(link.input)
    ratio = parse_unit(result.unit, link.where).factor / parse_unit(
        placeholder.unit, link.where).factor
    scale = alg.number(ratio)
    stand_in = {**swap, joint_name(_THIS, link.input):
                alg.substitute(result.graph, swap) * scale}
    stand_in_opaque = {**swap, joint_name(_THIS, link.input):
                       alg.substitute(result.opaque_graph, swap) * scale}
    measurands = tuple(
        replace(m, name=_plain(m.name), graph=alg.substitute(m.graph, stand_in),
                opaque_graph=alg.substitute(m.opaque_graph, stand_in_opaque))
        for m in joint.model.measurands if m.name.startswith(_THIS + ":"))
    inputs = _ordered(model, joint.model, final, link.input)
    upstream_names = tuple(final[j] for (member, _), j in joint.inputs
                           if member == link.input)
    return replace(
        model, inputs=inputs, measurands=measurands,
        correlations=tuple((final[a], final[b], r) for a, b, r in joint.model.correlations),
        estimated_together=tuple(replace(t, inputs=tuple(final[n] for n in t.inputs))
                                 for t in joint.model.estimated_together),
        certificates=model.certificates + tuple(
            replace(u, input=_upstream_name(link, u.input, dict(link.shares)),
                    dates=u.dates if u.dates is not None else link.upstream.measured)
            for u in link.upstream.certificates),
        files=model.files + tuple((_nested_role(link.input, role), path, digest)
                                  for role, path, digest in link.upstream.files),
        warnings=model.warnings + tuple(f"{link.input} ← {link.upstream.source}: {w}"
                                        for w in link.upstream.warnings),
        chain=getattr(model, "chain", ()) + (Link(
            input=link.input, source=link.upstream.source,
            sha256=link.upstream.sha256 or None, measurand=link.measurand,
            estimate=placeholder.estimate, unit=placeholder.unit,
            inputs=tuple(dict.fromkeys(upstream_names)), shares=link.shares),
        ) + tuple(replace(inner, input=f"{link.input}:{inner.input}",
                          inputs=tuple(f"{link.input}:{n}" for n in inner.inputs))
                  for inner in getattr(link.upstream, "chain", ())))


def _nested_role(name: str, role: str) -> str:
    """'model' of stage X is 'X ← model'; 'Y ← model' inside X is 'X:Y ← model'."""
    return f"{name}:{role}" if " ← " in role else f"{name} ← {role}"


def _plain(joint_name: str) -> str:
    prefix = _THIS + ":"
    return joint_name[len(prefix):] if joint_name.startswith(prefix) else joint_name


def _upstream_name(link: PendingLink, name: str, shares: dict[str, str]) -> str:
    for ours, theirs in shares.items():
        if theirs == name:
            return ours
    return f"{link.input}:{name}"


def _ordered(model: Model, joint: Model, final: dict[str, str], linked: str
             ) -> tuple[Input, ...]:
    """This model's inputs first (in their order, without the linked one), then the
    earlier model's."""
    by_name = {final.get(i.name, i.name): replace(i, name=final.get(i.name, i.name))
               for i in joint.inputs}
    first = [by_name[i.name] for i in model.inputs if i.name != linked and i.name in by_name]
    rest = [item for name, item in by_name.items()
            if name not in {i.name for i in model.inputs}]
    return tuple(first + rest)


# what _linear_model reads (kinds: _savedresult.misshapen)
_MEASURAND_FIELDS = (("name", "name"), ("unit", "name"), ("value", "number"), ("u", "u"),
                     ("dof", "dof"))
_INPUT_FIELDS = (("input", "name"), ("estimate", "number"), ("u", "u"),
                 ("sensitivity", "number"), ("dof?", "dof"), ("unit?", "name"),
                 ("distribution?", "name"))

_SHAPES = {"rectangular": ("Rectangular", math.sqrt(3.0)),
           "triangular": ("Triangular", math.sqrt(6.0)),
           "arcsine": ("Arcsine", math.sqrt(2.0))}


def saved_result_model(path: Path, where: Location) -> Model:
    """A saved result as a model: the linear function of its base inputs (or one input)."""
    try:
        document = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError as exc:
        raise InputError(f"expected a saved result '{path}', found no such file",
                         where) from exc
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError(f"expected a JSON result document in '{path}', found {exc}",
                         where) from exc
    found = misshapen(document, _MEASURAND_FIELDS, _INPUT_FIELDS, (("r", "number"),))
    if found is None:
        try:
            return _linear_model(document, str(path))
        except (KeyError, TypeError, ValueError) as exc:  # a safety net: checked above
            found = "one that cannot be read as a result"
            raise InputError(f"expected a JSON result document (schema result.schema.json) "
                             f"in '{path}', found {found}", where) from exc
    raise InputError(f"expected a JSON result document (schema result.schema.json) in "
                     f"'{path}', found {found}", where)


def _linear_model(document: dict[str, Any], source: str) -> Model:
    import hashlib

    from ._model import Measurand, Settings
    from ._together import Together

    inputs: dict[str, Input] = {}
    measurands = []
    warnings: list[str] = []
    for m in document["measurands"]:
        terms = [alg.number(float(m["value"]))]
        for c in m.get("contributions", []):
            name = str(c["input"])
            if name not in inputs:
                inputs[name] = _saved_input(c, warnings)
            terms.append(alg.number(float(c["sensitivity"])) * (
                alg.symbol(name) - alg.number(float(c["estimate"]))))
        graph = alg.add(*terms)
        if not m.get("contributions"):
            name = f"{m['name']}_result"
            inputs[name] = _saved_input({"input": name, "estimate": m["value"],
                                         "unit": m["unit"], "u": m["u"],
                                         "dof": m["dof"], "distribution": "normal"},
                                        warnings)
            graph = alg.symbol(name)
        measurands.append(Measurand(name=str(m["name"]), equation="(saved result)",
                                    unit=str(m["unit"]), graph=graph, shown_graph=graph,
                                    opaque_graph=graph))
    pairs = {}
    for m in document["measurands"]:
        for t in m.get("correlation_terms", []):
            a, b = t["inputs"]
            pairs[frozenset((a, b))] = (a, b, float(t["r"]))
    raw = json.dumps(document, sort_keys=True).encode("utf-8")
    sets = tuple(Together(inputs=tuple(str(n) for n in s["inputs"]),
                          dof=math.inf if s.get("dof") is None else float(s["dof"]),
                          note=str(s.get("note", "")))
                 for s in document.get("estimated_together") or ()
                 if all(str(n) in inputs for n in s["inputs"]))
    return Model(title=str(document.get("title", source)), description="",
                 inputs=tuple(inputs.values()), definitions=(), measurands=tuple(measurands),
                 correlations=tuple(pairs.values()), settings=Settings(), source=source,
                 estimated_together=sets,
                 sha256=hashlib.sha256(raw).hexdigest(), warnings=tuple(warnings),
                 files=(("saved result", source, hashlib.sha256(
                     Path(source).read_bytes()).hexdigest()),))


def _saved_input(c: dict[str, Any], warnings: list[str]) -> Input:
    from . import distributions as dist

    estimate, u = float(c["estimate"]), float(c["u"])
    dof = math.inf if c.get("dof") is None else float(c["dof"])
    shape = str(c.get("distribution", "normal"))
    made: Any
    if u == 0.0:
        made = dist.Exact(estimate)
    elif shape in _SHAPES:
        cls, divisor = _SHAPES[shape]
        made = getattr(dist, cls)(estimate, u * divisor)
    elif math.isfinite(dof):
        made = dist.StudentT(estimate, u, dof)
    else:
        made = dist.Normal(estimate, u)
        if shape not in ("normal", "student_t"):
            warnings.append(f"input '{c['input']}' of the saved result is drawn as normal "
                            f"in Monte Carlo (the document names '{shape}', which it does "
                            "not describe fully)")
    return Input(name=str(c["input"]), unit=str(c.get("unit", "1")), distribution=made,
                 dof=dof,
                 type=str(c.get("type", "B")), basis=f"from a saved result, {shape}")


@dataclass(frozen=True, slots=True, kw_only=True)
class Stage:
    """The inputs of one stage of a chain and their part of u_c² (folded view)."""

    label: str  # "" for the model itself, else the chained input (e.g. "c_NaOH:w_KHP")
    source: str
    inputs: tuple[str, ...]
    variance: float
    share: float  # percent of u_c²


def stages(model: Model, budget: Any) -> tuple[Stage, ...]:
    """The budget folded per stage: each input goes to the deepest link its name is in.

    Shared inputs belong to the stage that names them first (the later model). A
    correlation term between two inputs of one stage is part of that stage (an earlier
    model's intercept and slope, say); terms between inputs of different stages form a
    row of their own (label ``BETWEEN_STAGES``). The stages' variances thus add up to the
    first-order u_c², and their shares to 100 %.
    """
    links = sorted(getattr(model, "chain", ()), key=lambda link: -len(link.input))

    def home(name: str) -> str:
        return next((link.input for link in links if name.startswith(link.input + ":")), "")

    groups: dict[str, list[tuple[str | None, float, float]]] = {"": []}
    for link in getattr(model, "chain", ()):
        groups[link.input] = []
    for c in budget.contributions:
        groups[home(c.input)].append((c.input, c.contribution ** 2, c.share))
    for term in getattr(budget, "correlation_terms", ()):
        a, b = (home(name) for name in term.inputs)
        groups.setdefault(a if a == b else BETWEEN_STAGES, []).append(
            (None, term.variance, term.share))
    sources = {link.input: link.source for link in getattr(model, "chain", ())}
    return tuple(Stage(label=label, source=sources.get(label, "" if label == BETWEEN_STAGES
                                                       else model.source),
                       inputs=tuple(name for name, _, _ in found if name is not None),
                       variance=math.fsum(v for _, v, _ in found),
                       share=math.fsum(s for _, _, s in found))
                 for label, found in groups.items())


def stage_lines(model: Model, budget: Any) -> list[str]:
    """Terminal lines: the chain and the budget folded per stage."""
    lines = ["", "Chained results (each earlier model evaluated with this one):"]
    for link in getattr(model, "chain", ()):
        shared = ", ".join(f"{a} = {b}" for a, b in link.shares)
        lines.append(f"  {link.input} = {link.measurand} of {link.source}"
                     + (f"; shared: {shared}" if shared else ""))
    lines.append("Share of u_c² by stage:")
    for stage in stages(model, budget):
        name = "this model" if not stage.label else stage.label if not stage.source \
            else f"{stage.label} (from {stage.source})"
        lines.append(f"  {stage.share:6.1f} %  {name}")
    return lines


def chain_document(model: Model, budget: Any) -> dict[str, Any]:
    """The chain and the folded budget for the JSON result document."""
    return {
        "links": [{"input": link.input, "source": link.source, "sha256": link.sha256,
                   "measurand": link.measurand, "estimate": link.estimate,
                   "unit": link.unit, "shares": dict(link.shares),
                   "inputs": list(link.inputs)} for link in getattr(model, "chain", ())],
        "stages": [{"stage": s.label or None, "source": s.source, "inputs": list(s.inputs),
                    "variance": s.variance, "share": s.share}
                   for s in stages(model, budget)]}
