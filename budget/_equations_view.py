"""View-model of the measurement model and its sensitivity coefficients, for the reports.

Equations are typeset from the text the user wrote (``typeset``); sensitivity coefficients
are shown as the chain rule over the named definitions (``chain``), every local derivative
with its formula where one prints plainly and always with its value and unit. Strings
only: the templates do no arithmetic.
"""

from __future__ import annotations

import ast
from typing import Any

from markupsafe import Markup

from ._chain import Chain, ChainRule, Partial, chain_rule
from ._formatting import format_number
from ._typeset import (equation_mathml, expression_mathml, math_block, name_html,
                      name_mathml, name_text, partial_mathml, width)
from ._unit_display import display_unit

__all__ = ["model_view", "sensitivity_view", "FOLD_WIDTH"]

FOLD_WIDTH = 56   # a local derivative wider than this is folded after each + or −


def model_view(model: Any) -> dict[str, Any]:
    """The measurement model as written: measurand equations, definitions, names."""
    units = {i.name: display_unit(i.unit) for i in model.inputs}
    return {
        "measurands": [Markup(equation_mathml(m.name, m.equation)) for m in model.measurands],
        "definitions": [Markup(equation_mathml(d.name, d.text)) for d in model.definitions],
        "symbols": [{"shown": Markup(name_html(i.name)), "written": i.name,
                     "unit": units[i.name]} for i in model.inputs],
        "uses_air_density": any("air_density" in d.text for d in model.definitions)
        or any("air_density" in m.equation for m in model.measurands),
    }


def sensitivity_view(model: Any, k: int,
                     engine: dict[str, float] | None = None) -> dict[str, Any]:
    """The chain of every uncertain input and the local derivatives it is made of;
    ``engine``: the budget's coefficients (used for the earlier models of a chain)."""
    rule = chain_rule(model, k, engine)
    equations = {d.name: d.text for d in model.definitions}
    equations[rule.measurand] = model.measurands[k].equation
    groups = []
    for name in _order(rule):
        rows = [_partial_row(p) for p in rule.partials if p.of == name]
        if rows:
            groups.append({"name": Markup(name_html(name)), "written": name,
                           "equation": Markup(equation_mathml(name, equations[name])),
                           "rows": rows})
    return {"chains": [_chain_row(rule, c) for c in rule.chains], "groups": groups}


def _order(rule: ChainRule) -> list[str]:
    seen: list[str] = []
    for p in rule.partials:
        if p.of not in seen:
            seen.append(p.of)
    return seen


def _partial_row(p: Partial) -> dict[str, Any]:
    head = partial_mathml(p.of, p.by)
    if p.formula is None:
        body = f"<mrow>{head}</mrow>"
    else:
        body = _folded(head, p.formula)
    return {"math": Markup(math_block(body, f"d{p.of}/d{p.by} = {p.formula or ''}")),
            "value": format_number(p.derivative, 6), "unit": p.unit,
            "note": "" if p.formula is not None else
            "through the built-in air_density (CIPM-2007): value computed, formula not shown"}


def _folded(head: str, formula: str) -> str:
    """``head = formula``, broken after each top-level + or − when it is too wide."""
    if width(formula) <= FOLD_WIDTH:
        return f"<mrow>{head}<mo>=</mo>{expression_mathml(formula)}</mrow>"
    terms = _terms(formula)
    if len(terms) < 2:
        return f"<mrow>{head}<mo>=</mo>{expression_mathml(formula)}</mrow>"
    rows = [f"<mtr><mtd><mrow>{head}<mo>=</mo>{expression_mathml(terms[0][1])}</mrow></mtd></mtr>"]
    for sign, text in terms[1:]:
        rows.append(f'<mtr><mtd><mrow><mspace width="2em"/><mo>{sign}</mo>'
                    f"{expression_mathml(text)}</mrow></mtd></mtr>")
    return f'<mtable columnalign="left">{"".join(rows)}</mtable>'


def _terms(formula: str) -> list[tuple[str, str]]:
    """The top-level terms of a sum as (sign, text) pairs."""
    tree = ast.parse(formula, mode="eval").body
    out: list[tuple[str, str]] = []
    while isinstance(tree, ast.BinOp) and isinstance(tree.op, (ast.Add, ast.Sub)):
        out.append(("+" if isinstance(tree.op, ast.Add) else "\u2212",
                    ast.get_source_segment(formula, tree.right) or ast.unparse(tree.right)))
        tree = tree.left
    out.append(("", ast.get_source_segment(formula, tree) or ast.unparse(tree)))
    return out[::-1]


def _chain_row(rule: ChainRule, c: Chain) -> dict[str, Any]:
    head = partial_mathml(rule.measurand, c.input)
    products = []
    for path in c.paths:
        factors = [partial_mathml(a, b) for a, b in zip(path, path[1:])]
        products.append("<mo>·</mo>".join(factors))
    rhs = "<mo>+</mo>".join(products)
    if c.path_count > len(c.paths):
        rhs += f"<mo>+</mo><mtext>… ({c.path_count} paths in all)</mtext>"
    direct = all(len(p) == 2 for p in c.paths) and c.path_count == 1 and c.through is None
    body = f"<mrow>{head}</mrow>" if direct else f"<mrow>{head}<mo>=</mo>{rhs}</mrow>"
    upstream = "" if c.upstream is None or c.through is None else (
        f"∂{name_text(c.through)}/∂{name_text(c.input.rsplit(':', 1)[-1])} = "
        f"{format_number(c.upstream, 4)} {c.upstream_unit}, from the earlier model")
    return {"input": c.input, "name": Markup(name_html(c.input)), "upstream": upstream,
            "symbol": Markup(name_mathml(c.input)),
            "math": Markup(math_block(body, f"d{rule.measurand}/d{c.input}")),
            "inline": Markup(math_block(body, f"d{rule.measurand}/d{c.input}", "inline")),
            "value": format_number(c.sensitivity, 4), "unit": c.unit, "direct": direct}
