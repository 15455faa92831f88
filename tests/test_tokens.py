"""The quick tokenizer of long expressions (``_longparse._simple_tokens``) against the
standard library's ``tokenize`` (through ``_longparse._python_tokens``): for every text it
accepts, the very tokens, kinds and character offsets ``tokenize`` gives; every text it
cannot vouch for (an indented start, unbalanced brackets, 1_000, 007, 2j, '//' …) is left
to ``tokenize``. And the shapes of expressions already checked (``_expressions._SHAPES``):
an expression of a known shape reads as it would have read the first time."""

from __future__ import annotations

from hypothesis import example, given, settings
from hypothesis import strategies as st

from budget import _longparse as longparse

_PIECES = ["x", "x_1", "M", "e5", "1e5x", "lambda", "if", "sqrt", "2", "2.5", "1e-5",
           "1.5E+3", ".5", "3.", "0", "00", "007", "00.5", "0.5", "1_0", "2j", "1e", "0x1",
           "1.5.2", "(", ")", "[", "]", "+", "-", "*", "/", "**", "//", "***", "%", ",", " ",
           "  ", "\t", "\n", "\r", "#", "'s'", "\\", "é", "a.b"]


@settings(max_examples=3000, deadline=None)
@given(st.lists(st.sampled_from(_PIECES), min_size=1, max_size=14).map("".join))
@example("x_0 + 2.5 * (M_1 - 1e-5) / y ** 2")
@example("(a + b")
@example("  x + y")
@example("00  // 3")
def test_the_quick_tokens_are_those_of_tokenize(text: str) -> None:
    quick = longparse._simple_tokens(text)
    if quick is not None:
        assert quick == longparse._python_tokens(text)


def test_a_long_sum_is_read_by_the_quick_tokenizer() -> None:
    text = " + ".join(f"{k}.5 * x_{k}" for k in range(2000))
    quick = longparse._simple_tokens(text)
    # 2000 terms of 3 tokens joined by 1999 '+': counted, then compared with tokenize
    assert quick is not None and len(quick) == 4 * 2000 - 1
    assert quick == longparse._python_tokens(text)


# Expressions of one shape: the second and later are not parsed again; they take the
# first one's tree and the renaming of its names (``_expressions._known_shape``). What
# they read as, and what they build (graphs, unit, or the error and its message), must be
# what reading them alone gives.

_OPERANDS = st.sampled_from(["{0}", "{1}", "{2}", "2", "1.5e-3", "sqrt({0})", "({0} - {1})",
                             "exp(-{2})", "{1} ** 2"])


def _dump(node: object) -> object:
    """A graph as nested tuples (nodes compare by identity)."""
    return (node.kind, node.name, node.exact,  # type: ignore[attr-defined]
            tuple(_dump(a) for a in node.args))  # type: ignore[attr-defined]


def _table() -> dict[str, object]:
    """Inputs for every name the texts below use: dimensionless, but m_1 in grams and
    L in metres (so that a text of a known shape may fail where the first did not)."""
    from fractions import Fraction

    from budget import _algebra as alg
    from budget._expressions import Term
    from budget._units import DIMENSIONLESS, parse_unit
    from budget._errors import Location

    table: dict[str, object] = {}
    for name in ["a", "b", "b_1", "c", "x", "x_1", "x_2", "x_9", "y", "y_1", "y_2", "z",
                 "z_1", "M", "tt", "k", "e5", "if_", "q", "r", "w", "t", "s", "m_1", "L"]:
        symbol = alg.symbol(name)
        if name in ("m_1", "L"):
            unit = parse_unit("g" if name == "m_1" else "m", Location())
            scaled = alg.number(Fraction(unit.factor)) * symbol
            table[name] = Term(scaled, symbol, unit.unit, False, scaled)
        else:
            table[name] = Term(symbol, symbol, DIMENSIONLESS, False, symbol)
    return table


def _read(text: str) -> object:
    """What a text reads and builds as: names, the three graphs and the unit, or the
    error's kind and message."""
    from budget import _expressions as expressions
    from budget._errors import BudgetError, Location

    where = Location(file="m.toml", table="definitions", key="d", line=3)
    try:
        tree = expressions.parse_expression(text, where)
        names = expressions.names_in(tree)
        term = expressions.build(tree, _table(), text, where)
    except BudgetError as exc:
        return type(exc).__name__, str(exc)
    return names, _dump(term.expr), _dump(term.shown), _dump(term.opaque), term.unit.text


@settings(max_examples=300, deadline=None)
@given(st.lists(st.tuples(st.sampled_from([" + ", " - ", " * ", " / "]), _OPERANDS),
                min_size=1, max_size=6),
       st.permutations(["a", "b_1", "c"]), st.permutations(["x_9", "M", "tt"]))
def test_an_expression_of_a_known_shape_reads_as_a_new_one(
        parts: list[tuple[str, str]], first: list[str], second: list[str]) -> None:
    from budget import _expressions as expressions
    from budget._errors import Location

    template = "".join(op + operand for op, operand in parts)[3:]
    where = Location()
    expressions._SHAPES.clear()
    expressions.parse_expression(template.format(*first), where)  # the shape is learnt
    text = template.format(*second)
    assert expressions._known_shape(expressions._shape(text), text, where) is not None
    known = _read(text)
    expressions._SHAPES.clear()
    assert known == _read(text)


def test_a_known_shape_still_refuses_a_name_with_two_underscores() -> None:
    import pytest

    from budget import _expressions as expressions
    from budget._errors import Location, ModelSyntaxError

    expressions.parse_expression("M * U_0 / m_0", Location())
    with pytest.raises(ModelSyntaxError, match="'__class__'"):
        expressions.parse_expression("M * __class__ / m_1", Location())


_NEIGHBOURS = ["x + y", "x + __y", "a * b", "a * lambda", "a * if_", "1e5 * x", "1e5 * e5",
               "2e-3 * k", "sqrt(x)", "sqrts(x)", "sqrt (x)", "exp(x, y)", "x ** 2",
               "x ** y_2", "x.y + z", "u.v + w", "1_000 * q", "1_001 * r", "(a + b",
               "(c + d", "a and b", "x_1 / (y_1 * z_1)", "x_2 / (y_2 * x_2)", "t ^ 2",
               "s ^ 3", "True * x", "None * y", "x if y else z", "'p' + q", "u + 'v'",
               # a shape learnt above, then a unit error, an unknown name, an exponent
               # with a unit, a function of a length: each message quotes its own text
               "x + m_1", "x + nope", "x ** L", "sqrt(L) * exp(L)", "sqrt(x) * exp(x)"]


def test_neighbouring_shapes_read_as_they_would_alone() -> None:
    """Every text read after all the others (their shapes learnt) reads as it does first."""
    from budget import _expressions as expressions

    alone = {}
    for text in _NEIGHBOURS:
        expressions._SHAPES.clear()
        alone[text] = _read(text)
    assert alone["x + m_1"][0] == "UnitError" and "'x + m_1'" in alone["x + m_1"][1]
    assert alone["x + nope"][0] == "UnknownNameError" and "'nope'" in alone["x + nope"][1]
    expressions._SHAPES.clear()
    for _ in range(2):
        for text in _NEIGHBOURS:
            assert _read(text) == alone[text], text
