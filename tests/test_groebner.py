"""Tests of the Gröbner engine (compare/groebner.py) on small random ideals.

The independent reference throughout is SymPy's `groebner` / `reduced` over GF(p)
(a general-purpose library that shares no code with ours).  SymPy's `modulus=` arithmetic
prints symmetric representatives, so every coefficient is normalised into [0, p) before
comparing.
"""
from __future__ import annotations

import itertools

import flint
import pytest
import sympy
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ringmatch.compare import groebner as G
from ringmatch.compare.algebra import DEFAULT_PRIME

from conftest import examples

SMALL_PRIME = 32003
SYMPY_ORDER = {"degrevlex": "grevlex", "deglex": "grlex", "lex": "lex"}
ORDERINGS = tuple(SYMPY_ORDER)


def to_sympy(f, gens, p):
    terms = {m: int(c) for m, c in zip(f.monoms(), f.coeffs())}
    return sympy.Poly.from_dict(terms or {(0,) * len(gens): 0}, *gens, modulus=p)


def canonical_flint(f, p):
    return {m: int(c) % p for m, c in zip(f.monoms(), f.coeffs())}


def canonical_sympy(poly, p):
    return {m: int(c) % p for m, c in poly.terms() if int(c) % p}


def sympy_basis(polys, ctx, ordering, p):
    gens = sympy.symbols(ctx.names())
    basis = sympy.groebner([to_sympy(f, gens, p) for f in polys], *gens, modulus=p,
                           order=SYMPY_ORDER[ordering])
    return [canonical_sympy(sympy.Poly(g, *gens, modulus=p), p) for g in basis.exprs]


def sympy_remainder(f, basis, ctx, ordering, p):
    gens = sympy.symbols(ctx.names())
    if not basis:
        return canonical_flint(f, p)
    _, r = sympy.reduced(f_expr(f, gens, p), [f_expr(g, gens, p) for g in basis], *gens,
                         modulus=p, order=SYMPY_ORDER[ordering])
    return canonical_sympy(sympy.Poly(r, *gens, modulus=p), p)


def f_expr(f, gens, p):
    return to_sympy(f, gens, p).as_expr()


def brute_force_colength(leading, bound):
    """Count monomials in a box that no leading monomial divides (independent of ours)."""
    nvars = len(leading[0])
    return sum(1 for e in itertools.product(range(bound), repeat=nvars)
               if not any(all(a <= b for a, b in zip(m, e)) for m in leading))


# ---------------------------------------------------------------------------------------
# What the engine relies on from FLINT

@settings(max_examples=examples(60), deadline=None)
@given(st.sampled_from(ORDERINGS), st.data())
def test_flint_remainder_has_no_term_divisible_by_leading_monomial(ordering, data):
    ctx = flint.nmod_mpoly_ctx.get(("x", "y", "z"), DEFAULT_PRIME, ordering)
    f = random_poly(ctx, data, terms=8, degree=6)
    g = random_poly(ctx, data, terms=4, degree=3)
    if g.is_zero():
        return
    q, r = divmod(f, g)
    assert q * g + r == f
    lm = G.leading_monomial(g)
    assert not any(G.divides(lm, m) for m in r.monoms())


@pytest.mark.parametrize("ordering", ORDERINGS)
def test_order_key_matches_flint_term_order(ordering):
    ctx = flint.nmod_mpoly_ctx.get(("x", "y", "z"), DEFAULT_PRIME, ordering)
    monomials = list(itertools.product(range(4), repeat=3))
    f = ctx.from_dict({m: 1 for m in monomials})
    flint_order = f.monoms()          # FLINT lists terms from the largest down
    assert sorted(monomials, key=G.order_key(ordering), reverse=True) == flint_order


# ---------------------------------------------------------------------------------------
# Random ideals against SymPy

def random_poly(ctx, data, *, terms, degree, prime=None):
    p = prime or ctx.modulus()
    nvars = ctx.nvars()
    exps = data.draw(st.lists(st.tuples(*[st.integers(0, degree)] * nvars), min_size=0,
                              max_size=terms))
    exps = [e for e in exps if sum(e) <= degree]
    coeffs = data.draw(st.lists(st.integers(0, p - 1), min_size=len(exps), max_size=len(exps)))
    return ctx.from_dict(dict(zip(exps, coeffs))) if exps else ctx.constant(0)


def zero_dimensional_ideal(ctx, data):
    """Pure powers x_i^{a_i} plus random lower terms force a finite quotient; random extra
    polynomials make the basis non-trivial."""
    polys = []
    for v in range(ctx.nvars()):
        a = data.draw(st.integers(1, 3))
        power = ctx.gen(v) ** a
        lower = random_poly(ctx, data, terms=3, degree=a - 1)
        polys.append(power + lower)
    polys += [random_poly(ctx, data, terms=4, degree=3)
              for _ in range(data.draw(st.integers(0, 2)))]
    return polys


def check_against_sympy(polys, ctx, ordering, data):
    p = ctx.modulus()
    ours = G.groebner_basis(polys)
    reference = sympy_basis(polys, ctx, ordering, p)
    assert [canonical_flint(g, p) for g in ours] == reference_sorted(reference, ordering)
    for g in ours:
        assert int(g.leading_coefficient()) == 1
    for _ in range(2):
        f = random_poly(ctx, data, terms=6, degree=5)
        assert canonical_flint(G.normal_form(f, ours), p) == \
            sympy_remainder(f, ours, ctx, ordering, p)
    return ours


def reference_sorted(basis, ordering):
    key = G.order_key(ordering)
    return sorted(basis, key=lambda g: key(max(g, key=key)))


