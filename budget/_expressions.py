"""The expression language of model files: a whitelist over Python's ``ast``.

Method: the text is parsed by ``ast.parse(mode="eval")`` (which never runs it), every node
is checked against a short whitelist, and the accepted tree is rebuilt node by node into a
graph of operations (``algebra.Node``) from an explicit symbol table. Model text is never
handed to ``eval``, ``sympify`` or ``parse_expr``; every name is an ordinary symbol
(``E``, ``I``, ``S``, ``pi`` and ``gamma`` included). Long sums and products (thousands of
terms) are split at their top-level operators before ``ast.parse`` sees them, so that no
step of reading a model recurses once per term. While building, the unit of each
sub-expression is carried along so that sums of unlike dimensions, dimensioned function
arguments and misused Celsius temperatures are refused before any number is computed.
"""

from __future__ import annotations

import ast
import keyword
import math
import re
from dataclasses import dataclass
from fractions import Fraction
from operator import attrgetter
from typing import Any, Callable, Mapping, Sequence

from . import _algebra as alg
from . import _longparse as longparse
from ._algebra import Node
from ._errors import (BudgetError, Location, ModelSyntaxError, UnitError, UnknownNameError,
                      did_you_mean)
from ._limits import (LIMITS_PAGE, MAX_EXACT_DIGITS, MAX_EXPONENT, MAX_EXPRESSION_CHARS,
                     MAX_NESTING, MAX_NUMBER_DIGITS, character_name, excerpt, offset_in,
                     shorten)
from ._units import DIMENSIONLESS, dimension_text, parse_unit

__all__ = ["Term", "parse_expression", "names_in", "build", "FUNCTIONS"]

_PLAIN = ("sqrt", "exp", "log", "log10", "sin", "cos", "tan", "asin", "acos", "atan", "abs")
FUNCTIONS = tuple(sorted([*_PLAIN, "air_density"]))

_BINARY = {ast.Add: "+", ast.Sub: "-", ast.Mult: "*", ast.Div: "/", ast.Pow: "**"}
_FORBIDDEN = {
    ast.Attribute: "an attribute access", ast.Subscript: "a subscript",
    ast.Lambda: "a lambda", ast.ListComp: "a comprehension", ast.SetComp: "a comprehension",
    ast.DictComp: "a comprehension", ast.GeneratorExp: "a comprehension",
    ast.Compare: "a comparison", ast.BoolOp: "a boolean operator",
    ast.IfExp: "a conditional expression", ast.List: "a list", ast.Tuple: "a tuple",
    ast.Dict: "a dictionary", ast.Set: "a set", ast.NamedExpr: "an assignment",
    ast.Starred: "a starred argument", ast.JoinedStr: "a string", ast.Await: "an await",
    ast.Yield: "a yield", ast.YieldFrom: "a yield", ast.Slice: "a slice",
}


@dataclass(frozen=True, slots=True)
class Term:
    """A built sub-expression: in coherent SI (``expr``), as written (``shown``), and in
    coherent SI with built-in functions kept as opaque calls (``opaque``, for display of
    sensitivity formulas), with its unit."""

    expr: Any
    shown: Any
    unit: Any
    offset: bool = False
    opaque: Any = None


def parse_expression(text: Any, where: Location) -> ast.Expression:
    """Parse and check an expression's grammar; the text is never executed."""
    if not isinstance(text, str):
        raise ModelSyntaxError(f"expected an expression string, found {text!r}", where)
    if not text.strip():
        raise ModelSyntaxError("expected an expression, found an empty string", where)
    _check_text(text, where)
    shape = _shape(text)
    known = _known_shape(shape, text, where)
    if known is not None:
        return known
    try:
        tree = longparse.parse(text.strip())
    except SyntaxError as exc:
        raise ModelSyntaxError(f"expected an arithmetic expression, found "
                               f"'{_near(text.strip(), exc.lineno, exc.offset)}' (syntax "
                               f"error at column "
                               f"{exc.offset or 0})", where) from exc
    except (RecursionError, MemoryError) as exc:
        raise ModelSyntaxError(f"expected an expression nested at most {MAX_NESTING} deep "
                               f"(limits: {LIMITS_PAGE}), found deeper nesting", where
                               ) from exc
    nodes, deepest = _walk(tree)
    if deepest > MAX_NESTING:
        raise ModelSyntaxError(f"expected an expression nested at most {MAX_NESTING} "
                               f"deep (brackets, powers, function calls and signs; "
                               f"limits: {LIMITS_PAGE}), found deeper nesting", where)
    for node in nodes:  # constructs first, so that '(lambda: x)()' is named a lambda
        if type(node) in _FORBIDDEN:
            raise ModelSyntaxError(f"expected arithmetic only, found {_FORBIDDEN[type(node)]}"
                                   f" in '{text.strip()}'", where)
    for node in nodes:
        if type(node) not in _PLAIN_NODES:
            _check_node(node, text, where)
    names = _names(nodes)
    setattr(tree, _NAMES, names)
    _remember_shape(shape, names, tree)
    return tree


