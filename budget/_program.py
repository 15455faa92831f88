"""A measurement model compiled once into a straight-line numeric program.

Method: the expression graphs of all measurands (``algebra.Node``, shared sub-expressions
and definitions included once) are laid out as one list of operations in dependency
order. ``evaluate`` runs the list on float64 scalars or whole arrays (the Monte Carlo
method evaluates it on chunks of M values, never per trial); ``gradient`` adds one
reverse sweep (reverse accumulation, "adjoint" differentiation) that gives every ∂f/∂x_i
of one output in a single pass, so the cost of the sensitivity coefficients grows with the
size of the expression, not with the number of inputs times that size. Compiling,
evaluating and differentiating use explicit stacks and loops, so a sum of 10⁵ terms or a
chain of 10⁵ definitions costs time in proportion to its size and never recurses. The
symbolic coefficients that a report prints come from ``sympy.diff`` and agree with these
to rounding (tested).

To add a function: map its name in ``_FORWARD`` and its derivative in ``_DERIV``.
"""

from __future__ import annotations

import math
import operator
from collections import Counter
from fractions import Fraction
from functools import cached_property
from typing import Any, Callable, Sequence

import numpy as np

from ._algebra import Node

__all__ = ["Program"]

_FORWARD: dict[str, Callable[[Any], Any]] = {
    "exp": np.exp, "log": np.log, "log10": np.log10, "sqrt": np.sqrt, "sin": np.sin,
    "cos": np.cos, "tan": np.tan, "asin": np.arcsin, "acos": np.arccos, "atan": np.arctan,
    "abs": np.abs,
}
# d f(x) / dx given x and f(x)
_DERIV: dict[str, Callable[[Any, Any], Any]] = {
    "exp": lambda x, fx: fx,
    "log": lambda x, fx: 1.0 / x,
    "log10": lambda x, fx: 1.0 / (x * np.log(10.0)),
    "sqrt": lambda x, fx: 0.5 / fx,
    "sin": lambda x, fx: np.cos(x),
    "cos": lambda x, fx: -np.sin(x),
    "tan": lambda x, fx: 1.0 + fx * fx,
    "asin": lambda x, fx: 1.0 / np.sqrt(1.0 - x * x),
    "acos": lambda x, fx: -1.0 / np.sqrt(1.0 - x * x),
    "atan": lambda x, fx: 1.0 / (1.0 + x * x),
    "abs": lambda x, fx: np.sign(x),
}


