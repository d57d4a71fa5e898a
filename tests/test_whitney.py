"""The Gröbner engine on the quantum K Whitney ideals (presentations/whitney.py).

Checks against published or standard facts (source beside each) and against SymPy's
`groebner` as an independent reference on the cases with n ≤ 4.
"""
from __future__ import annotations

import dataclasses
import itertools
import random

import pytest
import sympy

from ringmatch.compare import algebra
from ringmatch.compare import groebner as G
from ringmatch.presentations import whitney
from ringmatch.presentations.flagtype import FlagType
from ringmatch.presentations.interface import build_specialised

SMALL_PRIME = 32003
SYMPY_ORDER = {"degrevlex": "grevlex", "lex": "lex"}


def flag_types(max_n):
    for n in range(2, max_n + 1):
        for size in range(1, n):
            for dims in itertools.combinations(range(1, n), size):
                yield FlagType(dims, n)


def whitney_ideal(flag, *, seed=7, equivariant=True, q_zero=False, prime=algebra.DEFAULT_PRIME,
                  ordering="degrevlex"):
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=seed, prime=prime,
                                       equivariant=equivariant)
    if q_zero:
        spec = dataclasses.replace(spec, q=(0,) * flag.m)
    presentation = build_specialised(whitney.FAMILY, flag, spec, ordering=ordering)
    return presentation, [r.poly for r in presentation.relations]


FLAGS_UP_TO_5 = list(flag_types(5))


# Standard fact: the rank of QK_T(Fl) over the coefficients is the number of torus-fixed
# points n!/(d_0!⋯d_m!), the Euler characteristic of the flag variety; a correct
# presentation has this colength at a generic specialisation (docs/mathematics.md §1).
@pytest.mark.parametrize("equivariant", [True, False], ids=["equivariant", "plain"])
@pytest.mark.parametrize("flag", FLAGS_UP_TO_5, ids=lambda f: f.name)
def test_colength_is_the_rank(flag, equivariant):
    _, relations = whitney_ideal(flag, equivariant=equivariant)
    basis = G.groebner_basis(relations)
    assert G.is_zero_dimensional(basis)
    assert G.colength(basis) == flag.rank


# Standard: at q = 0 the relations are the classical Whitney presentation of K_T(Fl),
# again free of rank n!/(d_0!⋯d_m!).
@pytest.mark.parametrize("flag", FLAGS_UP_TO_5, ids=lambda f: f.name)
def test_classical_limit_has_colength_rank(flag):
    _, relations = whitney_ideal(flag, q_zero=True)
    assert G.colength(G.groebner_basis(relations)) == flag.rank


def test_rank_counts_themselves():
    # n!/(k_1! d_1! ⋯ d_m!) computed by hand for a few cases: 4!/(2!2!) = 6, 5! = 120,
    # 5!/(1!2!2!) = 30 (guards the parametrised test above against a wrong `rank`)
    assert FlagType((2,), 4).rank == 6
    assert FlagType((1, 2, 3, 4), 5).rank == 120
    assert FlagType((1, 3), 5).rank == 30


# "Quantum K-theory of Grassmannians", Duke Math. J. 156 (2011): in QK(P^{n−1}),
# (1 − O(−1))^n = q, with O(−1) = S = λ_1(S_1); equivariantly ∏_j (1 − S/T_j) = q,
# i.e. ∏_j (T_j − S) = q·∏_j T_j.
@pytest.mark.parametrize("n", [2, 3, 4, 5])
@pytest.mark.parametrize("equivariant", [True, False], ids=["equivariant", "plain"])
def test_projective_space_relation(n, equivariant):
    presentation, relations = whitney_ideal(FlagType((1,), n), equivariant=equivariant)
    ring = presentation.ring
    basis = G.groebner_basis(relations)
    S = ring.gen["S1_1"]
    q = ring.q[0]
    lhs, weights = ring.one, ring.one
    for T in ring.T:
        lhs, weights = lhs * (T - S), weights * T
    assert G.is_member(lhs - q * weights, basis)
    # a wrong right-hand side must not be in the ideal
    assert not G.is_member(lhs - q * q * weights, basis)
    assert not G.is_member(lhs - weights, basis)


