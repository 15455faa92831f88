"""Large models: long sums, products and definition chains read, evaluate and
differentiate without recursion, and agree with closed forms (no timings here: speed is
measured by benchmarks/growth.py)."""

from __future__ import annotations

import ast
import math
import sys
from pathlib import Path

import numpy as np
import pytest

from budget._algebra import symbol, to_sympy
from budget._gum import propagate
from budget._longparse import parse
from budget._model import parse_model
from budget._montecarlo import simulate
from budget._program import Program

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "benchmarks"))

from generate import defined_mean, product_model, sum_model  # noqa: E402


def test_a_sum_of_4000_inputs_gives_the_root_sum_of_squares():
    # closed form (GUM 5.1.2 with c_i = 1): u_c = sqrt(n) * u
    n = 4000
    budget = propagate(parse_model(sum_model(n))).measurands[0]
    assert budget.estimate == pytest.approx(sum(1.0 + 0.001 * i for i in range(n)),
                                            rel=1e-12)
    assert budget.combined_uncertainty == pytest.approx(math.sqrt(n) * 0.001, rel=1e-12)
    assert all(c.sensitivity == 1.0 for c in budget.contributions)


def test_a_product_of_4000_inputs_has_the_relative_law():
    # closed form for a product (GUM 5.1.6): (u_c/y)² = Σ (u_i/x_i)²
    n = 4000
    model = parse_model(product_model(n))
    budget = propagate(model).measurands[0]
    values = np.array([i.estimate for i in model.inputs])
    assert budget.estimate == pytest.approx(np.prod(values), rel=1e-10)
    relative = math.sqrt(float(np.sum((0.001 / values) ** 2)))
    assert budget.combined_uncertainty / budget.estimate == pytest.approx(relative,
                                                                          rel=1e-10)


def test_a_chain_of_definitions_equals_the_same_model_in_one_equation():
    # the mean of 1000 determinations through 2000 definitions against the same mean
    # written as one equation (generate.mean_of_determinations): same estimate and u_c
    from generate import mean_of_determinations

    n = 1000
    chained = propagate(parse_model(defined_mean(n))).measurands[0]
    direct = propagate(parse_model(mean_of_determinations(n))).measurands[0]
    assert chained.estimate == pytest.approx(direct.estimate, rel=1e-12)
    assert chained.combined_uncertainty == pytest.approx(direct.combined_uncertainty,
                                                         rel=1e-9)


def test_monte_carlo_of_a_3000_input_sum_matches_the_root_sum_of_squares():
    n, trials = 3000, 10_000
    model = parse_model(sum_model(n))
    result = simulate(model, trials=trials, seed=3).measurands[0]
    expected = math.sqrt(n) * 0.001
    # the sample standard deviation has a relative standard error of about 1/sqrt(2M)
    assert result.standard_uncertainty == pytest.approx(expected,
                                                        rel=5 / math.sqrt(2 * trials))


@pytest.mark.parametrize("text", [
    " + ".join(f"x{i} * y{i}" for i in range(450)),
    " * ".join(f"x{i}" for i in range(450)),
    "M * (" + " + ".join(f"x{i} / z" for i in range(450)) + ") / (R * F * 3)",
    "-a + " + " - ".join(f"x{i}" for i in range(450)),
    "(\n" + " + ".join(f"x{i}*y{i}" for i in range(450)) + "\n) * ü",
    "sqrt(" + " + ".join(f"x{i} ** 2" for i in range(450)) + ")",
    "ä1 * é + " + " + ".join(f"x{i} * é" for i in range(450)),  # byte columns ≠ characters
    # terms of names joined by * and / are built without ast.parse: longer chains, a
    # term over a line break, and terms that must go to ast.parse (a keyword, //, a number);
    # source: Python's own parser (ast.parse, the standard library), as for the texts above
    " + ".join(f"U_{i} * t_{i} / m_{i} / q * r_{i % 7}" for i in range(450)),
    "(" + " + ".join(f"x{i} *\n  y{i} / z" for i in range(450)) + ")",
    " + ".join(f"x{i} * {'True' if i % 3 else 'match'} / y // z * 2" for i in range(450)),
])
def test_long_texts_parse_to_the_tree_python_builds(text):
    # Python's own parser still manages 450 terms: the split parse must equal it,
    # positions included (messages quote the text by them)
    expected = ast.dump(ast.parse(text, mode="eval"), include_attributes=True)
    assert ast.dump(parse(text), include_attributes=True) == expected


