"""Presentation files, part 1: source locations, the error class, tokenizer and grammar.

The expression language is written down in docs/presentation-files.md; this module is its
recursive-descent parser.  Parsing only builds a tree of plain records; nothing in a file is
ever handed to Python or to a computer-algebra parser, and evaluation happens in
`expand` against a flag type.

Every error is a `PresentationFileError` whose text is one line: ``file:line:col: message``.
"""
from __future__ import annotations

import bisect
import re
from dataclasses import dataclass
from typing import List, NoReturn, Optional, Sequence, Tuple, Union

from ringmatch.errors import InputError

from ..meanings import KIND_BY_SYNTAX

MAX_EXPRESSION_CHARS = 20_000
MAX_TOKENS = 5_000
MAX_DEPTH = 48               # nesting of parentheses, signs, powers, sums, …
MAX_INTEGER_DIGITS = 40

# Names with a fixed meaning in every file: they cannot name generators or loop variables.
RESERVED = frozenset({
    "y", "n", "m", "k", "d", "rank", "T", "q", "S", "Q", "Y", "C",
    "sum", "prod", "lambda", "det", "e", "h", "x", "L", "s",
})
BUNDLE_KINDS = ("S", "Q", "Y", "C", "T")
_OPERATORS = "+-*/^(){}[],=:_"
# Characters that arrive when formulas are copied from papers or from docs/mathematics.md.
_ALIASES = {"\u2212": "-", "\u00b7": "*", "\u00d7": "*", "\u22c5": "*"}


_LONG_NUMBER = re.compile(r"\d{41,}")


def _shorten_number(match) -> str:
    """A number of thousands of digits, as it stands in a file or a message, is named by its
    first digits and length: the message stays one short line."""
    digits = match.group()
    return f"{digits[:12]}…({len(digits)} digits)"


class PresentationFileError(InputError):
    """Anything wrong with a presentation file; str() is one line `file:line:col: message`."""

    def __init__(self, message: str, file: str = "<text>", line: Optional[int] = None,
                 column: Optional[int] = None):
        self.message = _LONG_NUMBER.sub(_shorten_number, " ".join(str(message).split()))
        self.file, self.line, self.column = file, line, column
        super().__init__(str(self))

    def __str__(self) -> str:
        if self.line is None:
            return f"{self.file}: {self.message}"
        return f"{self.file}:{self.line}:{self.column}: {self.message}"


# ---------------------------------------------------------------------------------------
# Locations

@dataclass(frozen=True)
class LineIndex:
    """Offsets of line starts in a whole file, to turn a file offset into line and column."""
    starts: Tuple[int, ...]

    @staticmethod
    def of(text: str) -> "LineIndex":
        starts = [0]
        for offset, char in enumerate(text):
            if char == "\n":
                starts.append(offset + 1)
        return LineIndex(tuple(starts))

    def line_col(self, offset: int) -> Tuple[int, int]:
        line = bisect.bisect_right(self.starts, offset) - 1
        return line + 1, offset - self.starts[line] + 1


@dataclass(frozen=True, eq=False)
class SourceText:
    """One string of a file (an expression, a template, …) and where its characters came from.

    `file_offsets[c]` is the file offset of character c of `text` (None: the text is the
    whole file, so offsets are the identity).  Without `lines` (a string the locator could not
    find in the file) every position is reported at `fallback`."""
    file: str
    text: str
    lines: Optional[LineIndex] = None
    file_offsets: Optional[Tuple[int, ...]] = None
    fallback: Tuple[int, int] = (1, 1)

    def where(self, offset: int) -> Tuple[int, int]:
        if self.lines is None:
            return self.fallback
        offset = max(offset, 0)
        if self.file_offsets is None:
            return self.lines.line_col(offset)
        if not self.file_offsets:
            return self.fallback
        if offset < len(self.file_offsets):
            return self.lines.line_col(self.file_offsets[offset])
        return self.lines.line_col(self.file_offsets[-1] + 1)

    def sub(self, start: int, end: int) -> "SourceText":
        if self.lines is None:
            return SourceText(self.file, self.text[start:end], None, None, self.fallback)
        offsets = (tuple(range(start, end)) if self.file_offsets is None
                   else self.file_offsets[start:end])
        return SourceText(self.file, self.text[start:end], self.lines, offsets, self.where(start))


