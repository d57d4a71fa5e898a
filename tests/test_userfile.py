"""Presentation files (docs/presentation-files.md) and plug-ins.

References outside the project, named beside each check:
* q-Whitney relations: arXiv:2310.03826 (all partial flags), arXiv:2208.01091 (Grassmannians);
* ∏_j (1 − S/T_j) = q in QK_T(P^{n−1}) and det S·det Q = (1 − q)·T_1⋯T_n (arXiv:2208.01091;
  "Quantum K-theory of Grassmannians", Duke Math. J. 156 (2011)), as stated in
  docs/mathematics.md §2.1;
* SymPy as an independent reference for symmetric functions, expansions and Gröbner bases.
"""
from __future__ import annotations

import itertools
import json
import os
import re
import textwrap
from pathlib import Path

import pytest
import sympy

from ringmatch.compare import algebra
from ringmatch.presentations import FAMILIES, get_family, plugins, userfile
from ringmatch.presentations.flagtype import FlagType, parse_flag
from ringmatch.presentations.interface import (Family, PresentationError, build_series, build_specialised,
                                     build_symbolic)
from ringmatch.presentations.meanings import Meaning
from ringmatch.presentations.userfile import PresentationFileError, case_file_text, family_from_text
from ringmatch.reports.formulas import to_sympy

from conftest import run_cli

ROOT = Path(__file__).resolve().parent.parent
FILES = ROOT / "presentations" / "files"


def all_flags(max_n: int):
    for n in range(2, max_n + 1):
        for size in range(1, n):
            for dims in itertools.combinations(range(1, n), size):
                yield FlagType(dims, n)


def same_presentation(a, b) -> None:
    assert a.generators == b.generators
    assert a.ring.ctx.names() == b.ring.ctx.names()
    assert [(r.label, r.poly) for r in a.relations] == [(r.label, r.poly) for r in b.relations]
    assert list(a.units) == list(b.units)
    assert a.expected_colength == b.expected_colength


# ---------------------------------------------------------------------------------------
# Shipped family files reproduce the built-in families exactly

@pytest.mark.parametrize("file_name, builtin", [("qwhitney-family", "whitney"),
                                                ("vieta-family", "vieta")])
@pytest.mark.parametrize("flag", list(all_flags(5)), ids=lambda f: f.name)
def test_shipped_family_file_equals_builtin(file_name, builtin, flag):
    """Same generator names/meanings/weights and the same relation polynomials, symbolic
    (equivariant and plain), specialised mod p and in the series ring q_i = c_i·s."""
    from_file, reference = get_family(file_name), FAMILIES[builtin]
    for equivariant in (True, False):
        same_presentation(build_symbolic(from_file, flag, equivariant=equivariant),
                          build_symbolic(reference, flag, equivariant=equivariant))
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=11)
    same_presentation(build_specialised(from_file, flag, spec),
                      build_specialised(reference, flag, spec))
    line = algebra.draw_specialisation(flag.n, flag.m, seed=12, q_on_line=True)
    same_presentation(build_series(from_file, flag, line), build_series(reference, flag, line))


def test_qwhitney_file_top_coefficient_is_det_identity():
    """det S · det Q = (1 − q)·T_1⋯T_n in QK_T(Gr(k;n)) (arXiv:2208.01091), checked with SymPy."""
    flag = parse_flag("Gr(2;5)")
    p = build_symbolic(get_family("qwhitney-family"), flag)
    names = p.ring.ctx.names()
    top = to_sympy(p.relations[-1].poly, names)
    S, Q, q = sympy.symbols("S1_2 Q1_3 q1")      # det S = λ_2(S), det Q = λ_3(Q)
    T = sympy.symbols("T1:6")
    assert sympy.expand(top - (S * Q - (1 - q) * sympy.prod(T))) == 0


def test_shipped_file_names_match_their_name_field():
    files = userfile.shipped_files()
    assert {"qwhitney-family", "vieta-family", "whitney-sign-error",
            "p3-single-generator"} <= set(files)
    for stem, path in files.items():
        # a parameterised file's family carries its values: name[a=0,b=0]
        assert get_family(stem).name.split("[")[0] == stem, path
        assert userfile.load_spec(str(path)).name == stem, path


# ---------------------------------------------------------------------------------------
# Round trips through case files

def _round_trip_cases():
    families = dict(FAMILIES)
    families.update({stem: get_family(stem) for stem in userfile.shipped_files()})
    for name, family in sorted(families.items()):
        for flag in all_flags(4):
            if family.unsupported(flag) is None:
                yield pytest.param(family, flag, id=f"{name}-{flag.name}")


@pytest.mark.parametrize("family, flag", list(_round_trip_cases()))
def test_written_case_file_reads_back_identically(family, flag):
    """Every built-in and shipped family, written as a case file, gives the same ideal
    generators (identical polynomials, units and colength) when read back; for the family
    files this is also 'expanding a family produces exactly what a case file would'."""
    text = case_file_text(family, flag)
    back = family_from_text(text, "written.toml")
    same_presentation(build_symbolic(back, flag), build_symbolic(family, flag))
    assert back.unsupported(flag) is None
    other = parse_flag("Gr(1;2)") if flag != parse_flag("Gr(1;2)") else parse_flag("Gr(1;3)")
    assert "describes" in back.unsupported(other)


