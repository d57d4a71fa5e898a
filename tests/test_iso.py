"""The isomorphism finder (compare/iso.py) and its output (reports/isomorphism.py, `iso`).

External references, named beside each check:
  * change of variables Vieta → Whitney: λ_j(Q_i) = w_{i,j} (j < d_i), det Q_i = (1 − q_i)·w_{i,d_i}
    (docs/mathematics.md §2.2, derived there from the q-Whitney relations of arXiv:2310.03826 and
    arXiv:2208.01091; the finder must rediscover it on its own — this is the independent
    confirmation, for every flag type with n ≤ 5);
  * Toda generators L_j = det S_j / det S_{j−1} (docs/mathematics.md §2.4; relations from "Quantum
    K-theory on flag manifolds, finite-difference Toda lattices and quantum groups", Invent.
    Math. 151 (2003), proved in arXiv:1711.08414), checked as class values in the Whitney
    ring by Gröbner normal forms;
  * classical Whitney relation λ_y(S)·λ_y(Q) = λ_y(C^n) (standard), which the q-Whitney
    relations of arXiv:2310.03826 leave untouched up to y^{d}: so λ_j(Q) = [y^j] λ_y(C^n)/λ_y(S)
    for j ≤ d in QK_T(Gr(k;n)) — expanded by SymPy as the reference;
  * SymPy as an independent reader of the printed formulas.
"""
from __future__ import annotations

import itertools
import json
import math

import pytest
import sympy

from ringmatch.compare import algebra, groebner, iso, iso_verify
from ringmatch.compare.engine import own_ideal
from ringmatch.presentations import toda, vieta, whitney
from ringmatch.presentations.flagtype import FlagType, parse_flag
from ringmatch.reports.isomorphism import as_json, coefficient_expression, formula_expression

from broken_variants import flipped_q_sign
from conftest import run_cli as run, run_in_process


def flag_types(max_n):
    for n in range(2, max_n + 1):
        for size in range(1, n):
            for dims in itertools.combinations(range(1, n), size):
                yield FlagType(dims, n)


def formulas(direction):
    return {f.target: f for f in direction.formulas}


def single_term(formula, names):
    """(generator name, SymPy coefficient) of a one-term formula of degree one."""
    assert len(formula.terms) == 1, formula
    term = formula.terms[0]
    assert sum(term.monomial) == 1, term
    return names[term.monomial.index(1)], coefficient_expression(term.coefficient)


def q(i):
    return sympy.Symbol(f"q{i}")


# ---------------------------------------------------------------------------------------
# Vieta ↔ Whitney: the change of variables of docs/mathematics.md §2.2, rediscovered

@pytest.mark.parametrize("flag", list(flag_types(5)), ids=lambda f: f.name)
def test_vieta_to_whitney_is_the_published_change_of_variables(flag):
    result = iso.find_isomorphism(flag, vieta.FAMILY, whitney.FAMILY, seed=20)
    assert result.found and result.verified, result.reason
    forward = formulas(result.forward)
    backward = formulas(result.backward)
    source, target = result.forward.source_generators, result.backward.source_generators
    for i in range(1, flag.m + 1):
        d = flag.d(i)
        for j in range(1, flag.k(i) + 1):
            assert single_term(forward[f"S{i}_{j}"], source) == (f"S{i}_{j}", 1)
            assert single_term(backward[f"S{i}_{j}"], target) == (f"S{i}_{j}", 1)
        for j in range(1, d):
            # λ_j(Q_i) = w_{i,j} for j < d_i
            assert single_term(forward[f"Q{i}_{j}"], source) == (f"w{i}_{j}", 1)
            assert single_term(backward[f"w{i}_{j}"], target) == (f"Q{i}_{j}", 1)
        # det Q_i = (1 − q_i)·w_{i,d_i}
        name, c = single_term(forward[f"Q{i}_{d}"], source)
        assert name == f"w{i}_{d}" and sympy.simplify(c - (1 - q(i))) == 0
        name, c = single_term(backward[f"w{i}_{d}"], target)
        assert name == f"Q{i}_{d}" and sympy.simplify(c - 1 / (1 - q(i))) == 0


# ---------------------------------------------------------------------------------------
# Toda ↔ Whitney: L_j = det S_j / det S_{j−1} as class values (docs/mathematics.md §2.4)

