"""The reconstruction toolkit (compare/reconstruct.py) against independent references.

References, named beside each check:
  * SymPy (general-purpose computer algebra) for the Chinese remainder theorem
    (`sympy.ntheory.modular.crt`), elementary symmetric polynomials, partition counts and
    linear algebra mod p;
  * Python's `fractions.Fraction` for exact rational arithmetic;
  * rational-number reconstruction is unique for |n|, d ≤ √(M/2) (Wang's bound; recalled
    from memory: P. S. Wang, "A p-adic algorithm for univariate partial fractions", SYMSAC
    1981) — checked here by round trips, not by quoting outputs.
"""
from __future__ import annotations

import itertools
import math
import random
from fractions import Fraction

import flint
import pytest
import sympy
from hypothesis import given, settings, strategies as st
from sympy.ntheory.modular import crt as sympy_crt
from sympy.utilities.iterables import partitions

from ringmatch.compare import reconstruct

from conftest import examples

P = 4611686018427387847
SMALL = 1000003


# ---------------------------------------------------------------------------------------
# Integers

@settings(max_examples=examples(200), deadline=None)
@given(st.integers(-2**29, 2**29), st.integers(1, 2**29))
def test_rational_number_round_trip(n, d):
    value = Fraction(n, d)
    residue = value.numerator * pow(value.denominator, -1, P) % P
    assert reconstruct.rational_number(residue, P) == value


def test_rational_number_refuses_what_is_too_tall():
    # 2^40 + 1 over 3 is far above √(p/2) ≈ 2^30.5 for p ≈ 2^62 … but below it for p^2
    value = Fraction(2**40 + 1, 3)
    residue = value.numerator * pow(3, -1, P) % P
    assert reconstruct.rational_number(residue, P) != value
    second = 4611686014132420493
    both, M = reconstruct.chinese_remainder(
        [residue, value.numerator * pow(3, -1, second) % second], [P, second])
    assert reconstruct.rational_number(both, M) == value


@settings(max_examples=examples(100), deadline=None)
@given(st.lists(st.integers(0, 10**6), min_size=1, max_size=4))
def test_chinese_remainder_matches_sympy(values):
    moduli = [1000003, 1000033, 1000037, 1000039][:len(values)]
    residues = [v % m for v, m in zip(values, moduli)]
    x, M = reconstruct.chinese_remainder(residues, moduli)
    expected, expected_M = sympy_crt(moduli, residues)      # SymPy as the reference
    assert (x, M) == (int(expected), int(expected_M))


def test_residue_of_a_fraction():
    assert reconstruct.residue_of(Fraction(1, 2), 7) == 4
    assert reconstruct.residue_of(Fraction(1, 7), 7) is None


# ---------------------------------------------------------------------------------------
# Series

def _random_poly(rng, degree, prime, constant_one=False):
    coefficients = [rng.randrange(prime) for _ in range(degree + 1)]
    if coefficients[-1] == 0:
        coefficients[-1] = 1
    if constant_one:
        coefficients[0] = 1
    return flint.nmod_poly(coefficients, prime)


@pytest.mark.parametrize("num_degree,den_degree", [(0, 0), (1, 0), (0, 2), (3, 2), (5, 4)])
def test_pade_recovers_a_quotient(num_degree, den_degree):
    rng = random.Random(num_degree * 10 + den_degree)
    order = 16
    num = _random_poly(rng, num_degree, SMALL)
    den = _random_poly(rng, den_degree, SMALL, constant_one=True)
    series = num.mul_low(den.inverse_series_trunc(order), order)
    found = reconstruct.pade(series, order)
    assert found is not None
    got_num, got_den = found
    # the same rational function: cross-multiplied as polynomials
    assert got_num * den == num * got_den
    assert got_den.degree() <= den_degree and int(got_den[0]) == 1


def test_pade_rejects_a_generic_series():
    rng = random.Random(5)
    order = 16
    rejected = sum(reconstruct.pade(flint.nmod_poly([rng.randrange(SMALL) for _ in range(order)],
                                                    SMALL), order) is None
                   for _ in range(20))
    assert rejected == 20


