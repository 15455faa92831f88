"""Equations as the user wrote them, typeset as MathML from Python's ``ast``.

Method: the expression text of a model file is parsed by ``ast.parse(mode="eval")`` (through
``longparse`` for texts of thousands of terms; never
run) and each node becomes one MathML element, in the order written: no term is moved, no
factor cancelled, no parenthesis added or removed except where a fraction bar, a radical
or a superscript already groups (``(a + b) / c`` shows no parentheses over the bar). The
engine's symbolic form plays no part, so nothing the algebra system did reaches the page.

Names follow the rules documented in ``docs/reports.md``:

* a Greek letter's English name becomes the letter (``rho`` → ρ, ``Delta`` → Δ), except
  ``pi``, which stays ``pi`` so that it is never read as the number π;
* the text after the first underscore becomes an upright subscript (``m_c`` → m_c); more
  underscores separate subscript parts by commas (``u_rel_M`` → u_rel,M);
* ``d_``, ``delta_`` and ``Delta_`` before a name that is itself compound (``d_rho_a``)
  become the prefix δ or Δ (δρ_a); ``delta_x`` and ``Delta_T`` always do (δx, ΔT);
  ``d_m`` stays d with subscript m, since a d alone may be a quantity of its own;
* one letter followed by digits takes the digits as a subscript (``b0`` → b_0);
* a name with an empty part (``a__b``, ``a_``) is shown exactly as written;
* an input of an earlier model of a chain, ``c_NaOH:m_KHP``, is shown by its own name
  (m_KHP) followed by the stage it belongs to, (of c_NaOH).

Long chains of ``+``/``-`` and of ``*``/``/`` are flattened while walking, so a model with
thousands of terms is typeset without deep recursion.
"""

from __future__ import annotations

import ast
import html
import re

from ._longparse import parse

__all__ = ["GREEK", "name_parts", "name_mathml", "name_html", "name_text",
           "expression_mathml", "equation_mathml", "partial_mathml", "math_block",
           "width"]

GREEK = {
    "alpha": "α", "beta": "β", "gamma": "γ", "delta": "δ", "epsilon": "ε", "zeta": "ζ",
    "eta": "η", "theta": "θ", "iota": "ι", "kappa": "κ", "mu": "μ", "nu": "ν", "xi": "ξ",
    "rho": "ρ", "sigma": "σ", "tau": "τ", "upsilon": "υ", "phi": "φ", "chi": "χ",
    "psi": "ψ", "omega": "ω", "Gamma": "Γ", "Delta": "Δ", "Theta": "Θ", "Lambda": "Λ",
    "Xi": "Ξ", "Pi": "Π", "Sigma": "Σ", "Phi": "Φ", "Psi": "Ψ", "Omega": "Ω",
}
_PREFIXES = {"d": "δ", "delta": "δ", "Delta": "Δ"}
_MINUS = "\u2212"
_FUNCTION_NAMES = {"log": "ln", "exp": "exp", "sin": "sin", "cos": "cos", "tan": "tan",
                   "asin": "arcsin", "acos": "arccos", "atan": "arctan", "sign": "sgn"}


def _part(text: str) -> str:
    return GREEK.get(text, text)


def _compound(rest: str) -> bool:
    return "_" in rest or rest in GREEK


def name_parts(name: str) -> tuple[str, str | None]:
    """(base, subscript or None) of a model name, after the rules of the module docstring."""
    if not name or name.startswith("_") or name.endswith("_") or "__" in name:
        return name, None
    head, _, rest = name.partition("_")
    if rest and head in _PREFIXES and (head != "d" or _compound(rest)):
        base, sub = name_parts(rest)
        return _PREFIXES[head] + base, sub
    if rest:
        return _part(head), ",".join(_part(p) for p in rest.split("_"))
    match = re.fullmatch(r"([A-Za-z])(\d+)", name)
    if match:
        return match.group(1), match.group(2)
    return (name if name == "pi" else _part(name)), None


def _mi(text: str, upright: bool = False) -> str:
    escaped = html.escape(text)
    if text.isdigit():
        return f"<mn>{escaped}</mn>"
    if upright and len(text) == 1:
        return f'<mi mathvariant="normal">{escaped}</mi>'
    return f"<mi>{escaped}</mi>"


