"""Readable formulas: python-flint polynomials turned into SymPy expressions for display.

SymPy is used here only to *print* (pretty text and LaTeX); expressions are built term by
term from exponent vectors, never by parsing text.
"""
from __future__ import annotations

from functools import lru_cache
from typing import Sequence

import sympy

from ringmatch.presentations.interface import Presentation


@lru_cache(maxsize=None)
def _symbol(name: str) -> sympy.Symbol:
    return sympy.Symbol(name)


def _coefficient(c, modulus: int, symmetric: bool) -> sympy.Rational:
    if hasattr(c, "q") and not modulus:
        return sympy.Rational(int(c.p), int(c.q))
    value = int(c)
    if symmetric and modulus and value > modulus // 2:
        value -= modulus   # residues mod p read better as small signed numbers
    return sympy.Integer(value)


def to_sympy(poly, names: Sequence[str], *, symmetric: bool = False) -> sympy.Expr:
    """An fmpq/fmpz/nmod mpoly as a SymPy expression in symbols with the ring's names.

    With `symmetric`, residues mod p are shown as representatives in (−p/2, p/2]."""
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


def formula(poly, names: Sequence[str], *, latex: bool = False, symmetric: bool = False) -> str:
    expr = to_sympy(poly, names, symmetric=symmetric)
    return sympy.latex(expr) if latex else sympy.sstr(expr)


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