def test_a_long_text_with_a_forbidden_construct_is_still_refused():
    from budget._errors import ModelSyntaxError
    from budget._expressions import parse_expression
    from budget._errors import Location

    text = " + ".join(f"x{i}" for i in range(5000)) + " + (lambda: 1)()"
    with pytest.raises(ModelSyntaxError, match="found a lambda"):
        parse_expression(text, Location(file="m.toml"))


def test_the_graph_replayed_in_sympy_is_what_sympy_builds():
    import sympy

    x, y = symbol("x"), symbol("y")
    built = to_sympy((x * 2 - y / 3) ** 2 / (1 + x))
    sx, sy = sympy.symbols("x y")
    assert built == (sx * 2 - sy / 3) ** 2 / (1 + sx)


def test_the_program_folds_numbers_and_merges_single_use_sums():
    x, y = symbol("x"), symbol("y")
    program = Program([(x + y + 2) + 3 * (x * 4)], ["x", "y"])
    kinds = [kind for kind, _, _ in program.ops if kind != "const"]
    assert kinds == ["mul", "add"]
    value, jacobian = program.gradient([1.0, 2.0])
    assert value[0] == 17.0 and list(jacobian[0]) == [13.0, 1.0]


_BLOCK = """
title = "three correlated masses"
[measurands.y]
equation = "m_1 + 2 * m_2 - m_3"
[inputs.m_1]
value = 1.0
u = 0.1
[inputs.m_2]
value = 2.0
u = 0.2
[inputs.m_3]
value = 3.0
u = 0.3
"""
_PAIRS = "".join(f'[[correlations]]\nbetween = ["{a}", "{b}"]\nr = {r}\n'
                 for a, b, r in [("m_1", "m_2", 0.5), ("m_1", "m_3", 0.2), ("m_2", "m_3", 0.5)])


def test_a_correlation_block_as_a_matrix_equals_its_pairs():
    matrix = ('[[correlations]]\nbetween = ["m_1", "m_2", "m_3"]\n'
              "matrix = [[1, 0.5, 0.2], [0.5, 1, 0.5], [0.2, 0.5, 1]]\n")
    as_pairs = propagate(parse_model(_BLOCK + _PAIRS)).measurands[0]
    as_block = propagate(parse_model(_BLOCK + matrix)).measurands[0]
    assert as_block.combined_uncertainty == as_pairs.combined_uncertainty
    assert [(t.inputs, t.r) for t in as_block.correlation_terms] == \
        [(t.inputs, t.r) for t in as_pairs.correlation_terms]
    # GUM 5.2.2 by hand: c = (1, 2, -1), u = (0.1, 0.2, 0.3)
    c_u = np.array([0.1, 0.4, -0.3])
    r = np.array([[1, 0.5, 0.2], [0.5, 1, 0.5], [0.2, 0.5, 1]])
    assert as_block.combined_uncertainty == pytest.approx(math.sqrt(c_u @ r @ c_u), rel=1e-14)


def test_a_correlation_block_with_one_r_for_every_pair():
    block = '[[correlations]]\nbetween = ["m_1", "m_2", "m_3"]\nr = 0.25\n'
    budget = propagate(parse_model(_BLOCK + block)).measurands[0]
    c_u = np.array([0.1, 0.4, -0.3])
    r = np.full((3, 3), 0.25) + 0.75 * np.eye(3)
    assert budget.combined_uncertainty == pytest.approx(math.sqrt(c_u @ r @ c_u), rel=1e-14)
    assert len(budget.correlation_terms) == 3