def name_mathml(name: str) -> str:
    """A model name as a MathML identifier (with its subscript, if any)."""
    name = name.rsplit(":", 1)[-1]
    base, sub = name_parts(name)
    if len(base) == 2 and base[0] in "δΔ":  # prefix operator and a one-letter quantity
        core = f"<mrow><mi mathvariant=\"normal\">{base[0]}</mi>{_mi(base[1])}</mrow>"
    else:
        core = _mi(base)
    if sub is None:
        return core
    return f"<msub>{core}{_mi(sub, upright=True)}</msub>"


def name_html(name: str) -> str:
    """A model name as HTML text (``ρ<sub>ref</sub>``), for tables and headings."""
    if ":" in name:
        *stages, own = name.split(":")
        path = " › ".join(name_html(stage) for stage in stages)
        return f'{name_html(own)} <span class="stage">(of {path})</span>'
    base, sub = name_parts(name)
    shown = f'<var>{html.escape(base)}</var>'
    return shown if sub is None else f"{shown}<sub>{html.escape(sub)}</sub>"


def name_text(name: str) -> str:
    """A model name as plain text with the same letters (``ρ_ref``), for chart labels."""
    if ":" in name:
        *stages, own = name.split(":")
        return f"{name_text(own)} ({' › '.join(name_text(s) for s in stages)})"
    base, sub = name_parts(name)
    return base if sub is None else f"{base}_{sub}"


class _Source:
    """Byte offsets of the text so that parentheses the user wrote can be found."""

    def __init__(self, text: str) -> None:
        self.data = text.encode("utf-8")
        self.starts = [0]
        for line in self.data.split(b"\n")[:-1]:
            self.starts.append(self.starts[-1] + len(line) + 1)

    def wrapped(self, node: ast.expr) -> bool:
        if getattr(node, "end_lineno", None) is None:
            return False
        begin = self.starts[node.lineno - 1] + node.col_offset
        end = self.starts[node.end_lineno - 1] + (node.end_col_offset or 0)  # type: ignore[operator]
        before = self.data[:begin].rstrip()
        after = self.data[end:].lstrip()
        return before.endswith(b"(") and after.startswith(b")")

    def segment(self, node: ast.expr) -> str:
        begin = self.starts[node.lineno - 1] + node.col_offset
        end = self.starts[node.end_lineno - 1] + (node.end_col_offset or 0)  # type: ignore[operator]
        return self.data[begin:end].decode("utf-8")


def _fence(inner: str) -> str:
    return f"<mrow><mo>(</mo>{inner}<mo>)</mo></mrow>"


class _Writer:
    def __init__(self, text: str) -> None:
        self.source = _Source(text)
        self.depth = 0   # fractions open around the node being written

    def node(self, node: ast.expr, grouped: bool = False) -> str:
        """MathML of a node; ``grouped``: the context (bar, radical, superscript) groups."""
        inner = self.bare(node)
        if not grouped and self.source.wrapped(node):
            return _fence(inner)
        return inner

    def bare(self, node: ast.expr) -> str:
        if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub)):
            return self.chain(node, (ast.Add, ast.Sub))
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Mult):
            return self.chain(node, (ast.Mult,))
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Div):
            return self.divide(node)
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Pow):
            return f"<msup>{self.node(node.left)}{self.node(node.right, True)}</msup>"
        if isinstance(node, ast.UnaryOp):
            sign = _MINUS if isinstance(node.op, ast.USub) else "+"
            return f"<mrow><mo>{sign}</mo>{self.node(node.operand)}</mrow>"
        if isinstance(node, ast.Call):
            return self.call(node)
        if isinstance(node, ast.Name):
            return name_mathml(node.id)
        if isinstance(node, ast.Constant):
            return _number(self.source.segment(node))
        return f"<mtext>{html.escape(ast.unparse(node))}</mtext>"

    def divide(self, node: ast.BinOp) -> str:
        """A fraction bar; inside another fraction a solidus, a/b, so nothing shrinks."""
        if self.depth:
            left, right = self.node(node.left, True), self.node(node.right, True)
            left = _fence(left) if _needs_fence(node.left, False) else left
            right = _fence(right) if _needs_fence(node.right, True) else right
            return f"<mrow>{left}<mo>/</mo>{right}</mrow>"
        self.depth += 1
        try:
            return (f"<mfrac>{self.node(node.left, True)}"
                    f"{self.node(node.right, True)}</mfrac>")
        finally:
            self.depth -= 1

    def chain(self, node: ast.BinOp, kinds: tuple[type, ...]) -> str:
        """``a + b − c`` (or ``a·b·c``) walked without recursion along the chain."""
        items: list[tuple[str, ast.expr]] = []
        current: ast.expr = node
        while (isinstance(current, ast.BinOp) and isinstance(current.op, kinds)
               and (current is node or not self.source.wrapped(current))):
            symbol = {ast.Add: "+", ast.Sub: _MINUS, ast.Mult: "·"}[type(current.op)]
            items.append((symbol, current.right))
            current = current.left
        parts = [self.operand(current, kinds)]
        for symbol, operand in reversed(items):
            parts.append(f"<mo>{symbol}</mo>{self.operand(operand, kinds)}")
        return "<mrow>" + "".join(parts) + "</mrow>"

    def operand(self, node: ast.expr, kinds: tuple[type, ...]) -> str:
        """An operand of a chain; a solidus a/b among factors is fenced, (a/b)·c."""
        shown = self.node(node)
        if (self.depth and ast.Mult in kinds and isinstance(node, ast.BinOp)
                and isinstance(node.op, ast.Div) and not self.source.wrapped(node)):
            return _fence(shown)
        return shown

    def call(self, node: ast.Call) -> str:
        name = node.func.id if isinstance(node.func, ast.Name) else ast.unparse(node.func)
        args = [self.node(a, True) for a in node.args]
        if name == "sqrt" and len(args) == 1:
            return f"<msqrt>{args[0]}</msqrt>"
        if name in ("abs", "Abs") and len(args) == 1:
            return f"<mrow><mo>|</mo>{args[0]}<mo>|</mo></mrow>"
        if name == "log10":
            head = "<msub><mi>log</mi><mn>10</mn></msub>"
        else:
            head = f"<mi>{html.escape(_FUNCTION_NAMES.get(name, name))}</mi>"
        inner = "<mo>,</mo>".join(args)
        return f"<mrow>{head}<mo>&#x2061;</mo>{_fence(inner)}</mrow>"