class Program:
    """Operations ``(kind, argument slots, payload)`` over slots; inputs fill slots first.

    While compiling, a sum (product) used once inside another sum (product) is merged into
    it, numbers are folded (exactly where they are integers or fractions), and anything
    without an input is computed once; the loops keep explicit stacks, never recursion."""

    def __init__(self, outputs: Sequence[Node], symbols: Sequence[str]) -> None:
        self.symbols = tuple(str(s) for s in symbols)
        self.ops: list[tuple[str, tuple[int, ...], Any]] = []
        self.constants: dict[int, float] = {}
        self._index = {name: i for i, name in enumerate(self.symbols)}
        self._slot: dict[int, int] = {}
        self._operands: dict[int, list[Node]] = {}
        self._uses = _use_counts(outputs)
        self.outputs = tuple(self._compile(root) for root in outputs)
        self.release = self._last_uses()
        del self._slot, self._operands, self._uses
        # what ``evaluate`` runs: numbers placed in their slots once, the other operations
        self._filled: list[Any] = [None] * len(self.symbols) + [
            payload if kind == "const" else None for kind, _, payload in self.ops]
        self._steps = [(len(self.symbols) + i, kind, args, payload, done)
                       for i, ((kind, args, payload), done) in enumerate(zip(self.ops,
                                                                             self.release))
                       if kind != "const"]
        # sums and products that begin (after a number) with a run of consecutive inputs
        self._ranges: dict[int, tuple[float | None, int, int, tuple[int, ...]]] = {}
        for at, kind, args, _, _ in self._steps:
            if kind in ("add", "mul"):
                found = _input_run(args, self._filled, len(self.symbols))
                if found is not None:
                    self._ranges[at] = found
        # per step, an operand whose array may take the result (see ``_reusable``)
        self._reuse = {at: position for at, kind, args, payload, done in self._steps
                       if (position := self._reusable(kind, args, payload, done)) is not None}

    @cached_property
    def _divided_steps(self) -> list[_Step]:
        """What ``evaluate(..., divide=True)`` runs: a product with a reciprocal used
        nowhere else becomes one division (see ``_divided``); made on first use (a linear
        budget never asks)."""
        return _divided(self._steps, self._ranges, self.outputs)

    @cached_property
    def _divided_reuse(self) -> dict[int, int]:
        return {at: position for at, kind, args, payload, done in self._divided_steps
                if (position := self._reusable(kind, args, payload, done)) is not None}

    def _reusable(self, kind: str, args: tuple[int, ...], payload: Any,
                  done: tuple[int, ...]) -> int | None:
        """The position among ``args`` of an intermediate result that dies at this step
        and is used once in it, whose array the step may overwrite with its own result
        (the same numbers: a ufunc with ``out=`` one of its operands computes as
        without): the first or second operand of a sum or product (its first step), the
        base of a power, the argument of a function. Never an input's array."""
        inputs = len(self.symbols)
        positions = {"add": (0, 1), "mul": (0, 1), "div": (0, 1), "pow": (0,),
                     "call": (0,)}.get(kind, ())
        for position in positions:
            slot = args[position] if position < len(args) else -1
            if slot >= inputs and slot in done and slot not in self.constants \
                    and args.count(slot) == 1:
                if kind == "call" and not isinstance(_FORWARD[payload], np.ufunc):
                    return None
                return position
        return None

    def _last_uses(self) -> list[tuple[int, ...]]:
        """For each operation, the slots no longer needed once it has run."""
        last: dict[int, int] = {}
        for index, (_, args, _) in enumerate(self.ops):
            for a in args:
                last[a] = index
        keep = set(self.outputs)
        release: list[list[int]] = [[] for _ in self.ops]
        for slot, index in last.items():
            if slot not in keep:
                release[index].append(slot)
        return [tuple(r) for r in release]

    @property
    def size(self) -> int:
        return len(self.symbols) + len(self.ops)

    def _compile(self, root: Node) -> int:
        stack: list[tuple[Node, bool]] = [(root, False)]
        while stack:
            node, ready = stack.pop()
            if id(node) in self._slot:
                continue
            if node.kind == "symbol":
                if node.name not in self._index:
                    raise KeyError(f"symbol {node.name} is not an input")
                self._slot[id(node)] = self._index[node.name]
                continue
            if node.kind == "number":
                self._slot[id(node)] = self._emit("const", (), node.value)
                continue
            operands = self._merged(node)
            if not ready:
                stack.append((node, True))
                stack.extend((a, False) for a in operands if id(a) not in self._slot)
                continue
            self._slot[id(node)] = self._emit_operation(node, operands)
        return self._slot[id(root)]

    def _merged(self, node: Node) -> list[Node]:
        """The operands of ``node``, with sums (products) used only here merged in."""
        if id(node) in self._operands:
            return self._operands[id(node)]
        if node.kind not in ("add", "mul"):
            return list(node.args)
        merged: list[Node] = []
        pending = list(reversed(node.args))
        while pending:
            arg = pending.pop()
            if arg.kind == node.kind and self._uses.get(id(arg), 0) == 1:
                pending.extend(reversed(arg.args))
            else:
                merged.append(arg)
        self._operands[id(node)] = merged
        return merged

    def _emit(self, kind: str, args: tuple[int, ...], payload: Any) -> int:
        slot = len(self.symbols) + len(self.ops)
        self.ops.append((kind, args, payload))
        if kind == "const":
            self.constants[slot] = payload
        return slot

    def _emit_operation(self, node: Node, operands: list[Node]) -> int:
        if node.kind in ("add", "mul"):
            return self._emit_folded(node.kind, operands)
        args = tuple(self._slot[id(a)] for a in operands)
        if all(a in self.constants for a in args):
            kind = "pow" if node.kind == "pow" else "call"
            payload = node.name if kind == "call" else None
            with np.errstate(all="ignore"):
                value = _apply(kind, [self.constants[a] for a in args], payload)
            return self._emit("const", (), float(value))
        if node.kind == "pow":
            exponent = self.constants.get(args[1])
            return self._emit("pow", args, exponent)
        if node.name not in _FORWARD:
            raise ValueError(f"no numeric rule for {node.name}")
        return self._emit("call", args, node.name)

    def _emit_folded(self, kind: str, operands: list[Node]) -> int:
        """A sum or product with its numbers folded into one constant."""
        exact: int | Fraction = 1 if kind == "mul" else 0
        inexact = 1.0 if kind == "mul" else 0.0
        args: list[int] = []
        for operand in operands:
            slot = self._slot[id(operand)]
            if operand.kind == "number" and not isinstance(operand.exact, str):
                number = operand.exact  # int or Fraction: folded exactly
                exact = exact * number if kind == "mul" else exact + number
            elif slot in self.constants:
                value = self.constants[slot]
                inexact = inexact * value if kind == "mul" else inexact + value
            else:
                args.append(slot)
        constant = float(exact) * inexact if kind == "mul" else float(exact) + inexact
        neutral = 1.0 if kind == "mul" else 0.0
        if not args:
            return self._emit("const", (), constant)
        if constant != neutral or math.isnan(constant):
            args.insert(0, self._emit("const", (), constant))
        if len(args) == 1:
            return args[0] if kind == "add" or constant == neutral else args[0]
        return self._emit(kind, tuple(args), None)

    def evaluate(self, values: Sequence[Any],
                 rows: tuple[dict[int, int], np.ndarray] | None = None,
                 divide: bool = False) -> list[Any]:
        """The outputs for input values (scalars, or equal-length float64 arrays).

        Intermediate arrays are dropped as soon as no later operation needs them, so a
        large model evaluated on a block of trials holds only its live values. ``rows``
        (input slot → row of a 2-D array holding those inputs' values) lets a sum or
        product of consecutive inputs run as one reduction over the rows: the same
        additions in the same order (numpy reduces a non-contiguous axis in order).
        ``divide``: a product with a reciprocal, a·b·c⁻¹, is computed as (a·b)/c, one
        pass over the arrays fewer and one rounding fewer (the Monte Carlo method)."""
        slots: list[Any] = list(values) + self._filled[len(values):]
        steps, reuses = ((self._divided_steps, self._divided_reuse) if divide
                         else (self._steps, self._reuse))
        with np.errstate(all="ignore"):
            for at, kind, args, payload, done in steps:
                found = rows is not None and at in self._ranges and _reduced(
                    kind, self._ranges[at], rows, slots)
                if found is False:
                    operands = [slots[a] for a in args]
                    reuse = reuses.get(at)
                    found = _apply_into(kind, operands, payload, reuse) \
                        if reuse is not None else None
                    if found is None:
                        found = _apply(kind, operands, payload)
                slots[at] = found
                for slot in done:
                    slots[slot] = None
        return [slots[i] for i in self.outputs]

    def _forward(self, values: Sequence[Any], state: dict[str, Any] | None = None
                 ) -> list[Any]:
        slots: list[Any] = list(values)
        with np.errstate(**(state or {"all": "ignore"})):
            for kind, args, payload in self.ops:
                slots.append(_apply(kind, [slots[a] for a in args], payload))
        return slots

    def gradient(self, values: Sequence[float] | np.ndarray, events: set[str] | None = None
                 ) -> tuple[np.ndarray, np.ndarray]:
        """Outputs and the Jacobian ∂y_k/∂x_i at scalar input values (reverse sweeps);
        ``events``, when given, collects numpy's floating-point events met on the way
        (``underflow``, ``overflow``, ``divide by zero``, ``invalid value``)."""
        state: dict[str, Any] = {"all": "ignore"}
        if events is not None:
            state = {"all": "call", "call": lambda kind, _flag: events.add(kind)}
        slots = self._forward([np.float64(v) for v in values], state)
        n_in = len(self.symbols)
        jacobian = np.zeros((len(self.outputs), n_in))
        with np.errstate(**state):
            for row, out in enumerate(self.outputs):
                adjoint = np.zeros(len(slots))
                adjoint[out] = 1.0
                for index in range(len(slots) - 1, n_in - 1, -1):
                    if adjoint[index] != 0.0:
                        self._backward(index, slots, adjoint)
                jacobian[row] = adjoint[:n_in]
        values_out = np.array([slots[i] for i in self.outputs], dtype=float)
        return values_out, jacobian

    def gradient_many(self, values: Sequence[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
        """Outputs (measurands × L) and Jacobians (measurands × inputs × L) at L points at
        once: the same reverse sweep on arrays, one array operation per step for all L."""
        size = max((np.size(v) for v in values), default=1)
        slots = self._forward([np.broadcast_to(np.asarray(v, dtype=float), (size,))
                               for v in values])
        n_in = len(self.symbols)
        jacobian = np.zeros((len(self.outputs), n_in, size))
        with np.errstate(all="ignore"):
            for row, out in enumerate(self.outputs):
                adjoint: list[Any] = [0.0] * len(slots)
                adjoint[out] = np.ones(size)
                for index in range(len(slots) - 1, n_in - 1, -1):
                    if not (isinstance(adjoint[index], float) and adjoint[index] == 0.0):
                        self._backward_many(index, slots, adjoint)
                for j in range(n_in):
                    jacobian[row, j] = adjoint[j]
        outputs = np.array([np.broadcast_to(slots[i], (size,)) for i in self.outputs])
        return outputs, jacobian

    def _backward_many(self, index: int, slots: list[Any], adjoint: list[Any]) -> None:
        kind, args, payload = self.ops[index - len(self.symbols)]
        bar = adjoint[index]
        if kind == "add":
            for a in args:
                adjoint[a] = adjoint[a] + bar
        elif kind == "mul":
            factors = [slots[a] for a in args]
            prefix: list[Any] = [1.0]
            for f in factors[:-1]:
                prefix.append(prefix[-1] * f)
            suffix: Any = 1.0
            for position in range(len(factors) - 1, -1, -1):
                a = args[position]
                adjoint[a] = adjoint[a] + bar * prefix[position] * suffix
                suffix = suffix * factors[position]
        elif kind == "pow":
            base, exponent = slots[args[0]], slots[args[1]]
            adjoint[args[0]] = adjoint[args[0]] + np.where(
                exponent != 0.0, bar * exponent * base ** (exponent - 1.0), 0.0)
            if payload is None:
                adjoint[args[1]] = adjoint[args[1]] + bar * np.log(base) * slots[index]
        elif kind == "call":
            adjoint[args[0]] = adjoint[args[0]] + bar * _DERIV[payload](slots[args[0]],
                                                                        slots[index])

    def _backward(self, index: int, slots: list[Any], adjoint: np.ndarray) -> None:
        kind, args, payload = self.ops[index - len(self.symbols)]
        bar = adjoint[index]
        if kind == "add":
            for a in args:
                adjoint[a] += bar
        elif kind == "mul":
            _mul_adjoint(args, slots, bar, adjoint)
        elif kind == "pow":
            base, exponent = slots[args[0]], slots[args[1]]
            if exponent != 0.0:
                adjoint[args[0]] += bar * exponent * base ** (exponent - 1.0)
            if payload is None:
                adjoint[args[1]] += bar * np.log(base) * slots[index]
        elif kind == "call":
            adjoint[args[0]] += bar * _DERIV[payload](slots[args[0]], slots[index])


def _use_counts(outputs: Sequence[Node]) -> dict[int, int]:
    """How many operations (or outputs) use each node, counted without recursion."""
    uses: Counter[int] = Counter(map(id, outputs))
    seen: set[int] = set()
    stack = list(outputs)
    while stack:
        node = stack.pop()
        key = id(node)
        if key in seen:
            continue
        seen.add(key)
        if node.args:
            uses.update(map(id, node.args))  # counted in C, not one dict step per use
            stack.extend(node.args)
    return uses


_Step = tuple[int, str, tuple[int, ...], Any, tuple[int, ...]]


def _divided(steps: list[_Step], ranges: dict[int, Any], outputs: tuple[int, ...]
             ) -> list[_Step]:
    """``steps`` with each product that holds the reciprocal c⁻¹ of a ``pow`` step used
    nowhere else turned into a ``div`` step, (product of the other factors) / c, and that
    ``pow`` step dropped; products that begin with a run of inputs (``ranges``) stay."""
    uses: dict[int, int] = {}
    for _, _, args, _, _ in steps:
        for a in args:
            uses[a] = uses.get(a, 0) + 1
    reciprocals = {at: (args[0], done) for at, kind, args, payload, done in steps
                   if kind == "pow" and payload == -1.0 and uses.get(at) == 1
                   and at not in outputs}
    dropped: set[int] = set()
    rewritten: dict[int, _Step] = {}
    for at, kind, args, _, done in steps:
        if kind != "mul" or at in ranges:
            continue
        found = next((a for a in args if a in reciprocals and a not in dropped), None)
        if found is None:
            continue
        base, released = reciprocals[found]  # the base dies here now, not at the pow
        dropped.add(found)
        rewritten[at] = (at, "div", tuple(a for a in args if a != found) + (base,), None,
                         tuple(d for d in done if d != found) + released)
    return [rewritten.get(step[0], step) for step in steps if step[0] not in dropped]


def _apply(kind: str, operands: list[Any], payload: Any) -> Any:
    if kind == "add":
        return _fold(operator.add, np.add, operands)
    if kind == "mul":
        return _fold(operator.mul, np.multiply, operands)
    if kind == "div":
        top = operands[0] if len(operands) == 2 else _fold(operator.mul, np.multiply,
                                                             operands[:-1])
        return np.divide(top, operands[-1])
    if kind == "pow":
        base = operands[0]
        if payload == -1.0:
            return 1.0 / base
        if payload == 2.0:
            return base * base
        if payload == 0.5:
            return np.sqrt(base)
        return np.power(base, operands[1])
    if kind == "call":
        return _FORWARD[payload](operands[0])
    return payload  # const


def _apply_into(kind: str, operands: list[Any], payload: Any, position: int) -> Any:
    """``_apply`` writing its result into ``operands[position]``, a dying intermediate
    array, when that array has the result's shape; None otherwise (then ``_apply``)."""
    target = operands[position]
    if type(target) is not np.ndarray or target.dtype != np.float64 or target.ndim != 1:
        return None
    others = operands[:position] + operands[position + 1:]
    if not all(isinstance(o, float) or (type(o) is np.ndarray and o.shape == target.shape)
               for o in others):
        return None
    if kind in ("add", "mul"):
        ufunc = np.add if kind == "add" else np.multiply
        total = ufunc(operands[0], operands[1], out=target)
        for term in operands[2:]:
            ufunc(total, term, out=total)
        return total
    if kind == "div":  # the target is a factor of the numerator, or a lone one's divisor
        if len(operands) == 2:
            return np.divide(operands[0], operands[1], out=target)
        total = np.multiply(operands[0], operands[1], out=target)
        for term in operands[2:-1]:
            np.multiply(total, term, out=total)
        return np.divide(total, operands[-1], out=total)
    if kind == "pow":
        if payload == -1.0:
            return np.divide(1.0, target, out=target)
        if payload == 2.0:
            return np.multiply(target, target, out=target)
        if payload == 0.5:
            return np.sqrt(target, out=target)
        return np.power(target, operands[1], out=target)
    function = _FORWARD[payload]
    assert isinstance(function, np.ufunc)
    return function(target, out=target)


def _input_run(args: tuple[int, ...], filled: list[Any], inputs: int
               ) -> tuple[float | None, int, int, tuple[int, ...]] | None:
    """(the leading number or None, first and last input of the run of at least two
    consecutive inputs that follows it, the operands after the run), or None."""
    start = 1 if args[0] >= inputs and isinstance(filled[args[0]], float) else 0
    end = start
    while end < len(args) and args[end] < inputs and (end == start
                                                      or args[end] == args[end - 1] + 1):
        end += 1
    if end - start < 2:
        return None
    return (filled[args[0]] if start else None, args[start], args[end - 1], args[end:])


def _reduced(kind: str, span: tuple[float | None, int, int, tuple[int, ...]],
             rows: tuple[dict[int, int], np.ndarray], slots: list[Any] | dict[int, Any]) -> Any:
    """A sum or product whose operands begin with consecutive rows of ``rows``: one
    reduction over the rows (started from the leading number), then the other operands
    in order; False when the inputs are not consecutive rows."""
    number, low, high, rest = span
    row_of, matrix = rows
    first, last = row_of.get(low), row_of.get(high)
    if first is None or last is None or last - first != high - low:
        return False
    ufunc = np.add if kind == "add" else np.multiply
    block = matrix[first:last + 1]
    total: Any = (ufunc.reduce(block, axis=0) if number is None
                  else ufunc.reduce(block, axis=0, initial=number))
    for term in rest:
        value = slots[term]
        if isinstance(value, float) or (type(value) is np.ndarray
                                        and value.shape == total.shape):
            ufunc(total, value, out=total)
        else:
            total = ufunc(total, value)
    return total


def _fold(first: Callable[[Any, Any], Any], ufunc: np.ufunc, operands: list[Any]) -> Any:
    """Sum or product left to right (the rounding of ``a + b + c``); the running value is
    a new array after the first step, so the later steps write into it."""
    total = first(operands[0], operands[1])
    for term in operands[2:]:
        if type(total) is np.ndarray and total.dtype == np.float64 and total.ndim == 1 and (
                isinstance(term, float)
                or (type(term) is np.ndarray and term.shape == total.shape)):
            ufunc(total, term, out=total)
        else:
            total = first(total, term)
    return total


def _mul_adjoint(args: tuple[int, ...], slots: list[Any], bar: float,
                 adjoint: np.ndarray) -> None:
    """∂(Πx_k)/∂x_j = Π_{k≠j} x_k by prefix and suffix products (safe when an x_k is 0)."""
    factors = [slots[a] for a in args]
    prefix = [1.0]
    for f in factors[:-1]:
        prefix.append(prefix[-1] * f)
    suffix = 1.0
    for position in range(len(factors) - 1, -1, -1):
        adjoint[args[position]] += bar * prefix[position] * suffix
        suffix = suffix * factors[position]
