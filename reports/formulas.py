"""Readable formulas: python-flint polynomials turned into SymPy expressions for display.

SymPy is used here only to *print* (pretty text and LaTeX); expressions are built term by
term from exponent vectors, never by parsing text.

Plain text is written in the expression grammar of presentation files
(docs/presentation-files.md: `^` for powers, `*` always explicit, rationals as `a/b`), so a
printed relation, witness, normal form or isomorphism can be pasted into a file.  Residues
mod p are read back as the small rational they stand for when there is one (`small_residue`).
"""
from __future__ import annotations

import math
import re
from functools import lru_cache
from typing import Dict, List, Optional, Sequence, Tuple

import sympy

from ringmatch.presentations.interface import Presentation


@lru_cache(maxsize=None)
def _symbol(name: str) -> sympy.Symbol:
    return sympy.Symbol(name)


def small_residue(value: int, modulus: int) -> sympy.Rational:
    """compare.reconstruct.small_residue as a SymPy number."""
    from ringmatch.compare.reconstruct import small_residue as as_fraction
    fraction = as_fraction(value, modulus)
    return sympy.Rational(fraction.numerator, fraction.denominator)


def _coefficient(c, modulus: int, symmetric: bool) -> sympy.Rational:
    if hasattr(c, "q") and not modulus:
        return sympy.Rational(int(c.p), int(c.q))
    value = int(c)
    if symmetric and modulus:
        return small_residue(value, modulus)
    return sympy.Integer(value)


def to_sympy(poly, names: Sequence[str], *, symmetric: bool = False) -> sympy.Expr:
    """An fmpq/fmpz/nmod mpoly as a SymPy expression in symbols with the ring's names.

    With `symmetric`, residues mod p are shown as small rationals or as representatives in
    (−p/2, p/2] (`small_residue`)."""
    symbols = [_symbol(name) for name in names]
    modulus = poly.context().modulus() if hasattr(poly.context(), "modulus") else 0
    # one Add of all terms: adding them one at a time is quadratic in SymPy
    return sympy.Add(*[sympy.Mul(_coefficient(coefficient, modulus, symmetric),
                                 *[symbol ** int(e) for symbol, e in zip(symbols, exponents)
                                   if e])
                       for exponents, coefficient in poly.terms()])


def input_text(expr: sympy.Expr) -> str:
    """A SymPy expression in the presentation-file grammar (powers `^`, not `**`)."""
    # sstr writes products with explicit `*` and rationals as `a/b`; `**` is its only
    # spelling outside the grammar.
    return sympy.sstr(expr).replace("**", "^")


def formula(poly, names: Sequence[str], *, latex: bool = False, symmetric: bool = False,
            symbol_latex: Optional[Dict[str, str]] = None) -> str:
    """Plain text in the file grammar, or LaTeX with generators written by `symbol_latex`
    (name → LaTeX, see `generator_latex`)."""
    expr = to_sympy(poly, names, symmetric=symmetric)
    if latex:
        return latex_with_names(expr, symbol_latex or {})
    return input_text(expr)


# ---------------------------------------------------------------------------------------
# LaTeX: one naming scheme for generators everywhere (relations, isomorphisms, tables,
# reports): a generator is written as the class it stands for, so the same class has the
# same symbol in every presentation and no legend is needed.

def generator_latex(generator) -> str:
    """The LaTeX of the class the generator stands for (its meaning's kind record)."""
    return generator.meaning.latex


def symbols_latex(generators) -> Dict[str, str]:
    """{generator name: LaTeX} for `generator_latex` of each generator."""
    return {g.name: generator_latex(g) for g in generators}


def latex_with_names(expr: sympy.Expr, symbol_latex: Dict[str, str]) -> str:
    names = {_symbol(k): v for k, v in symbol_latex.items()}
    return sympy.latex(expr, symbol_names=names)


def _terms(expr: sympy.Expr) -> List[sympy.Expr]:
    if expr == 0:
        return []
    return sorted(sympy.Add.make_args(expr), key=sympy.default_sort_key)


def split_one_minus_q(expr: sympy.Expr):
    """(q, A, B) with expr = (1 − q)·A + B and B = expr at q = 1, for the Novikov variable q
    that shortens the sum most; None when none does.

    Quantum relations are deformations (1 − q)·(classical) + q·(correction); expanded, every
    classical term appears twice, and the factored form is what papers print."""
    best, length = None, len(_terms(expr))
    novikov = sorted((s for s in expr.free_symbols if re.fullmatch(r"q\d+", s.name)),
                     key=lambda s: s.name)
    for q in novikov:
        rest = sympy.expand(expr.subs(q, 1))
        multiple = sympy.expand(sympy.quo(sympy.expand(expr - rest), 1 - q, q))
        cost = len(_terms(multiple)) + len(_terms(rest))
        if cost < length:
            best, length = (q, multiple, rest), cost
    return best


