"""Formulas of the local partial derivatives of one equation, for display only.

Method: the equation's own tree (Python's ``ast`` of the text in the model file) is
differentiated with respect to one written name at a time by the rules of calculus, with
every other name — definitions included — held as a symbol, so no definition is
substituted. The rules keep the user's order: in a product only the factor that depends
on the name is replaced by its derivative (eta·((U_m/R_s)·t_m + …) gives eta·(U_m/R_s) for
t_m); a quotient whose numerator does not depend on it, u/(k·f), gives −u·f′/(k·f²); zero
and unit factors are dropped. The result is printed as Python text (``ast.unparse``),
which ``typeset`` renders like any equation. A derivative through the built-in
``air_density`` has no formula here (its value is computed by ``chain``). No algebra
system is imported, so a report costs no sympy start-up.
"""

from __future__ import annotations

import ast
from typing import Callable

__all__ = ["local_formulas", "derivative"]

_NODE_LIMIT = 400   # larger equations: values only
Expr = ast.expr


class _NoFormula(Exception):
    """The derivative goes through a function whose formula is not printed."""


def local_formulas(tree: ast.expr, names: list[str]) -> dict[str, str]:
    """{name: text of ∂(equation)/∂name} for the names whose derivative prints plainly."""
    if sum(1 for _ in ast.walk(tree)) > _NODE_LIMIT:
        return {}
    out = {}
    for name in names:
        try:
            result = derivative(tree, name)
        except _NoFormula:
            continue
        out[name] = "0" if result is None else ast.unparse(result)
    return out


def derivative(node: Expr, x: str) -> Expr | None:
    """∂node/∂x as a tree, or None for zero."""
    if not _depends(node, x):
        return None
    if isinstance(node, ast.Name):
        return _one()
    if isinstance(node, ast.BinOp):
        return _binary(node, x)
    if isinstance(node, ast.UnaryOp):
        inner = derivative(node.operand, x)
        return _neg(inner) if isinstance(node.op, ast.USub) else inner
    if isinstance(node, ast.Call):
        return _call(node, x)
    raise _NoFormula(type(node).__name__)


def _depends(node: Expr, x: str) -> bool:
    return any(isinstance(n, ast.Name) and n.id == x and not _is_function(n, node)
               for n in ast.walk(node))


def _is_function(name: ast.Name, root: Expr) -> bool:
    return any(isinstance(n, ast.Call) and n.func is name for n in ast.walk(root))


def _binary(node: ast.BinOp, x: str) -> Expr | None:
    if isinstance(node.op, (ast.Add, ast.Sub)):
        left, right = derivative(node.left, x), derivative(node.right, x)
        return _add(left, right) if isinstance(node.op, ast.Add) else _sub(left, right)
    if isinstance(node.op, ast.Mult):
        return _product(node, x)
    if isinstance(node.op, ast.Div):
        return _quotient(node, x)
    if isinstance(node.op, ast.Pow):
        return _power(node, x)
    raise _NoFormula(type(node.op).__name__)


def _factors(node: Expr) -> list[Expr]:
    items: list[Expr] = []
    while isinstance(node, ast.BinOp) and isinstance(node.op, ast.Mult):
        items.append(node.right)
        node = node.left
    items.append(node)
    return items[::-1]


def _product(node: ast.BinOp, x: str) -> Expr | None:
    """Σ_i f_1 ⋯ f_i′ ⋯ f_k, each f_i′ in the place of f_i (the written order kept)."""
    factors = _factors(node)
    total: Expr | None = None
    for i, factor in enumerate(factors):
        if not _depends(factor, x):
            continue
        inner = derivative(factor, x)
        if inner is None:
            continue
        term: Expr | None = _one()
        for j, other in enumerate(factors):
            term = _mul(term, inner if j == i else other)
        total = _add(total, term)
    return total


def _quotient(node: ast.BinOp, x: str) -> Expr | None:
    u, v = node.left, node.right
    du, dv = derivative(u, x), derivative(v, x)
    if dv is None:
        return _div(du, v)
    if du is None:
        factors = _factors(v)
        moving = [f for f in factors if _depends(f, x)]
        if len(moving) == 1:  # u/(k·f): −u·f′/(k·f²)
            f = moving[0]
            rest: Expr = _one()
            for g in factors:
                rest = _mul(rest, _square(f) if g is f else g) or rest
            return _neg(_div(_mul(u, derivative(f, x)), rest))
        return _neg(_div(_mul(u, dv), _square(v)))
    return _div(_sub(_mul(du, v), _mul(u, dv)), _square(v))


def _power(node: ast.BinOp, x: str) -> Expr | None:
    base, exponent = node.left, node.right
    if not _depends(exponent, x):
        lowered = _minus_one(exponent)
        outer = _mul(exponent, base if _is_number(lowered, 1) else
                     ast.BinOp(left=base, op=ast.Pow(), right=lowered))
        return _mul(outer, derivative(base, x))
    log_base = ast.Call(func=ast.Name(id="log", ctx=ast.Load()), args=[base], keywords=[])
    inner = _add(_mul(derivative(exponent, x), log_base),
                 _div(_mul(exponent, derivative(base, x)), base))
    return _mul(node, inner)


def _call(node: ast.Call, x: str) -> Expr | None:
    name = node.func.id if isinstance(node.func, ast.Name) else ""
    if name not in _OUTER or len(node.args) != 1:
        raise _NoFormula(name)
    argument = node.args[0]
    return _mul(_OUTER[name](argument), derivative(argument, x))


