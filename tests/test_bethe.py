"""The Bethe presentation in the Chern roots (presentations/bethe.py).

References beside each check:
  * colength rank · ∏ k_i! of the saturated Bethe ideal: each of the rank torus-fixed points
    (standard count: the multinomial coefficient) lifts to one solution per ordering of each
    level's roots (docs/mathematics.md §2.3);
  * its symmetric part is the ring itself, of colength rank — the colength of the q-Whitney
    ideal (arXiv:2310.03826, arXiv:2208.01091);
  * SymPy's `groebner` as an independent reference, on equations built in SymPy straight from
    docs/mathematics.md §2.2 (not from the module under test).
"""
from __future__ import annotations

import itertools
import math

import flint
import pytest
import sympy

from ringmatch.compare import algebra, groebner, lifting, points
from ringmatch.presentations import bethe, whitney
from ringmatch.presentations.flagtype import parse_flag
from ringmatch.presentations.interface import build_series, build_specialised
from ringmatch.presentations.meanings import Meaning
from ringmatch.reports.formulas import to_sympy

SMALL_PRIME = 32003


def rank_times_orderings(flag):
    multinomial = math.factorial(flag.n)
    for i in range(flag.m + 1):
        multinomial //= math.factorial(flag.d(i))
    return multinomial * math.prod(math.factorial(flag.k(i)) for i in range(1, flag.m + 1))


def test_generators_are_the_chern_roots():
    flag = parse_flag("Fl(1,3;5)")
    gens = bethe.generators(flag)
    assert [g.name for g in gens] == ["x1_1", "x2_1", "x2_2", "x2_3"]
    assert [g.meaning for g in gens] == [Meaning("root", 1, 1), Meaning("root", 2, 1),
                                         Meaning("root", 2, 2), Meaning("root", 2, 3)]
    assert all(g.weight == 1 for g in gens)
    assert bethe.expected_colength(flag) == rank_times_orderings(flag) == 30 * 6   # 5!/(1!·2!·2!) · 1!·3!


@pytest.mark.parametrize("case", ["P1", "P3", "Gr(2;4)", "Fl(3)", "Fl(1,3;5)", "Fl(4)", "Fl(2,3;5)"])
def test_bethe_relations_hold_and_units_are_units_at_the_points(case):
    flag = parse_flag(case)
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=3, q_on_line=True)
    lifted = lifting.lift_points(flag, spec, 6)
    result = points.check_holds(build_series(bethe.FAMILY, flag, spec), lifted)
    assert result.holds and result.separates, result.as_dict()


def test_bethe_relations_with_another_q_do_not_hold():
    flag = parse_flag("Gr(2;4)")
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=3, q_on_line=True)
    lifted = lifting.lift_points(flag, spec, 4)
    other_line = algebra.Specialisation(spec.prime, spec.T, None, (spec.q_line[0] + 1,), spec.seed)
    moved = lifting.lift_points(flag, other_line, 4)
    wrong = lifting.BethePoints(flag, spec, 4, moved.points)   # points of another q line
    result = points.check_holds(build_series(bethe.FAMILY, flag, spec), wrong)
    assert not result.holds and {f.lowest_power for f in result.failures} == {1}
    assert points.check_holds(build_series(bethe.FAMILY, flag, spec), lifted).holds


def saturated_ideal(flag, spec, ordering="degrevlex", extra=()):
    presentation = build_specialised(bethe.FAMILY, flag, spec, extra=("u",) + tuple(extra),
                                     ordering=ordering)
    product = presentation.ring.extra["u"]
    for unit in presentation.units:
        product = product * unit
    return presentation, [r.poly for r in presentation.relations] + [product - 1]


# Fl(1,3;4), Fl(2,3;4) and Fl(4) take minutes in the Python Gröbner engine with the single
# inverter u·∏units − 1, so they are left to the benchmark rather than the test suite.
@pytest.mark.parametrize("case", ["P1", "P2", "P3", "Gr(2;4)", "Gr(3;4)", "Fl(3)", "Fl(1,2;4)"])
def test_colength_is_rank_times_orderings(case):
    flag = parse_flag(case)
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=8)
    _, ideal = saturated_ideal(flag, spec)
    assert groebner.colength(groebner.groebner_basis(ideal)) == rank_times_orderings(flag)


def test_colength_without_saturation_is_larger_or_infinite():
    # the Vandermonde and det S units matter: without them spurious solutions remain
    flag = parse_flag("Gr(2;4)")
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=8)
    presentation = build_specialised(bethe.FAMILY, flag, spec)
    colength = groebner.colength(groebner.groebner_basis([r.poly for r in presentation.relations]))
    assert colength is None or colength > rank_times_orderings(flag)


def symmetric_part_colength(flag, spec):
    """Colength of the Bethe ideal's intersection with F_p[e_j(X^(i))] (lex elimination)."""
    e_names = [f"e{i}_{j}" for i in range(1, flag.m + 1) for j in range(1, flag.k(i) + 1)]
    presentation, ideal = saturated_ideal(flag, spec, ordering="lex", extra=e_names)
    ring = presentation.ring
    for i in range(1, flag.m + 1):
        roots = [ring.gen[bethe.root_name(i, a)] for a in range(1, flag.k(i) + 1)]
        e = algebra.elementary_symmetric(roots, ring.one)
        ideal += [ring.extra[f"e{i}_{j}"] - e[j] for j in range(1, flag.k(i) + 1)]
    basis = groebner.groebner_basis(ideal)
    eliminated = len(presentation.generators) + 1        # the roots and u come first in lex
    symmetric = [g for g in basis if all(not any(m[:eliminated]) for m in g.monoms())]
    ctx = flint.nmod_mpoly_ctx.get(tuple(e_names), spec.prime, "degrevlex")
    images = [ctx.constant(0)] * eliminated + list(ctx.gens())
    return groebner.colength(groebner.groebner_basis([g.compose(*images, ctx=ctx) for g in symmetric]))