@pytest.mark.parametrize("case", ["Fl(3)", "Fl(4)"])
def test_toda_generators_are_ratios_of_determinants(case):
    flag = parse_flag(case)
    result = iso.find_isomorphism(flag, toda.FAMILY, whitney.FAMILY, seed=21)
    assert result.found and result.verified, result.reason
    to_toda = formulas(result.backward)         # L_j in the λ-classes
    whitney_names = result.backward.source_generators
    # L_1 = λ_1(S_1), literally
    assert single_term(to_toda["L1"], whitney_names) == ("S1_1", 1)
    # L_j · det S_{j−1} = det S_j in the Whitney ring, at a specialisation the finder never saw
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=987654)
    ideal = own_ideal(whitney.FAMILY, flag, spec)
    ring = ideal.ring

    def det_S(j):     # det S_0 = 1, det S_n = T_1⋯T_n
        if j == 0:
            return ring.one
        return ring.gen[f"S{j}_{j}"] if j < flag.n else ring.const(math.prod(spec.T) % spec.prime)

    for j in range(1, flag.n + 1):
        L = iso_verify.formula_polynomial(to_toda[f"L{j}"], ring, whitney_names, spec)
        assert groebner.normal_form(L * det_S(j - 1) - det_S(j), ideal.basis).is_zero(), j
    # and the map writes det S_i as the telescoping product L_1⋯L_i
    to_whitney = formulas(result.forward)
    for i in range(1, flag.n):
        (term,) = to_whitney[f"S{i}_{i}"].terms
        assert term.monomial == tuple(1 if j < i else 0 for j in range(flag.n))
        assert coefficient_expression(term.coefficient) == 1


# ---------------------------------------------------------------------------------------
# Coefficients that depend on T

def test_eliminated_vieta_to_whitney_coefficients_in_T():
    flag = parse_flag("Gr(2;5)")
    result = iso.find_isomorphism(flag, vieta.ELIMINATED, whitney.FAMILY, seed=22)
    assert result.found and result.verified, result.reason
    forward = formulas(result.forward)
    names = result.forward.source_generators          # S1_1, S1_2
    # reference: [y^j] ∏(1 + y T_l) / (1 + y S1_1 + y^2 S1_2), expanded by SymPy
    y = sympy.Symbol("y")
    T = sympy.symbols("T1:6")
    S1, S2 = sympy.symbols("S1_1 S1_2")
    quotient = sympy.series(sympy.Mul(*[1 + y * t for t in T]) / (1 + y * S1 + y**2 * S2), y, 0, 4)
    quotient = sympy.expand(quotient.removeO())
    for j in (1, 2):
        found = sympy.expand(formula_expression(forward[f"Q1_{j}"], names))
        assert sympy.expand(found - quotient.coeff(y, j)) == 0, j
    # λ_3(Q) is printed as a normal form; it equals the series coefficient in the ring
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=4242)
    ideal = own_ideal(vieta.ELIMINATED, flag, spec)
    ring = ideal.ring
    reference = quotient.coeff(y, 3).subs(dict(zip(T, spec.T)))
    reference_poly = ring.zero
    for monomial, c in sympy.Poly(reference, S1, S2).terms():
        reference_poly += ring.gen["S1_1"] ** monomial[0] * ring.gen["S1_2"] ** monomial[1] * \
            (int(c) % spec.prime)
    found = iso_verify.formula_polynomial(forward["Q1_3"], ring, names, spec)
    assert groebner.normal_form(found - reference_poly, ideal.basis).is_zero()


# ---------------------------------------------------------------------------------------
# No isomorphism

BROKEN = flipped_q_sign(label_suffix=" (q-term flipped)")


@pytest.mark.parametrize("case", ["Gr(2;4)", "Fl(1,3;4)"])
def test_a_broken_variant_has_no_isomorphism(case):
    result = iso.find_isomorphism(parse_flag(case), vieta.FAMILY, BROKEN, seed=23)
    assert not result.found and not result.verified
    assert result.status == "none within bounds"
    assert "q-term flipped" in result.reason
    record = as_json(result)
    assert record["found"] is False and record["map"] == {} and record["candidate"]


def test_a_degree_bound_that_is_too_low_is_an_answer():
    result = iso.find_isomorphism(parse_flag("Gr(2;4)"), vieta.FAMILY, whitney.FAMILY, seed=24,
                                  bounds=iso.Bounds(max_degree=0))
    assert result.status == "none within bounds" and not result.found
    assert "degree ≤ 0" in result.reason


def test_normal_forms_only_still_find_the_map():
    # --max-terms 0: no sparse search, every formula a normal form in the standard monomials
    result = iso.find_isomorphism(parse_flag("Fl(1,2;3)"), vieta.FAMILY, whitney.FAMILY, seed=25,
                                  bounds=iso.Bounds(max_terms=0))
    assert result.found and result.verified, result.reason
    assert {s.how for s in result.forward.supports} == {"normal form"}