def test_plain_case_file_has_no_weights():
    text = case_file_text(FAMILIES["whitney"], parse_flag("Gr(2;4)"), equivariant=False)
    assert "T1" not in text
    back = family_from_text(text, "plain.toml")
    same_presentation(build_symbolic(back, parse_flag("Gr(2;4)"), equivariant=False),
                      build_symbolic(FAMILIES["whitney"], parse_flag("Gr(2;4)"), equivariant=False))


# ---------------------------------------------------------------------------------------
# The shipped case file and the deliberately wrong conjecture

def test_p3_case_file_generates_the_whitney_elimination_ideal():
    """∏_j (1 − S/T_j) = q for P^{n−1} (docs/mathematics.md §2.1; Duke Math. J. 156 (2011)):
    with numbers for T and q, SymPy's lex Gröbner basis of the Whitney relations of P^3 eliminates the
    λ(Q) generators and leaves one polynomial in S = λ_1(S_1), proportional to the file's."""
    flag = parse_flag("P3")
    numbers = {"T1": 2, "T2": 3, "T3": 5, "T4": 7, "q1": sympy.Rational(1, 11)}
    values = {sympy.Symbol(k): v for k, v in numbers.items()}

    def relations_at_numbers(family):
        p = build_symbolic(family, flag)
        return [sympy.expand(to_sympy(r.poly, p.ring.ctx.names()).subs(values))
                for r in p.relations]

    mine = relations_at_numbers(get_family("p3-single-generator"))
    assert len(mine) == 1
    S = sympy.Symbol("S1_1")
    whitney = relations_at_numbers(FAMILIES["whitney"])
    basis = sympy.groebner(whitney, *sympy.symbols("Q1_3 Q1_2 Q1_1"), S, order="lex")
    in_S = [g for g in basis.exprs if g.free_symbols <= {S}]
    assert len(in_S) == 1
    ratio = sympy.cancel(in_S[0] / mine[0])
    assert ratio.is_number and ratio != 0
    # and the relation really is (T_1 − S)⋯(T_4 − S) − q·T_1⋯T_4, written out by hand
    expected = sympy.prod([t - S for t in (2, 3, 5, 7)]) - sympy.Rational(1, 11) * 210
    assert sympy.expand(mine[0] - expected) == 0


def test_wrong_conjecture_agrees_with_whitney_on_grassmannians():
    wrong = get_family("whitney-sign-error")
    for flag in all_flags(5):
        if flag.is_grassmannian:
            same_presentation(build_symbolic(wrong, flag), build_symbolic(FAMILIES["whitney"], flag))


def test_wrong_conjecture_differs_from_whitney_as_an_ideal_at_fl3():
    """The first flag type with two steps: some relation of the file is not in the Whitney
    ideal (normal form modulo SymPy's Gröbner basis over F_p, at a random specialisation)."""
    flag = parse_flag("Fl(1,2;3)")
    prime = 32003
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=5, prime=prime)
    whitney = build_specialised(FAMILIES["whitney"], flag, spec)
    wrong = build_specialised(get_family("whitney-sign-error"), flag, spec)
    names = whitney.ring.ctx.names()
    basis = sympy.groebner([to_sympy(r.poly, names) for r in whitney.relations],
                           *sympy.symbols(names), order="grevlex", modulus=prime)
    remainders = [basis.reduce(to_sympy(r.poly, names))[1] for r in wrong.relations]
    assert any(rem != 0 for rem in remainders)
    assert [r.label for r, rem in zip(wrong.relations, remainders) if rem != 0] == ["level 2, y^2"]


def test_wrong_conjecture_is_found_disagree_by_check():
    """End to end through the comparison engine: `disagree` at Fl(1,2;3), the first case where
    the sign matters, with a witness naming the relation; `agree` at Gr(2;4)."""
    pytest.importorskip("ringmatch.compare.engine", reason="the comparison engine is not installed")
    result = run_cli("check", "Fl(1,2;3)", "--presentations", "whitney,whitney-sign-error",
                     "--seed", "3", "--json")
    assert result.returncode == 1, result.stderr      # exit status 1: disagree
    verdict = json.loads(result.stdout)
    assert verdict["verdict"] == "disagree"
    assert "level 2, y^2" in result.stdout
    result = run_cli("check", "Gr(2;4)", "--presentations", "whitney,whitney-sign-error",
                     "--seed", "3", "--json")
    assert result.returncode == 0, result.stderr      # exit status 0: agree
    assert json.loads(result.stdout)["verdict"] == "agree"


# ---------------------------------------------------------------------------------------
# The expression language against independent references

CASE_HEAD = """\
format = 1
flavour = "case"
name = "probe"
case = "{case}"
"""


def case_text(case: str, generators: str, relations: str, units: str = "") -> str:
    return (CASE_HEAD.format(case=case) + textwrap.dedent(generators) + textwrap.dedent(units)
            + textwrap.dedent(relations))


