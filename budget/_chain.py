"""Sensitivity coefficients through the named definitions (the chain rule as written).

Method (JCGM 100 5.1.3, with the chain rule of calculus): every equation of a model file
(a measurand's or a definition's) is differentiated only with respect to the names written
in it, giving the *local* partial derivatives ∂w/∂m, ∂m/∂m_c, … The sensitivity
coefficient of an input is the sum, over every path from the measurand down to the input,
of the product of the local derivatives along the path:
c(m_c) = ∂w/∂m · ∂m/∂m_c. Nothing is substituted, so a report shows the derivative in the
chemist's own quantities.

Values are computed here, independently of the engine, from the text of each equation:
a reverse sweep over Python's ``ast`` in coherent SI values (the built-in ``air_density``
by central differences), each local derivative then expressed in the display units of the
two quantities. Their products agree with the engine's c_i (``tests/test_chain.py``), so a
reader can check every factor. Formulas of the local derivatives come from
``symbolic_partials`` (the rules of calculus applied to the equation's own tree, every
name a plain symbol), then typeset by ``typeset``; the test suite evaluates each formula
and compares it with the value found here.
"""

from __future__ import annotations

import ast
import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Any, Callable

from ._chemistry import plain_air_density as air_density
from ._errors import Location
from ._longparse import parse
from ._unit_display import display_unit, unit_ratio
from ._units import DIMENSIONLESS, Unit, parse_unit

__all__ = ["Partial", "Chain", "ChainRule", "chain_rule"]

_PATH_LIMIT = 6        # paths listed per input; more are summed without being listed
_FORMULA_NAMES = 40    # equations with more names get values without formulas
_NAMED_SI = ("C", "V", "A", "ohm", "s", "kg", "g", "mol", "m", "K", "Pa", "J", "W",
             "mol/kg", "kg/m^3", "g/mol", "m^3", "L", "Hz", "S")


@dataclass(frozen=True, slots=True, kw_only=True)
class Partial:
    """∂``of``/∂``by`` of one equation, in ``unit`` (display unit of ``of`` per ``by``)."""

    of: str
    by: str
    derivative: float
    unit: str
    formula: str | None
    si_derivative: float = 0.0   # the same derivative in coherent SI units


@dataclass(frozen=True, slots=True, kw_only=True)
class Chain:
    """The sensitivity coefficient of ``input`` as a sum over paths of local products.

    For an input that (also) acts through the result of an earlier model of a chain,
    ``through`` names that result and ``upstream`` is ∂result/∂input, the part the earlier
    model contributes (the engine's coefficient less the paths of this file, divided by
    the local derivative with respect to the result)."""

    input: str
    paths: tuple[tuple[str, ...], ...]
    path_count: int
    sensitivity: float
    unit: str
    through: str | None = None
    upstream: float | None = None
    upstream_unit: str = ""


@dataclass(frozen=True, slots=True, kw_only=True)
class ChainRule:
    measurand: str
    partials: tuple[Partial, ...]
    chains: tuple[Chain, ...]
    units: tuple[tuple[str, str], ...]
    si_values: tuple[tuple[str, float], ...] = ()   # every name's value in coherent SI

    def partial(self, of: str, by: str) -> Partial:
        return next(p for p in self.partials if p.of == of and p.by == by)


@dataclass(frozen=True, slots=True)
class _Quantity:
    value: float          # coherent SI (°C for a Celsius temperature)
    unit: Unit
    factor: Fraction      # SI factor of the display unit
    shown: str            # display unit


