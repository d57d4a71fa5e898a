"""Printed formulas read back: relations, witnesses' normal forms and isomorphisms are
written in the expression grammar of presentation files (docs/presentation-files.md), so
pasting them into a file gives back the same polynomial.

Outside sources: the quantum K Whitney relations (arXiv:2310.03826) are what the printed
relations state; rational reconstruction (P. S. Wang, "A p-adic algorithm for univariate
partial fractions", SYMSAC 1981; reference recalled from memory) is what turns residues
into fractions.
"""
from __future__ import annotations

import json
import random

import flint
import pytest
import sympy

from ringmatch.compare import algebra, iso
from ringmatch.compare.engine import check_case
from ringmatch.presentations import get_family
from ringmatch.presentations.flagtype import parse_flag
from ringmatch.presentations.interface import build_symbolic
from ringmatch.presentations.userfile import family_from_text
from ringmatch.reports.formulas import formula, small_residue, to_sympy
from ringmatch.reports.isomorphism import as_json, formula_expression, formula_text


def case_file(case: str, generators, expressions) -> str:
    """A case file declaring `generators` (name, meaning text) with one relation per
    expression, exactly as a user would paste printed formulas into it."""
    lines = ["format = 1", 'flavour = "case"', 'name = "pasted"', f'case = "{case}"']
    for name, meaning in generators:
        lines += ["", "[[generators]]", f'name = "{name}"', f'meaning = "{meaning}"',
                  "weight = 1"]
    for expression in expressions:
        lines += ["", "[[relations]]", f"expr = {json.dumps(expression)}"]
    return "\n".join(lines) + "\n"


def read_back(case: str, generators, expressions):
    family = family_from_text(case_file(case, generators, expressions), "pasted.toml")
    built = build_symbolic(family, parse_flag(case))
    names = built.ring.ctx.names()
    return [to_sympy(r.poly, names) for r in built.relations]


def test_relations_are_printed_in_the_file_grammar_and_read_back_identically():
    flag = parse_flag("Fl(1,2;3)")
    presentation = build_symbolic(get_family("whitney"), flag)
    names = presentation.ring.ctx.names()
    printed = [formula(r.poly, names) for r in presentation.relations]
    assert not any("**" in text for text in printed)
    generators = [(g.name, g.meaning.text) for g in presentation.generators]
    for original, pasted in zip(presentation.relations, read_back(flag.name, generators, printed)):
        assert sympy.expand(pasted - to_sympy(original.poly, names)) == 0


def test_residues_are_printed_as_the_small_fractions_they_reduce_from():
    prime = algebra.DEFAULT_PRIME
    ctx = flint.nmod_mpoly_ctx.get(("S1_1", "Q1_1"), prime, "degrevlex")
    S, Q = ctx.gens()
    big = random.Random(7).randrange(prime)    # a residue that stands for nothing small
    poly = S**2 * (2 * pow(3, -1, prime)) - Q * (5 * pow(7, -1, prime)) + big \
        + S * (prime - 4)
    text = formula(poly, ctx.names(), symmetric=True)
    assert "2*S1_1^2/3" in text and "5*Q1_1/7" in text and "- 4*S1_1" in text
    assert str(abs(small_residue(big, prime))) in text and abs(small_residue(big, prime)) > 2**40
    # pasted into a file and reduced mod p again, it is the same polynomial
    (pasted,) = read_back("P1", [("S1_1", "lambda_1(S_1)"), ("Q1_1", "lambda_1(Q_1)")], [text])
    back = {exponents: int(c.p) * pow(int(c.q), -1, prime) % prime
            for exponents, c in sympy.Poly(pasted, *sympy.symbols("S1_1 Q1_1")).terms()}
    assert back == {tuple(e): int(c) for e, c in zip(poly.monoms(), poly.coeffs())}