@dataclass(frozen=True)
class Loc:
    source: SourceText
    offset: int


def fail(at: Loc, message: str) -> NoReturn:
    line, column = at.source.where(at.offset)
    raise PresentationFileError(message, at.source.file, line, column)


# ---------------------------------------------------------------------------------------
# Tokens

@dataclass(frozen=True)
class Token:
    kind: str      # "int", "name", "op", "end"
    text: str
    offset: int


def tokenize(source: SourceText) -> List[Token]:
    text = source.text
    if len(text) > MAX_EXPRESSION_CHARS:
        fail(Loc(source, 0), f"expression longer than {MAX_EXPRESSION_CHARS} characters")
    tokens: List[Token] = []
    i = 0
    while i < len(text):
        char = _ALIASES.get(text[i], text[i])
        if char in " \t\r\n":
            i += 1
            continue
        if len(tokens) >= MAX_TOKENS:
            fail(Loc(source, i), f"expression has more than {MAX_TOKENS} tokens")
        if "0" <= char <= "9":
            j = i
            while j < len(text) and "0" <= text[j] <= "9":
                j += 1
            if j - i > MAX_INTEGER_DIGITS:
                fail(Loc(source, i), f"integer with more than {MAX_INTEGER_DIGITS} digits")
            if j < len(text) and text[j] == "." and text[j + 1:j + 2] != ".":
                fail(Loc(source, j), "decimal numbers are not supported; write a fraction such as 3/2")
            tokens.append(Token("int", text[i:j], i))
            i = j
            continue
        if char == "\u03bb":            # λ, as printed in papers
            tokens.append(Token("name", "lambda", i))
            i += 1
            continue
        if char.isascii() and char.isalpha():
            j = i
            while j < len(text) and text[j].isascii() and text[j].isalnum():
                j += 1
            tokens.append(Token("name", text[i:j], i))
            i = j
            continue
        if text.startswith("..", i):
            tokens.append(Token("op", "..", i))
            i += 2
            continue
        if text.startswith("**", i):
            fail(Loc(source, i), "write powers with ^, not **")
        if char in _OPERATORS:
            tokens.append(Token("op", char, i))
            i += 1
            continue
        if char == ".":
            fail(Loc(source, i), "unexpected '.'; ranges are written a..b")
        fail(Loc(source, i), f"unexpected character {text[i]!r}")
    tokens.append(Token("end", "", len(text)))
    return tokens


# ---------------------------------------------------------------------------------------
# Syntax tree (plain records; `at` is where the construct starts)

@dataclass(frozen=True)
class Num:
    value: int
    at: Loc


@dataclass(frozen=True)
class Symbol:
    """A name with subscripts: a generator (S1_2), a parameter (T_j, q1), an index (k_i, n)."""
    name: str
    subs: Tuple["Node", ...]
    at: Loc


@dataclass(frozen=True)
class Negate:
    arg: "Node"
    at: Loc


@dataclass(frozen=True)
class Chain:
    """a ± b ± c (kind "sum") or a * b / c (kind "product"), kept flat so that long
    expressions never need deep recursion; ops[0] is "+" or "*"."""
    kind: str
    items: Tuple["Node", ...]
    ops: Tuple[str, ...]
    op_ats: Tuple[Loc, ...]
    at: Loc


@dataclass(frozen=True)
class Power:
    base: "Node"
    exponent: "Node"
    at: Loc


@dataclass(frozen=True)
class Coefficient:
    """[y^power](arg): the coefficient of y^power."""
    power: "Node"
    arg: "Node"
    at: Loc


@dataclass(frozen=True)
class Loop:
    kind: str          # "sum" or "prod"
    var: str
    low: "Node"
    high: "Node"
    body: "Node"
    at: Loc