def chain_rule(model: Any, index: int,
               engine: dict[str, float] | None = None) -> ChainRule:
    """The local derivatives and the chain of every uncertain input of measurand ``index``.

    ``engine``: the budget's coefficients, needed only for a chained model, whose earlier
    models' inputs are reached through their results (``model.chain``)."""
    measurand = model.measurands[index]
    known = {item.name: _input_quantity(item) for item in model.inputs}
    links = {link.input: link for link in getattr(model, "chain", ()) if ":" not in link.input}
    for name, link in links.items():
        info = parse_unit(link.unit, Location(file="<report>"))
        known[name] = _Quantity(link.estimate * float(info.factor), info.unit, info.factor,
                                display_unit(link.unit))
    trees = {d.name: parse(d.text.strip()).body for d in model.definitions}
    local: dict[str, dict[str, float]] = {}
    for d in model.definitions:
        value, grads, unit = _sweep(trees[d.name], known)
        known[d.name] = _definition_quantity(d, value, unit, trees[d.name], known, model)
        local[d.name] = grads
    top = parse(measurand.equation.strip()).body
    trees[measurand.name] = top
    _, local[measurand.name], unit = _sweep(top, known)
    info = parse_unit(measurand.unit, Location(file="<report>"))
    known[measurand.name] = _Quantity(0.0, unit, info.factor, display_unit(measurand.unit))
    uncertain = {i.name for i in model.inputs if i.standard_uncertainty > 0} | set(links)
    reach = _reach(local, uncertain)
    partials = _partials(measurand.name, local, known, trees, reach, uncertain)
    chains = []
    flow = _Flow(measurand.name, partials)
    for item in model.inputs:
        x = item.name
        if item.standard_uncertainty <= 0:
            continue
        own = _chain(flow, x, known) if x in reach.get(measurand.name, set()) else None
        stage = _stage(x, links, model)
        if stage is None or engine is None:
            if own is not None:
                chains.append(own)
            continue
        chains.append(_through(x, stage, own, flow, known, engine))
    units = tuple((name, q.shown) for name, q in known.items())
    return ChainRule(measurand=measurand.name, partials=tuple(partials.values()),
                     chains=tuple(chains), units=units,
                     si_values=tuple((name, q.value) for name, q in known.items()
                                     if name != measurand.name))


def _stage(x: str, links: dict[str, Any], model: Any) -> str | None:
    """The earlier model's result through which input ``x`` acts, if any."""
    head = x.split(":", 1)[0]
    if ":" in x and head in links:
        return head
    for name, link in links.items():
        if x in link.inputs:  # an input shared with the earlier model
            return name
    return None


def _through(x: str, stage: str, own: Chain | None, flow: _Flow,
             known: dict[str, _Quantity], engine: dict[str, float]) -> Chain:
    """An input acting through an earlier model's result (and perhaps directly too)."""
    top = flow.top
    to_stage = _chain(flow, stage, known)
    direct = own.sensitivity if own is not None else 0.0
    total = engine.get(x, direct)
    upstream = (total - direct) / to_stage.sensitivity if to_stage.sensitivity else None
    shown = known[x].shown if x in known else ""
    return Chain(input=x, paths=(own.paths if own else ()) + tuple(
                     (*p, x) for p in to_stage.paths),
                 path_count=(own.path_count if own else 0) + to_stage.path_count,
                 sensitivity=total, unit=unit_ratio(known[top].shown, shown), through=stage,
                 upstream=upstream, upstream_unit=unit_ratio(known[stage].shown, shown))


def _input_quantity(item: Any) -> _Quantity:
    info = parse_unit(item.unit, Location(file="<report>"))
    return _Quantity(item.estimate * float(info.factor), info.unit, info.factor,
                     display_unit(item.unit))


def _definition_quantity(d: Any, value: float, unit: Unit, tree: ast.expr,
                         known: dict[str, _Quantity], model: Any) -> _Quantity:
    """A definition shown in the unit of a written quantity of the same dimension."""
    direct = [n.id for n in ast.walk(tree) if isinstance(n, ast.Name) and n.id in known]
    candidates: list[tuple[str, Fraction]] = []
    for name in direct:
        q = known[name]
        if q.unit.dims == unit.dims and q.unit.dims:
            candidates.append((q.shown, q.factor))
    for text in (*(i.unit for i in model.inputs), *(m.unit for m in model.measurands),
                 *_NAMED_SI):
        info = parse_unit(text, Location(file="<report>"))
        if info.unit.dims == unit.dims and not info.offset:
            candidates.append((display_unit(text), info.factor))
    if not unit.dims:
        candidates.insert(0, ("1", Fraction(1)))
    shown, factor = candidates[0] if candidates else (display_unit(d.unit), unit.factor)
    return _Quantity(value, unit, factor, shown)


def _reach(local: dict[str, dict[str, float]], uncertain: set[str]) -> dict[str, set[str]]:
    """For each equation, the uncertain inputs below it (definitions come in order)."""
    reach: dict[str, set[str]] = {}
    for name, grads in local.items():
        below: set[str] = set()
        for n in grads:
            below |= reach.get(n, set()) | ({n} if n in uncertain else set())
        reach[name] = below
    return reach