def test_witness_normal_forms_paste_back():
    """Fl(1,2;3) is the first case where the shipped sign error shows (its header).  Normal
    forms come from the exact route (docs/verdicts.md §2); by default the Bethe points refute
    the sign error first (§3), and their witness is a failing point, with no normal form."""
    families = [get_family("whitney"), get_family("whitney-sign-error")]
    by_points = check_case(parse_flag("Fl(1,2;3)"), families, seed=3)
    assert by_points.verdict == "disagree"
    assert all(w.fails_at_points is not None and w.normal_form is None
               for pair in by_points.pairs for w in pair.witnesses)
    result = check_case(parse_flag("Fl(1,2;3)"), families, seed=3, method="groebner")
    assert result.verdict == "disagree"
    witnesses = [w for pair in result.pairs for w in pair.witnesses if w.normal_form]
    assert witnesses
    assert all(w.relation_of == "whitney-sign-error" and w.not_in == "whitney"
               for w in witnesses)
    presentation = build_symbolic(get_family("whitney"), parse_flag("Fl(1,2;3)"))
    generators = [(g.name, g.meaning.text) for g in presentation.generators]
    texts = [w.normal_form for w in witnesses]
    assert not any("**" in text for text in texts)
    for text, pasted in zip(texts, read_back("Fl(1,2;3)", generators, texts)):
        # printing the pasted polynomial again gives the same text: nothing was lost
        assert sympy.sstr(pasted).replace("**", "^") == text


def test_isomorphism_formulas_paste_back_up_to_the_unit_multiplied_through():
    """Toda to Whitney on Fl(3): the formulas have the denominators 1 − q_i (the Toda
    generators L_j = det S_j / det S_{j−1} against λ_1(Q_j); tests/test_iso.py checks the map
    itself), which a file divides by as units (docs/presentation-files.md, Division)."""
    flag = parse_flag("Fl(3)")
    toda, whitney = get_family("toda"), get_family("whitney")
    result = iso.find_isomorphism(flag, toda, whitney, seed=2)
    assert result.found, result.reason
    direction = result.forward
    texts = [formula_text(f, direction.source_generators) for f in direction.formulas]
    assert not any("**" in text for text in texts)
    assert as_json(result)["map"] == {f.target: t for f, t in zip(direction.formulas, texts)}
    generators = [(g.name, g.meaning.text) for g in toda.generators(flag)]
    pasted = read_back(flag.name, generators, texts)
    generator_symbols = set(sympy.symbols(" ".join(direction.source_generators)))
    for f, back in zip(direction.formulas, pasted):
        ratio = sympy.cancel(back / formula_expression(f, direction.source_generators))
        assert ratio != 0 and not (ratio.free_symbols & generator_symbols), (f.target, ratio)


def test_latex_relations_write_elementary_symmetric_polynomials_of_the_weights():
    """Whitney relations are λ_y(S_i)·λ_y(Q_i) = λ_y(S_{i+1}) deformed by q (arXiv:2310.03826);
    at the last level λ_y(S_{m+1}) = ∏(1 + y T_j), whose coefficients are the e_j(T).  The
    compact form substituted back is the relation itself."""
    import itertools
    import math

    from ringmatch.reports.formulas import collapse_elementary, relation_latex

    flag = parse_flag("Fl(1,3;5)")
    presentation = build_symbolic(get_family("whitney"), flag)
    names = presentation.ring.ctx.names()
    weights = sympy.symbols("T1:6")
    elementary = {sympy.Symbol(f"__e{j}"): sum(math.prod(c) for c in itertools.combinations(
        weights, j)) for j in range(1, 5)}
    for relation in presentation.relations:
        expr = to_sympy(relation.poly, names)
        compact = collapse_elementary(expr, weights)
        assert sympy.expand(compact.subs(elementary) - expr) == 0, relation.label
    by_label = {r.label: r for r in presentation.relations}
    symbols = {g.name: g.meaning.text for g in presentation.generators}
    level2 = relation_latex(by_label["level 2, y^2"].poly, names, symbols)
    assert "e_{2}(T)" in level2 and "T_{1} T_{2}" not in level2
    top = relation_latex(by_label["level 2, y^5"].poly, names, symbols)
    assert "T_{1} T_{2} T_{3} T_{4} T_{5}" in top     # e_5 stays the product of the weights