@dataclass(frozen=True)
class Bundle:
    kind: str          # S, Q, Y, or C (C^n and T both mean the trivial bundle with weights T)
    index: Optional["Node"]
    at: Loc


@dataclass(frozen=True)
class Apply:
    """lambda_y(B), lambda_j(B), e_j(B), h_j(B), x_a(B), det(B); `sub` is None for det, "y" for λ_y."""
    func: str
    sub: Union["Node", str, None]
    bundle: Bundle
    at: Loc


@dataclass(frozen=True)
class Toda:
    """L_i = det S_i / det S_{i-1}, as the generator that means it."""
    index: "Node"
    at: Loc


@dataclass(frozen=True)
class Extremum:
    """max(a, b, …) or min(a, b, …) of integers (e.g. the degree of a polynomial whose
    leading term depends on a parameter)."""
    func: str
    args: Tuple["Node", ...]
    at: Loc


@dataclass(frozen=True)
class Equation:
    left: "Node"
    right: "Node"
    at: Loc


Node = Union[Num, Symbol, Negate, Chain, Power, Coefficient, Loop, Apply, Toda, Equation,
             Extremum]


@dataclass(frozen=True)
class Binding:
    """`var = low..high` in a for clause, a coefficients clause or a sum."""
    var: str
    low: Node
    high: Node
    at: Loc


@dataclass(frozen=True)
class Template:
    """Text with {index expression} holes, e.g. "S{i}_{j}" or "level {i}, y^{j}"."""
    parts: Tuple[Union[str, Node], ...]
    at: Loc


# ---------------------------------------------------------------------------------------
# Recursive descent

class _Cursor:
    def __init__(self, source: SourceText, tokens: Sequence[Token]):
        self.source, self.tokens, self.index, self.depth = source, tokens, 0, 0

    @property
    def token(self) -> Token:
        return self.tokens[self.index]

    def peek(self, ahead: int = 1) -> Token:
        return self.tokens[min(self.index + ahead, len(self.tokens) - 1)]

    def at(self, token: Optional[Token] = None) -> Loc:
        return Loc(self.source, (token or self.token).offset)

    def is_op(self, text: str) -> bool:
        return self.token.kind == "op" and self.token.text == text

    def advance(self) -> Token:
        token = self.token
        if token.kind != "end":
            self.index += 1
        return token

    def expect_op(self, text: str, what: str) -> Token:
        if not self.is_op(text):
            fail(self.at(), f"expected {what}, found {describe(self.token)}")
        return self.advance()

    def expect_name(self, what: str) -> Token:
        if self.token.kind != "name":
            fail(self.at(), f"expected {what}, found {describe(self.token)}")
        return self.advance()

    def enter(self) -> None:
        self.depth += 1
        if self.depth > MAX_DEPTH:
            fail(self.at(), f"expression nested more than {MAX_DEPTH} levels deep")

    def leave(self) -> None:
        self.depth -= 1


def describe(token: Token) -> str:
    if token.kind == "end":
        return "the end of the text"
    return f"{token.text!r}"


def parse_relation(source: SourceText) -> Node:
    """A relation: `expr` or `expr = expr` (meaning their difference)."""
    cursor = _Cursor(source, tokenize(source))
    if cursor.token.kind == "end":
        fail(cursor.at(), "empty expression")
    left = _sum(cursor)
    if cursor.is_op("="):
        at = cursor.at()
        cursor.advance()
        right = _sum(cursor)
        left = Equation(left, right, at)
    _finish(cursor)
    return left


def parse_expression(source: SourceText) -> Node:
    cursor = _Cursor(source, tokenize(source))
    if cursor.token.kind == "end":
        fail(cursor.at(), "empty expression")
    node = _sum(cursor)
    _finish(cursor)
    return node