def _partials(top: str, local: dict[str, dict[str, float]], known: dict[str, _Quantity],
              trees: dict[str, ast.expr], reach: dict[str, set[str]],
              uncertain: set[str]) -> dict[tuple[str, str], Partial]:
    """The local derivatives on some path from ``top`` to an uncertain input."""
    from ._symbolic_partials import local_formulas

    wanted = {top}
    out: dict[tuple[str, str], Partial] = {}
    for name in (top, *reversed([k for k in local if k != top])):
        if name not in wanted:
            continue
        names = [n for n in local[name] if n in uncertain or reach.get(n)]
        formulas = local_formulas(trees[name], names) \
            if len(local[name]) <= _FORMULA_NAMES else {}
        for by in names:
            wanted.add(by)
            of_q, by_q = known[name], known[by]
            value = local[name][by] * float(by_q.factor) / float(of_q.factor)
            out[(name, by)] = Partial(of=name, by=by, derivative=value,
                                      unit=unit_ratio(of_q.shown, by_q.shown),
                                      formula=formulas.get(by),
                                      si_derivative=local[name][by])
    return out


class _Flow:
    """The graph of local derivatives from the measurand down: each node's coefficient
    (the sum over paths of the products, by one top-down sweep) and its number of paths,
    in time linear in the number of local derivatives; paths are listed walking up."""

    def __init__(self, top: str, partials: dict[tuple[str, str], Partial]) -> None:
        self.top = top
        self.parents: dict[str, list[tuple[str, float]]] = {}
        self.value: dict[str, float] = {top: 1.0}
        self.count: dict[str, int] = {top: 1}
        for (of, by), partial in partials.items():  # top down: parents come first
            self.parents.setdefault(by, []).append((of, partial.derivative))
            self.value[by] = self.value.get(by, 0.0) \
                + self.value.get(of, 0.0) * partial.derivative
            self.count[by] = self.count.get(by, 0) + self.count.get(of, 0)

    def paths(self, x: str) -> list[tuple[str, ...]]:
        found: list[tuple[str, ...]] = []
        stack: list[tuple[str, tuple[str, ...]]] = [(x, (x,))]
        while stack and len(found) < _PATH_LIMIT:
            node, path = stack.pop()
            if node == self.top:
                found.append(path[::-1])
                continue
            stack.extend((parent, (*path, parent)) for parent, _ in self.parents.get(node, ()))
        return sorted(found, key=len)


def _chain(flow: _Flow, x: str, known: dict[str, _Quantity]) -> Chain:
    return Chain(input=x, paths=tuple(flow.paths(x)), path_count=flow.count.get(x, 0),
                 sensitivity=flow.value.get(x, 0.0),
                 unit=unit_ratio(known[flow.top].shown, known[x].shown))


# ---- the reverse sweep over one equation -------------------------------------------------

_DERIVATIVES: dict[str, Callable[[float], float]] = {
    "sqrt": lambda x: 0.5 / math.sqrt(x), "exp": math.exp, "log": lambda x: 1.0 / x,
    "log10": lambda x: 1.0 / (x * math.log(10.0)), "sin": math.cos,
    "cos": lambda x: -math.sin(x), "tan": lambda x: 1.0 / math.cos(x) ** 2,
    "asin": lambda x: 1.0 / math.sqrt(1.0 - x * x),
    "acos": lambda x: -1.0 / math.sqrt(1.0 - x * x), "atan": lambda x: 1.0 / (1.0 + x * x),
    "abs": lambda x: math.copysign(1.0, x),
}
_FUNCTIONS: dict[str, Callable[[float], float]] = {
    "sqrt": math.sqrt, "exp": math.exp, "log": math.log, "log10": math.log10,
    "sin": math.sin, "cos": math.cos, "tan": math.tan, "asin": math.asin,
    "acos": math.acos, "atan": math.atan, "abs": abs,
}


def _sweep(tree: ast.expr, known: dict[str, _Quantity]) -> tuple[float, dict[str, float],
                                                                  Unit]:
    """Value, gradient with respect to the names written, and unit of one equation."""
    sweep = _Sweep(known)
    value = sweep.value(tree)
    sweep.back(tree, 1.0)
    return value, sweep.grads, sweep.unit(tree)


def _operands(node: ast.expr, kinds: tuple[type, ...]) -> list[tuple[bool, ast.expr]]:
    """A left-deep chain of ``kinds`` as (inverted?, operand) pairs, without recursion."""
    items: list[tuple[bool, ast.expr]] = []
    while isinstance(node, ast.BinOp) and isinstance(node.op, kinds):
        items.append((isinstance(node.op, (ast.Sub, ast.Div)), node.right))
        node = node.left
    items.append((False, node))
    return items[::-1]