# Stand-ins for e_j(T_1, …, T_n) in a relation; the double underscore keeps them apart from
# every generator name (a generator name starts with a letter).
_ELEMENTARY = "__e{}"


def elementary_latex(n_weights: int) -> Dict[str, str]:
    """LaTeX of the stand-ins `collapse_elementary` puts in for e_j(T), 1 ≤ j < n."""
    return {_ELEMENTARY.format(j): f"e_{{{j}}}(T)" for j in range(1, n_weights)}


def collapse_elementary(expr: sympy.Expr, weights: Sequence[sympy.Symbol]) -> sympy.Expr:
    """`expr` with every complete elementary symmetric polynomial e_j of the weights T
    (1 ≤ j < n, all C(n, j) square-free monomials of degree j with one coefficient) inside
    the coefficient of a monomial in the other variables replaced by a stand-in printed
    e_j(T).  e_n = T_1⋯T_n stays a product: it is as short, and reads as the determinant.

    Expanded, e_2 of five weights alone is ten terms; Whitney-type relations are full of
    them."""
    n = len(weights)
    if n < 2 or not (expr.free_symbols & set(weights)):
        return expr
    others = sorted(expr.free_symbols - set(weights), key=lambda s: s.name)
    outer = sympy.Poly(expr, *others) if others else None
    pairs = outer.terms() if outer is not None else [((), expr)]
    total = sympy.Integer(0)
    for exponents, coefficient in pairs:
        inner = sympy.Poly(coefficient, *weights)
        by_degree: Dict[int, list] = {}
        for monomial, c in inner.terms():
            by_degree.setdefault(sum(monomial), []).append((monomial, c))
        collapsed = sympy.Integer(0)
        for degree, terms in by_degree.items():
            values = {c for _, c in terms}
            if 0 < degree < n and len(values) == 1 and len(terms) == math.comb(n, degree) \
                    and all(max(m) == 1 for m, _ in terms):
                collapsed += values.pop() * sympy.Symbol(_ELEMENTARY.format(degree))
            else:
                for monomial, c in terms:
                    collapsed += c * sympy.Mul(*[w ** e for w, e in zip(weights, monomial)])
        total += collapsed * sympy.Mul(*[o ** e for o, e in zip(others, exponents)])
    return sympy.expand(total)


def relation_latex_pieces(poly, names: Sequence[str], symbol_latex: Dict[str, str]) -> List[str]:
    """The terms of `poly` in LaTeX, each with its sign (the first without a leading +),
    with a factor (1 − q_i) taken out where that shortens the relation and the elementary
    symmetric polynomials of the weights written e_j(T) (`collapse_elementary`); a factored
    sum is spread over several pieces (\\bigl( … \\bigr) may break across display lines)."""
    weights = [_symbol(name) for name in names if re.fullmatch(r"T\d+", name)]
    expr = collapse_elementary(to_sympy(poly, names), weights)
    symbol_latex = {**symbol_latex, **elementary_latex(len(weights))}
    split = split_one_minus_q(expr)
    if split is None:
        rest, q, multiple = expr, None, sympy.Integer(0)
    else:
        q, multiple, rest = split

    def signed(term) -> str:
        text = latex_with_names(term, symbol_latex)
        return text if text.startswith("-") else "+ " + text

    pieces = [signed(t) for t in _terms(rest)]
    if q is not None:
        factor = r"\left(1 - " + sympy.latex(q) + r"\right)"
        inner = _terms(multiple)
        negative = inner[0].could_extract_minus_sign()
        if negative:
            inner = [-t for t in inner]
        sign = "- " if negative else "+ "
        if len(inner) == 1:
            coefficient, monomial = inner[0].as_coeff_Mul()
            lead = "" if coefficient == 1 else sympy.latex(coefficient) + " "
            pieces.append(f"{sign}{lead}{factor} {latex_with_names(monomial, symbol_latex)}")
        else:
            body = [signed(t) for t in inner]
            body[0] = body[0][2:] if body[0].startswith("+ ") else body[0]
            body[0] = f"{sign}{factor} \\bigl({body[0]}"
            body[-1] += r" \bigr)"
            pieces += body
    if not pieces:
        return ["0"]
    if pieces[0].startswith("+ "):
        pieces[0] = pieces[0][2:]
    return pieces