# arXiv:2208.01091: in QK_T(Gr(k;n)), det S · det Q = (1 − q)·T_1⋯T_n.
@pytest.mark.parametrize("flag", [f for f in FLAGS_UP_TO_5 if f.is_grassmannian],
                         ids=lambda f: f.name)
def test_grassmannian_determinant_relation(flag):
    presentation, relations = whitney_ideal(flag)
    ring = presentation.ring
    k, n = flag.k(1), flag.n
    det_S, det_Q = ring.gen[f"S1_{k}"], ring.gen[f"Q1_{n - k}"]
    product_T = ring.one
    for T in ring.T:
        product_T = product_T * T
    basis = G.groebner_basis(relations)
    assert G.is_member(det_S * det_Q - (ring.one - ring.q[0]) * product_T, basis)
    assert not G.is_member(det_S * det_Q - product_T, basis)


# ---------------------------------------------------------------------------------------
# SymPy (general-purpose reference library) on the Whitney ideals with n ≤ 4

def to_sympy(f, gens, p):
    terms = {m: int(c) for m, c in zip(f.monoms(), f.coeffs())}
    return sympy.Poly.from_dict(terms or {(0,) * len(gens): 0}, *gens, modulus=p)


def canonical_flint(f, p):
    return {m: int(c) % p for m, c in zip(f.monoms(), f.coeffs())}


def canonical_sympy(expr, gens, p):
    return {m: int(c) % p for m, c in sympy.Poly(expr, *gens, modulus=p).terms() if int(c) % p}


def random_element(ctx, rng, terms=8, degree=4):
    """Random terms of total degree at most `degree`."""
    exps = []
    for _ in range(terms):
        e = [0] * ctx.nvars()
        for _ in range(rng.randrange(degree + 1)):
            e[rng.randrange(ctx.nvars())] += 1
        exps.append(tuple(e))
    return ctx.from_dict({e: rng.randrange(ctx.modulus()) for e in exps})


SYMPY_CASES = [(flag, "degrevlex") for flag in flag_types(4)] + \
              [(flag, "lex") for flag in flag_types(4) if flag.rank <= 12]


@pytest.mark.parametrize("flag,ordering", SYMPY_CASES,
                         ids=lambda x: x if isinstance(x, str) else x.name)
def test_whitney_matches_sympy(flag, ordering):
    p = SMALL_PRIME
    presentation, relations = whitney_ideal(flag, prime=p, ordering=ordering, seed=11)
    ctx = presentation.ring.ctx
    gens = sympy.symbols(ctx.names())
    order = SYMPY_ORDER[ordering]
    reference = sympy.groebner([to_sympy(f, gens, p) for f in relations], *gens, modulus=p,
                               order=order)
    ours = G.groebner_basis(relations)
    key = G.order_key(ordering)
    expected = sorted((canonical_sympy(g, gens, p) for g in reference.exprs),
                      key=lambda g: key(max(g, key=key)))
    assert [canonical_flint(g, p) for g in ours] == expected

    rng = random.Random(flag.rank)
    for _ in range(3):
        f = random_element(ctx, rng)
        _, remainder = reference.reduce(to_sympy(f, gens, p).as_expr())
        assert canonical_flint(G.normal_form(f, ours), p) == canonical_sympy(remainder, gens, p)

    # SymPy's own count of the quotient dimension (a separate code path from ours)
    assert reference.is_zero_dimensional
    assert G.colength(ours) == len(sympy_standard_monomials(reference, gens, key)) == flag.rank


def sympy_standard_monomials(reference, gens, key):
    leading = [sympy.Poly(g, *gens).monoms(order=reference.order)[0] for g in reference.exprs]
    # the box given by the pure powers among SymPy's leading monomials
    bounds = [min(e[v] for e in leading if sum(e) == e[v] > 0) for v in range(len(gens))]
    return [e for e in itertools.product(*(range(b) for b in bounds))
            if not any(all(a <= b for a, b in zip(m, e)) for m in leading)]