ROOTS_GR24 = """
[[generators]]
for = "a = 1..2"
name = "x{a}"
meaning = "x_a(S_1)"
weight = 1
"""
LAMBDAS_GR24 = """
[[generators]]
for = "j = 1..2"
name = "S1_{j}"
meaning = "lambda_j(S_1)"
weight = "j"
"""


def expand_relations(text: str, case: str, equivariant: bool = True):
    family = family_from_text(text, "probe.toml")
    p = build_symbolic(family, parse_flag(case), equivariant=equivariant)
    return [to_sympy(r.poly, p.ring.ctx.names()) for r in p.relations]


def sympy_e(j, xs):
    return sum((sympy.prod(c) for c in itertools.combinations(xs, j)), sympy.Integer(0))


def sympy_h(j, xs):
    return sum((sympy.prod(c) for c in itertools.combinations_with_replacement(xs, j)),
               sympy.Integer(0))


def test_symmetric_functions_of_the_weights_match_sympy():
    relations = """
    [[relations]]
    for = "j = 0..6"
    expr = "e_j(T) + 10*h_j(C^n) + 100*lambda_j(T) + 1000*[y^j](lambda_y(C^n))"
    [[relations]]
    expr = "det(C^n) - x_2(C^n)"
    """
    got = expand_relations(case_text("Gr(2;4)", LAMBDAS_GR24, relations), "Gr(2;4)")
    T = sympy.symbols("T1:5")
    for j in range(7):
        want = 1101 * sympy_e(j, T) + 10 * sympy_h(j, T)
        assert sympy.expand(got[j] - want) == 0, j
    assert sympy.expand(got[7] - (sympy.prod(T) - T[1])) == 0
    # [y^j] λ_y(C^n) = coefficient of y^j in ∏ (1 + y T_j), expanded by SymPy
    y = sympy.Symbol("y")
    product = sympy.Poly(sympy.prod([1 + y * t for t in T]), y)
    assert all(sympy.expand(product.coeff_monomial(y ** j) - sympy_e(j, T)) == 0 for j in range(5))


def test_functions_of_chern_roots_match_sympy():
    relations = """
    [[relations]]
    for = "j = 0..4"
    expr = "h_j(S_1) + 7*lambda_j(S_1)"
    [[relations]]
    expr = "det(S_1) - x_1(S_1) * x_2(S_1)"
    """
    got = expand_relations(case_text("Gr(2;4)", ROOTS_GR24, relations), "Gr(2;4)")
    x = sympy.symbols("x1 x2")
    for j in range(5):
        assert sympy.expand(got[j] - (sympy_h(j, x) + 7 * sympy_e(j, x))) == 0
    assert got[5] == 0


def test_complete_symmetric_from_lambda_generators():
    """h_j(S_1) computed from λ-generators equals h_j of the roots once λ_j = e_j(roots)."""
    relations = """
    [[relations]]
    for = "j = 1..5"
    expr = "h_j(S_1)"
    """
    got = expand_relations(case_text("Gr(2;4)", LAMBDAS_GR24, relations), "Gr(2;4)")
    x = sympy.symbols("x1 x2")
    to_roots = {sympy.Symbol("S1_1"): x[0] + x[1], sympy.Symbol("S1_2"): x[0] * x[1]}
    for j, value in enumerate(got, 1):
        assert sympy.expand(value.subs(to_roots) - sympy_h(j, x)) == 0


def test_arithmetic_sums_products_and_index_expressions():
    relations = """
    [[relations]]
    expr = "sum(a = 1..3: a^2) * S1_1 - prod(a = 1..4: a) + 3/6 * S1_2 - 2^-1*S1_2"
    [[relations]]
    expr = "(S1_1 - 1)^3 = S1_2"
    [[relations]]
    expr = "S1_{k_1} - S1_{d_0} + {2}^{n - 1} - -S1_1 + sum(a = 5..4: S1_1) * prod(a = 2..1: 9)"
    [[relations]]
    expr = "[y](lambda_y(S_1)^2) + [y^{n-2}]((1 + y)^n) - [y^0](y + 3)"
    """
    got = expand_relations(case_text("Gr(2;4)", LAMBDAS_GR24, relations), "Gr(2;4)")
    s1, s2 = sympy.symbols("S1_1 S1_2")
    assert sympy.expand(got[0] - (14 * s1 - 24)) == 0
    assert sympy.expand(got[1] - ((s1 - 1) ** 3 - s2)) == 0
    assert sympy.expand(got[2] - (s2 - s2 + 8 + s1 + 0 * 1)) == 0
    assert sympy.expand(got[3] - (2 * s1 + 6 - 3)) == 0


