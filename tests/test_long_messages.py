"""Messages about a long equation quote a readable excerpt around the error, not the
whole text (a 10⁴-term sum is about 80 000 characters)."""

from __future__ import annotations

import pytest

from budget._errors import BudgetError
from budget._limits import excerpt
from budget._model import parse_model

N = 10_000
SUM = " + ".join(f"x{i}" for i in range(N))


def _model(equation: str, unit: str = "") -> str:
    inputs = "\n".join(f"[inputs.x{i}]\nvalue = 1\nu = 0.1\n{unit}" for i in range(N))
    return (f'title = "long"\n[measurands.y]\n{unit}\nequation = "{equation}"\n{inputs}\n'
            '[inputs.t]\nvalue = 1\nu = 0.1\nunit = "s"\n')


def _message(equation: str, unit: str = "") -> str:
    with pytest.raises(BudgetError) as caught:
        parse_model(_model(equation, unit), name="long.toml")
    return str(caught.value)


def test_an_unknown_name_is_quoted_with_its_neighbourhood():
    message = _message(SUM[:40_000] + " + zz + " + SUM[40_000:])
    assert len(message) < 250
    assert "unknown quantity 'zz' in '…" in message and " + zz + " in message
    assert message.count("…") == 2


def test_a_syntax_error_is_quoted_around_its_column():
    message = _message(SUM[:40_000] + " + * " + SUM[40_000:])
    assert len(message) < 250 and "+ * +" in message and "syntax error at column" in message


def test_a_unit_mismatch_quotes_start_and_end_of_a_long_sum():
    message = _message(SUM + " + t", 'unit = "g"')
    assert len(message) < 300
    assert "in 'x0 + x1 + " in message and " … " in message and "x9999 + t'" in message


def test_a_short_text_is_quoted_whole():
    assert excerpt("a + b") == "a + b"
    assert excerpt("x" * 200, 100, width=10) == "…xxxxxxxxxx…"
    assert excerpt("0123456789" * 3, 0, width=10) == "0123456789…"
    assert excerpt("0123456789" * 3, 29, width=10) == "…0123456789"