def _f(name: str, *args: Expr) -> Expr:
    return ast.Call(func=ast.Name(id=name, ctx=ast.Load()), args=list(args), keywords=[])


def _n(value: int | float) -> Expr:
    return ast.Constant(value=value)


_OUTER: dict[str, Callable[[Expr], Expr]] = {
    "sqrt": lambda u: ast.BinOp(left=_n(1), op=ast.Div(),
                                right=ast.BinOp(left=_n(2), op=ast.Mult(), right=_f("sqrt", u))),
    "exp": lambda u: _f("exp", u),
    "log": lambda u: ast.BinOp(left=_n(1), op=ast.Div(), right=u),
    "log10": lambda u: ast.BinOp(left=_n(1), op=ast.Div(), right=ast.BinOp(
        left=u, op=ast.Mult(), right=_f("log", _n(10)))),
    "sin": lambda u: _f("cos", u),
    "cos": lambda u: ast.UnaryOp(op=ast.USub(), operand=_f("sin", u)),
    "tan": lambda u: ast.BinOp(left=_n(1), op=ast.Div(), right=_square(_f("cos", u))),
    "asin": lambda u: ast.BinOp(left=_n(1), op=ast.Div(), right=_f("sqrt", ast.BinOp(
        left=_n(1), op=ast.Sub(), right=_square(u)))),
    "acos": lambda u: ast.UnaryOp(op=ast.USub(), operand=ast.BinOp(
        left=_n(1), op=ast.Div(), right=_f("sqrt", ast.BinOp(left=_n(1), op=ast.Sub(),
                                                             right=_square(u))))),
    "atan": lambda u: ast.BinOp(left=_n(1), op=ast.Div(), right=ast.BinOp(
        left=_n(1), op=ast.Add(), right=_square(u))),
    "abs": lambda u: _f("sign", u),
}


# ---- constructors that drop zeros and unit factors ----------------------------------------

def _one() -> Expr:
    return ast.Constant(value=1)


def _is_number(node: Expr | None, value: float) -> bool:
    return isinstance(node, ast.Constant) and node.value == value \
        and not isinstance(node.value, bool)


def _minus_one(exponent: Expr) -> Expr:
    if isinstance(exponent, ast.Constant) and isinstance(exponent.value, (int, float)):
        lowered = exponent.value - 1
        return _n(int(lowered) if float(lowered).is_integer() else lowered)
    return ast.BinOp(left=exponent, op=ast.Sub(), right=_n(1))


def _square(node: Expr) -> Expr:
    return ast.BinOp(left=node, op=ast.Pow(), right=_n(2))


def _neg(node: Expr | None) -> Expr | None:
    """−node, the sign carried by the leftmost factor of a product: −M·Q/(z·F·m²)."""
    if node is None:
        return None
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
        return node.operand
    if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Mult, ast.Div)):
        left = _neg(node.left)
        assert left is not None  # a non-None node negates to a node
        return ast.BinOp(left=left, op=node.op, right=node.right)
    if isinstance(node, ast.Constant) and isinstance(node.value, (int, float)):
        return _n(-node.value)
    return ast.UnaryOp(op=ast.USub(), operand=node)


def _negative(node: Expr) -> Expr | None:
    """The node without its leading minus sign, or None when it has none."""
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
        return node.operand
    if isinstance(node, ast.Constant) and isinstance(node.value, (int, float)) \
            and node.value < 0:
        return _n(-node.value)
    if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Mult, ast.Div)):
        inner = _negative(node.left)
        return None if inner is None else ast.BinOp(left=inner, op=node.op, right=node.right)
    return None


def _reciprocal(node: Expr) -> Expr | None:
    """v for a node 1/v."""
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Div) \
            and _is_number(node.left, 1):
        return node.right
    return None


def _add(a: Expr | None, b: Expr | None) -> Expr | None:
    if a is None:
        return b
    if b is None:
        return a
    positive = _negative(b)
    if positive is not None:
        return ast.BinOp(left=a, op=ast.Sub(), right=positive)
    return ast.BinOp(left=a, op=ast.Add(), right=b)


def _sub(a: Expr | None, b: Expr | None) -> Expr | None:
    if b is None:
        return a
    if a is None:
        return _neg(b)
    positive = _negative(b)
    if positive is not None:
        return ast.BinOp(left=a, op=ast.Add(), right=positive)
    return ast.BinOp(left=a, op=ast.Sub(), right=b)


def _mul(a: Expr | None, b: Expr | None) -> Expr | None:
    if a is None or b is None:
        return None
    if _is_number(a, 1):
        return b
    if _is_number(b, 1):
        return a
    for first, second, flip in ((a, b, False), (b, a, True)):
        positive = _negative(first)
        if positive is not None:
            inner = _mul(second, positive) if flip else _mul(positive, second)
            return _neg(inner)
    if _reciprocal(b) is not None:          # a·(1/v) = a/v
        return _div(a, _reciprocal(b))  # type: ignore[arg-type]
    if _reciprocal(a) is not None:          # (1/v)·b = b/v
        return _div(b, _reciprocal(a))  # type: ignore[arg-type]
    return ast.BinOp(left=a, op=ast.Mult(), right=b)


def _div(a: Expr | None, b: Expr) -> Expr | None:
    if a is None:
        return None
    if _is_number(b, 1):
        return a
    positive = _negative(a)
    if positive is not None:
        return _neg(_div(positive, b))
    return ast.BinOp(left=a, op=ast.Div(), right=b)
