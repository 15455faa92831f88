"""The quick tokenizer of long expressions (``_longparse._simple_tokens``) against the
standard library's ``tokenize`` (through ``_longparse._python_tokens``): for every text it
accepts, the very tokens, kinds and character offsets ``tokenize`` gives; every text it
cannot vouch for (an indented start, unbalanced brackets, 1_000, 007, 2j, '//' …) is left
to ``tokenize``."""

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
    assert quick is not None and len(quick) == 4 * 2000 - 1
    assert quick == longparse._python_tokens(text)