def test_division_by_units_multiplies_the_relation_through():
    relations = """
    [[relations]]
    expr = "S1_1 / T_1 - 1"
    [[relations]]
    expr = "S1_2 / (T_1 * T_2^2) + q1 / (1 - q_1) + S1_1 / (q1 - 1)"
    [[relations]]
    expr = "S1_1 * T_1^-2"
    [[relations]]
    expr = "1 / (S1_2 + 1) = S1_1 / 3"
    """
    units = """
    [[units]]
    expr = "S1_2 + 1"
    """
    text = case_text("Gr(2;4)", LAMBDAS_GR24, relations, units)
    got = expand_relations(text, "Gr(2;4)")
    s1, s2, q = sympy.symbols("S1_1 S1_2 q1")
    T1, T2 = sympy.symbols("T1 T2")
    assert sympy.expand(got[0] - (s1 - T1)) == 0
    # equal up to the unit T_1 T_2^2 (1 − q): the numerator over the common denominator
    assert sympy.expand(got[1] - (s2 * (1 - q) + q * T1 * T2 ** 2 - s1 * T1 * T2 ** 2)) == 0
    assert got[2] == s1
    assert sympy.expand(got[3] - (1 - s1 * (s2 + 1) / 3)) == 0
    family = family_from_text(text, "probe.toml")
    p = build_symbolic(family, parse_flag("Gr(2;4)"))
    assert [to_sympy(u, p.ring.ctx.names()) for u in p.units] == [s2 + 1]
    spec = algebra.draw_specialisation(4, 1, seed=3)
    assert len(build_specialised(family, parse_flag("Gr(2;4)"), spec).units) == 1


def test_prime_dividing_a_denominator_is_a_clean_error():
    text = case_text("Gr(2;4)", LAMBDAS_GR24, """
    [[relations]]
    expr = "S1_1^2 / 3 - q1"
    """)
    family = family_from_text(text, "third.toml")
    spec = algebra.Specialisation(3, (1, 2, 4, 5), (1,))
    with pytest.raises(PresentationFileError, match="third.toml: the denominator of the "
                                                    "coefficient 1/3 is divisible by the prime 3"):
        build_specialised(family, parse_flag("Gr(2;4)"), spec)
    spec = algebra.Specialisation(5, (1, 2, 3, 4), (2,))
    (relation,) = build_specialised(family, parse_flag("Gr(2;4)"), spec).relations
    assert str(relation.poly) == "2*S1_1^2 + 3"          # 1/3 = 2 and −2 = 3 mod 5


def test_family_for_grassmannians_only_refuses_other_flags():
    text = """
    format = 1
    flavour = "family"
    name = "grass-only"
    applies_to = ["grassmannians", "Fl(4)"]
    [[generators]]
    for = "j = 1..k_1"
    name = "S1_{j}"
    meaning = "lambda_j(S_1)"
    weight = "j"
    [[relations]]
    for = "j = 1..k_1"
    expr = "S1_{j}^2 - 1"
    """
    family = family_from_text(textwrap.dedent(text), "g.toml")
    assert family.unsupported(parse_flag("Gr(2;5)")) is None
    assert family.unsupported(parse_flag("Fl(4)")) is None
    assert "grassmannians" in family.unsupported(parse_flag("Fl(1,3;5)"))
    with pytest.raises(PresentationError, match="applies to"):
        build_symbolic(family, parse_flag("Fl(1,3;5)"))
    assert len(build_symbolic(family, parse_flag("Gr(3;5)")).relations) == 3


def test_expected_colength_override_for_root_presentations():
    text = case_text("Gr(2;4)", ROOTS_GR24, """
    [[relations]]
    expr = "x1 - x2"
    """).replace('case = "Gr(2;4)"',
                 'case = "Gr(2;4)"\nexpected_colength = "rank * prod(a = 1..k_1: a)"')
    assert family_from_text(text).expected_colength(parse_flag("Gr(2;4)")) == 12


# ---------------------------------------------------------------------------------------
# Errors: one line, file:line:col, and what was expected

GOOD_HEAD = """\
format = 1
flavour = "case"
name = "probe"
case = "Gr(2;4)"
description = "error probes"

# λ_1(S_1), λ_2(S_1)
[[generators]]
for = "j = 1..2"
name = "S1_{j}"
meaning = "lambda_j(S_1)"
weight = "j"

"""


def error_of(text: str, case: str = "Gr(2;4)") -> PresentationFileError:
    with pytest.raises(PresentationFileError) as info:
        family = family_from_text(text, "bad.toml")
        build_symbolic(family, parse_flag(case))
    message = str(info.value)
    assert "\n" not in message
    return info.value


def relation_error(expr_line: str) -> str:
    """The error for a file whose only relation is `expr_line` (at line 15 of the file)."""
    text = GOOD_HEAD + "[[relations]]\n" + expr_line + "\n"
    assert text.splitlines()[14] == expr_line.splitlines()[0]
    return str(error_of(text))