# Shapes of short expressions already checked: the text with each quantity's name replaced
# by the order of its first appearance ('M * U_7 * t_7 / m_7' and 'M * U_8 * t_8 / m_8'
# are one shape) → the order in which ``_names`` lists those names, the checked tree of
# the first text of that shape and its names in textual order. Every check of
# ``parse_expression`` depends on the shape (the operators, numbers, calls, nesting),
# never on which names fill it, but for the '__' a name may not start with, which is
# checked on each text; and every tree of a shape is the first one with other names. So a
# text of a known shape is not parsed again: it takes the first text's tree and the
# renaming of its names (``_RENAME``, which ``build`` follows).
_SHAPES: dict[tuple[str | int, ...], tuple[tuple[int, ...], ast.Expression, list[str]]] = {}
_Shape = tuple[tuple[str | int, ...], list[str]]  # a key and the names in textual order
_SHAPE_CHARS = 300  # longer texts are rarely written twice
_LITERAL = frozenset(keyword.kwlist)  # True, False, None among them
_RENAME = "_budget_rename"  # a reused tree's names → this text's names


# a number-like run (digits, letters, points, a sign after an exponent's e) or a name,
# with the bracket of a call after it
_WORD = re.compile(r"[0-9.](?:[0-9A-Za-z_.]|(?<=[eE])[-+])*|([A-Za-z_][A-Za-z0-9_]*)(\s*\()?")


def _shape(text: str) -> _Shape | None:
    """The shape key of a short text (its characters, each quantity's name replaced by
    the order of its first appearance) and those names in textual order."""
    stripped = text.strip()
    if len(stripped) > _SHAPE_CHARS:
        return None
    order: dict[str, int] = {}
    key: list[str | int] = []
    last = 0
    for found in _WORD.finditer(stripped):
        name = found.group(1)
        if name is None or name in _LITERAL or found.group(2) is not None:
            continue  # a number, a reserved word or a function: part of the shape
        key += (stripped[last:found.start()], order.setdefault(name, len(order)))
        last = found.end()
    key.append(stripped[last:])
    return tuple(key), list(order)


def _known_shape(found: _Shape | None, text: str, where: Location
                 ) -> ast.Expression | None:
    """The tree of ``text`` when its shape (``found``) was checked before, else None: the
    first tree of that shape, with the renaming of its names to this text's."""
    if found is None:
        return None
    known = _SHAPES.get(found[0])
    if known is None:
        return None
    names = found[1]
    for name in names:
        if name.startswith("__"):
            raise ModelSyntaxError(f"names starting with '__' are not allowed: '{name}'",
                                   where)
    positions, first, written = known
    tree = ast.Expression(body=first.body)
    setattr(tree, _NAMES, [names[k] for k in positions])
    if names != written:
        setattr(tree, _RENAME, dict(zip(written, names)))
    return tree


def _remember_shape(found: _Shape | None, names: list[str], tree: ast.Expression) -> None:
    if found is None or len(_SHAPES) >= 4096:
        return
    key, written = found
    if sorted(written) != sorted(names):  # a shape the key does not describe: not kept
        return
    position = {name: k for k, name in enumerate(written)}
    _SHAPES[key] = (tuple(position[name] for name in names), tree, written)


_NAMES = "_budget_names"  # the names used as quantities, found while checking the tree
_PLAIN_NODES = frozenset({ast.Load, ast.Add, ast.Sub, ast.Mult, ast.Div, ast.Pow, ast.USub,
                          ast.UAdd})  # nothing for _check_node to refuse


