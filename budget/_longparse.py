"""Parsing long expressions (thousands of terms) without recursion per term.

Method: Python's own parser builds ``a + b + c + …`` as a left-nested tree and recurses
once per operator, so a sum of a few thousand terms exhausts its recursion limit. A long
text is therefore tokenized first (``tokenize`` is iterative), split at its top-level
``+``/``-`` operators (or, when there are none, at its top-level ``*``/``/``), and each
operand — short by then — is parsed by ``ast.parse`` (or, when it is a few plain names
joined by ``*`` and ``/``, as each term of a long mean is, built as ast.parse builds
it, in a quarter of the time); the pieces are joined into the same
left-nested ``ast.BinOp`` chain the parser would have built, with the positions of the
original text, so that messages can quote the right part of it. The tree is then checked
by the ordinary whitelist and built into a graph by a loop (``expressions._chain``).
"""

from __future__ import annotations

import ast
import io
import keyword
import re
import tokenize
from dataclasses import dataclass
from typing import Iterator

__all__ = ["parse"]

_SHORT = 400  # texts with fewer operator characters go straight to ast.parse
_LEAF = 300  # token ranges shorter than this are parsed by ast.parse
_NAMES_MULTIPLIED = 15  # names joined by * and / in a leaf, built without ast.parse
_SUMS: dict[str, type[ast.operator]] = {"+": ast.Add, "-": ast.Sub}
_PRODUCTS: dict[str, type[ast.operator]] = {"*": ast.Mult, "/": ast.Div, "//": ast.FloorDiv,
                                            "%": ast.Mod, "@": ast.MatMult}
_KEYWORDS = {"if", "else", "lambda", "not", "and", "or", "in", "is", "for", "await",
             "yield"}
_OPEN, _CLOSE = "([{", ")]}"


@dataclass(frozen=True, slots=True)
class _Token:
    kind: int
    text: str
    start: int  # character offsets in the whole text
    end: int


def parse(text: str) -> ast.Expression:
    """``ast.parse(text, mode="eval")``, also for sums and products of 10⁵ terms."""
    if sum(text.count(c) for c in "+-*/") < _SHORT:
        return ast.parse(text, mode="eval")
    tokens = _tokens(text)
    if tokens is None:
        return ast.parse(text, mode="eval")  # let Python's parser name the problem
    return ast.Expression(body=_Splitter(text, tokens).expression(0, len(tokens)))


# names, plain decimal numbers and the operators of arithmetic, between spaces: the
# tokens of nearly every long expression, found by one pattern instead of ``tokenize``
_SIMPLE = re.compile(r"[ \t]*(?:([A-Za-z_][A-Za-z0-9_]*)|((?:[0-9]+\.?[0-9]*|\.[0-9]+)"
                     r"(?:[eE][-+]?[0-9]+)?)|(\*\*|//|[-+*/(),]))")
_GLUED = frozenset("abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789_.")


def _tokens(text: str) -> list[_Token] | None:
    simple = _simple_tokens(text)
    return simple if simple is not None else _python_tokens(text)


def _simple_tokens(text: str) -> list[_Token] | None:
    """The tokens ``tokenize`` would give for a one-line text of names, decimal numbers,
    ``+ - * / ** ( ) ,`` and spaces; None for anything else (``tokenize`` reads it)."""
    if text[:1] in (" ", "\t"):  # an indented first line: Python refuses it
        return None
    made: list[_Token] = []
    append = made.append
    depth = 0
    position, end = 0, len(text.rstrip(" \t"))
    match = _SIMPLE.match
    while position < end:
        found = match(text, position)
        if found is None:
            return None
        name, number, operator = found.groups()
        position = found.end()
        if name is not None:
            append(_Token(tokenize.NAME, name, found.start(1), position))
        elif number is not None:
            if position < len(text) and text[position] in _GLUED:  # 1_000, 1e, 1.5.2, 2j
                return None
            if number[0] == "0" and number[1:2].isdigit():  # 007: Python's own message
                return None
            append(_Token(tokenize.NUMBER, number, found.start(2), position))
        else:
            depth += (operator == "(") - (operator == ")")
            if depth < 0:
                return None
            append(_Token(tokenize.OP, operator, found.start(3), position))
    return made if made and depth == 0 else None