@pytest.mark.parametrize("expr_line, expected", [
    ('expr = "S1_1 + T_5"', "bad.toml:15:16: index out of range: T_5 does not exist"),
    ('expr = "S1_1 + T5"', "bad.toml:15:16: index out of range: T_5"),
    ('expr = "q_2 * S1_1"', "bad.toml:15:9: index out of range: q_2 does not exist"),
    ('expr = "S1_1 + foo"', "bad.toml:15:16: unknown symbol 'foo'"),
    ('expr = "S1_3"', "bad.toml:15:9: unknown symbol 'S1_3'"),
    ('expr = "det(S_1, S_2)"', "bad.toml:15:16: det(…) takes exactly one argument"),
    ('expr = "lambda_y()"', "bad.toml:15:18: expected a bundle"),
    ('expr = "e(T)"', "bad.toml:15:10: e needs a subscript"),
    ('expr = "lambda_2(S_3)"', "bad.toml:15:18: index out of range: S_3 does not exist"),
    ('expr = "k_3 * S1_1"', "bad.toml:15:9: index out of range: k_3"),
    ('expr = "S1_1 / S1_2"', "bad.toml:15:14: division by a non-unit: the factor S1_2"),
    ('expr = "S1_1 / (1 + q1)"', "bad.toml:15:14: division by a non-unit"),
    ('expr = "S1_1 / (T1 - T2)"', "bad.toml:15:14: division by a non-unit"),
    ('expr = "S1_1 / (y - y)"', "bad.toml:15:14: division by zero"),
    ('expr = "S1_1 / (1 + y)"', "bad.toml:15:14: division by an expression that contains y"),
    ('expr = "lambda_y(S_1)"', "bad.toml:15:9: the relation still contains y"),
    ('expr = "S1_{T_1}"', "bad.toml:15:13: a subscript must be an integer"),
    ('expr = "S1_1^S1_2"', "bad.toml:15:14: an exponent must be an integer"),
    ('expr = "sum(j = 1..y: S1_1)"', "bad.toml:15:20: a range bound must be an integer"),
    ('expr = "S_1 + 1"', "bad.toml:15:9: the bundle S can only stand inside"),
    ('expr = "S1_1 ** 2"', "bad.toml:15:14: write powers with ^"),
    ('expr = "2 S1_1"', "bad.toml:15:11: expected an operator or the end of the expression, "
                        "found 'S1' (multiplication needs an explicit *)"),
    ('expr = "(S1_1 + 1"', "bad.toml:15:18: expected ')', found the end of the text"),
    ('expr = "1.5 * S1_1"', "bad.toml:15:10: decimal numbers are not supported"),
    ('expr = "S1_1 $ 2"', "bad.toml:15:14: unexpected character '$'"),
    ('expr = ""', "bad.toml:15:9: empty expression"),
    ('expr = "[x^2](S1_1)"', "bad.toml:15:10: coefficients are taken in y only"),
    ('expr = "[y^2] S1_1"', "bad.toml:15:15: expected '(' after [y^j]"),
    ('expr = "sum(S_1 = 1..2: 1)"', "bad.toml:15:13: 'S' is reserved"),
    ('expr = "sum(1 = 1..2: 1)"', "bad.toml:15:13: expected a loop variable name"),
    ('expr = "sum(n = 1..2: 1)"', "bad.toml:15:13: 'n' is reserved"),
    ('expr = "sum(j = 1..2: sum(j = 1..2: 1))"', "bad.toml:15:23: loop variable 'j' is already"),
    ('expr = "L_1"', "bad.toml:15:9: no generator means L_1"),
    ('expr = "x_1(S_1)"', "bad.toml:15:9: no generator means x_1(S_1)"),
    ('expr = "lambda_1(Q_1)"', "bad.toml:15:9: no generator means lambda_1(Q_1)"),
    ('expr = "n_1"', "bad.toml:15:9: n takes no subscript"),
    ('expr = "T + 1"', "bad.toml:15:9: T takes exactly one subscript"),
    ('expr = """\nS1_1 +\n   T_1 * * 2\n"""', "bad.toml:17:10: expected a number, a name or '('"),
    ('expr = "S1_1 + \\"T_9\\""', "bad.toml:15:16: unexpected character '\"'"),
    ('expr = "\\u0053\\u0031_1 + T_9"', "bad.toml:15:26: index out of range: T_9"),
    ("expr = 'S1_1 + T_9'", "bad.toml:15:16: index out of range: T_9"),
    ("expr = '''\nS1_1\n + T_9'''", "bad.toml:17:4: index out of range: T_9"),
    ('expr = "S1_1"\nlable = "x"', "bad.toml:16:1: unknown key 'lable' in relations"),
    ('expr = 5', "bad.toml:14:3: 'expr' in relations must be a string"),
    ('coefficients = "j = 1..4"\nexpr = "lambda_y(S_1) + j"',
     "bad.toml:16:25: j numbers the coefficients of y"),
    ('coefficients = "j = 1..4, a = 1..2"\nexpr = "lambda_y(S_1)"',
     "bad.toml:15:27: expected exactly one range"),
    ('label = "level {i}"\nexpr = "S1_1"', "bad.toml:15:17: unknown symbol 'i'"),
    ('label = "level {1"\nexpr = "S1_1"', "bad.toml:15:16: unclosed '{' in template"),
    ('for = "i = 1..m, i = 1..2"\nexpr = "S1_1"', "bad.toml:15:18: loop variable 'i' is bound twice"),
    ('for = "i = 1..1000000"\nexpr = "S1_1"', "bad.toml:15:8: range 1..1000000 is too long"),
    ('for = "j = 1..0"\nexpr = "S1_1"', "bad.toml:14:3: empty relation list: the relations "
                                        "expand to nothing for Gr(2;4)"),
])
def test_relation_errors_name_file_line_column_and_problem(expr_line, expected):
    assert relation_error(expr_line).startswith(expected)