def _walk(tree: ast.Expression) -> tuple[list[ast.AST], int]:
    """Every node below ``tree`` in the order of ``ast.walk`` (breadth first) and the
    deepest nesting (the body at 1; a left operand continuing a sum or product chain at
    its parent's depth, every other child one deeper), without recursion."""
    nodes: list[ast.AST] = [tree.body]
    depths = [1]
    k = 0
    while k < len(nodes):
        node, depth = nodes[k], depths[k]
        k += 1
        kind = type(node)
        if kind is ast.BinOp:
            left = node.left  # type: ignore[attr-defined]
            nodes += (left, node.op, node.right)  # type: ignore[attr-defined]
            depths += (depth if _same_chain(node, left) else depth + 1, depth + 1, depth + 1)
        elif kind is ast.Name:
            nodes.append(node.ctx)  # type: ignore[attr-defined]
            depths.append(depth + 1)
        elif kind is not ast.Constant:
            children = list(ast.iter_child_nodes(node))
            nodes += children
            depths += [depth + 1] * len(children)
    return nodes, max(depths)


# Characters the grammar knows: these give their own message (a comparison, a string…);
# everything else ('#', ';', '\\', '$', non-ASCII letters, control characters) is refused
# before parsing, so that nothing after a '#' can be silently dropped.
_KNOWN = frozenset("abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789_"
                   " \t\n\r.,()+-*/^%<>=!&|~@[]{}:'\"")
_DIGITS = re.compile(r"[0-9][0-9_]*")
_TOO_LONG = re.compile(r"[0-9][0-9_]{%d}" % MAX_NUMBER_DIGITS)  # a run of more digits


def _check_text(text: str, where: Location) -> None:
    if len(text) > MAX_EXPRESSION_CHARS:
        raise ModelSyntaxError(f"expected an expression of at most {MAX_EXPRESSION_CHARS:,} "
                               f"characters (limits: {LIMITS_PAGE}), found {len(text):,}",
                               where)
    for column, char in enumerate([] if _KNOWN.issuperset(text) else text, start=1):
        if char not in _KNOWN:
            hint = " (comments are not part of an expression)" if char == "#" else ""
            raise ModelSyntaxError(f"expected only names, numbers, + - * / ** and "
                                   f"parentheses, found {character_name(char)} at column "
                                   f"{column}{hint}", where)
    if _TOO_LONG.search(text) is not None:  # found in one scan; measured only then
        longest = max(len(m.group()) for m in _DIGITS.finditer(text))
        raise ModelSyntaxError(f"expected numbers of at most {MAX_NUMBER_DIGITS} digits "
                               f"(limits: {LIMITS_PAGE}), found one of {longest} digits",
                               where)


_CHAINS = ((ast.Add, ast.Sub), (ast.Mult, ast.Div))


def _same_chain(parent: ast.AST, child: ast.AST) -> bool:
    """A left operand continuing a sum or product chain adds no nesting level."""
    return (isinstance(parent, ast.BinOp) and isinstance(child, ast.BinOp)
            and any(isinstance(parent.op, c) and isinstance(child.op, c) for c in _CHAINS))


def _near(text: str, line: int | None, column: int | None) -> str:
    """An excerpt of ``text`` around a 1-based line and column (a SyntaxError's)."""
    return excerpt(text, offset_in(text, line, (column or 1) - 1))


def _at_node(text: str, node: ast.AST) -> str:
    """An excerpt of ``text`` around where ``node`` starts."""
    return excerpt(text, offset_in(text, getattr(node, "lineno", 1),
                                   getattr(node, "col_offset", 0)))