@pytest.mark.parametrize("table, message", [
    ('between = ["m_1", "m_2", "m_3"]\nmatrix = [[1, 0.5], [0.5, 1]]',
     "[correlations] matrix: expected matrix = 3 rows of 3 numbers (one per input of between)"
     " in correlation 1, found another shape or a value that is not a number"),
    ('between = ["m_1", "m_2", "m_3"]\nmatrix = [[1, 0.5, 0], [0.4, 1, 0], [0, 0, 1]]',
     "[correlations] matrix: expected a symmetric matrix with 1 on the diagonal and entries "
     "in [-1, 1] in correlation 1, found 0.5 in row 1, column 2"),
    ('between = ["m_1", "m_2", "m_3"]\nr = 0.5\nmatrix = [[1, 0, 0], [0, 1, 0], [0, 0, 1]]',
     "[correlations] between: expected either r (one value for every pair) or matrix in "
     "correlation 1 of 3 inputs, found both"),
    ('between = ["m_1", "m_2", "m_1"]\nr = 0.5',
     "[correlations] between: expected different inputs in correlation 1, found 'm_1' twice"),
    ('between = ["m_1", "m_2", "m_3"]\nr = -0.9',
     "[correlations] expected a positive semi-definite correlation matrix, found the "
     "smallest eigenvalue -0.8; the pairs m_1-m_2 (-0.9), m_1-m_3 (-0.9), m_2-m_3 (-0.9) "
     "cannot hold together"),
])
def test_a_bad_correlation_block_is_one_clean_error(table, message):
    from budget._errors import BudgetError

    with pytest.raises(BudgetError) as caught:
        parse_model(_BLOCK + "[[correlations]]\n" + table + "\n", name="b.toml")
    text = str(caught.value)
    assert text.startswith("b.toml:") and text.split(" ", 1)[1] == message


def test_a_dense_correlated_block_of_300_inputs_agrees_with_numpy():
    # independent computation: u_c² = (c∘u)ᵀ R (c∘u) (GUM 5.2.2) with numpy on the matrix
    # as written, r_ij = 0.6^|i-j| (positive definite), every pair stated
    n = 300
    a = 1.0 + np.arange(n) % 5
    u = 0.001 * (1 + np.arange(n) % 3)
    r = 0.6 ** np.abs(np.subtract.outer(np.arange(n), np.arange(n)))
    rows = ", ".join("[" + ", ".join(repr(x) for x in row) + "]" for row in r.tolist())
    text = ('title = "dense block"\n[measurands.y]\nequation = "'
            + " + ".join(f"{a[i]:g} * x_{i}" for i in range(n)) + '"\n'
            + "".join(f"[inputs.x_{i}]\nvalue = 1.0\nu = {float(u[i])!r}\n" for i in range(n))
            + "[[correlations]]\nbetween = [" + ", ".join(f'"x_{i}"' for i in range(n))
            + f"]\nmatrix = [{rows}]\n")
    budget = propagate(parse_model(text)).measurands[0]
    expected = math.sqrt((a * u) @ r @ (a * u))
    assert budget.combined_uncertainty == pytest.approx(expected, rel=1e-12)
    assert len(budget.correlation_terms) == n * (n - 1) // 2
    total = math.fsum(c.share for c in budget.contributions) + math.fsum(
        t.share for t in budget.correlation_terms)
    assert total == pytest.approx(100.0, rel=1e-9)
    term = budget.correlation_terms[n - 1]  # x_1 with x_2, after the n - 1 pairs of x_0
    assert term.inputs == ("x_1", "x_2")
    assert term.variance == pytest.approx(2 * a[1] * u[1] * a[2] * u[2] * 0.6, rel=1e-14)


def _union_find(n: int, edges: list[tuple[int, int]]) -> list[int]:
    parent = list(range(n))

    def root(i: int) -> int:
        while parent[i] != i:
            i = parent[i]
        return i

    for x, y in edges:
        rx, ry = root(x), root(y)
        parent[max(rx, ry)] = min(rx, ry)
    return [min(j for j in range(n) if root(j) == root(i)) for i in range(n)]


@pytest.mark.parametrize("seed", range(12))
def test_groups_of_correlated_inputs_are_the_connected_components(seed):
    from budget._dof import _components

    rng = np.random.default_rng(seed)
    n = int(rng.integers(2, 60))
    count = int(rng.integers(0, 2 * n))
    edges = [(int(x), int(y)) for x, y in rng.integers(0, n, size=(count, 2))]
    if seed % 3 == 0:  # a chain through the inputs in a shuffled order
        order = rng.permutation(n).tolist()
        edges = list(zip(order[:-1], order[1:]))
    a = np.array([x for x, _ in edges], dtype=np.intp)
    b = np.array([y for _, y in edges], dtype=np.intp)
    assert _components(n, a, b).tolist() == _union_find(n, edges)