@pytest.mark.parametrize("text, expected", [
    (GOOD_HEAD, "bad.toml:1:1: empty relation list"),
    (GOOD_HEAD.replace("probes\"\n", "probes\"\nrelations = []\n"),
     "bad.toml:6:1: empty relation list"),
    (CASE_HEAD.format(case="Gr(2;4)") + '[[relations]]\nexpr = "1"\n',
     "bad.toml:1:1: no generators declared"),
    (GOOD_HEAD + '[[generators]]\nname = "S1_1"\nmeaning = "lambda_1(Q_1)"\nweight = 1\n'
     '[[relations]]\nexpr = "1"\n', "bad.toml:15:9: duplicate generator 'S1_1'"),
    (GOOD_HEAD + '[[generators]]\nname = "A"\nmeaning = "lambda_1(S_1)"\nweight = 1\n'
     '[[relations]]\nexpr = "1"\n', "bad.toml:16:12: two generators mean lambda_1(S_1)"),
    (GOOD_HEAD + '[[generators]]\nname = "T1"\nmeaning = "lambda_1(Q_1)"\nweight = 1\n'
     '[[relations]]\nexpr = "1"\n', "bad.toml:15:9: generator name 'T1' is reserved"),
    (GOOD_HEAD + '[[generators]]\nname = "Q-1"\nmeaning = "lambda_1(Q_1)"\nweight = 1\n'
     '[[relations]]\nexpr = "1"\n', "bad.toml:15:9: generator name 'Q-1' must be"),
    (GOOD_HEAD + '[[generators]]\nname = "A"\nmeaning = "lambda_3(Q_1)"\nweight = 1\n'
     '[[relations]]\nexpr = "1"\n', "bad.toml:16:12: index out of range: index 3 out of range"),
    (GOOD_HEAD + '[[generators]]\nname = "A"\nmeaning = "lambda_y(Q_1)"\nweight = 1\n'
     '[[relations]]\nexpr = "1"\n', "bad.toml:16:12: a meaning must be one of"),
    (GOOD_HEAD + '[[generators]]\nname = "A"\nmeaning = "lambda_1(Q_1)"\nweight = 0\n'
     '[[relations]]\nexpr = "1"\n', "bad.toml:17:1: weight of A must be between 1 and 1000"),
    (GOOD_HEAD + '[[generators]]\nname = "A"\nmeaning = "lambda_1(Q_1)"\n'
     '[[relations]]\nexpr = "1"\n', "bad.toml:14:1: a generators entry needs a 'weight'"),
    (GOOD_HEAD + '[[generators]]\nname = "A{T_1}"\nmeaning = "lambda_1(Q_1)"\nweight = 1\n'
     '[[relations]]\nexpr = "1"\n', "bad.toml:15:11: only integer index expressions"),
    (GOOD_HEAD + '[[units]]\nexpr = "S1_1 - S1_1"\n[[relations]]\nexpr = "1"\n',
     "bad.toml:15:9: a declared unit is zero"),
    ('format = 1\nformat = 1\n', "bad.toml:2:"),
    (GOOD_HEAD.replace('flavour = "case"', 'flavour = "cases"'),
     'bad.toml:2:1: flavour must be "case" or "family"'),
    (GOOD_HEAD.replace('flavour = "case"\n', ''), "bad.toml:1:1: missing key 'flavour'"),
    (GOOD_HEAD.replace('case = "Gr(2;4)"', 'case = "Gr(4;2)"'), "bad.toml:4:1: 'Gr(4;2)'"),
    (GOOD_HEAD.replace('name = "probe"', 'name = "a,b"'), "bad.toml:3:1: name 'a,b' must"),
    (GOOD_HEAD.replace('format = 1', 'format = 2'), "bad.toml:1:1: format must be 1"),
    (GOOD_HEAD.replace("probes\"\n", "probes\"\ncolour = 'red'\n"),
     "bad.toml:6:1: unknown key 'colour' in a case file"),
    (GOOD_HEAD + "[[relations]]\nexpr = 'S1_1'\n[[relations]]\ncolour = 'S1_1'\n",
     "bad.toml:17:1: unknown key 'colour' in relations"),
    (GOOD_HEAD.replace('case = "Gr(2;4)"', 'applies_to = "all"'),
     "bad.toml:4:1: unknown key 'applies_to' in a case file"),
    ('format = 1\nflavour = "family"\nname = "f"\napplies_to = "some"\n',
     "bad.toml:4:1: applies_to: 'some' is neither"),
    ("x = [1,\n", "bad.toml:2:1: not valid TOML"),
    ('a = "unterminated\n', "bad.toml:1:18: not valid TOML"),
])
def test_file_errors_name_file_line_column_and_problem(text, expected):
    assert str(error_of(text)).startswith(expected)