def parse_bindings(source: SourceText) -> Tuple[Binding, ...]:
    """`i = 1..m, j = 1..k_i` (later ranges may use earlier variables)."""
    cursor = _Cursor(source, tokenize(source))
    bindings = [_binding(cursor)]
    while cursor.is_op(","):
        cursor.advance()
        bindings.append(_binding(cursor))
    _finish(cursor)
    seen = set()
    for b in bindings:
        if b.var in seen:
            fail(b.at, f"loop variable {b.var!r} is bound twice")
        seen.add(b.var)
    return tuple(bindings)


def parse_single_binding(source: SourceText) -> Binding:
    bindings = parse_bindings(source)
    if len(bindings) != 1:
        fail(bindings[1].at, "expected exactly one range, as in j = 1..k_i")
    return bindings[0]


def parse_meaning(source: SourceText) -> Node:
    """lambda_j(S_i), lambda_j(Q_i), e_j(Y_i), x_a(S_i) or L_i, with index expressions."""
    node = parse_expression(source)
    ok = (isinstance(node, Toda) or
          (isinstance(node, Apply) and not isinstance(node.sub, str) and node.sub is not None
           and (node.func, node.bundle.kind) in KIND_BY_SYNTAX))
    if not ok:
        fail(node.at, "a meaning must be one of lambda_j(S_i), lambda_j(Q_i), e_j(Y_i), "
                      "x_a(S_i), L_i")
    return node


def parse_template(source: SourceText) -> Template:
    """Literal text with {expression} holes; {{ and }} stand for literal braces."""
    text, parts, literal, i = source.text, [], [], 0
    if len(text) > MAX_EXPRESSION_CHARS:
        fail(Loc(source, 0), f"text longer than {MAX_EXPRESSION_CHARS} characters")
    while i < len(text):
        if text.startswith("{{", i) or text.startswith("}}", i):
            literal.append(text[i])
            i += 2
            continue
        if text[i] == "}":
            fail(Loc(source, i), "unmatched '}' (write }} for a literal brace)")
        if text[i] != "{":
            literal.append(text[i])
            i += 1
            continue
        depth, j = 1, i + 1
        while j < len(text) and depth:
            depth += {"{": 1, "}": -1}.get(text[j], 0)
            j += 1
        if depth:
            fail(Loc(source, i), "unclosed '{' in template")
        if literal:
            parts.append("".join(literal))
            literal = []
        parts.append(parse_expression(source.sub(i + 1, j - 1)))
        i = j
    if literal:
        parts.append("".join(literal))
    return Template(tuple(parts), Loc(source, 0))


def _finish(cursor: _Cursor) -> None:
    if cursor.token.kind != "end":
        hint = ""
        if cursor.token.kind in ("name", "int") or cursor.is_op("(") or cursor.is_op("["):
            hint = " (multiplication needs an explicit *)"
        called = _called_name(cursor) if cursor.is_op("(") else None
        if called is not None:    # e.g. lamda_1(S_i): a misspelt function, not a product
            import difflib
            nearest = difflib.get_close_matches(called, ("lambda", "det", "sum", "prod"), n=1,
                                                cutoff=0.6)
            if nearest:
                fail(cursor.at(), f"unknown function {called!r}; did you mean {nearest[0]!r}?")
        fail(cursor.at(), f"expected an operator or the end of the expression, "
                          f"found {describe(cursor.token)}{hint}")


def _called_name(cursor: _Cursor) -> Optional[str]:
    """The name right before '(' (past a subscript such as _1 or _j), unless a generator's."""
    i = cursor.index - 1
    tokens = cursor.tokens
    while i >= 2 and tokens[i].kind in ("int", "name") and tokens[i - 1].text == "_":
        i -= 2
    if i >= 0 and tokens[i].kind == "name" and i < cursor.index - 1:
        return tokens[i].text
    return None


def _binding(cursor: _Cursor) -> Binding:
    at = cursor.at()
    var = cursor.expect_name("a loop variable name").text
    if var in RESERVED:
        fail(at, f"{var!r} is reserved and cannot be a loop variable")
    cursor.expect_op("=", f"'=' after loop variable {var!r}")
    low = _sum(cursor)
    cursor.expect_op("..", "'..' in the range low..high")
    high = _sum(cursor)
    return Binding(var, low, high, at)


