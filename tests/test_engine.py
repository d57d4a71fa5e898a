"""The comparison engine against outside sources and against SymPy as independent judge.

Sources: the Whitney presentation (arXiv:2310.03826; Grassmannians arXiv:2208.01091), the
Vieta/critical-point form (docs/mathematics.md §2.2, same sources), the relativistic Toda
presentation (Invent. Math. 151 (2003); arXiv:1711.08414), ranks = number of torus-fixed points (standard).
"""
from dataclasses import replace

import pytest
import sympy

from ringmatch.compare import algebra
from ringmatch.compare.engine import check_case
from ringmatch.presentations import get_family, whitney
from ringmatch.presentations.flagtype import FlagType, parse_flag
from ringmatch.presentations.interface import build_specialised
from ringmatch.reports.formulas import to_sympy

from broken_variants import whitney_variant
from conftest import sympy_ideals_equal

SMALL_PRIME = 32003   # SymPy's modular Gröbner bases are much faster with a small prime
ALL_UP_TO_5 = [FlagType(tuple(d for d in range(1, n) if mask >> (d - 1) & 1), n)
               for n in range(2, 6) for mask in range(1, 2 ** (n - 1))]


def families(*names):
    return [get_family(name) for name in names]


# ---------------------------------------------------------------------------------------
# Established presentations agree

@pytest.mark.parametrize("flag", ALL_UP_TO_5, ids=lambda f: f.name)
def test_whitney_vieta_eliminated_and_bethe_agree_up_to_n5(flag):
    result = check_case(flag, families("whitney", "vieta", "vieta-eliminated", "bethe"), seed=11)
    assert result.verdict == "agree", result.reason
    for name, p in result.presentations.items():
        assert p.holds and p.complete, (name, p)
        if name != "bethe":
            assert p.colength == p.classical_colength == flag.rank
    assert all(pair.verdict == "agree" for pair in result.pairs)


@pytest.mark.parametrize("case", ["Fl(3)", "Fl(4)", "Fl(5)"])
def test_toda_agrees_with_whitney_and_bethe(case):
    result = check_case(parse_flag(case), families("whitney", "toda", "bethe"), seed=2)
    assert result.verdict == "agree", result.reason
    assert result.presentations["toda"].colength == parse_flag(case).rank


def test_plain_case_agrees():
    result = check_case(parse_flag("Gr(2,4)"), families("whitney", "vieta", "bethe"), seed=4,
                        equivariant=False)
    # Non-equivariantly all weights are 1: the fixed points collide, so the points route
    # cannot lift them and must say so instead of deciding.
    assert result.presentations["whitney"].colength == 6
    assert result.pairs[0].verdict == "agree"


# ---------------------------------------------------------------------------------------
# Certificates reproduce

def test_same_seed_same_result_and_trials_use_distinct_primes():
    flag = parse_flag("Fl(1,2;4)")
    first = check_case(flag, families("whitney", "vieta"), seed=99, trials=2)
    second = check_case(flag, families("whitney", "vieta"), seed=99, trials=2)
    first.timings = second.timings = {}
    assert first == second
    primes = [t.prime for t in first.certificate.trials]
    assert len(set(primes)) == 2 and all(sympy.isprime(p) for p in primes)
    certificate = first.certificate
    for key in ("prime", "seed", "weights", "q_values", "q_line", "order", "method", "kind"):
        assert getattr(certificate, key) is not None


# ---------------------------------------------------------------------------------------
# Broken variants, judged independently by SymPy

def _dropping(index):
    def relations(flag, ring):
        rels = whitney.relations(flag, ring)
        return rels[:index] + rels[index + 1:]
    return relations


def _weights_changed_in_one_relation(index, permutation):
    def relations(flag, ring):
        rels = whitney.relations(flag, ring)
        changed = replace(ring, T=tuple(ring.T[j] for j in permutation(flag.n)))
        rels[index] = whitney.relations(flag, changed)[index]
        return rels
    return relations


MUTANTS = {
    "flipped-q-sign": whitney_variant(sign=-1),
    "q-squared": whitney_variant(square_q=True),
    "dropped-relation": _dropping(1),
    "weights-swapped": _weights_changed_in_one_relation(
        1, lambda n: [1, 0] + list(range(2, n))),             # T1 <-> T2
    "weight-repeated": _weights_changed_in_one_relation(
        1, lambda n: [1, 1] + list(range(2, n))),             # T1 -> T2
    "faithful-copy": whitney.relations,
}


