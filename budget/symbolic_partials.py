"""Formulas of the local partial derivatives of one equation, for display only.

Method: the equation's own text (its ``ast``) is rebuilt as a sympy expression in which
every written name is a plain real symbol — definitions are *not* substituted — and
differentiated with respect to one written name at a time. The result is printed as
Python text, which ``typeset`` then renders like any equation. A derivative through the
built-in ``air_density`` stays unevaluated in sympy; such a formula is not shown (its
value is), so no internal object (``Derivative``, ``Subs``) can reach a report.
"""

from __future__ import annotations

import ast
import re
from typing import Any

__all__ = ["local_formulas"]

_NODE_LIMIT = 400   # larger equations: values only


def local_formulas(tree: ast.expr, names: list[str]) -> dict[str, str]:
    """{name: text of ∂(equation)/∂name} for the names whose derivative prints plainly."""
    import sympy

    if sum(1 for _ in ast.walk(tree)) > _NODE_LIMIT:
        return {}
    symbols: dict[str, Any] = {}
    expression = _build(tree, symbols, sympy)
    out = {}
    for name in names:
        if name not in symbols:
            continue
        derivative = sympy.diff(expression, symbols[name])
        if derivative.has(sympy.Derivative, sympy.Subs):
            continue
        text = sympy.sstr(derivative, full_prec=False, order="none")
        if _plain(text, symbols):
            out[name] = text
    return out


def _plain(text: str, symbols: dict[str, Any]) -> bool:
    """True when every name in the printed text is a model name or a known function."""
    try:
        tree = ast.parse(text, mode="eval")
    except SyntaxError:
        return False
    allowed = {"sqrt", "exp", "log", "sin", "cos", "tan", "asin", "acos", "atan", "sign",
               "Abs", "air_density"}
    for node in ast.walk(tree):
        if isinstance(node, ast.Name) and node.id not in symbols and node.id not in allowed:
            return False
    return not re.search(r"\b(zoo|nan|oo|I)\b", text)


def _build(node: ast.expr, symbols: dict[str, Any], sympy: Any) -> Any:
    if isinstance(node, ast.BinOp):
        left, right = _build(node.left, symbols, sympy), _build(node.right, symbols, sympy)
        op = type(node.op)
        if op is ast.Add:
            return left + right
        if op is ast.Sub:
            return left - right
        if op is ast.Mult:
            return left * right
        if op is ast.Div:
            return left / right
        return left ** right
    if isinstance(node, ast.UnaryOp):
        operand = _build(node.operand, symbols, sympy)
        return -operand if isinstance(node.op, ast.USub) else operand
    if isinstance(node, ast.Call):
        name = node.func.id  # type: ignore[attr-defined]
        args = [_build(a, symbols, sympy) for a in node.args]
        functions = {"sqrt": sympy.sqrt, "exp": sympy.exp, "log": sympy.log,
                     "log10": lambda x: sympy.log(x) / sympy.log(10), "sin": sympy.sin,
                     "cos": sympy.cos, "tan": sympy.tan, "asin": sympy.asin,
                     "acos": sympy.acos, "atan": sympy.atan, "abs": sympy.Abs}
        if name in functions:
            return functions[name](*args)
        return sympy.Function(name)(*args)
    if isinstance(node, ast.Name):
        if node.id not in symbols:
            symbols[node.id] = sympy.Symbol(node.id, real=True)
        return symbols[node.id]
    value = node.value  # type: ignore[attr-defined]
    if isinstance(value, int):
        return sympy.Integer(value)
    digits = len(re.sub(r"[^0-9]", "", repr(value).split("e")[0]).lstrip("0")) or 1
    return sympy.Float(repr(value), max(digits, 1))