def test_q_index_out_of_range_in_family_file_for_small_case():
    """A family that is fine for two-step flags but mentions q_2 in a Grassmannian."""
    text = textwrap.dedent("""\
        format = 1
        flavour = "family"
        name = "f"
        applies_to = "all"
        [[generators]]
        name = "A"
        meaning = "lambda_1(S_1)"
        weight = 1
        [[relations]]
        expr = "A - q_2"
        """)
    assert len(build_symbolic(family_from_text(text), parse_flag("Fl(1,2;3)")).relations) == 1
    assert str(error_of(text, "Gr(1;3)")).startswith(
        "bad.toml:10:13: index out of range: q_2 does not exist: q_i needs 1 ≤ i ≤ m = 1")


@pytest.mark.parametrize("expr, expected", [
    ('"' + "(" * 60 + "1" + ")" * 60 + '"', "expression nested more than 48 levels deep"),
    ('"' + "-" * 60 + '1"', "expression nested more than 48 levels deep"),
    ('"y^1000"', "degree exceeds 200"),
    ('"(S1_1 + 1)^150 * (S1_2 + 1)^60"', "degree exceeds 200"),
    ('"(1 + S1_1 + S1_2 + T1 + T2 + T3 + T4 + q1)^30"', "expansion too large: a product of"),
    ('"(1 + S1_1 + S1_2 + T1 + T2 + T3 + T4 + q1)^12 * (1 + S1_1 + T1 + T2 + T3 + q1)^40"',
     "expansion exceeds 20000 terms"),
    ('"2^100000"', "a number exceeds 14000 bits"),
    ('"(2 + S1_1 - S1_1)^100000"', "coefficients exceed 14000 bits"),
    ('"prod(a = 1..3000: 2^10 + S1_1 - S1_1)"', "coefficients exceed 14000 bits"),
    ('"prod(a = 1..3000: 2^10)"', "a number exceeds 14000 bits"),
    ('"sum(a = 1..200000: sum(b = 1..2: 1))"', "expansion takes more than 300000 steps"),
    ('"' + "1+" * 2600 + '1"', "expression has more than 5000 tokens"),
    ('"' + "9" * 41 + '"', "integer with more than 40 digits"),
])
def test_limits_give_clear_errors(expr, expected):
    assert expected in relation_error("expr = " + expr)


def test_file_size_limit(tmp_path):
    path = tmp_path / "big.toml"
    path.write_text(GOOD_HEAD + "# " + "x" * 300_000 + "\n")
    with pytest.raises(PresentationFileError, match="larger than 262144 bytes"):
        userfile.load_family(str(path))
    path.write_bytes(b'format = 1\nname = "\xff"\n')
    with pytest.raises(PresentationFileError, match=r"big\.toml:2:9: not UTF-8"):
        userfile.load_family(str(path))
    with pytest.raises(PresentationFileError, match="cannot read the file"):
        userfile.load_family(str(tmp_path / "missing.toml"))


def test_deeply_nested_toml_is_a_clean_error():
    message = str(error_of("x = " + "[" * 20000 + "]" * 20000 + "\n"))
    assert message.startswith("bad.toml")


# ---------------------------------------------------------------------------------------
# Nothing is executed

def test_no_dynamic_execution_in_the_file_readers():
    for module in ("__init__.py", "container.py", "expand.py", "syntax.py"):
        source = (ROOT / "presentations" / "userfile" / module).read_text()
        for forbidden in (r"\beval\(", r"\bexec\(", "sympify", r"(?<!re\.)compile\(",
                          "__import__", "importlib", "pickle", r"\bgetattr\(", "subprocess"):
            assert not re.search(forbidden, source), (module, forbidden)


def test_python_looking_text_is_only_ever_parsed():
    for expr in ('__import__("os").system("true")', "open('x').read()", "S1_1.__class__",
                 "lambda: 1", "[y^1](S1_1)[0]"):
        assert relation_error("expr = " + json.dumps(expr)).startswith("bad.toml:15:")


# ---------------------------------------------------------------------------------------
# Command line

def test_cli_relations_from_a_family_file():
    result = run_cli("relations", "Fl(1,3;5)", "--presentation",
                     "presentations/files/qwhitney-family.toml")
    assert result.returncode == 0, result.stderr
    assert "qwhitney-family presentation of QK_T(Fl(1,3;5))" in result.stdout
    assert "[level 2, y^5]" in result.stdout


def test_cli_lists_builtins_shipped_files_and_writes_case_files(tmp_path):
    result = run_cli("presentations")
    assert result.returncode == 0, result.stderr
    for name in list(FAMILIES) + ["qwhitney-family", "whitney-sign-error", "p3-single-generator"]:
        assert any(line.split()[:1] == [name] for line in result.stdout.splitlines()), name
    result = run_cli("presentations", "--case-file", "Gr(2,4)", "--of", "vieta-family")
    assert result.returncode == 0, result.stderr
    path = tmp_path / "vieta-gr24.toml"
    path.write_text(result.stdout)
    same_presentation(build_symbolic(userfile.load_family(str(path)), parse_flag("Gr(2;4)")),
                      build_symbolic(FAMILIES["vieta"], parse_flag("Gr(2;4)")))