def _check_node(node: ast.AST, text: str, where: Location) -> None:
    if isinstance(node, ast.Constant) and isinstance(node.value, float) \
            and not math.isfinite(node.value):
        raise ModelSyntaxError(f"expected a finite number, found "
                               f"'{ast.get_source_segment(text.strip(), node)}' (beyond the "
                               f"floating-point range of ±1.8e308)", where)
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.BitXor):
        raise ModelSyntaxError(f"'^' is not a power in '{_at_node(text.strip(), node)}': write "
                               "'**'", where)
    if isinstance(node, ast.BinOp) and type(node.op) not in _BINARY:
        raise ModelSyntaxError(f"expected one of + - * / ** in "
                               f"'{_at_node(text.strip(), node)}', found "
                               f"'{_op_text(node.op)}'", where)
    if isinstance(node, ast.UnaryOp) and not isinstance(node.op, (ast.USub, ast.UAdd)):
        raise ModelSyntaxError(f"expected unary + or -, found '{_op_text(node.op)}' in "
                               f"'{text.strip()}'", where)
    if isinstance(node, ast.Constant) and (isinstance(node.value, bool)
                                           or not isinstance(node.value, (int, float))):
        kind = "a string" if isinstance(node.value, str) else type(node.value).__name__
        raise ModelSyntaxError(f"expected a number, found {kind} {node.value!r} in "
                               f"\"{text.strip()}\"", where)
    if isinstance(node, ast.Name) and node.id.startswith("__"):
        raise ModelSyntaxError(f"names starting with '__' are not allowed: '{node.id}'", where)
    if isinstance(node, ast.Call):
        _check_call(node, text, where)


def _check_call(node: ast.Call, text: str, where: Location) -> None:
    if not isinstance(node.func, ast.Name) or node.func.id not in FUNCTIONS:
        called = ast.unparse(node.func)
        raise ModelSyntaxError(f"expected a call of one of {', '.join(FUNCTIONS)}, found "
                               f"'{called}(...)'{did_you_mean(called, FUNCTIONS)}", where)
    if node.keywords:
        raise ModelSyntaxError(f"keyword arguments are not allowed: '{ast.unparse(node)}'",
                               where)
    wanted = (3, 4) if node.func.id == "air_density" else (1,)
    if len(node.args) not in wanted:
        count = " or ".join(str(w) for w in wanted)
        raise ModelSyntaxError(f"{node.func.id}() expects {count} argument(s), found "
                               f"{len(node.args)} in '{ast.unparse(node)}'", where)


def _op_text(op: ast.AST) -> str:
    return {ast.Mod: "%", ast.FloorDiv: "//", ast.MatMult: "@", ast.LShift: "<<",
            ast.RShift: ">>", ast.BitOr: "|", ast.BitAnd: "&", ast.Invert: "~",
            ast.Not: "not"}.get(type(op), type(op).__name__)


def names_in(tree: ast.AST) -> list[str]:
    """Names used as quantities (not function names), in order of first appearance."""
    found = getattr(tree, _NAMES, None)
    return list(found) if found is not None else _names(list(ast.walk(tree)))


def _names(nodes: list[ast.AST]) -> list[str]:
    called: set[int] = set()
    names: list[ast.Name] = []
    for node in nodes:
        if isinstance(node, ast.Call):
            called.add(id(node.func))
        elif isinstance(node, ast.Name):
            names.append(node)
    return list(dict.fromkeys(n.id for n in names if id(n) not in called))


def build(tree: ast.Expression, table: Mapping[str, Term], text: str,
          where: Location) -> Term:
    """Rebuild a checked tree as a graph :class:`Term`, checking units on the way. A tree
    reused from a text of the same shape is built through its renaming; should that
    fail, the text is parsed and built again on its own, so that the message quotes it."""
    rename: dict[str, str] | None = getattr(tree, _RENAME, None)
    if rename is not None:
        try:
            return _Builder(table, text.strip(), where, rename).visit(tree.body)
        except BudgetError:
            tree = ast.parse(text.strip(), mode="eval")
    return _Builder(table, text.strip(), where).visit(tree.body)


_SUMS = {ast.Add: 1, ast.Sub: -1}
_PRODUCTS = {ast.Mult: 1, ast.Div: -1}


def _chain(node: ast.AST, ops: dict[type[ast.operator], int]) -> list[tuple[int, ast.AST]]:
    """Operands of a left-nested chain such as a - b + c, with their signs."""
    parts: list[tuple[int, ast.AST]] = []
    while isinstance(node, ast.BinOp) and type(node.op) in ops:
        parts.append((ops[type(node.op)], node.right))
        node = node.left
    parts.append((1, node))
    return parts[::-1]


def _chain_length(node: ast.AST, ops: dict[type[ast.operator], int]) -> int:
    count = 1
    while isinstance(node, ast.BinOp) and type(node.op) in ops:
        count += 1
        node = node.left
    return count


def _steps(node: ast.AST, ops: dict[type[ast.operator], int]) -> list[ast.BinOp]:
    """The BinOp nodes of a chain from the innermost out."""
    steps = []
    while isinstance(node, ast.BinOp) and type(node.op) in ops:
        steps.append(node)
        node = node.left
    return steps[::-1]


