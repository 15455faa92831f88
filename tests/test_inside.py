"""Inside the library: distributions refuse impossible parameters when they are built,
and no library message tells the user about a command-line flag (the command adds those).
"""

from __future__ import annotations

import ast
import dataclasses
import math
import re

import pytest

from budget import distributions as dist
from budget._errors import BudgetError
from budget._model import Input, parse_model
from conftest import ROOT

EVERY_CLASS = {
    dist.Normal: lambda: dist.Normal(1.0, 0.2),
    dist.Rectangular: lambda: dist.Rectangular(1.0, 0.3),
    dist.Triangular: lambda: dist.Triangular(1.0, 0.3),
    dist.Arcsine: lambda: dist.Arcsine(1.0, 0.3),
    dist.Trapezoidal: lambda: dist.Trapezoidal(1.0, 0.3, 0.5),
    dist.CurvilinearTrapezoid: lambda: dist.CurvilinearTrapezoid(1.0, 0.3, 0.05),
    dist.StudentT: lambda: dist.StudentT(1.0, 0.2, 4.0),
    dist.Exact: lambda: dist.Exact(1.0),
    dist.CoveredByScatter: lambda: dist.CoveredByScatter(1.0, 0.01),
    dist.AtomicWeightSum: lambda: dist.AtomicWeightSum((8.0, 2.0), (12.011, 1.008),
                                                       (0.001, 0.0001)),
}


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
    (lambda: dist.CoveredByScatter(1.0, -0.1), "CoveredByScatter: expected repeatability ≥ 0 "
                                               "and finite, found -0.1"),
    (lambda: dist.AtomicWeightSum((1.0,), (12.0,), (-0.1,)), "AtomicWeightSum: expected "
                                                             "half_widths ≥ 0 and finite, "
                                                             "found (-0.1,)"),
    (lambda: dist.AtomicWeightSum((1.0, 2.0), (12.0,), (0.1,)), "AtomicWeightSum: expected as "
                                                                "many counts, centres and "
                                                                "half-widths, found 2, 1 and 1"),
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
        if path.name == "_cli.py":
            continue
        for line, text in _strings(ast.parse(path.read_text(encoding="utf-8"))):
            if flag.search(text):
                found.append(f"{path.name}:{line}: {text!r}")
    assert not found, "\n".join(found)


def test_every_distribution_class_is_covered_here() -> None:
    assert set(EVERY_CLASS) == {getattr(dist, name) for name in dist.__all__
                                if name != "Distribution"}


@pytest.mark.parametrize("kind", sorted(EVERY_CLASS, key=lambda k: k.__name__),
                         ids=lambda k: k.__name__)
def test_every_distribution_validates_in_its_constructor(kind) -> None:
    made = EVERY_CLASS[kind]()
    with pytest.raises(BudgetError):
        dataclasses.replace(made, **{f.name: math.nan for f in dataclasses.fields(made)
                                     if f.init and isinstance(getattr(made, f.name), float)})


def test_the_standard_uncertainty_is_computed_once_when_built() -> None:
    """u(x) of a shape is a stored value (the numeric path reads it for 10⁵ inputs), and a
    changed copy (a what-if) derives it again: GUM 4.3.7 a/√3, 4.3.9 a/√6."""
    flat = dist.Rectangular(1.0, 0.3)
    assert "standard_uncertainty" in {f.name for f in dataclasses.fields(flat)}
    assert flat.standard_uncertainty == 0.3 / math.sqrt(3.0)
    wider = dataclasses.replace(flat, half_width=0.6)
    assert wider.standard_uncertainty == 0.6 / math.sqrt(3.0)
    assert dataclasses.replace(dist.Triangular(0.0, 0.6)).standard_uncertainty == \
        0.6 / math.sqrt(6.0)
    mass = EVERY_CLASS[dist.AtomicWeightSum]()
    assert mass.estimate == pytest.approx(8 * 12.011 + 2 * 1.008, rel=1e-15)
    assert repr(flat) == "Rectangular(estimate=1.0, half_width=0.3)"


