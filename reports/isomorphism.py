"""Output of an isomorphism search (compare/iso.py): text for people, LaTeX, JSON.

Formulas are assembled as SymPy expressions from the exact coefficient records (never by
parsing text) and printed by SymPy.  Coefficients are written in the weights T1…Tn and the
Novikov variables q1…qm: e_i(T) is expanded into monomials, denominators are kept as
products of (1 − q_i) and of T1⋯Tn.
"""
from __future__ import annotations

import itertools
import re
from functools import lru_cache
from typing import Dict, List, Optional, Sequence

import sympy

from ringmatch.compare.iso_records import Direction, ExactCoefficient, GeneratorFormula, IsoResult

FACTOR_LIMIT = 20      # numerators with more terms are printed expanded (factoring is slow)


@lru_cache(maxsize=None)
def _symbol(name: str) -> sympy.Symbol:
    return sympy.Symbol(name)


@lru_cache(maxsize=None)
def _elementary(n: int) -> tuple:
    T = [_symbol(f"T{j}") for j in range(1, n + 1)]
    return tuple(sympy.Add(*[sympy.Mul(*c) for c in itertools.combinations(T, i)])
                 for i in range(1, n + 1))


def coefficient_expression(c: ExactCoefficient) -> sympy.Expr:
    if not c.numerator:
        return sympy.Integer(0)
    n = len(c.numerator[0][0])
    m = len(c.q_poles)
    e = _elementary(n)
    q = [_symbol(f"q{i}") for i in range(1, m + 1)]
    numerator = sympy.Integer(0)
    for alpha, beta, value in c.numerator:
        term = sympy.Rational(value.numerator, value.denominator)
        for e_i, a in zip(e, alpha):
            term *= e_i ** a
        for q_i, b in zip(q, beta):
            term *= q_i ** b
        numerator += term
    numerator = sympy.expand(numerator)
    if len(sympy.Add.make_args(numerator)) <= FACTOR_LIMIT:
        numerator = sympy.factor(numerator)
    denominator = sympy.Integer(1)
    if c.e_top_power:
        denominator *= e[-1] ** c.e_top_power
    for q_i, E in zip(q, c.q_poles):
        if E:
            denominator *= (1 - q_i) ** E
    return numerator / denominator


def formula_expression(formula: GeneratorFormula, source_names: Sequence[str]) -> sympy.Expr:
    symbols = [_symbol(name) for name in source_names]
    total = sympy.Integer(0)
    for term in formula.terms:
        monomial = sympy.Integer(1)
        for symbol, a in zip(symbols, term.monomial):
            monomial *= symbol ** a
        total += coefficient_expression(term.coefficient) * monomial
    return total


def formula_text(formula: GeneratorFormula, source_names: Sequence[str]) -> str:
    """The formula in the presentation-file grammar, ready to paste into a file."""
    from .formulas import input_text
    return input_text(formula_expression(formula, source_names))


def latex_name(name: str) -> str:
    match = re.fullmatch(r"([A-Za-z]+)(\d+)_(\d+)", name)
    if match:
        return f"{match.group(1)}_{{{match.group(2)},{match.group(3)}}}"
    match = re.fullmatch(r"([A-Za-z]+)(\d+)", name)
    if match:
        return f"{match.group(1)}_{{{match.group(2)}}}"
    return name


def formula_latex(formula: GeneratorFormula, source_names: Sequence[str],
                  symbol_latex: Optional[Dict[str, str]] = None) -> str:
    """LaTeX of the formula; generators by `symbol_latex` (reports.formulas.symbols_latex:
    the scheme of relations and tables), others by `latex_name`."""
    expression = formula_expression(formula, source_names)
    symbol_latex = symbol_latex or {}
    names = {s: symbol_latex.get(s.name) or latex_name(s.name) for s in expression.free_symbols}
    return sympy.latex(expression, symbol_names=names)


def formula_latex_lines(formula: GeneratorFormula, source_names: Sequence[str],
                        symbol_latex: Optional[Dict[str, str]] = None,
                        units: Optional[float] = None,
                        first_units: Optional[float] = None) -> List[str]:
    """`formula_latex`, broken between terms into lines of at most `units`
    (reports.formulas.latex_width; the first line `first_units`) when it is wider; one line
    when `units` is None."""
    from .formulas import break_lines, latex_width
    whole = formula_latex(formula, source_names, symbol_latex)
    if units is None or latex_width(whole) <= (first_units or units):
        return [whole]
    expression = formula_expression(formula, source_names)
    symbol_latex = symbol_latex or {}
    names = {s: symbol_latex.get(s.name) or latex_name(s.name) for s in expression.free_symbols}
    pieces = []
    for index, term in enumerate(expression.as_ordered_terms()):
        text = sympy.latex(term, symbol_names=names)
        pieces.append(text if index == 0 or text.startswith("-") else "+ " + text)
    return break_lines(pieces, units, first_units)