@settings(max_examples=examples(100), deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(2, 3), st.sampled_from(ORDERINGS), st.data())
def test_zero_dimensional_ideals_match_sympy(nvars, ordering, data):
    ctx = flint.nmod_mpoly_ctx.get(tuple("xyz"[:nvars]), SMALL_PRIME, ordering)
    polys = zero_dimensional_ideal(ctx, data)
    ours = check_against_sympy(polys, ctx, ordering, data)
    assert G.is_zero_dimensional(ours)
    leading = [G.leading_monomial(g) for g in ours]
    box = 1 + max(max(e) for e in leading)
    expected = 0 if leading == [(0,) * nvars] else brute_force_colength(leading, box)
    assert G.colength(ours) == expected
    assert len(G.standard_monomials(ours)) == expected
    for f in polys:
        assert G.is_member(f, ours)


@settings(max_examples=examples(40), deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(ORDERINGS), st.data())
def test_ideals_without_forced_pure_powers_match_sympy(ordering, data):
    ctx = flint.nmod_mpoly_ctx.get(("x", "y", "z"), SMALL_PRIME, ordering)
    polys = [random_poly(ctx, data, terms=4, degree=3) for _ in range(data.draw(st.integers(1, 3)))]
    ours = check_against_sympy(polys, ctx, ordering, data)
    if not G.is_zero_dimensional(ours):
        assert G.colength(ours) is None
        with pytest.raises(G.NotZeroDimensional):
            G.standard_monomials(ours)


@settings(max_examples=examples(60), deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(ORDERINGS), st.data())
def test_ideals_with_linear_relations_match_sympy(ordering, data):
    """Linear relations are solved first and their variables dropped from the ring; the
    basis put back together must still be SymPy's."""
    ctx = flint.nmod_mpoly_ctx.get(("w", "x", "y", "z"), SMALL_PRIME, ordering)
    polys = [random_poly(ctx, data, terms=4, degree=1)
             for _ in range(data.draw(st.integers(1, 3)))]
    polys += zero_dimensional_ideal(ctx, data)[data.draw(st.integers(0, 3)):]
    check_against_sympy(polys, ctx, ordering, data)


# ---------------------------------------------------------------------------------------
# Edge cases, with answers known by hand

@pytest.fixture
def ctx():
    return flint.nmod_mpoly_ctx.get(("x", "y", "z"), DEFAULT_PRIME, "degrevlex")


def test_zero_ideal(ctx):
    assert G.groebner_basis([]) == []
    assert G.groebner_basis([ctx.constant(0)]) == []
    assert G.colength([]) is None
    assert not G.is_zero_dimensional([])


def test_unit_ideal(ctx):
    x, y, z = ctx.gens()
    basis = G.groebner_basis([x * y - 1, x])     # x·y − 1 and x generate 1
    assert basis == [ctx.constant(1)]
    assert G.colength(basis) == 0
    assert G.standard_monomials(basis) == []
    assert G.is_zero_dimensional(basis)
    assert G.is_member(x + 5 * z, basis)


def test_linear_systems_by_hand(ctx):
    x, y, z = ctx.gens()
    # a consistent linear system: one point
    assert G.groebner_basis([x + y + z - 7, x - y, 2 * z - 6]) == [z - 3, y - 2, x - 2]
    # an inconsistent one, and one made inconsistent by a nonlinear relation
    assert G.groebner_basis([x + y - 1, x + y - 2]) == [ctx.constant(1)]
    assert G.groebner_basis([x - 1, y - 2, x * y - 3]) == [ctx.constant(1)]
    # linear relations that leave a curve: x = y, and y² = z
    basis = G.groebner_basis([x - y, y ** 2 - z])
    assert basis == [x - y, y ** 2 - z]
    assert G.colength(basis) is None


def test_normal_forms_of_many_polynomials(ctx):
    x, y, z = ctx.gens()
    basis = G.groebner_basis([x ** 2 - y, y ** 2 - 2, z - 1])
    polys = [x ** 3, x * y * z, ctx.constant(0), x ** 4 - 2]
    assert G.normal_forms(polys, basis) == [x * y, x * y, 0, 0]
    assert G.normal_forms(polys, basis) == [G.normal_form(f, basis) for f in polys]


def test_positive_dimensional_ideal(ctx):
    x, y, z = ctx.gens()
    basis = G.groebner_basis([x ** 2 - y, x * y - z])   # a curve: z is free
    assert not G.is_zero_dimensional(basis)
    assert G.colength(basis) is None
    with pytest.raises(G.NotZeroDimensional, match="z"):
        G.standard_monomials(basis)


def test_monomial_box_and_limit(ctx):
    x, y, z = ctx.gens()
    basis = G.groebner_basis([x ** 3, y ** 4, z ** 5, x * y * z])
    # 3·4·5 monomials in the box minus those divisible by x·y·z: 2·3·4 of them
    assert G.colength(basis) == 60 - 24
    monomials = G.standard_monomials(basis)
    assert len(monomials) == 36 and len(set(monomials)) == 36
    assert monomials == sorted(monomials, key=G.order_key("degrevlex"))
    with pytest.raises(G.LimitExceeded):
        G.standard_monomials(basis, limit=35)
    assert len(G.standard_monomials(basis, limit=36)) == 36


def test_leading_monomial_of_zero_is_an_error(ctx):
    with pytest.raises(ValueError):
        G.leading_monomial(ctx.constant(0))


def test_mixed_contexts_rejected(ctx):
    other = flint.nmod_mpoly_ctx.get(("u", "v"), DEFAULT_PRIME, "degrevlex")
    with pytest.raises(ValueError, match="same"):
        G.groebner_basis([ctx.gen(0), other.gen(0)])