@pytest.mark.parametrize("args_for, fragment", [
    (lambda p: ["relations", "Gr(2;4)", "--presentation", p], "bad.toml:15:16: index out of range"),
    (lambda p: ["check", "Gr(2;4)", "--presentations", f"whitney,{p}"],
     "bad.toml:15:16: index out of range"),
    (lambda p: ["relations", "Gr(2;4)", "--presentation", "missing.toml"], "cannot read the file"),
    (lambda p: ["check", "Gr(2;4)", "--presentations", "whitney,./nowhere/x.toml"],
     "cannot read the file"),
    (lambda p: ["check", "Gr(2;4)", "--presentations", "qwhitney-family,whitney-sign-error,"
                f"{FILES / 'qwhitney-family.toml'}"], "two presentations are called"),
    (lambda p: ["presentations", "--case-file", "Gr(2;4)", "--of", p], "bad.toml:15:16"),
    (lambda p: ["presentations", "--case-file", "Fl(3)", "--of", p], "describes Gr(2;4) only"),
])
def test_cli_file_errors_are_one_line_exit_2(tmp_path, args_for, fragment):
    bad = tmp_path / "bad.toml"
    bad.write_text(GOOD_HEAD + '[[relations]]\nexpr = "S1_1 + T_5"\n')
    result = run_cli(*args_for("bad.toml"), cwd=tmp_path,
                     env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert result.returncode == 2, result.stdout + result.stderr
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in result.stderr, result.stderr
    assert fragment in lines[0]


# ---------------------------------------------------------------------------------------
# Plug-ins

PLUGIN_MODULE = '''
from ringmatch.presentations import whitney
from ringmatch.presentations.interface import Family
from dataclasses import replace

FAMILY = replace(whitney.FAMILY, name="whitney-plugin", description="Whitney, from a plug-in")


def make():
    return replace(whitney.FAMILY, name="whitney-made", description="made by a function")


NOT_A_FAMILY = 42
'''


def make_plugin_distribution(root: Path) -> None:
    (root / "ringmatch_test_plugin.py").write_text(PLUGIN_MODULE)
    info = root / "ringmatch_test_plugin-0.1.dist-info"
    info.mkdir()
    (info / "METADATA").write_text("Metadata-Version: 2.1\nName: ringmatch-test-plugin\n"
                                   "Version: 0.1\n")
    (info / "entry_points.txt").write_text(
        f"[{plugins.ENTRY_POINT_GROUP}]\n"
        "record = ringmatch_test_plugin:FAMILY\n"
        "factory = ringmatch_test_plugin:make\n"
        "wrong = ringmatch_test_plugin:NOT_A_FAMILY\n"
        "missing = ringmatch_test_plugin_missing:FAMILY\n")


def test_plugins_are_discovered_through_the_entry_point_group(tmp_path, monkeypatch):
    make_plugin_distribution(tmp_path)
    monkeypatch.syspath_prepend(str(tmp_path))
    plugins.discovered.cache_clear()
    try:
        entries = {e.entry_point: e for e in plugins.discovered()}
        assert entries["record"].family.name == "whitney-plugin"
        assert entries["factory"].family.name == "whitney-made"
        assert "neither a Family" in entries["wrong"].problem
        assert "cannot be loaded: ModuleNotFoundError" in entries["missing"].problem
        assert get_family("whitney-made").description == "made by a function"
        flag = parse_flag("Gr(2;4)")
        same_presentation(build_symbolic(get_family("whitney-plugin"), flag),
                          build_symbolic(FAMILIES["whitney"], flag))
        lines = {line.name: line for line in plugins.catalogue(FAMILIES, {})}
        assert lines["whitney-plugin"].description == "Whitney, from a plug-in"
        assert lines["whitney-plugin"].source.startswith("plug-in record")
        assert "unusable" in lines["missing"].description
    finally:
        plugins.discovered.cache_clear()


def test_cli_lists_installed_plugins(tmp_path):
    make_plugin_distribution(tmp_path)
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(tmp_path), str(ROOT)])}
    result = run_cli("presentations", env=env)
    assert result.returncode == 0, result.stderr
    assert "whitney-made" in result.stdout and "made by a function" in result.stdout
    result = run_cli("relations", "P2", "--presentation", "whitney-plugin", env=env)
    assert result.returncode == 0 and "whitney-plugin presentation" in result.stdout


def test_plugin_catalogue_marks_hidden_names():
    entry = plugins.PluginEntry("dup", "m:f", FAMILIES["whitney"], None)
    lines = plugins.catalogue(FAMILIES, {}, entries=[entry])
    assert "hidden" in lines[-1].description
    assert plugins.find_plugin("whitney", entries=[entry]) is FAMILIES["whitney"]
    assert isinstance(FAMILIES["whitney"], Family)
    assert Meaning("toda_L", 1).text == "L_1"
