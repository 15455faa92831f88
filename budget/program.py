"""A measurement model compiled once into a straight-line numeric program.

Method: the sympy expressions of all measurands are flattened into one list of unique
operations in dependency order (sympy's structural hashing shares every common
sub-expression). ``evaluate`` runs the list on float64 scalars or whole arrays (the Monte
Carlo method evaluates it on chunks of M values, never per trial); ``gradient`` adds one
reverse sweep (reverse accumulation, "adjoint" differentiation) that gives every ∂f/∂x_i
of one output in a single pass, so the cost of the sensitivity coefficients grows with the
size of the expression, not with the number of inputs times that size. The symbolic
coefficients that a report prints come from ``sympy.diff`` and agree with these to
rounding (tested).

To add a function: map its sympy class in ``_FORWARD`` and its derivative in ``_DERIV``.
"""

from __future__ import annotations

from typing import Any, Callable, Sequence

import numpy as np
import sympy

__all__ = ["Program"]

_FORWARD: dict[Any, Callable[[Any], Any]] = {
    sympy.exp: np.exp, sympy.log: np.log, sympy.sin: np.sin, sympy.cos: np.cos,
    sympy.tan: np.tan, sympy.asin: np.arcsin, sympy.acos: np.arccos, sympy.atan: np.arctan,
    sympy.Abs: np.abs,
}
# d f(x) / dx given x and f(x)
_DERIV: dict[Any, Callable[[Any, Any], Any]] = {
    sympy.exp: lambda x, fx: fx,
    sympy.log: lambda x, fx: 1.0 / x,
    sympy.sin: lambda x, fx: np.cos(x),
    sympy.cos: lambda x, fx: -np.sin(x),
    sympy.tan: lambda x, fx: 1.0 + fx * fx,
    sympy.asin: lambda x, fx: 1.0 / np.sqrt(1.0 - x * x),
    sympy.acos: lambda x, fx: -1.0 / np.sqrt(1.0 - x * x),
    sympy.atan: lambda x, fx: 1.0 / (1.0 + x * x),
    sympy.Abs: lambda x, fx: np.sign(x),
}


class Program:
    """Operations ``(kind, argument slots, payload)`` over slots; inputs fill slots first."""

    def __init__(self, outputs: Sequence[Any], symbols: Sequence[sympy.Symbol]) -> None:
        self.symbols = tuple(symbols)
        self.slot: dict[Any, int] = {s: i for i, s in enumerate(self.symbols)}
        self.ops: list[tuple[str, tuple[int, ...], Any]] = []
        self.constants: dict[int, float] = {}
        self.outputs = tuple(self._compile(expr) for expr in outputs)
        self.release = self._last_uses()

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

    def _compile(self, root: Any) -> int:
        stack: list[tuple[Any, bool]] = [(root, False)]
        while stack:
            node, ready = stack.pop()
            if node in self.slot:
                continue
            if node.is_Number or not node.free_symbols and not node.args:
                self._emit(node, "const", (), _number(node))
                continue
            if node.is_Symbol:
                raise KeyError(f"symbol {node} is not an input")
            if not ready:
                stack.append((node, True))
                stack.extend((arg, False) for arg in node.args if arg not in self.slot)
                continue
            self._emit_operation(node)
        return self.slot[root]

    def _emit(self, node: Any, kind: str, args: tuple[int, ...], payload: Any) -> None:
        slot = len(self.symbols) + len(self.ops)
        self.ops.append((kind, args, payload))
        self.slot[node] = slot
        if kind == "const":
            self.constants[slot] = payload

    def _emit_operation(self, node: Any) -> None:
        args = tuple(self.slot[a] for a in node.args)
        if node.is_Add:
            self._emit(node, "add", args, None)
        elif node.is_Mul:
            self._emit(node, "mul", args, None)
        elif node.is_Pow:
            exponent = node.args[1]
            fixed = float(exponent) if exponent.is_Number else None
            self._emit(node, "pow", args, fixed)
        elif node.func in _FORWARD:
            self._emit(node, "call", args, node.func)
        else:
            raise ValueError(f"no numeric rule for {node.func.__name__}")

    def evaluate(self, values: Sequence[Any]) -> list[Any]:
        """The outputs for input values (scalars, or equal-length float64 arrays).

        Intermediate arrays are dropped as soon as no later operation needs them, so a
        large model evaluated on a block of trials holds only its live values."""
        slots: list[Any] = list(values)
        with np.errstate(all="ignore"):
            for (kind, args, payload), done in zip(self.ops, self.release):
                slots.append(_apply(kind, [slots[a] for a in args], payload))
                for slot in done:
                    slots[slot] = None
        return [slots[i] for i in self.outputs]

    def _forward(self, values: Sequence[Any]) -> list[Any]:
        slots: list[Any] = list(values)
        with np.errstate(all="ignore"):
            for kind, args, payload in self.ops:
                slots.append(_apply(kind, [slots[a] for a in args], payload))
        return slots

    def gradient(self, values: Sequence[float] | np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Outputs and the Jacobian ∂y_k/∂x_i at scalar input values (reverse sweeps)."""
        slots = self._forward([np.float64(v) for v in values])
        n_in = len(self.symbols)
        jacobian = np.zeros((len(self.outputs), n_in))
        with np.errstate(all="ignore"):
            for row, out in enumerate(self.outputs):
                adjoint = np.zeros(len(slots))
                adjoint[out] = 1.0
                for index in range(len(slots) - 1, n_in - 1, -1):
                    if adjoint[index] != 0.0:
                        self._backward(index, slots, adjoint)
                jacobian[row] = adjoint[:n_in]
        values_out = np.array([slots[i] for i in self.outputs], dtype=float)
        return values_out, jacobian

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


def _number(node: Any) -> float:
    try:
        return float(node)
    except (TypeError, ValueError):  # zoo, nan or a complex constant such as sqrt(-1)
        return float("nan")


def _apply(kind: str, operands: list[Any], payload: Any) -> Any:
    if kind == "add":
        total = operands[0] + operands[1]
        for term in operands[2:]:
            total = total + term
        return total
    if kind == "mul":
        product = operands[0] * operands[1]
        for factor in operands[2:]:
            product = product * factor
        return product
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