def target_latex(name: str, symbol_latex: Optional[Dict[str, str]] = None) -> str:
    return (symbol_latex or {}).get(name) or latex_name(name)


def direction_map(direction: Direction) -> Dict[str, str]:
    return {f.target: formula_text(f, direction.source_generators) for f in direction.formulas}


# ---------------------------------------------------------------------------------------
# The three layouts

def as_json(result: IsoResult) -> dict:
    return {
        "case": result.case,
        "from": result.source,
        "to": result.target,
        "found": result.found,
        "verified": result.verified,
        "status": result.status,
        "reason": result.reason,
        "map": direction_map(result.forward) if result.found else {},
        "inverse": direction_map(result.backward) if result.found else {},
        "candidate": None if result.found or not result.forward.formulas else {
            "map": direction_map(result.forward), "inverse": direction_map(result.backward)},
        "how": {"map": {s.target: s.how for s in result.forward.supports},
                "inverse": {s.target: s.how for s in result.backward.supports}},
        "bounds": dict(result.bounds, searched_degree={
            "map": result.forward.searched_degree, "inverse": result.backward.searched_degree}),
        "certificate": dict(result.certificate, checks=result.checks),
        "timings": {phase: round(seconds, 3) for phase, seconds in result.timings.items()},
    }


def _check_line(check: dict) -> str:
    verdict = {True: "passed", False: "FAILED", None: "undecided"}[check["passed"]]
    where = f"prime {check.get('prime')}, seed {check.get('seed')}"
    if check.get("order"):
        where += f", order s^{check['order']}"
    return f"  {check['check']}: {verdict} ({check.get('method', '')}; {where})\n    {check['detail']}"


def _formula_lines(direction: Direction, latex: bool,
                   symbol_latex: Optional[Dict[str, str]] = None) -> List[str]:
    lines = []
    width = max((len(f.target) for f in direction.formulas), default=0)
    for f in direction.formulas:
        if latex:
            lines.append(f"  {target_latex(f.target, symbol_latex)} &= "
                         f"{formula_latex(f, direction.source_generators, symbol_latex)} \\\\")
        else:
            lines.append(f"  {f.target:<{width}} = {formula_text(f, direction.source_generators)}")
    return lines


def as_text(result: IsoResult, *, latex: bool = False,
            symbol_latex: Optional[Dict[str, str]] = None) -> str:
    """`symbol_latex`: {generator name: LaTeX} of both presentations, for `latex`."""
    verdict = "found, verified" if result.verified else \
        "found, not verified" if result.found else result.status
    lines = [f"Isomorphism {result.source} → {result.target} for {result.case}: {verdict}",
             f"  {result.reason}"]
    shown = result.found or result.forward.formulas
    for title, direction in (("map", result.forward), ("inverse", result.backward)):
        if not shown or not direction.formulas:
            continue
        label = title if result.found else f"candidate {title}"
        lines += ["", f"{label} ({direction.target} generators in {direction.source} generators):"]
        if latex:
            lines.append("\\begin{align*}")
        lines += _formula_lines(direction, latex, symbol_latex)
        if latex:
            lines[-1] = lines[-1].rstrip(" \\")   # a final \\ would add an empty row
            lines.append("\\end{align*}")
        normal = [s.target for s in direction.supports if s.how != "sparsest"]
        if normal:
            lines.append(f"  (normal form in the standard monomials for {', '.join(normal)}; "
                         "sparsest support for the others)")
    bounds = result.bounds
    if bounds["max_degree"] is not None:
        degree_text = f"monomials of degree ≤ {bounds['max_degree']}"
    else:
        degree_text = (f"monomials searched degree by degree until found (reached "
                       f"{_reached(result.forward.searched_degree)} for the map, "
                       f"{_reached(result.backward.searched_degree)} for the inverse)")
    lines += ["", f"bounds: {degree_text}; sparsest supports up to {bounds['max_terms']} terms; "
                  f"order s^{bounds['order']}; 1/e_n(T) up to {bounds['t_pole_extra']} power(s) "
                  f"beyond the least; up to {bounds['max_primes']} primes"]
    if result.checks:
        lines += ["checks:"] + [_check_line(c) for c in result.checks]
    certificate = result.certificate
    search = certificate.get("search", {})
    lines.append(f"certificate: seed {certificate.get('seed')}; search at prime "
                 f"{search.get('prime')}, order s^{search.get('order')}")
    rebuilt = certificate.get("reconstruction")
    if rebuilt:
        samples = "/".join(map(str, rebuilt["samples_per_prime"]))
        lines.append(f"  reconstruction: {samples} samples mod s^{rebuilt['sample_order']} at primes "
                     f"{', '.join(map(str, rebuilt['primes']))}")
        lines.append(f"  {rebuilt['height_bound']}")
    lines.append(f"  ({certificate.get('kind')}: random specialisations; --json for all of it)")
    return "\n".join(lines)


def _reached(degree) -> str:
    # a direction is not searched at all when the other one already failed
    return "not searched" if degree is None else f"degree {degree}"