def _reference_depth(root: ast.AST) -> int:
    """The nesting depth as the reader counted it before it walked a tree once."""
    deepest, stack = 0, [(root, 1)]
    while stack:
        node, depth = stack.pop()
        deepest = max(deepest, depth)
        for child in ast.iter_child_nodes(node):
            same = (isinstance(node, ast.BinOp) and child is node.left
                    and isinstance(child, ast.BinOp)
                    and any(isinstance(node.op, c) and isinstance(child.op, c)
                            for c in ((ast.Add, ast.Sub), (ast.Mult, ast.Div))))
            stack.append((child, depth + (0 if same else 1)))
    return deepest


@pytest.mark.parametrize("text", [
    "a", "2.5", "-a", "a + b - c * d / e ** f", "sqrt(a * (b + c)) - -(d)",
    "((((a))))", "a * (b + (c * (d - e)))", "air_density(t, p, h, x) / f(a)",
    "a ** b ** c", "-(-(-(-a)))", "log(exp(sin(cos(a + 1))))", "x[0] + y.z",
    "(lambda: x)()", "a < b", "+a * -b"])
def test_one_walk_finds_the_nodes_and_depth_of_the_standard_walk(text):
    from budget._expressions import _walk

    tree = ast.parse(text, mode="eval")
    nodes, deepest = _walk(tree)
    assert nodes == list(ast.walk(tree))[1:]
    assert deepest == _reference_depth(tree.body)


def test_the_compiled_toml_parser_reads_every_shipped_model_as_the_standard_one():
    import tomllib

    rtoml = pytest.importorskip("rtoml")
    root = Path(__file__).resolve().parent.parent / "models"
    texts = [path.read_text(encoding="utf-8") for path in sorted(root.rglob("*.toml"))]
    texts += [defined_mean(50), 'b = -0.0\nc = inf\nd = 1979-05-27\n'
              'e = 1979-05-27T07:32:00Z\nf = """x\ny"""\ng = [1, 2.5, "s"]\n']
    assert len(texts) > 10
    for text in texts:
        assert rtoml.loads(text) == tomllib.loads(text)  # datetimes: the same instant


@pytest.mark.parametrize("text", ["a = " + "[" * 200 + "]" * 200, f"a = {2 ** 70}",
                                  "a = 1\na = 2", "[t]\nx = 1\n[t]\ny = 2", "a = 01",
                                  "a = 1979-02-30", "a = 1e400"])
def test_documents_the_compiled_parser_declines_are_read_or_refused_by_the_standard_one(
        text):
    import tomllib

    from budget._model import _loads

    try:
        expected = tomllib.loads(text)
    except (tomllib.TOMLDecodeError, RecursionError) as exc:
        with pytest.raises(type(exc)):
            _loads(text)
    else:
        assert _loads(text) == expected


def test_a_large_block_that_is_not_positive_semi_definite_is_refused_in_one_short_line():
    # every pair at r = -0.01 among 300 inputs: the matrix has the eigenvalue
    # 1 - 0.01·299 < 0 along (1, 1, …, 1) (a fact of linear algebra)
    from budget._errors import InputError

    names = ", ".join(f'"x_{i}"' for i in range(300))
    text = (sum_model(300) + f"[[correlations]]\nbetween = [{names}]\nr = -0.01\n")
    with pytest.raises(InputError) as caught:
        parse_model(text)
    message = str(caught.value)
    assert "smallest eigenvalue -1.99; the pairs x_0-x_1 (-0.01), x_0-x_2 (-0.01)" in message
    assert message.endswith("and 44,838 more pairs among 300 inputs cannot hold together")
    assert len(message) < 600


def test_a_models_program_is_compiled_once_without_hashing_the_model(monkeypatch):
    """compile_model keeps the last few programs by the model object: a look-up never
    hashes the model (every input, definition and graph), and an equal model read again
    is compiled on its own."""
    from budget._evaluation import compile_model
    from budget._model import Model

    first, again = parse_model(sum_model(50)), parse_model(sum_model(50))

    def refused(self):
        raise AssertionError("the model was hashed")

    monkeypatch.setattr(Model, "__hash__", refused)
    program = compile_model(first)
    assert compile_model(first) is program
    assert compile_model(again) is not program
    # 50 inputs of 1.000 + 0.001·i: y = 50 + 0.001·(0 + … + 49) = 51.225 (arithmetic)
    assert program.evaluate([1.0 + 0.001 * i for i in range(50)])[0] == pytest.approx(51.225)
    for _ in range(20):  # older programs make room; the newest is kept
        compile_model(parse_model(sum_model(3)))
    assert compile_model(first) is not program