def _chain(cursor: _Cursor, kind: str, operators: str, item) -> Node:
    at = cursor.at()
    items, ops, op_ats = [item(cursor)], [operators[0]], [at]
    while cursor.token.kind == "op" and cursor.token.text in operators:
        op = cursor.advance()
        items.append(item(cursor))
        ops.append(op.text)
        op_ats.append(cursor.at(op))
    if len(items) == 1:
        return items[0]
    return Chain(kind, tuple(items), tuple(ops), tuple(op_ats), at)


def _sum(cursor: _Cursor) -> Node:
    cursor.enter()
    node = _chain(cursor, "sum", "+-", _term)
    cursor.leave()
    return node


def _term(cursor: _Cursor) -> Node:
    return _chain(cursor, "product", "*/", _signed)


def _signed(cursor: _Cursor) -> Node:
    if cursor.is_op("-") or cursor.is_op("+"):
        cursor.enter()
        op = cursor.advance()
        arg = _signed(cursor)
        cursor.leave()
        return Negate(arg, cursor.at(op)) if op.text == "-" else arg
    return _power(cursor)


def _power(cursor: _Cursor) -> Node:
    base = _primary(cursor)
    if not cursor.is_op("^"):
        return base
    op = cursor.advance()
    cursor.enter()
    if cursor.is_op("-"):
        minus = cursor.advance()
        exponent: Node = Negate(_power(cursor), cursor.at(minus))
    else:
        exponent = _power(cursor)
    cursor.leave()
    return Power(base, exponent, cursor.at(op))


def _group(cursor: _Cursor, opening: str) -> Node:
    closing = {"(": ")", "{": "}"}[opening]
    cursor.advance()
    node = _sum(cursor)
    cursor.expect_op(closing, f"{closing!r}")
    return node


def _primary(cursor: _Cursor) -> Node:
    token = cursor.token
    at = cursor.at()
    if token.kind == "int":
        cursor.advance()
        return Num(int(token.text), at)
    if cursor.is_op("(") or cursor.is_op("{"):
        return _group(cursor, token.text)
    if cursor.is_op("["):
        return _coefficient(cursor)
    if token.kind != "name":
        fail(at, f"expected a number, a name or '(', found {describe(token)}")
    name = token.text
    if name in ("sum", "prod"):
        return _loop(cursor)
    if name in ("lambda", "e", "h", "x"):
        return _apply(cursor)
    if name == "det":
        cursor.advance()
        cursor.expect_op("(", "'(' after det")
        bundle = _bundle(cursor)
        _close_call(cursor, "det")
        return Apply("det", None, bundle, at)
    if name == "L":
        cursor.advance()
        cursor.expect_op("_", "a subscript: L_i means det S_i / det S_(i-1)")
        return Toda(_subscript(cursor), at)
    if name in ("max", "min") and cursor.peek().kind == "op" and cursor.peek().text == "(":
        return _extremum(cursor)
    if name in ("S", "Q", "Y", "C"):
        fail(at, f"the bundle {name} can only stand inside lambda_y(…), lambda_j(…), e_j(…), "
                 "h_j(…), x_a(…) or det(…)")
    cursor.advance()
    subs = []
    while cursor.is_op("_"):
        cursor.advance()
        subs.append(_subscript(cursor))
    return Symbol(name, tuple(subs), at)


def _subscript(cursor: _Cursor) -> Node:
    token = cursor.token
    if token.kind == "int":
        cursor.advance()
        return Num(int(token.text), cursor.at(token))
    if token.kind == "name":
        if token.text in ("S", "Q", "Y", "C", "sum", "prod", "lambda", "det", "e", "h", "x", "L"):
            fail(cursor.at(), f"{token.text!r} cannot be a subscript; use braces for an index "
                              "expression, as in k_{i+1}")
        cursor.advance()
        return Symbol(token.text, (), cursor.at(token))
    if cursor.is_op("{") or cursor.is_op("("):
        cursor.enter()
        node = _group(cursor, token.text)
        cursor.leave()
        return node
    fail(cursor.at(), f"expected a subscript (a number, a name or {{expression}}), "
                      f"found {describe(token)}")