class _Sweep:
    def __init__(self, known: dict[str, _Quantity]) -> None:
        self.known = known
        self.values: dict[int, float] = {}
        self.grads: dict[str, float] = {}

    def value(self, node: ast.expr) -> float:
        key = id(node)
        if key not in self.values:
            self.values[key] = self._value(node)
        return self.values[key]

    def _value(self, node: ast.expr) -> float:
        if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub)):
            return math.fsum(-self.value(n) if neg else self.value(n)
                             for neg, n in _operands(node, (ast.Add, ast.Sub)))
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Mult):
            return math.prod(self.value(n) for _, n in _operands(node, (ast.Mult,)))
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Div):
            return self.value(node.left) / self.value(node.right)
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Pow):
            return float(self.value(node.left) ** self.value(node.right))
        if isinstance(node, ast.UnaryOp):
            v = self.value(node.operand)
            return -v if isinstance(node.op, ast.USub) else v
        if isinstance(node, ast.Call):
            args = [self.value(a) for a in node.args]
            name = node.func.id  # type: ignore[attr-defined]
            return air_density(*args) if name == "air_density" else _FUNCTIONS[name](args[0])
        if isinstance(node, ast.Name):
            return self.known[node.id].value
        return float(node.value)  # type: ignore[attr-defined]

    def back(self, node: ast.expr, adjoint: float) -> None:
        work = [(node, adjoint)]
        while work:
            item, adj = work.pop()
            work.extend(self._children(item, adj))

    def _children(self, node: ast.expr, adj: float) -> list[tuple[ast.expr, float]]:
        if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub)):
            return [(n, -adj if neg else adj) for neg, n in _operands(node, (ast.Add, ast.Sub))]
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Mult):
            factors = [n for _, n in _operands(node, (ast.Mult,))]
            return [(n, adj * math.prod(self.value(m) for j, m in enumerate(factors) if j != i))
                    for i, n in enumerate(factors)]
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Div):
            a, b = self.value(node.left), self.value(node.right)
            return [(node.left, adj / b), (node.right, -adj * a / (b * b))]
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Pow):
            a, b = self.value(node.left), self.value(node.right)
            out = [(node.left, adj * b * a ** (b - 1.0) if b != 0 else 0.0)]
            if not isinstance(node.right, ast.Constant) and a > 0:
                out.append((node.right, adj * math.log(a) * a ** b))
            return out
        if isinstance(node, ast.UnaryOp):
            return [(node.operand, -adj if isinstance(node.op, ast.USub) else adj)]
        if isinstance(node, ast.Call):
            return self._call_children(node, adj)
        if isinstance(node, ast.Name):
            self.grads[node.id] = self.grads.get(node.id, 0.0) + adj
        return []

    def _call_children(self, node: ast.Call, adj: float) -> list[tuple[ast.expr, float]]:
        name = node.func.id  # type: ignore[attr-defined]
        args = [self.value(a) for a in node.args]
        if name != "air_density":
            return [(node.args[0], adj * _DERIVATIVES[name](args[0]))]
        out = []
        for i, arg in enumerate(node.args):
            step = 1e-6 * max(abs(args[i]), 1e-3)
            up, down = list(args), list(args)
            up[i] += step
            down[i] -= step
            out.append((arg, adj * (air_density(*up) - air_density(*down)) / (2 * step)))
        return out

    def unit(self, node: ast.expr) -> Unit:
        if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub)):
            return self.unit(_operands(node, (ast.Add, ast.Sub))[0][1])
        if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Mult, ast.Div)):
            result = DIMENSIONLESS
            for inverted, n in _operands(node, (ast.Mult, ast.Div)):
                result = result / self.unit(n) if inverted else result * self.unit(n)
            return result
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Pow):
            base = self.unit(node.left)
            return base ** Fraction(self.value(node.right)) if base.dims else DIMENSIONLESS
        if isinstance(node, ast.UnaryOp):
            return self.unit(node.operand)
        if isinstance(node, ast.Call):
            name = node.func.id  # type: ignore[attr-defined]
            if name == "air_density":
                return parse_unit("kg/m^3", Location(file="<report>")).unit
            if name in ("abs", "sqrt"):
                inner = self.unit(node.args[0])
                return inner if name == "abs" else inner ** Fraction(1, 2)
            return DIMENSIONLESS
        if isinstance(node, ast.Name):
            return self.known[node.id].unit
        return DIMENSIONLESS