_Graph = Callable[[Term], Any]  # one of a term's three graphs
_EXPR: _Graph = attrgetter("expr")
_SHOWN: _Graph = attrgetter("shown")
_OPAQUE: _Graph = attrgetter("opaque")


def _graphs(make: Callable[[_Graph], Any], operands: Sequence[Term]) -> tuple[Any, Any, Any]:
    """An operation's three graphs, ``make(graph)`` over its operands' graphs of that kind:
    built once where the operands' graphs are the same nodes. An input in coherent units
    (and a number) is one node in all three, and so is everything built only from such;
    its shown graph is then its graph, not a copy alike (a sum of 10⁴ inputs is one sum
    node, not three), which changes no value or formula: nodes never change."""
    expr = make(_EXPR)
    shown = expr if all(t.shown is t.expr for t in operands) else make(_SHOWN)
    if all(t.opaque is t.expr for t in operands):
        opaque = expr
    elif all(t.opaque is t.shown for t in operands):
        opaque = shown
    else:
        opaque = make(_OPAQUE)
    return expr, shown, opaque


class _Builder:
    def __init__(self, table: Mapping[str, Term], text: str, where: Location,
                 rename: dict[str, str] | None = None) -> None:
        self.table, self.text, self.where, self.rename = table, text, where, rename
        self.dimensionless = DIMENSIONLESS

    def segment(self, node: ast.AST) -> str:
        """The source of ``node`` for a message (start … end when long)."""
        return excerpt(ast.get_source_segment(self.text, node) or ast.unparse(node))

    def visit(self, node: ast.AST) -> Term:
        if isinstance(node, ast.Constant):
            number = alg.number(node.value)  # type: ignore[arg-type]  # int or float, checked
            return Term(number, number, self.dimensionless, opaque=number)
        if isinstance(node, ast.Name):
            return self.name(node)
        if isinstance(node, ast.UnaryOp):
            return self.unary(node)
        if isinstance(node, ast.BinOp):
            return self.binary(node)
        assert isinstance(node, ast.Call)  # the grammar check leaves nothing else
        return self.call(node)

    def name(self, node: ast.Name) -> Term:
        if self.rename is not None:
            found = self.table.get(self.rename.get(node.id, node.id))
            if found is None:  # build() parses the text and reports it from there
                raise UnknownNameError("unknown quantity", self.where)
            return found
        if node.id not in self.table:
            raise UnknownNameError(f"unknown quantity '{node.id}' in "
                                   f"'{_at_node(self.text, node)}'"
                                   f"{did_you_mean(node.id, self.table)}", self.where)
        return self.table[node.id]

    def unary(self, node: ast.UnaryOp) -> Term:
        inner = self.visit(node.operand)
        if isinstance(node.op, ast.UAdd):
            return inner
        self.refuse_offset(inner, node)
        expr, shown, opaque = _graphs(lambda graph: -graph(inner), (inner,))
        return Term(expr, shown, inner.unit, opaque=opaque)

    def binary(self, node: ast.BinOp) -> Term:
        if isinstance(node.op, (ast.Add, ast.Sub)) and _chain_length(node, _SUMS) > 2:
            return self.long_sum(node)
        if isinstance(node.op, (ast.Mult, ast.Div)) and _chain_length(node, _PRODUCTS) > 2:
            return self.long_product(node)
        left, right = self.visit(node.left), self.visit(node.right)
        if isinstance(node.op, (ast.Add, ast.Sub)):
            return self.sum(node, left, right)
        for side in (left, right):
            self.refuse_offset(side, node)
        if isinstance(node.op, ast.Mult):
            expr, shown, opaque = _graphs(lambda graph: graph(left) * graph(right),
                                          (left, right))
            return Term(expr, shown, left.unit * right.unit, opaque=opaque)
        if isinstance(node.op, ast.Div):
            expr, shown, opaque = _graphs(lambda graph: graph(left) / graph(right),
                                          (left, right))
            return Term(expr, shown, left.unit / right.unit, opaque=opaque)
        return self.power(node, left, right)

    def long_sum(self, node: ast.BinOp) -> Term:
        """a ± b ± c ± … built as one sum node (linear in the number of terms)."""
        parts = _chain(node, _SUMS)
        terms = [(sign, operand, self.visit(operand)) for sign, operand in parts]
        if any(term.offset for _, _, term in terms):  # Celsius rules: pairwise, in order
            total = terms[0][2]
            for (_, _, term), step in zip(terms[1:], _steps(node, _SUMS)):
                total = self.sum(step, total, term)
            return total
        first_node, first = terms[0][1], terms[0][2]
        for _, operand, term in terms[1:]:
            if term.unit.dimensionality != first.unit.dimensionality:
                raise UnitError(
                    f"expected terms of like dimension in '{self.segment(node)}', found "
                    f"'{self.segment(first_node)}' in {dimension_text(first.unit)} and "
                    f"'{self.segment(operand)}' in {dimension_text(term.unit)}", self.where)
        def pick(graph: _Graph) -> Any:
            return alg.add(*(graph(t) if sign > 0 else -graph(t) for sign, _, t in terms))

        expr, shown, opaque = _graphs(pick, [t for _, _, t in terms])
        return Term(expr, shown, first.unit, opaque=opaque)

    def long_product(self, node: ast.BinOp) -> Term:
        """a */ b */ c … built as one product node."""
        factors = [(sign, operand, self.visit(operand)) for sign, operand in
                   _chain(node, _PRODUCTS)]
        unit = self.dimensionless
        for sign, _, term in factors:
            self.refuse_offset(term, node)
            unit = unit * term.unit if sign > 0 else unit / term.unit
        def pick(graph: _Graph) -> Any:
            return alg.mul(*(graph(t) if sign > 0 else alg.reciprocal(graph(t))
                             for sign, _, t in factors))

        expr, shown, opaque = _graphs(pick, [t for _, _, t in factors])
        return Term(expr, shown, unit, opaque=opaque)

    def sum(self, node: ast.BinOp, left: Term, right: Term) -> Term:
        plus = isinstance(node.op, ast.Add)
        if left.unit.dimensionality != right.unit.dimensionality:
            raise UnitError(
                f"expected terms of like dimension in '{self.segment(node)}', found "
                f"'{self.segment(node.left)}' in {dimension_text(left.unit)} and "
                f"'{self.segment(node.right)}' in {dimension_text(right.unit)}", self.where)
        offset = left.offset or right.offset
        if left.offset and right.offset:
            if plus:
                raise UnitError(f"two Celsius temperatures cannot be added in "
                                f"'{self.segment(node)}'", self.where)
            offset = False
        elif right.offset and not plus:
            raise UnitError(f"a Celsius temperature cannot be subtracted from a temperature "
                            f"difference in '{self.segment(node)}'", self.where)
        expr, shown, opaque = _graphs(
            (lambda graph: graph(left) + graph(right)) if plus else (
                lambda graph: graph(left) - graph(right)), (left, right))
        return Term(expr, shown, left.unit, offset, opaque)

    def power(self, node: ast.BinOp, base: Term, exponent: Term) -> Term:
        if not exponent.unit.dimensionless:
            raise UnitError(f"expected a dimensionless exponent in '{self.segment(node)}', "
                            f"found {dimension_text(exponent.unit)}", self.where)
        unit = base.unit
        if not base.unit.dimensionless:
            if not exponent.expr.is_number:
                raise UnitError(f"expected a numeric exponent for a quantity in "
                                f"{dimension_text(base.unit)} in '{self.segment(node)}', "
                                f"found '{self.segment(node.right)}'", self.where)
            unit = base.unit ** _rational_exponent(exponent.expr, base.unit,
                                                   self.segment(node.right), self.where)
        _check_power(base.expr, exponent.expr, self.segment(node), self.where)
        expr, shown, opaque = _graphs(lambda graph: graph(base) ** graph(exponent),
                                      (base, exponent))
        return Term(expr, shown, unit, opaque=opaque)

    def refuse_offset(self, term: Term, node: ast.AST) -> None:
        if term.offset:
            raise UnitError(f"a Celsius temperature may enter only as a difference of two "
                            f"temperatures or as the argument of air_density, found "
                            f"'{self.segment(node)}'", self.where)

    def call(self, node: ast.Call) -> Term:
        name = node.func.id  # type: ignore[attr-defined]
        args = [self.visit(arg) for arg in node.args]
        if name == "air_density":
            return self.air_density(node, args)
        (arg,) = args
        self.refuse_offset(arg, node)
        if name in ("sqrt", "abs"):
            unit = arg.unit ** 0.5 if name == "sqrt" else arg.unit
        elif not arg.unit.dimensionless:
            raise UnitError(f"expected a dimensionless argument of {name}() in "
                            f"'{self.segment(node)}', found {dimension_text(arg.unit)}",
                            self.where)
        else:
            unit = self.dimensionless
        expr, shown, opaque = _graphs(lambda graph: alg.call(name, graph(arg)), (arg,))
        return Term(expr, shown, unit, opaque=opaque)

    def air_density(self, node: ast.Call, args: list[Term]) -> Term:
        from ._chemistry import air_density_expression

        unit_of: Callable[[str], Any] = lambda text: parse_unit(text, self.where).unit  # noqa: E731
        wanted = [("temperature", unit_of("K")), ("pressure", unit_of("Pa")),
                  ("relative humidity", self.dimensionless),
                  ("CO2 mole fraction", self.dimensionless)]
        for (label, unit), arg, arg_node in zip(wanted, args, node.args):
            if arg.unit.dimensionality != unit.dimensionality:
                raise UnitError(f"air_density() expects its {label} in {dimension_text(unit)}"
                                f", found '{self.segment(arg_node)}' in "
                                f"{dimension_text(arg.unit)}", self.where)
        kelvin = alg.number(Fraction(27315, 100))
        celsius = args[0].expr if args[0].offset else args[0].expr - kelvin
        values = [celsius, *(a.expr for a in args[1:])]
        shown = alg.call("air_density", *(a.shown for a in args))
        opaque = alg.call("air_density",
                          args[0].opaque if args[0].offset else args[0].opaque - kelvin,
                          *(a.opaque for a in args[1:]))
        density = air_density_expression(*values, number=alg.number,
                                         exp=lambda x: alg.call("exp", x))
        return Term(density, shown, unit_of("kg/m^3"), opaque=opaque)