def _extremum(cursor: _Cursor) -> Node:
    token = cursor.advance()
    at = cursor.at(token)
    cursor.advance()                       # the '(' seen by the caller
    cursor.enter()
    args = [_sum(cursor)]
    while cursor.is_op(","):
        cursor.advance()
        args.append(_sum(cursor))
    cursor.expect_op(")", f"')' closing {token.text}(…)")
    cursor.leave()
    return Extremum(token.text, tuple(args), at)


def _coefficient(cursor: _Cursor) -> Node:
    at = cursor.at()
    cursor.advance()
    y = cursor.expect_name("y in [y^j]")
    if y.text != "y":
        fail(cursor.at(y), f"coefficients are taken in y only, found {y.text!r}")
    power: Node = Num(1, cursor.at(y))
    if cursor.is_op("^"):
        cursor.advance()
        power = _subscript(cursor)
    cursor.expect_op("]", "']' closing [y^j]")
    if not cursor.is_op("("):
        fail(cursor.at(), f"expected '(' after [y^j]: the expression must be in parentheses, "
                          f"found {describe(cursor.token)}")
    cursor.enter()
    arg = _group(cursor, "(")
    cursor.leave()
    return Coefficient(power, arg, at)


def _loop(cursor: _Cursor) -> Node:
    token = cursor.advance()
    at = cursor.at(token)
    cursor.expect_op("(", f"'(' after {token.text}, as in {token.text}(j = 1..n: …)")
    cursor.enter()
    binding = _binding(cursor)
    cursor.expect_op(":", "':' between the range and the summand")
    body = _sum(cursor)
    _close_call(cursor, token.text)
    cursor.leave()
    return Loop(token.text, binding.var, binding.low, binding.high, body, at)


def _apply(cursor: _Cursor) -> Node:
    token = cursor.advance()
    at = cursor.at(token)
    func = token.text
    forms = {"lambda": "lambda_y(B) or lambda_j(B)", "e": "e_j(B)", "h": "h_j(B)",
             "x": "x_a(S_i)"}[func]
    if not cursor.is_op("_"):
        fail(cursor.at(), f"{func} needs a subscript, as in {forms}")
    cursor.advance()
    if func == "lambda" and cursor.token.kind == "name" and cursor.token.text == "y":
        cursor.advance()
        sub: Union[Node, str] = "y"
    else:
        sub = _subscript(cursor)
    cursor.expect_op("(", f"'(' and a bundle after {func}_…, as in {forms}")
    cursor.enter()
    bundle = _bundle(cursor)
    _close_call(cursor, func)
    cursor.leave()
    return Apply(func, sub, bundle, at)


def _close_call(cursor: _Cursor, func: str) -> None:
    if cursor.is_op(","):
        fail(cursor.at(), f"{func}(…) takes exactly one argument")
    cursor.expect_op(")", f"')' closing {func}(…)")


def _bundle(cursor: _Cursor) -> Bundle:
    at = cursor.at()
    token = cursor.token
    if token.kind != "name" or token.text not in BUNDLE_KINDS:
        fail(at, f"expected a bundle S_i, Q_i, Y_i, C^n or T, found {describe(token)}")
    cursor.advance()
    if token.text == "T":
        return Bundle("C", None, at)
    if token.text == "C":
        cursor.expect_op("^", "C^n")
        n = cursor.expect_name("C^n")
        if n.text != "n":
            fail(cursor.at(n), "the trivial bundle is written C^n")
        return Bundle("C", None, at)
    cursor.expect_op("_", f"a subscript after {token.text}, as in {token.text}_i")
    return Bundle(token.text, _subscript(cursor), at)