def test_same_seed_same_answer():
    flag = parse_flag("Fl(1,2;4)")
    a = as_json(iso.find_isomorphism(flag, vieta.FAMILY, whitney.FAMILY, seed=26))
    b = as_json(iso.find_isomorphism(flag, vieta.FAMILY, whitney.FAMILY, seed=26))
    a.pop("timings"), b.pop("timings")      # CPU times differ from run to run
    assert a == b


# ---------------------------------------------------------------------------------------
# Command line

def test_iso_json_contract():
    result = run("iso", "Gr(2,5)", "--from", "vieta", "--to", "whitney", "--json", "--seed", "1")
    assert result.returncode == 0, result.stderr
    record = json.loads(result.stdout)
    for key in ("case", "from", "to", "found", "map", "inverse", "verified", "bounds",
                "certificate"):
        assert key in record
    assert (record["case"], record["from"], record["to"]) == ("Gr(2;5)", "vieta", "whitney")
    assert record["found"] is True and record["verified"] is True
    # SymPy reads the printed formula back (cross-check of the text only)
    w, q1 = sympy.symbols("w1_3 q1")
    assert sympy.simplify(sympy.sympify(record["map"]["Q1_3"]) - (1 - q1) * w) == 0
    assert set(record["inverse"]) == {"S1_1", "S1_2", "w1_1", "w1_2", "w1_3"}
    certificate = record["certificate"]
    assert certificate["seed"] == 1
    assert certificate["reconstruction"]["primes"]
    assert {c["check"] for c in certificate["checks"]} == {
        "values at fresh Bethe points", "ring isomorphism at a fresh specialisation"}
    assert all(c["passed"] for c in certificate["checks"])


def test_iso_latex_and_text():
    latex = run("iso", "Fl(3)", "--from", "toda", "--to", "whitney", "--latex", "--seed", "2")
    assert latex.returncode == 0, latex.stderr
    assert "\\begin{align*}" in latex.stdout and "\\frac{\\lambda_{1}(Q_{1})}{1 - q_{1}}" in latex.stdout
    text = run("iso", "Gr(2,4)", "--from", "vieta", "--to", "whitney", "--seed", "3")
    assert "found, verified" in text.stdout and "Q1_2 = w1_2*(1 - q1)" in text.stdout


def test_iso_none_within_bounds_is_not_an_error():
    result = run("iso", "Gr(2,4)", "--from", "vieta", "--to", "whitney", "--max-degree", "0")
    assert result.returncode == 0 and "none within bounds" in result.stdout


@pytest.mark.parametrize("args,fragment", [
    (["iso", "Gr(2,4)", "--from", "nosuch", "--to", "whitney"], "unknown presentation"),
    (["iso", "Gr(2,4)", "--from", "whitney", "--to", "whitney"], "same presentation"),
    (["iso", "Gr(2,4)", "--from", "toda", "--to", "whitney"], "complete flags"),
    (["iso", "Gr(2,4)", "--from", "vieta", "--to", "whitney", "--prime", "1000003"], "2^40"),
    (["iso", "Gr(2,4)", "--from", "vieta", "--to", "whitney", "--json", "--latex"], "exclude"),
    (["iso", "Gr(2,4)", "--from", "vieta", "--to", "whitney", "--max-degree", "-1"], "negative"),
    (["iso", "Gr(2,4)", "--from", "vieta", "--to", "whitney", "--order", "3"], "too small"),
    (["iso", "Gr(2,4)", "--to", "whitney"], "--from"),
    (["iso", "Gr(5,4)", "--from", "vieta", "--to", "whitney"], "Gr(k;n)"),
])
def test_iso_bad_input_is_one_line_exit_2(args, fragment):
    result = run_in_process(*args)
    assert result.returncode == 2
    assert result.stdout == ""
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and fragment in lines[0], result.stderr
    assert "Traceback" not in result.stderr


def test_a_direction_never_searched_is_said_so_not_printed_as_none():
    from ringmatch.compare.iso import Direction, IsoResult
    from ringmatch.reports.isomorphism import as_text
    forward = Direction("a", "b", ("x",), ("y",), failure="y not expressed", searched_degree=3)
    backward = Direction("b", "a", ("y",), ("x",))          # not searched: forward failed
    result = IsoResult("P1", "a", "b", False, False, "none within bounds", "y not expressed",
                       forward, backward,
                       {"max_degree": None, "max_terms": 4, "order": 16, "t_pole_extra": 1,
                        "max_primes": 4}, {})
    text = as_text(result)
    assert "None for the" not in text
    assert "reached degree 3 for the map, not searched for the inverse" in text