def _python_tokens(text: str) -> list[_Token] | None:
    starts = [0]
    for line in text.splitlines(keepends=True):
        starts.append(starts[-1] + len(line))
    made: list[_Token] = []
    try:
        for item in tokenize.generate_tokens(io.StringIO(text).readline):
            if item.type in (tokenize.NEWLINE, tokenize.NL, tokenize.ENDMARKER):
                continue
            if item.type not in (tokenize.OP, tokenize.NAME, tokenize.NUMBER):
                return None
            made.append(_Token(item.type, item.string, starts[item.start[0] - 1]
                               + item.start[1], starts[item.end[0] - 1] + item.end[1]))
    except (tokenize.TokenError, SyntaxError):
        return None
    return made if made else None


class _Splitter:
    def __init__(self, text: str, tokens: list[_Token]) -> None:
        self.text, self.tokens = text, tokens
        self.match = _matches(tokens)
        self.lines = text.splitlines(keepends=True) or [text]
        self.line_starts = [0]
        for line in self.lines:
            self.line_starts.append(self.line_starts[-1] + len(line))
        self.ascii = [line.isascii() for line in self.lines]

    def expression(self, i: int, j: int) -> ast.expr:
        """The tree of tokens i … j-1 (recursion only per level of long groups)."""
        while j - i >= _LEAF:
            sums, products = self.top_level(i, j)
            if sums:
                return self.chain(i, j, sums, _SUMS)
            if products:
                return self.chain(i, j, products, _PRODUCTS)
            if self.tokens[i].text == "(" and self.match.get(i) == j - 1:
                i, j = i + 1, j - 1
                continue
            if (self.tokens[i].kind == tokenize.NAME and self.tokens[i + 1].text == "("
                    and self.match.get(i + 1) == j - 1):
                return self.call(i, j)
            break
        return self.leaf(i, j)

    def call(self, i: int, j: int) -> ast.expr:
        """name(argument, …) whose arguments are long."""
        commas = self.commas(i + 2, j - 1)
        bounds = [i + 1, *commas, j - 1]
        args = [self.expression(a + 1, b) for a, b in zip(bounds, bounds[1:])]
        name = ast.Name(id=self.tokens[i].text, ctx=ast.Load())
        self.locate(name, self.tokens[i].start, self.tokens[i].end)
        node = ast.Call(func=name, args=args, keywords=[])
        self.locate(node, self.tokens[i].start, self.tokens[j - 1].end)
        return node

    def commas(self, i: int, j: int) -> list[int]:
        """Positions of the commas outside any bracket in tokens i … j-1."""
        return [k for k in self.outside(i, j) if self.tokens[k].text == ","]

    def outside(self, i: int, j: int) -> Iterator[int]:
        """Positions of the operator tokens outside any bracket in tokens i … j-1."""
        depth = 0
        for k in range(i, j):
            token = self.tokens[k]
            if token.kind != tokenize.OP:
                continue
            if token.text in _OPEN:
                depth += 1
            elif token.text in _CLOSE:
                depth -= 1
            elif depth == 0:
                yield k

    def top_level(self, i: int, j: int) -> tuple[list[int], list[int]]:
        """Positions of the binary operators outside any bracket in tokens i … j-1."""
        sums: list[int] = []
        products: list[int] = []
        for k in self.outside(i, j):
            if k > i and self.operand_before(k):
                if self.tokens[k].text in _SUMS:
                    sums.append(k)
                elif self.tokens[k].text in _PRODUCTS:
                    products.append(k)
        return sums, products

    def operand_before(self, k: int) -> bool:
        before = self.tokens[k - 1]
        if before.kind == tokenize.NUMBER:
            return True
        if before.kind == tokenize.NAME:
            return before.text not in _KEYWORDS
        return before.text in _CLOSE

    def chain(self, i: int, j: int, cuts: list[int],
              ops: dict[str, type[ast.operator]]) -> ast.expr:
        bounds = [i, *cuts, j]
        node = self.expression(i, cuts[0])
        for position, cut in enumerate(cuts):
            stop = bounds[position + 2]
            right = self.expression(cut + 1, stop)
            node = ast.BinOp(left=node, op=ops[self.tokens[cut].text](), right=right)
            self.locate(node, self.tokens[i].start, self.tokens[stop - 1].end)
        return node

    def leaf(self, i: int, j: int) -> ast.expr:
        if i >= j:
            raise SyntaxError("an operand is missing", ("<expression>", 1, 1, self.text))
        start, end = self.tokens[i].start, self.tokens[j - 1].end
        if j - i == 1 and self.tokens[i].kind == tokenize.NAME \
                and self.tokens[i].text not in _KEYWORDS | {"True", "False", "None"}:
            name = ast.Name(id=self.tokens[i].text, ctx=ast.Load())
            self.locate(name, start, end)
            return name
        simple = self.names_multiplied(i, j)
        if simple is not None:
            return simple
        try:
            body = ast.parse(self.text[start:end], mode="eval").body
        except SyntaxError as exc:
            line, column = self.position(start)
            raise SyntaxError(exc.msg, ("<expression>", line, column + (exc.offset or 0),
                                        self.text)) from exc
        line, column = self.position(start)
        for node in ast.walk(body):
            if not isinstance(node, (ast.expr, ast.keyword)):
                continue
            if node.lineno == 1:
                node.col_offset += column
            if node.end_lineno == 1:
                node.end_col_offset = (node.end_col_offset or 0) + column
            node.lineno += line - 1
            node.end_lineno = (node.end_lineno or 1) + line - 1
        return body

    def names_multiplied(self, i: int, j: int) -> ast.expr | None:
        """Tokens i … j-1 when they are a few plain names joined by ``*`` and ``/``
        (``U_7 * t_7 / m_7``, each term of a long mean): the left-nested tree, positions
        included, that ``ast.parse`` builds, made without it; None for anything else
        (numbers, keywords, names beyond ASCII, which Python normalises, other operators)."""
        count = j - i
        if count % 2 == 0 or count > _NAMES_MULTIPLIED:
            return None
        tokens = self.tokens
        for k in range(i, j, 2):
            token = tokens[k]
            if token.kind != tokenize.NAME or not token.text.isascii() \
                    or keyword.iskeyword(token.text):
                return None
        for k in range(i + 1, j, 2):
            if tokens[k].text not in ("*", "/"):
                return None
        node: ast.expr = ast.Name(id=tokens[i].text, ctx=ast.Load())
        self.locate(node, tokens[i].start, tokens[i].end)
        for k in range(i + 1, j, 2):
            right = ast.Name(id=tokens[k + 1].text, ctx=ast.Load())
            self.locate(right, tokens[k + 1].start, tokens[k + 1].end)
            node = ast.BinOp(left=node, op=ast.Mult() if tokens[k].text == "*" else ast.Div(),
                             right=right)
            self.locate(node, tokens[i].start, tokens[k + 1].end)
        return node

    def position(self, offset: int) -> tuple[int, int]:
        """1-based line and UTF-8 byte column of a character offset (as ``ast`` counts)."""
        line = _bisect(self.line_starts, offset)
        column = offset - self.line_starts[line]
        if self.ascii[line]:  # one byte per character: no need to encode the line's start
            return line + 1, column
        return line + 1, len(self.lines[line][:column].encode("utf-8"))

    def locate(self, node: ast.expr, start: int, end: int) -> None:
        node.lineno, node.col_offset = self.position(start)
        node.end_lineno, node.end_col_offset = self.position(end)


def _matches(tokens: list[_Token]) -> dict[int, int]:
    """The closing bracket of each opening one (a stack, not recursion)."""
    found: dict[int, int] = {}
    stack: list[int] = []
    for k, token in enumerate(tokens):
        if token.kind != tokenize.OP:
            continue
        if token.text in _OPEN:
            stack.append(k)
        elif token.text in _CLOSE and stack:
            found[stack.pop()] = k
    return found


def _bisect(starts: list[int], offset: int) -> int:
    low, high = 0, len(starts) - 2
    while low < high:
        middle = (low + high + 1) // 2
        if starts[middle] <= offset:
            low = middle
        else:
            high = middle - 1
    return max(low, 0)