def _needs_fence(node: ast.expr, right: bool) -> bool:
    """Whether an operand of a solidus needs parentheses: sums, and products on the right."""
    if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub)):
        return True
    if isinstance(node, ast.UnaryOp):
        return right
    return right and isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Mult, ast.Div))


def _number(text: str) -> str:
    text = text.replace("_", "")
    match = re.fullmatch(r"([0-9.]+)[eE]([+-]?)0*(\d+)", text)
    if not match:
        return f"<mn>{html.escape(text)}</mn>"
    mantissa, sign, exponent = match.groups()
    power = (f"<msup><mn>10</mn><mrow>{'<mo>' + _MINUS + '</mo>' if sign == '-' else ''}"
             f"<mn>{exponent}</mn></mrow></msup>")
    if float(mantissa) == 1.0:
        return power
    return f"<mrow><mn>{mantissa}</mn><mo>×</mo>{power}</mrow>"


def expression_mathml(text: str) -> str:
    """The MathML row of an expression, as written; raises ``SyntaxError`` on bad text."""
    tree = parse(text.strip())
    return _Writer(text.strip()).node(tree.body, grouped=True)


def width(text: str) -> int:
    """A rough printed width of an expression in characters (names and operators)."""
    tree = parse(text.strip())
    total = 0
    for node in ast.walk(tree):
        if isinstance(node, ast.Name):
            base, sub = name_parts(node.id)
            total += len(base) + (len(sub) * 2 // 3 if sub else 0)
        elif isinstance(node, ast.Constant):
            total += len(str(node.value))
        elif isinstance(node, ast.BinOp) and not isinstance(node.op, ast.Div):
            total += 2
        elif isinstance(node, ast.Call):
            total += 4
    return total


def math_block(inner: str, label: str = "", display: str = "block") -> str:
    """A ``<math>`` element (display or inline); ``label`` is its text alternative."""
    alt = f' alttext="{html.escape(label)}"' if label else ""
    return (f'<math xmlns="http://www.w3.org/1998/Math/MathML" display="{display}"{alt}>'
            f"{inner}</math>")


def equation_mathml(name: str, text: str) -> str:
    """``name = expression`` as written, as a display MathML block."""
    return math_block(f"<mrow>{name_mathml(name)}<mo>=</mo>{expression_mathml(text)}</mrow>",
                      f"{name} = {text.strip()}")


def partial_mathml(of: str, by: str) -> str:
    """∂of/∂by as a MathML fraction."""
    return (f"<mfrac><mrow><mo>∂</mo>{name_mathml(of)}</mrow>"
            f"<mrow><mo>∂</mo>{name_mathml(by)}</mrow></mfrac>")