@pytest.mark.parametrize("case", ["P2", "Gr(2;4)", "Fl(3)", "Fl(1,2;4)", "Gr(2;5)"])
def test_symmetric_part_has_the_whitney_colength(case):
    flag = parse_flag(case)
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=8)
    whitney_ideal = [r.poly for r in build_specialised(whitney.FAMILY, flag, spec).relations]
    whitney_colength = groebner.colength(groebner.groebner_basis(whitney_ideal))
    assert whitney_colength == flag.rank                 # arXiv:2310.03826
    assert symmetric_part_colength(flag, spec) == whitney_colength


# ---------------------------------------------------------------------------------------
# SymPy cross-check, on equations typed in from docs/mathematics.md §2.2

def sympy_bethe_ideal(flag, spec):
    T = [sympy.Integer(t % spec.prime) for t in spec.T]
    q = [sympy.Integer(c % spec.prime) for c in spec.q]
    X = {i: list(sympy.symbols(f"X{i}_1:{flag.k(i) + 1}")) for i in range(1, flag.m + 1)}
    X[0], X[flag.m + 1] = [], T
    u = sympy.Symbol("u")
    polys, units = [], []
    for i in range(1, flag.m + 1):
        for x in X[i]:
            lhs = sympy.Mul(*[1 - b / x for b in X[i + 1]])
            rhs = -(-1 / x) ** flag.d(i) * q[i - 1] * sympy.Mul(*X[i + 1]) / sympy.Mul(*X[i]) \
                * sympy.Mul(*[1 - c / x for c in X[i - 1]])
            polys.append(sympy.fraction(sympy.together(lhs - rhs))[0])
        units.append(sympy.Mul(*X[i]))
        units += [a - b for k, a in enumerate(X[i]) for b in X[i][k + 1:]]
    polys.append(u * sympy.Mul(*units) - 1)
    gens = [x for i in range(1, flag.m + 1) for x in X[i]] + [u]
    return polys, gens


def count_standard_monomials(leading, nvars, limit=10_000):
    seen, frontier = {(0,) * nvars}, [(0,) * nvars]
    while frontier:
        monomial = frontier.pop()
        for v in range(nvars):
            bigger = monomial[:v] + (monomial[v] + 1,) + monomial[v + 1:]
            if bigger in seen or any(all(a <= b for a, b in zip(lm, bigger)) for lm in leading):
                continue
            seen.add(bigger)
            frontier.append(bigger)
            assert len(seen) < limit, "not zero-dimensional"
    return len(seen)


@pytest.mark.parametrize("case", ["P1", "P2", "Fl(3)"])
def test_colength_agrees_with_sympy(case):
    flag = parse_flag(case)
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=21, prime=SMALL_PRIME)
    polys, gens = sympy_bethe_ideal(flag, spec)
    basis = sympy.groebner(polys, *gens, modulus=SMALL_PRIME, order="grevlex")
    leading = [sympy.Poly(g, *gens).monoms(order="grevlex")[0] for g in basis.exprs]
    reference = count_standard_monomials(leading, len(gens))
    _, ideal = saturated_ideal(flag, spec)
    assert groebner.colength(groebner.groebner_basis(ideal)) == reference == rank_times_orderings(flag)


@pytest.mark.parametrize("case", ["P2", "P3", "Gr(2;4)"])   # SymPy's lex bases: Fl(3) > 5 min
def test_symmetric_part_colength_agrees_with_sympy(case):
    # SymPy alone: eliminate the roots and u from the Bethe ideal plus E_ij − e_j(X^(i)) with
    # a lex basis; the elimination ideal in the E's must have the colength of SymPy's own
    # Whitney ideal, the rank (arXiv:2310.03826; standard count of fixed points).
    flag = parse_flag(case)
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=21, prime=SMALL_PRIME)
    polys, gens = sympy_bethe_ideal(flag, spec)
    roots = gens[:-1]
    E, by_level, start = [], [], 0
    for i in range(1, flag.m + 1):
        level = roots[start:start + flag.k(i)]
        start += flag.k(i)
        for j in range(1, flag.k(i) + 1):
            e = sympy.Symbol(f"E{i}_{j}")
            E.append(e)
            by_level.append(e - sum(sympy.Mul(*c) for c in itertools.combinations(level, j)))
    basis = sympy.groebner(polys + by_level, *gens, *E, modulus=SMALL_PRIME, order="lex")
    eliminated = [g for g in basis.exprs if not (g.free_symbols & set(gens))]
    leading = [sympy.Poly(g, *E).monoms(order=sympy.polys.orderings.lex)[0] for g in eliminated]
    symmetric = count_standard_monomials(leading, len(E))

    presentation = build_specialised(whitney.FAMILY, flag, spec)
    names = presentation.ring.ctx.names()
    symbols = [sympy.Symbol(x) for x in names]
    w_basis = sympy.groebner([to_sympy(r.poly, names) for r in presentation.relations], *symbols,
                             modulus=SMALL_PRIME, order="grevlex")
    w_leading = [sympy.Poly(g, *symbols).monoms(order="grevlex")[0] for g in w_basis.exprs]
    assert symmetric == count_standard_monomials(w_leading, len(symbols)) == flag.rank