def _check_power(base: Node, exponent: Node, shown: str, where: Location) -> None:
    """Refuse powers whose exact value or derivatives would be unbounded in cost."""
    if not exponent.is_number:
        return
    exact = alg.exact_value(exponent)
    size = abs(float(exact)) if exact is not None else abs(alg.constant_value(exponent))
    if not math.isfinite(size) or size > MAX_EXPONENT:
        raise ModelSyntaxError(f"expected an exponent of at most {MAX_EXPONENT} in size "
                               f"(limits: {LIMITS_PAGE}), found '{shorten(shown)}' with an "
                               f"exponent of {_magnitude(exact, size)}", where)
    number = alg.exact_value(base) if exact is not None else None
    if number is not None and number not in (0, 1, -1):
        digits = size * max(math.log10(abs(number.numerator)),
                            math.log10(number.denominator))
        if digits > MAX_EXACT_DIGITS:
            raise ModelSyntaxError(f"expected exact numbers of at most {MAX_EXACT_DIGITS} "
                                   f"digits (limits: {LIMITS_PAGE}), found "
                                   f"'{shorten(shown)}' of about {digits:.0f} digits", where)


def _magnitude(exact: Fraction | None, size: float) -> str:
    if exact is not None:
        try:
            return f"{float(exact):.3g}"
        except OverflowError:
            return "more than 1e308"
    return f"{size:.3g}" if math.isfinite(size) else "more than 1e308"


def _rational_exponent(exponent: Node, unit: Any, shown: str, where: Location) -> Fraction:
    """The exponent of a dimensioned base as an exact fraction (m**(1/1001) stays 1/1001);
    a decimal exponent counts when a fraction of denominator ≤ 10⁶ equals it (0.5 = 1/2)."""
    simple = alg.exact_value(exponent)
    if simple is None:
        value = alg.constant_value(exponent)
        if math.isfinite(value):
            simple = Fraction(value).limit_denominator(10 ** 6)
            if abs(float(simple) - value) > 1e-12 * max(1.0, abs(value)):
                simple = None
    if simple is None or abs(simple) > MAX_EXPONENT or simple.denominator > 10 ** 6:
        raise UnitError(f"expected a rational exponent (at most {MAX_EXPONENT} in size, "
                        f"denominator at most 10**6) for a quantity in "
                        f"{dimension_text(unit)}, found '{shorten(shown)}'", where)
    return simple
