"""Readable formulas: python-flint polynomials turned into SymPy expressions for display.

SymPy is used here only to *print* (pretty text and LaTeX); expressions are built term by
term from exponent vectors, never by parsing text.

Plain text is written in the expression grammar of presentation files
(docs/presentation-files.md: `^` for powers, `*` always explicit, rationals as `a/b`), so a
printed relation, witness, normal form or isomorphism can be pasted into a file.  Residues
mod p are read back as the small rational they stand for when there is one (`small_residue`).
"""
from __future__ import annotations

from functools import lru_cache
from math import isqrt
from typing import Sequence

import sympy

from ringmatch.presentations.interface import Presentation


@lru_cache(maxsize=None)
def _symbol(name: str) -> sympy.Symbol:
    return sympy.Symbol(name)


def small_residue(value: int, modulus: int) -> sympy.Rational:
    """A residue mod p as the rational a/b it reduces from when |a|, b ≤ (p/2)^(1/4), else as
    its representative in (−p/2, p/2].

    The bound is the square root of the one that makes rational reconstruction unique, so a
    random residue passes only with probability about p^(−1/2) (2^−31 for the default
    62-bit primes): what comes out as a small fraction almost surely is one, and a residue
    that stands for nothing small stays an integer rather than a made-up fraction."""
    from ringmatch.compare.reconstruct import rational_number
    value %= modulus
    fraction = rational_number(value, modulus, isqrt(isqrt(modulus // 2)))
    if fraction is not None:
        return sympy.Rational(fraction.numerator, fraction.denominator)
    return sympy.Integer(value - modulus if value > modulus // 2 else value)


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
    total = sympy.Integer(0)
    for exponents, coefficient in poly.terms():
        term = _coefficient(coefficient, modulus, symmetric)
        for symbol, e in zip(symbols, exponents):
            if e:
                term *= symbol ** int(e)
        total += term
    return total


def input_text(expr: sympy.Expr) -> str:
    """A SymPy expression in the presentation-file grammar (powers `^`, not `**`)."""
    # sstr writes products with explicit `*` and rationals as `a/b`; `**` is its only
    # spelling outside the grammar.
    return sympy.sstr(expr).replace("**", "^")


def formula(poly, names: Sequence[str], *, latex: bool = False, symmetric: bool = False) -> str:
    expr = to_sympy(poly, names, symmetric=symmetric)
    return sympy.latex(expr) if latex else input_text(expr)


def presentation_text(presentation: Presentation, *, latex: bool = False) -> str:
    """Generators with their meanings, then the relations, one per line."""
    names = presentation.ring.ctx.names()
    flag = presentation.flag
    lines = [f"{presentation.family} presentation of QK_T({flag.name}), rank {flag.rank}",
             "", "generators:"]
    for g in presentation.generators:
        lines.append(f"  {g.name:<8} = {g.meaning.pretty}   (weight {g.weight})")
    lines += ["", f"relations ({len(presentation.relations)}):"]
    for r in presentation.relations:
        lines.append(f"  [{r.label}]  {formula(r.poly, names, latex=latex)} = 0")
    if presentation.units:
        lines += ["", "units (inverted):"]
        lines += [f"  {formula(u, names, latex=latex)}" for u in presentation.units]
    return "\n".join(lines)