def relation_latex(poly, names: Sequence[str], symbol_latex: Dict[str, str]) -> str:
    return " ".join(relation_latex_pieces(poly, names, symbol_latex)) + " = 0"


def presentation_text(presentation: Presentation) -> str:
    """Generators with their meanings, then the relations, one per line (for LaTeX:
    reports.tables.presentation_latex)."""
    names = presentation.ring.ctx.names()
    flag = presentation.flag
    lines = [f"{presentation.family} presentation of QK_T({flag.name}), rank {flag.rank}",
             "", "generators:"]
    for g in presentation.generators:
        lines.append(f"  {g.name:<8} = {g.meaning.pretty}   (weight {g.weight})")
    lines += ["", f"relations ({len(presentation.relations)}):"]
    for r in presentation.relations:
        lines.append(f"  [{r.label}]  {formula(r.poly, names)} = 0")
    if presentation.units:
        lines += ["", "units (inverted):"]
        lines += [f"  {formula(u, names)}" for u in presentation.units]
    return "\n".join(lines)


# ---------------------------------------------------------------------------------------
# Breaking display formulas into lines that fit a column

# Widths are in units of about 5.3 pt (measured against pdflatex's overfull-box reports on
# 10 pt math type).  One column of a two-column article is 229.5 pt, 43 units; a display
# line gets 38 of them, the rest being a margin for what the estimate misses (tall
# \left( \right), stacked scripts); continuation lines lose 4 more to their \qquad.
COLUMN_UNITS = 38.0
_ZERO_WIDTH = {"left", "right", "bigl", "bigr", "Bigl", "Bigr", "displaystyle", ","}
_SPACES = {"quad": 2.0, "qquad": 4.0, ";": 0.6, ":": 0.5, "!": 0.0}
_OPERATORS = {"+": 2.4, "-": 2.4, "=": 2.8, "<": 2.8, ">": 2.8}


def latex_width(text: str) -> float:
    """A rough width of math-mode LaTeX in units of about 5 pt: enough to decide where a
    long sum breaks, not to typeset it."""
    width, _ = _width_of(text, 0)
    return width


def _group(text: str, i: int) -> Tuple[float, int]:
    """Width of the argument starting at text[i] (a {group}, a command or one character)."""
    while i < len(text) and text[i] == " ":
        i += 1
    if i >= len(text):
        return 0.0, i
    if text[i] == "{":
        return _width_of(text, i + 1, closing="}")
    if text[i] == "\\":
        match = re.match(r"\\([A-Za-z]+|.)", text[i:])
        return 1.0, i + match.end()
    return 1.0, i + 1


def _width_of(text: str, i: int, closing: Optional[str] = None) -> Tuple[float, int]:
    width = 0.0
    while i < len(text):
        ch = text[i]
        if closing and ch == closing:
            return width, i + 1
        if ch == "{":
            inner, i = _width_of(text, i + 1, closing="}")
            width += inner
        elif ch in "_^":
            inner, i = _group(text, i + 1)
            width += 0.7 * inner
        elif ch == "\\":
            match = re.match(r"\\([A-Za-z]+|.)", text[i:])
            name = match.group(1)
            i += match.end()
            if name == "frac":
                top, i = _group(text, i)
                bottom, i = _group(text, i)
                width += max(top, bottom) + 0.4
            elif name in ("text", "mathrm", "texttt", "emph"):
                inner, i = _group(text, i)
                width += inner
            elif name in _SPACES:
                width += _SPACES[name]
            elif name not in _ZERO_WIDTH:
                width += 1.0
        elif ch in _OPERATORS:
            width += _OPERATORS[ch]
            i += 1
        elif ch in "()[]":
            width += 0.8
            i += 1
        elif ch in " ":
            i += 1
        elif ch in ",.;:":
            width += 0.5
            i += 1
        else:
            width += 1.0
            i += 1
    return width, i


def break_lines(pieces: Sequence[str], units: float = COLUMN_UNITS,
                first_units: Optional[float] = None) -> List[str]:
    """Consecutive pieces (terms with their signs) joined into lines of at most `units`,
    the first of at most `first_units` (default `units`; continuation lines are indented);
    a piece wider than that gets a line of its own."""
    lines: List[str] = []
    current, used = [], 0.0
    for piece in pieces:
        width = latex_width(piece)
        room = units if lines or first_units is None else first_units
        if current and used + width > room:
            lines.append(" ".join(current))
            current, used = [], 0.0
        current.append(piece)
        used += width
    if current:
        lines.append(" ".join(current))
    return lines or ["0"]
