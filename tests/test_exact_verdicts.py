"""Verdicts never claim more than was computed (docs/verdicts.md).

Ground truth for every perturbation is decided independently with SymPy's `groebner` at the
engine's own random specialisation (same prime, same residues): two ideals in the same
generators are equal exactly when their reduced Gröbner bases are.  The perturbations
(tests/perturbations/*.toml) all vanish at every Bethe point to order s^6 and change the ideal.

Sources: q-Whitney relations (arXiv:2310.03826; proved for all partial flags in
arXiv:2409.15575), the relativistic Toda presentation of complete flags (Invent. Math. 151
(2003); arXiv:1711.08414), ranks = number of torus-fixed points (standard).
"""
import json
from dataclasses import replace
from pathlib import Path

import pytest
import sympy

from ringmatch.compare.engine import check_case, trial_prime
from ringmatch.presentations import get_family, whitney
from ringmatch.presentations.flagtype import parse_flag

from conftest import run_in_process, sympy_ideals_equal

SMALL_PRIME = 32003   # SymPy's modular Gröbner bases are fast with a small prime
HERE = Path(__file__).resolve().parent
PERTURBATIONS = sorted((HERE / "perturbations").glob("*.toml"))
CASES = ["P2", "Gr(2,4)", "Fl(3)"]
SEED = 13


def sympy_equal(flag, family_a, family_b, seed, equivariant=True):
    return sympy_ideals_equal(flag, family_a, family_b, seed, prime=SMALL_PRIME,
                              equivariant=equivariant)


@pytest.mark.parametrize("case", CASES)
@pytest.mark.parametrize("path", PERTURBATIONS, ids=lambda p: p.stem)
def test_perturbations_disagree_by_default_and_are_only_consistent_at_the_points(path, case):
    flag = parse_flag(case)
    perturbed = get_family(str(path))
    assert not sympy_equal(flag, whitney.FAMILY, perturbed, SEED)
    result = check_case(flag, [whitney.FAMILY, perturbed], seed=SEED, prime=SMALL_PRIME)
    pair = result.pairs[0]
    assert result.verdict == pair.verdict == "disagree", pair
    assert pair.exact and result.certificate.exact
    assert result.presentations[perturbed.name].complete is False
    points_only = check_case(flag, [whitney.FAMILY, perturbed], seed=SEED, prime=SMALL_PRIME,
                             method="points", order=6)
    pair = points_only.pairs[0]
    assert pair.verdict == "consistent" and pair.order == 6 and not pair.exact
    assert "s^6" in pair.reason and "not proven" in pair.reason
    assert points_only.verdict == "consistent" and not points_only.certificate.exact


def test_the_order_is_chosen_from_the_relations():
    # late-q adds q^8 (times 1 − q once the denominator is cleared): order 2 + 9.
    flag = parse_flag("Gr(2,4)")
    late = get_family(str(HERE / "perturbations" / "late-q.toml"))
    result = check_case(flag, [whitney.FAMILY, late], seed=SEED)
    assert result.certificate.order == 11
    assert result.certificate.order_source == "2 + largest q-degree"
    assert result.pairs[0].method == "Bethe points"     # refuted without a basis
    witness = result.pairs[0].witnesses[0].fails_at_points
    assert witness.lowest_power == 8


@pytest.mark.parametrize("case", ["Gr(2,4)", "Fl(3)", "Fl(1,3;4)", "Fl(4)"])
def test_correct_presentations_in_other_generators_agree_exactly(case):
    flag = parse_flag(case)
    names = ["whitney", "vieta", "vieta-eliminated", "bethe", "vieta-family"]
    if flag.is_complete:
        names.append("toda")
    result = check_case(flag, [get_family(n) for n in names], seed=SEED)
    assert result.verdict == "agree", result.reason
    assert result.certificate.exact and result.exact
    assert all(p.verdict == "agree" and p.exact for p in result.pairs)
    for name, record in result.presentations.items():
        assert record.holds is True and record.complete is True, name
        assert record.holds_evidence.startswith(("exact", "by theorem")), name


@pytest.mark.parametrize("case", ["Fl(3)", "Fl(4)", "Fl(5)"])
def test_toda_relations_hold_exactly_in_the_q_whitney_ring(case):
    # Confirms the index convention of the Toda relations independently of the Bethe
    # points: every relation reduces to 0 modulo q-Whitney at a random specialisation.
    result = check_case(parse_flag(case), [get_family("toda")], seed=SEED, method="groebner")
    record = result.presentations["toda"]
    assert record.holds is True and record.holds_evidence.startswith("exact")
    assert record.colength == parse_flag(case).rank and result.verdict == "agree"


# ---------------------------------------------------------------------------------------
# Non-equivariant checks decide