def test_an_input_holds_its_estimate_and_uncertainty_only_in_its_distribution() -> None:
    names = {f.name for f in dataclasses.fields(Input)}
    assert "estimate" not in names and "standard_uncertainty" not in names
    item = Input(name="x", unit="g", distribution=dist.Rectangular(2.0, 0.3), dof=math.inf,
                 type="B", basis="test")
    assert (item.estimate, item.standard_uncertainty) == (2.0, 0.3 / math.sqrt(3.0))
    with pytest.raises(BudgetError, match="expected degrees of freedom > 0 for input 'x', "
                                          "found nan"):
        Input(name="x", unit="g", distribution=dist.Normal(2.0, 0.3), dof=math.nan,
              type="B", basis="test")
    with pytest.raises(BudgetError, match="expected a budget.distributions object"):
        Input(name="x", unit="g", distribution=2.0, dof=math.inf, type="B", basis="test")


def test_what_ifs_change_the_distribution_and_the_input_follows() -> None:
    model = parse_model('title = "t"\n[measurands.y]\nequation = "2 * x"\n[inputs.x]\n'
                        'value = 1.0\nhalf_width = 0.3\ndistribution = "rectangular"\n',
                        "m.toml")
    moved = model.with_value("x", 5.0).input("x")
    assert (moved.estimate, moved.distribution.estimate) == (5.0, 5.0)
    halved = model.with_uncertainty("x", factor=0.5).input("x")
    assert halved.distribution.half_width == 0.15
    assert halved.standard_uncertainty == pytest.approx(0.15 / math.sqrt(3.0), rel=1e-15)
    normal = model.with_distribution("x", "normal").input("x")
    assert normal.distribution == dist.Normal(1.0, 0.3 / math.sqrt(3.0))
    assert normal.standard_uncertainty == pytest.approx(0.3 / math.sqrt(3.0), rel=1e-15)


def _imports(path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    return {node.module or "" for node in ast.walk(tree) if isinstance(node, ast.ImportFrom)}


@pytest.mark.parametrize("name", ["_report.py", "_certification_view.py", "_audit_view.py",
                                  "_methods_output.py", "_studies_output.py", "_batch_view.py",
                                  "_notebook.py", "_certificate_page.py", "_equations_view.py",
                                  "_difference_view.py"])
def test_html_views_take_their_cells_from_the_shared_module_not_the_terminal(name) -> None:
    """The terminal table (_table.py) and the report share budget/_cells.py; no HTML view
    imports the terminal module."""
    assert "_table" not in _imports(ROOT / "budget" / name)


def test_the_report_uses_the_shared_cells() -> None:
    assert "_cells" in _imports(ROOT / "budget" / "_report.py")
    assert "_cells" in _imports(ROOT / "budget" / "_table.py")


def test_explain_analysis_and_rendering_are_split() -> None:
    """_explanation.py computes; _explanation_view.py writes the text and the JSON document
    (_explanation.py reaches it only lazily, for the notebook's summary() and to_dict())."""
    analysis = ast.parse((ROOT / "budget" / "_explanation.py").read_text(encoding="utf-8"))
    top = {node.module for node in analysis.body if isinstance(node, ast.ImportFrom)}
    assert not top & {"_explanation_view", "_table", "_report", "_console"}
    view = _imports(ROOT / "budget" / "_explanation_view.py")
    assert "_explanation" in view
    functions = {node.name for node in analysis.body if isinstance(node, ast.FunctionDef)}
    assert not {f for f in functions if f.startswith(("render", "format"))}


PUBLIC_MODULES = {"__init__", "__main__", "distributions", "lots", "batch"}


def test_internal_modules_are_marked_private() -> None:
    """The public API is budget.__all__ plus the public modules docs/api.md names; every
    other module's name starts with an underscore (DEVELOPERS.md, Modules)."""
    names = {p.stem for p in (ROOT / "budget").glob("*.py")}
    assert not {n for n in names - PUBLIC_MODULES if not n.startswith("_")}
    api = (ROOT / "docs" / "api.md").read_text(encoding="utf-8")
    assert all(f"`budget.{n}`" in api for n in PUBLIC_MODULES - {"__init__", "__main__"})