def test_pade_needs_its_slack():
    # a quotient of degrees (7, 7) fills a series of order 16 with no coefficient to spare
    rng = random.Random(9)
    num, den = _random_poly(rng, 7, SMALL), _random_poly(rng, 7, SMALL, constant_one=True)
    series = num.mul_low(den.inverse_series_trunc(16), 16)
    assert reconstruct.pade(series, 16, slack=2) is None
    longer = num.mul_low(den.inverse_series_trunc(20), 20)
    assert reconstruct.pade(longer, 20, slack=2) is not None


def test_line_pole_orders():
    slopes = [3, 11, 17]
    den = reconstruct.line_factor(slopes, (2, 0, 1), SMALL, 50)
    assert reconstruct.line_pole_orders(den, slopes) == (2, 0, 1)
    other = den * flint.nmod_poly([1, 5], SMALL)
    assert reconstruct.line_pole_orders(other, slopes) is None
    assert reconstruct.line_pole_orders(flint.nmod_poly([1], SMALL), slopes) == (0, 0, 0)


# ---------------------------------------------------------------------------------------
# Interpolation ansatz

@pytest.mark.parametrize("degree,n", [(0, 3), (4, 3), (7, 4), (10, 7), (3, 1)])
def test_weighted_exponents_count_partitions(degree, n):
    # monomials e_1^a_1 ⋯ e_n^a_n of weight `degree` ↔ partitions of degree into parts ≤ n
    expected = sum(1 for _ in partitions(degree, k=n)) if degree else 1   # SymPy's partitions
    found = reconstruct.weighted_exponents(degree, list(range(1, n + 1)))
    assert len(found) == expected == len(set(found))
    assert all(sum(i * a for i, a in enumerate(alpha, start=1)) == degree for alpha in found)


@pytest.mark.parametrize("degree,m", [(0, 2), (3, 1), (3, 3), (5, 2)])
def test_exponents_of_degree_count(degree, m):
    assert len(reconstruct.exponents_of_degree(degree, m)) == math.comb(degree + m - 1, m - 1)


def test_elementary_symmetric_values_match_sympy():
    values = [3, 5, 7, 11]
    x = sympy.symbols("x1:5")
    for i in range(1, 5):
        e_i = sum(sympy.Mul(*c) for c in itertools.combinations(x, i))
        expected = int(e_i.subs(dict(zip(x, values)))) % SMALL
        assert reconstruct.elementary_symmetric_values(values, SMALL)[i - 1] == expected


def test_solve_overdetermined_against_sympy():
    rng = random.Random(3)
    unknowns, rows_count = 4, 7
    rows = [[rng.randrange(SMALL) for _ in range(unknowns)] for _ in range(rows_count)]
    x = [rng.randrange(SMALL) for _ in range(unknowns)]
    good = [sum(a * b for a, b in zip(row, x)) % SMALL for row in rows]
    bad = list(good)
    bad[-1] = (bad[-1] + 1) % SMALL
    solved = reconstruct.solve_overdetermined(rows, [good, bad], SMALL)
    assert solved[0] == x and solved[1] is None
    # SymPy reference: the solution satisfies the first `unknowns` equations mod p
    A = sympy.Matrix(rows[:unknowns])
    reference = (A.inv_mod(SMALL) * sympy.Matrix(good[:unknowns])).applyfunc(lambda v: v % SMALL)
    assert [int(v) for v in reference] == x


def test_solve_overdetermined_needs_full_column_rank():
    rows = [[1, 2], [2, 4], [3, 6], [4, 8]]
    assert reconstruct.solve_overdetermined(rows, [[1, 2, 3, 4]], SMALL) is None


def test_subsets_reach_the_new_degree():
    listed = list(reconstruct.subsets_by_size(5, [1, 2], 3))
    assert all(max(c) >= 3 for c in listed)
    assert (0, 1) not in listed and (3,) in listed and (1, 4) in listed