@pytest.mark.parametrize("case", ["P2", "Gr(2,4)", "Fl(3)"])
def test_plain_checks_decide(case):
    flag = parse_flag(case)
    vieta = get_family("vieta-family")
    late = get_family(str(HERE / "perturbations" / "late-q.toml"))
    assert not sympy_equal(flag, whitney.FAMILY, late, SEED, equivariant=False)
    assert sympy_equal(flag, whitney.FAMILY, get_family("qwhitney-family"), SEED,
                       equivariant=False)
    agree = check_case(flag, [whitney.FAMILY, vieta], seed=SEED, prime=SMALL_PRIME,
                       equivariant=False)
    assert agree.verdict == "agree" and agree.exact, agree.reason
    differ = check_case(flag, [whitney.FAMILY, late], seed=SEED, prime=SMALL_PRIME,
                        equivariant=False)
    assert differ.verdict == "disagree" and differ.exact, differ.reason


# ---------------------------------------------------------------------------------------
# Infinite colength, JSON fields, exit statuses

def _without_last_relation(flag, ring):
    return whitney.relations(flag, ring)[:-1]


def test_too_few_relations_have_infinite_colength_and_disagree():
    short = replace(whitney.FAMILY, name="whitney-short", relations=_without_last_relation)
    result = check_case(parse_flag("Gr(2,4)"), [whitney.FAMILY, short], seed=SEED)
    record = result.presentations["whitney-short"]
    assert record.colength == "infinite" and record.complete is False
    pair = result.pairs[0]
    assert pair.verdict == "disagree" and "infinite" in pair.reason
    assert "None" not in json.dumps(result.to_json())


def test_json_records_say_how_each_result_was_reached():
    result = check_case(parse_flag("Gr(2,4)"), [whitney.FAMILY, get_family("vieta")],
                        seed=SEED).to_json()
    assert result["schema"] >= 3
    for pair in result["pairs"]:
        assert {"exact", "method", "order", "verdict", "reason", "witnesses"} <= set(pair)
    for record in result["presentations"].values():
        assert {"holds", "holds_evidence", "holds_to_order", "complete", "exact"} <= set(record)
    certificate = result["certificate"]
    assert "mod p" in certificate["probability"] and "--trials" in certificate["probability"]
    assert certificate["kind"].startswith("exact")


def test_trials_with_a_small_prime_use_distinct_primes_and_finish():
    primes = [trial_prime(1000003, t) for t in range(3)]
    assert primes[0] == 1000003 and len(set(primes)) == 3
    assert all(sympy.isprime(p) for p in primes)
    result = check_case(parse_flag("P1"), [whitney.FAMILY], seed=1, prime=1000003, trials=2)
    assert result.verdict == "agree"


def test_exit_statuses():
    late = str(HERE / "perturbations" / "late-q.toml")
    assert run_in_process("check", "Gr(2,4)", "--presentations", "whitney,vieta",
                          "--seed", "3").returncode == 0
    assert run_in_process("check", "Gr(2,4)", "--presentations", f"whitney,{late}",
                          "--seed", "3").returncode == 1
    assert run_in_process("check", "Gr(2,4)", "--presentations", f"whitney,{late}",
                          "--seed", "3", "--method", "points", "--order", "6").returncode == 3
    assert run_in_process("check", "Gr(2,4)", "--presentations", "whitney",
                          "--trials", "0").returncode == 2


def _multiple_of_prime(tmp_path, prime, name="prime-multiple"):
    # late-q with its extra term multiplied by the prime: mod that prime the file would be
    # the q-Whitney family itself, over Q it is not.
    text = (HERE / "perturbations" / "late-q.toml").read_text()
    text = text.replace('name = "late-q"', f'name = "{name}"')
    text = text.replace("+ q_i^8 * y^{d_i}", f"+ {prime} * q_i * y^{{d_i}}")
    path = tmp_path / f"{name}.toml"
    path.write_text(text)
    return get_family(str(path))


@pytest.mark.parametrize("prime", [SMALL_PRIME, 4611686018427387847])
def test_a_coefficient_divisible_by_the_prime_never_gives_agree(tmp_path, prime):
    # Reduced mod p the extra term vanishes and the two ideals coincide: computing there would
    # give a false `agree`.  The engine passes over such primes and says so.
    flag = parse_flag("Gr(2,4)")
    perturbed = _multiple_of_prime(tmp_path, prime)
    # ground truth at another prime (SymPy), where the extra term survives
    assert not sympy_ideals_equal(flag, whitney.FAMILY, perturbed, SEED, prime=32009)
    for method in ("auto", "groebner", "points"):
        result = check_case(flag, [whitney.FAMILY, perturbed], seed=SEED, prime=prime,
                            method=method, trials=2)
        assert result.verdict == "disagree", (method, result.reason)
        primes = [t.prime for t in result.certificate.trials]
        assert prime not in primes and len(set(primes)) == 2
        assert f"{prime} divides {prime}" in result.certificate.prime_note


def test_a_prime_dividing_a_coefficient_is_refused_where_it_is_not_avoided(tmp_path):
    from ringmatch.compare import algebra
    from ringmatch.presentations.interface import build_specialised
    from ringmatch.presentations.userfile import PresentationFileError
    perturbed = _multiple_of_prime(tmp_path, SMALL_PRIME)
    spec = algebra.Specialisation(SMALL_PRIME, (1, 2, 3, 4), (5,))
    with pytest.raises(PresentationFileError, match=f"divisible by the prime {SMALL_PRIME}"):
        build_specialised(perturbed, parse_flag("Gr(2,4)"), spec)