def mutant_family(name):
    return replace(whitney.FAMILY, name=f"whitney-{name}", relations=MUTANTS[name])


@pytest.mark.parametrize("case", ["P2", "Gr(2,4)", "Fl(3)"])
@pytest.mark.parametrize("mutant", sorted(MUTANTS))
def test_mutants_verdict_matches_sympy(case, mutant):
    flag = parse_flag(case)
    seed = 7
    truth_equal = sympy_ideals_equal(flag, whitney.FAMILY, mutant_family(mutant), seed)
    result = check_case(flag, [whitney.FAMILY, mutant_family(mutant)], seed=seed,
                        prime=SMALL_PRIME)
    pair = result.pairs[0]
    if truth_equal:
        assert pair.verdict == "agree", (mutant, pair)
        return
    assert pair.verdict == "disagree", (mutant, pair)
    # Every ideal witness is a relation of one that really is outside the other (SymPy).
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=seed, prime=SMALL_PRIME)
    built = {f.name: build_specialised(f, flag, spec) for f in (whitney.FAMILY, mutant_family(mutant))}
    ideal_witnesses = [w for w in pair.witnesses if w.normal_form is not None]
    point_witnesses = [w for w in pair.witnesses if w.fails_at_points is not None]
    assert pair.exact
    assert ideal_witnesses or point_witnesses or "colength" in pair.reason
    for w in ideal_witnesses:
        source, target = built[w.relation_of], built[w.not_in]
        names = target.ring.ctx.names()
        symbols = [sympy.Symbol(x) for x in names]
        basis = sympy.groebner([to_sympy(r.poly, names) for r in target.relations], *symbols,
                               modulus=SMALL_PRIME, order="grevlex")
        relation = next(r for r in source.relations if r.label == w.relation)
        assert not basis.contains(to_sympy(relation.poly, names))


def test_q_mutant_fails_at_the_points_beyond_the_classical_order():
    result = check_case(parse_flag("Gr(2,4)"), [whitney.FAMILY, mutant_family("flipped-q-sign")],
                        seed=3)
    failures = result.presentations["whitney-flipped-q-sign"].failures
    assert failures and all(f.lowest_power == 1 and not f.classical for f in failures)
    assert result.presentations["whitney"].holds is True
    assert result.verdict == "disagree"


def test_toda_is_refused_for_a_partial_flag():
    from ringmatch.presentations.interface import PresentationError
    with pytest.raises(PresentationError):
        check_case(parse_flag("Gr(2,4)"), families("whitney", "toda"), seed=1)


def test_localisation_by_linear_algebra_matches_inverse_variables():
    import flint
    from ringmatch.compare import groebner
    from ringmatch.compare.engine import localised_colength, own_ideal, without_unit_factors
    # x^2 (x − 1)(x − 2) with x inverted keeps the two roots 1 and 2.
    ctx = flint.nmod_mpoly_ctx.get(("x", "y"), SMALL_PRIME, "degrevlex")
    x, y = ctx.gens()
    basis = groebner.groebner_basis([x ** 2 * (x - 1) * (x - 2), y ** 2 - x])
    assert groebner.colength(basis) == 8 and localised_colength(basis, [x]) == 4
    # The Vieta forms (where the unit-free relations are zero-dimensional): the same
    # colength as with one inverse variable per unit.
    compared = 0
    for case in ("Gr(2,4)", "Fl(3)", "Fl(1,2;4)", "Gr(3,5)"):
        flag = parse_flag(case)
        spec = algebra.draw_specialisation(flag.n, flag.m, seed=5)
        for name in ("vieta", "vieta-eliminated"):
            built = build_specialised(get_family(name), flag, spec)
            stripped = groebner.groebner_basis(
                [without_unit_factors(r.poly, built.units) for r in built.relations])
            if not groebner.is_zero_dimensional(stripped):
                continue
            compared += 1
            assert localised_colength(stripped, built.units) == \
                own_ideal(get_family(name), flag, spec).colength == flag.rank
    assert compared >= 4
