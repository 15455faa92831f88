"""Inside the library: distributions refuse impossible parameters when they are built,
and no library message tells the user about a command-line flag (the command adds those).
"""

from __future__ import annotations

import ast
import math
import re

import pytest

from budget import distributions as dist
from budget.errors import BudgetError
from conftest import ROOT


@pytest.mark.parametrize(("build", "message"), [
    (lambda: dist.Normal(1, -2), "Normal: expected sd ≥ 0 and finite, found -2"),
    (lambda: dist.Normal(math.nan, 1), "Normal: expected a finite estimate, found nan"),
    (lambda: dist.Rectangular(0, math.inf), "Rectangular: expected half_width ≥ 0 and "
                                            "finite, found inf"),
    (lambda: dist.Triangular(0, -1e-9), "Triangular: expected half_width ≥ 0 and finite, "
                                        "found -1e-09"),
    (lambda: dist.Arcsine(0, -1), "Arcsine: expected half_width ≥ 0 and finite, found -1"),
    (lambda: dist.Trapezoidal(0, 1, 1.5), "Trapezoidal: expected beta in [0, 1], found 1.5"),
    (lambda: dist.CurvilinearTrapezoid(0, 1, -0.1), "CurvilinearTrapezoid: expected "
                                                    "inexactness ≥ 0 and finite, found -0.1"),
    (lambda: dist.StudentT(0, 1, 0), "StudentT: expected dof > 0, found 0"),
    (lambda: dist.Exact(math.inf), "Exact: expected a finite estimate, found inf"),
])
def test_distributions_refuse_impossible_parameters(build, message) -> None:
    with pytest.raises(BudgetError) as caught:
        build()
    assert str(caught.value) == message
    assert isinstance(caught.value, ValueError)


def test_zero_widths_are_allowed_for_what_ifs() -> None:
    assert dist.Normal(1.0, 0.0).standard_uncertainty == 0.0
    assert dist.Rectangular(1.0, 0.0).standard_uncertainty == 0.0


def _strings(tree: ast.AST) -> list[tuple[int, str]]:
    docstrings = {id(node.body[0].value) for node in ast.walk(tree)
                  if isinstance(node, (ast.Module, ast.FunctionDef, ast.ClassDef))
                  and node.body and isinstance(node.body[0], ast.Expr)
                  and isinstance(node.body[0].value, ast.Constant)}
    return [(node.lineno, node.value) for node in ast.walk(tree)
            if isinstance(node, ast.Constant) and isinstance(node.value, str)
            and id(node) not in docstrings]


def test_library_messages_name_no_command_line_flag() -> None:
    flag = re.compile(r"(?<![\w-])--[a-z][a-z-]+")
    found = []
    for path in sorted((ROOT / "budget").glob("*.py")):
        if path.name == "cli.py":
            continue
        for line, text in _strings(ast.parse(path.read_text(encoding="utf-8"))):
            if flag.search(text):
                found.append(f"{path.name}:{line}: {text!r}")
    assert not found, "\n".join(found)
