"""Expression graphs of the model: the operations as written, without an algebra system.

Method: parsing a model records every operation (sum, product, power, function call) as
a :class:`Node` whose arguments are earlier nodes, so a definition used twice is one
shared node and a chain of ten thousand definitions is a chain of ten thousand nodes —
building, evaluating and differentiating it costs time in proportion to its size, and no
step recurses. The numeric path (``program.py``) compiles these graphs directly. The
algebra system (sympy) is loaded only when a formula is typeset or differentiated
symbolically: :func:`to_sympy` replays the recorded operations in sympy, in the order they
were written, so the sympy expression is the one that building it in sympy would give.

Numbers keep how they were written: an ``int``, a ``Fraction`` (unit factors) or the
text of a decimal number, so that a typeset formula shows ``1/1000`` rather than
``0.001``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Any, Callable, Iterator, TypeVar

T = TypeVar("T")

__all__ = ["Node", "Number", "symbol", "number", "call", "add", "mul", "reciprocal",
           "to_sympy", "symbols_in", "walk", "constant_value", "exact_value", "substitute",
           "fold", "FUNCTION_NAMES"]

Number = int | Fraction | str

FUNCTION_NAMES = ("sqrt", "exp", "log", "log10", "sin", "cos", "tan", "asin", "acos",
                  "atan", "abs", "air_density")


@dataclass(frozen=True, slots=True, eq=False)
class Node:
    """One operation: ``kind`` is symbol, number, add, mul, pow or call.

    Nodes compare and hash by identity: equal-looking nodes built twice are two nodes."""

    kind: str
    args: tuple["Node", ...] = ()
    name: str = ""
    exact: Number = 0

    @property
    def value(self) -> float:
        """The float value of a number node."""
        return _float(self.exact)

    @property
    def is_number(self) -> bool:
        """True when no symbol occurs below this node."""
        return not any(n.kind == "symbol" for n in walk(self))

    def __add__(self, other: Any) -> "Node":
        return add(self, lift(other))

    def __radd__(self, other: Any) -> "Node":
        return add(lift(other), self)

    def __sub__(self, other: Any) -> "Node":
        return add(self, -lift(other))

    def __rsub__(self, other: Any) -> "Node":
        return add(lift(other), -self)

    def __neg__(self) -> "Node":
        return mul(number(-1), self)

    def __mul__(self, other: Any) -> "Node":
        return mul(self, lift(other))

    def __rmul__(self, other: Any) -> "Node":
        return mul(lift(other), self)

    def __truediv__(self, other: Any) -> "Node":
        return mul(self, Node("pow", (lift(other), number(-1))))

    def __rtruediv__(self, other: Any) -> "Node":
        return mul(lift(other), Node("pow", (self, number(-1))))

    def __pow__(self, other: Any) -> "Node":
        return Node("pow", (self, lift(other)))

    def __rpow__(self, other: Any) -> "Node":
        return Node("pow", (lift(other), self))


def _float(exact: Number) -> float:
    if isinstance(exact, str):
        return float(exact)
    return float(exact)


def symbol(name: str) -> Node:
    return Node("symbol", name=name)


def number(exact: Number | float) -> Node:
    """A number node; a Python float is kept as its shortest decimal text."""
    if isinstance(exact, float):
        return Node("number", exact=repr(exact))
    return Node("number", exact=exact)


def lift(value: Any) -> Node:
    return value if isinstance(value, Node) else number(value)


def add(*terms: Node) -> Node:
    return Node("add", tuple(terms))


def mul(*factors: Node) -> Node:
    return Node("mul", tuple(factors))


def reciprocal(node: Node) -> Node:
    """1/x as the power node x^-1 (``1 / x`` would be 1·x^-1: a product by one more)."""
    return Node("pow", (node, number(-1)))


def call(name: str, *args: Node) -> Node:
    return Node("call", tuple(args), name=name)


def walk(root: Node) -> Iterator[Node]:
    """Every node below ``root`` once (shared nodes once), without recursion."""
    seen: set[int] = set()
    stack = [root]
    while stack:
        node = stack.pop()
        if id(node) in seen:
            continue
        seen.add(id(node))
        yield node
        stack.extend(node.args)


def symbols_in(roots: Any) -> set[str]:
    """Names of the symbols that occur in any of ``roots``."""
    found: set[str] = set()
    for root in roots:
        found.update(n.name for n in walk(root) if n.kind == "symbol")
    return found


def substitute(root: Node, mapping: dict[str, Node]) -> Node:
    """``root`` with each symbol named in ``mapping`` replaced (untouched parts shared)."""
    done: dict[int, Node] = {}
    stack: list[tuple[Node, bool]] = [(root, False)]
    while stack:
        node, ready = stack.pop()
        if id(node) in done:
            continue
        if node.kind == "symbol":
            done[id(node)] = mapping.get(node.name, node)
            continue
        if not ready and node.args:
            stack.append((node, True))
            stack.extend((a, False) for a in node.args if id(a) not in done)
            continue
        args = tuple(done[id(a)] for a in node.args)
        same = all(new is old for new, old in zip(args, node.args))
        done[id(node)] = node if same else Node(node.kind, args, node.name, node.exact)
    return done[id(root)]


_EXACT_DIGITS = 20_000  # exact powers beyond about this many digits are not computed


def exact_value(root: Node) -> Fraction | None:
    """The exact rational value of a node built from integers and fractions by sums,
    products and integer powers; None when a decimal, a function or a symbol occurs."""
    return fold(root, _exact_step)


def fold(root: Node, step: Callable[[Node, list[T]], T]) -> T:
    """``step(node, values of its arguments)`` over the graph, arguments first, each shared
    node once, without recursion; the value at ``root``."""
    done: dict[int, T] = {}
    stack: list[tuple[Node, bool]] = [(root, False)]
    while stack:
        node, ready = stack.pop()
        if id(node) in done:
            continue
        if not ready and node.args:
            stack.append((node, True))
            stack.extend((a, False) for a in node.args if id(a) not in done)
            continue
        done[id(node)] = step(node, [done[id(a)] for a in node.args])
    return done[id(root)]


def _exact_step(node: Node, args: list[Fraction | None]) -> Fraction | None:
    if node.kind == "number":
        return None if isinstance(node.exact, str) else Fraction(node.exact)
    if node.kind in ("symbol", "call") or any(a is None for a in args):
        return None
    values = [a for a in args if a is not None]
    if node.kind == "add":
        return sum(values, Fraction(0))
    if node.kind == "mul":
        product = Fraction(1)
        for value in values:
            product *= value
        return product
    base, exponent = values
    if exponent.denominator != 1 or (base == 0 and exponent < 0):
        return None
    size = max(abs(base.numerator), base.denominator)
    if size > 1 and abs(exponent) * math.log10(size) > _EXACT_DIGITS:
        return None
    return base ** int(exponent)


def constant_value(node: Node) -> float:
    """The value of a node without symbols (plain float arithmetic)."""
    from ._program import Program

    return float(Program([node], []).evaluate([])[0])


def _sympy_functions() -> dict[str, Callable[..., Any]]:
    import sympy

    return {"sqrt": sympy.sqrt, "exp": sympy.exp, "log": sympy.log,
            "log10": lambda x: sympy.log(x, 10), "sin": sympy.sin, "cos": sympy.cos,
            "tan": sympy.tan, "asin": sympy.asin, "acos": sympy.acos, "atan": sympy.atan,
            "abs": sympy.Abs, "air_density": sympy.Function("air_density")}


def _sympy_number(exact: Number) -> Any:
    import sympy

    if isinstance(exact, str):
        return sympy.Float(exact)
    if isinstance(exact, Fraction):
        return sympy.Rational(exact.numerator, exact.denominator)
    return sympy.Integer(exact)


_CACHE: dict[int, tuple[Node, Any]] = {}


def to_sympy(root: Node) -> Any:
    """The sympy expression of a graph, built by replaying its operations in order."""
    import sympy

    cached = _CACHE.get(id(root))
    if cached is not None and cached[0] is root:
        return cached[1]
    functions = _sympy_functions()
    result = fold(root, lambda node, args: _replay(node, args, functions, sympy))
    if len(_CACHE) > 64:
        _CACHE.clear()
    _CACHE[id(root)] = (root, result)
    return result


def _replay(node: Node, args: list[Any], functions: dict[str, Callable[..., Any]],
            sympy: Any) -> Any:
    if node.kind == "symbol":
        return sympy.Symbol(node.name)
    if node.kind == "number":
        return _sympy_number(node.exact)
    if node.kind == "add":
        return sympy.Add(*args)
    if node.kind == "mul":
        return sympy.Mul(*args)
    if node.kind == "pow":
        return sympy.Pow(args[0], args[1])
    return functions[node.name](*args)
