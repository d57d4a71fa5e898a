"""The Bethe-point engine (compare/lifting.py, compare/points.py, compare/series.py): lifting,
values, "holds".

External references, named beside each check:
  * rank = multinomial number of torus-fixed points (standard: Euler characteristic);
  * fixed-point restrictions λ_y(S_i)|_I = ∏_{j∈I_i}(1 + yT_j) (standard localisation);
  * quantum K Whitney relations: arXiv:2310.03826 (all partial flags), arXiv:2208.01091
    (Grassmannians); det S · det Q = (1 − q) T_1⋯T_n (arXiv:2208.01091);
  * ∏_j (1 − X/T_j) = q in QK_T(P^{n−1}) ("Quantum K-theory of Grassmannians", Duke Math. J.
    156 (2011));
  * SymPy as an independent reference for the arithmetic in F_p[s].
"""
from __future__ import annotations

import dataclasses
import itertools
import json
import math

import pytest
import sympy

from ringmatch.compare import algebra, lifting, points
from ringmatch.compare import series as ps
from ringmatch.presentations import toda, whitney
from ringmatch.presentations.flagtype import FlagType, parse_flag
from ringmatch.presentations.interface import Family, Generator, build_series
from ringmatch.presentations.meanings import Meaning, lambda_Q, lambda_S

from broken_variants import flipped_q_sign
from conftest import run_cli as run, run_in_process

SMALL_PRIME = 1000003


def flag_types(max_n):
    for n in range(2, max_n + 1):
        for size in range(1, n):
            for dims in itertools.combinations(range(1, n), size):
                yield FlagType(dims, n)


def line_spec(flag, seed=11, prime=algebra.DEFAULT_PRIME):
    return algebra.draw_specialisation(flag.n, flag.m, seed=seed, prime=prime, q_on_line=True)


def lifted(case, order=6, seed=11, prime=algebra.DEFAULT_PRIME):
    flag = parse_flag(case) if isinstance(case, str) else case
    return lifting.lift_points(flag, line_spec(flag, seed, prime), order)


# ---------------------------------------------------------------------------------------
# Lifting

@pytest.mark.parametrize("flag", list(flag_types(5)), ids=lambda f: f.name)
def test_number_of_points_is_the_rank(flag):
    # rank = n!/(k_1! d_1! ⋯ d_m!), the Euler characteristic (standard fact)
    bethe = lifted(flag, order=2)
    multinomial = math.factorial(flag.n)
    for i in range(flag.m + 1):
        multinomial //= math.factorial(flag.d(i))
    assert len(bethe.points) == multinomial


@pytest.mark.parametrize("case", ["P1", "Gr(2;4)", "Fl(1,3;5)", "Fl(4)"])
def test_lifted_points_satisfy_the_equations(case):
    bethe = lifted(case, order=8)
    setup = lifting.make_setup(bethe.flag, bethe.spec)
    for point in bethe.points:
        assert all(ps.valuation(v, 8) is None for v in lifting.residuals(setup, point.roots, 8))
        # and they are genuinely quantum: the roots move with s
        assert any(ps.valuation(x - ps.constant(ps.constant_term(x), bethe.spec.prime), 8)
                   for level in point.roots for x in level)


@pytest.mark.parametrize("order", [1, 2, 3, 5, 6, 7, 9])
def test_every_precision_schedule_gives_the_same_series(order):
    # Newton steps of different sizes (and one or two Schulz updates) must agree with the
    # reference lift to order 12, truncated.
    reference = lifted("Fl(1,3;4)", order=12)
    other = lifted("Fl(1,3;4)", order=order)
    for a, b in zip(reference.points, other.points):
        assert a.fixed_point == b.fixed_point
        for la, lb in zip(a.roots, b.roots):
            for x, y in zip(la, lb):
                assert ps.coefficients(x, order) == ps.coefficients(y, order)


def test_roots_start_at_the_weights_of_the_fixed_point():
    bethe = lifted("Fl(1,3;5)", order=3)
    T = bethe.spec.T
    for point in bethe.points:
        for I, level in zip(point.fixed_point, point.roots):
            assert [ps.constant_term(x) for x in level] == [T[j - 1] for j in I]


def test_equal_weights_are_reported_not_accepted():
    flag = parse_flag("Gr(2;4)")
    spec = algebra.Specialisation(SMALL_PRIME, (3, 5, 3, 7), None, (2,), None)
    with pytest.raises(lifting.SingularJacobian, match=r"T_1 and T_3 are equal"):
        lifting.lift_points(flag, spec, 4)
    spec = algebra.Specialisation(SMALL_PRIME, (3, 5, SMALL_PRIME + 5, 7), None, (2,), None)
    with pytest.raises(lifting.SingularJacobian, match=r"T_2 and T_3"):
        lifting.lift_points(flag, spec, 4)
    spec = algebra.Specialisation(SMALL_PRIME, (3, 5, 0, 7), None, (2,), None)
    with pytest.raises(lifting.SingularJacobian, match=r"T_3 .* is 0"):
        lifting.lift_points(flag, spec, 4)


def test_given_weights_are_never_replaced():
    with pytest.raises(lifting.SingularJacobian):
        lifting.random_line_points(parse_flag("P2"), 3, prime=SMALL_PRIME, weights=(4, 4, 9))


def test_random_weights_that_collide_are_redrawn_and_noted(monkeypatch):
    real = algebra.draw_specialisation
    calls = []

    def colliding_first(n, m, *, seed=None, **options):
        spec = real(n, m, seed=seed, **options)
        calls.append(seed)
        if len(calls) == 1:   # the first draw collides, as a tiny prime could make it
            return dataclasses.replace(spec, T=(spec.T[0],) * n)
        return spec

    monkeypatch.setattr(algebra, "draw_specialisation", colliding_first)
    bethe = lifting.random_line_points(parse_flag("P2"), 3, seed=40, prime=SMALL_PRIME)
    assert calls == [40, 41]
    assert bethe.spec.seed == 41 and len(bethe.points) == 3
    assert len(bethe.notes) == 1 and "seed 40" in bethe.notes[0] and "equal" in bethe.notes[0]


def test_inverse_series_of_a_non_unit_raises_instead_of_aborting():
    with pytest.raises(ZeroDivisionError):
        ps.inverse(ps.from_coefficients([0, 1], SMALL_PRIME), 4)


# ---------------------------------------------------------------------------------------
# Independent check of the equations with SymPy

def _design_equation_numerator(flag, i, a, roots, T, q):
    """§2.2 as printed, LHS − RHS over a common denominator, built in SymPy from symbols."""
    x = roots[i][a]
    above = T if i == flag.m else roots[i + 1]
    below = roots[i - 1] if i > 1 else []
    det = lambda level: sympy.Mul(*level)
    lhs = sympy.Mul(*[1 - X / x for X in above])
    rhs = -(-1 / x) ** flag.d(i) * q[i - 1] * det(above) / det(roots[i]) \
        * sympy.Mul(*[1 - X / x for X in below])
    numerator, _ = sympy.fraction(sympy.together(lhs - rhs))
    return sympy.expand(numerator)


@pytest.mark.parametrize("case", ["P1", "Gr(1;3)", "Fl(3)"])
def test_points_solve_the_printed_equations_checked_with_sympy(case):
    # The series are substituted into docs/mathematics.md §2.2 (not into the engine's cleared form)
    # with SymPy polynomials in s over GF(p); everything below s^4 must cancel.
    order, p = 4, SMALL_PRIME
    bethe = lifted(case, order=order, prime=p)
    flag, s = bethe.flag, sympy.Symbol("s")
    T_sym = sympy.symbols(f"T1:{flag.n + 1}")
    q_sym = sympy.symbols(f"q1:{flag.m + 1}")
    X_sym = {i: sympy.symbols(f"X{i}_1:{flag.k(i) + 1}") for i in range(1, flag.m + 1)}
    for point in bethe.points:
        substitution = {t: v for t, v in zip(T_sym, bethe.spec.T)}
        substitution.update({q: c * s for q, c in zip(q_sym, bethe.spec.q_line)})
        for i, level in enumerate(point.roots, start=1):
            for symbol, x in zip(X_sym[i], level):
                substitution[symbol] = sum(c * s**t for t, c in enumerate(ps.coefficients(x, order)))
        for i in range(1, flag.m + 1):
            for a in range(flag.k(i)):
                numerator = _design_equation_numerator(flag, i, a, X_sym, T_sym, q_sym)
                value = sympy.Poly(numerator.subs(substitution), s, modulus=p)
                low = [c for (power,), c in value.terms() if power < order and c % p]
                assert low == [], (point.fixed_point, i, a)


# ---------------------------------------------------------------------------------------
# Values of classes

@pytest.mark.parametrize("case", ["Gr(2;4)", "Fl(1,3;5)", "Fl(4)"])
def test_values_at_q_zero_are_fixed_point_restrictions(case):
    # standard localisation: λ_y(S_i) ↦ ∏_{j∈I_i}(1 + yT_j), λ_y(Q_i) ↦ ∏_{j∈I_{i+1}∖I_i}(1 + yT_j)
    bethe = lifted(case, order=1)
    flag, p, T = bethe.flag, bethe.spec.prime, bethe.spec.T
    gens = whitney.generators(flag)
    values = points.generator_values(bethe, gens)
    for point, value in zip(bethe.points, values):
        chain = point.fixed_point + (tuple(range(1, flag.n + 1)),)
        for i in range(1, flag.m + 1):
            expected_S = _elementary([T[j - 1] for j in chain[i - 1]], p)
            expected_Q = _elementary([T[j - 1] for j in chain[i] if j not in chain[i - 1]], p)
            for j in range(1, flag.k(i) + 1):
                assert ps.constant_term(value[f"S{i}_{j}"]) == expected_S[j]
            for j in range(1, flag.d(i) + 1):
                assert ps.constant_term(value[f"Q{i}_{j}"]) == expected_Q[j]


def _elementary(values, p):
    e = [1]
    for v in values:
        e = [(a + b * v) % p for a, b in zip(e + [0], [0] + e)]
    return e


@pytest.mark.parametrize("case", ["Gr(2;4)", "Gr(2;5)", "Gr(3;5)"])
def test_det_S_times_det_Q_is_one_minus_q_times_T(case):
    # det S · det Q = (1 − q) T_1⋯T_n in QK_T(Gr(k;n)) (arXiv:2208.01091)
    bethe = lifted(case, order=6)
    flag, p, N = bethe.flag, bethe.spec.prime, 6
    k, d = flag.k(1), flag.d(1)
    gens = [Generator("detS", lambda_S(1, k), k), Generator("detQ", lambda_Q(1, d), d)]
    q = ps.on_line(bethe.spec.q_line[0], p)
    product_T = math.prod(bethe.spec.T) % p
    for value in points.generator_values(bethe, gens):
        lhs = value["detS"].mul_low(value["detQ"], N)
        assert ps.valuation(lhs - (1 - q) * product_T, N) is None


def test_vieta_and_toda_values_agree_with_their_definitions():
    bethe = lifted("Fl(3)", order=5)
    p, N = bethe.spec.prime, 5
    gens = [Generator("w", Meaning("vieta_aux", 1, 1), 1), Generator("Q", lambda_Q(1, 1), 1),
            Generator("L1", Meaning("toda_L", 1), 1), Generator("L2", Meaning("toda_L", 2), 1),
            Generator("L3", Meaning("toda_L", 3), 1), Generator("x", Meaning("root", 2, 2), 1)]
    q = ps.on_line(bethe.spec.q_line[0], p)
    for point, value in zip(bethe.points, points.generator_values(bethe, gens)):
        # λ_1(Q_1) = (1 − q_1) w_{1,1} when d_1 = 1 (docs/mathematics.md §2.2 change of variables)
        assert ps.valuation(value["Q"] - value["w"].mul_low(1 - q, N), N) is None
        product = value["L1"].mul_low(value["L2"], N).mul_low(value["L3"], N)
        assert ps.coefficients(product, N) == [math.prod(bethe.spec.T) % p] + [0] * (N - 1)
        assert value["x"] == point.roots[1][1]


# ---------------------------------------------------------------------------------------
# Holds

@pytest.mark.parametrize("flag", list(flag_types(5)), ids=lambda f: f.name)
def test_whitney_relations_hold_at_all_points(flag):
    # quantum K Whitney relations (arXiv:2310.03826; Grassmannians arXiv:2208.01091)
    bethe = lifted(flag, order=5)
    result = points.check_holds_family(whitney.FAMILY, flag, bethe)
    assert result.holds, result.failures[:3]
    assert result.separates and not result.unit_failures
    assert result.points == flag.rank and result.relations == len(whitney.generators(flag))


BROKEN = flipped_q_sign()


@pytest.mark.parametrize("case", ["P2", "Gr(2;4)", "Fl(1,3;4)"])
def test_a_broken_whitney_variant_does_not_hold(case):
    bethe = lifted(case, order=4)
    result = points.check_holds_family(BROKEN, bethe.flag, bethe)
    assert not result.holds and not result.classical_failure
    labels = {r.label for r in BROKEN.relations(bethe.flag, build_series(
        whitney.FAMILY, bethe.flag, bethe.spec).ring)}
    for failure in result.failures:
        assert failure.relation in labels
        assert failure.lowest_power == 1            # right at q = 0, wrong at order s^1
        assert failure.fixed_point in set(bethe.flag.fixed_points())
        assert 1 <= failure.failing_points <= bethe.flag.rank
    # the top coefficient of each level carries the q-term at every point
    top = f"level {bethe.flag.m}, y^{bethe.flag.n}"
    assert any(f.relation == top for f in result.failures)
    record = result.as_dict()
    assert record["holds"] is False and record["failures"][0]["lowest_power"] == 1


@pytest.mark.parametrize("n", [2, 3, 4, 5, 6])
def test_projective_space_relation_at_every_point(n):
    # ∏_j (1 − X/T_j) = q in QK_T(P^{n−1}) ("Quantum K-theory of Grassmannians",
    # Duke Math. J. 156 (2011)); X = λ_1(S_1) = the class of O(−1)
    N = 7
    bethe = lifted(f"P{n - 1}", order=N)
    p = bethe.spec.prime
    q = ps.on_line(bethe.spec.q_line[0], p)
    for point in bethe.points:
        x = point.roots[0][0]
        product = ps.product([1 - x * pow(t, -1, p) for t in bethe.spec.T], N, p)
        assert ps.valuation(product - q, N) is None


@pytest.mark.parametrize("case", ["Fl(3)", "Fl(4)"])
def test_toda_relations_hold(case):
    # finite-difference Toda presentation (Invent. Math. 151 (2003); arXiv:1711.08414);
    # docs/mathematics.md §2.4 marks its index convention as recalled — confirmed here at the points
    bethe = lifted(case, order=6)
    assert points.check_holds_family(toda.FAMILY, bethe.flag, bethe).holds


def test_a_unit_vanishing_at_a_fixed_point_is_reported():
    flag = parse_flag("P1")
    bethe = lifted(flag, order=3)
    T1 = bethe.spec.T[0]
    unit_at_T1 = Family("vanishing-unit", "whitney with S1_1 − T1 declared a unit",
                        whitney.generators, whitney.relations,
                        units=lambda f, ring: [ring.gen["S1_1"] - ring.T[0]])
    result = points.check_holds_family(unit_at_T1, flag, bethe)
    assert not result.holds and not result.failures
    assert [u.fixed_point for u in result.unit_failures] == [((1,),)]
    assert T1 == bethe.spec.T[0]


def test_points_and_presentation_must_share_the_specialisation():
    bethe = lifted("P2", order=3, seed=1)
    other = line_spec(bethe.flag, seed=2)
    with pytest.raises(ValueError, match="weights"):
        points.check_holds(build_series(whitney.FAMILY, bethe.flag, other), bethe)


def test_generators_that_do_not_separate_points_are_flagged():
    # λ_1(S_2) alone cannot tell {1} ⊂ {1,2} from {2} ⊂ {1,2} in Fl(3)
    flag = parse_flag("Fl(3)")
    bethe = lifted(flag, order=3)
    partial = Family("S2-only", "λ_1(S_2) alone", lambda f: [Generator("E", lambda_S(2, 1), 1)],
                     lambda f, ring: [])
    result = points.check_holds_family(partial, flag, bethe)
    assert result.holds and not result.separates
    with_level_1 = dataclasses.replace(partial, generators=lambda f: [
        Generator("E", lambda_S(2, 1), 1), Generator("F", lambda_S(1, 1), 1)])
    assert points.check_holds_family(with_level_1, flag, bethe).separates


# ---------------------------------------------------------------------------------------
# Command line

def test_points_json_contract():
    p, N = 1000003, 5
    result = run("points", "Fl(1,3;4)", "--weights", "3,5,7,11", "--q-line", "2,9",
                 "--prime", str(p), "--order", str(N), "--seed", "17", "--json")
    assert result.returncode == 0, result.stderr
    data = json.loads(result.stdout)
    assert {"case", "prime", "weights", "q_line", "order", "seed", "points"} <= set(data)
    assert data["case"] == "Fl(1,3;4)" and data["prime"] == p and data["order"] == N
    assert data["weights"] == [3, 5, 7, 11] and data["q_line"] == [2, 9] and data["seed"] == 17
    flag = parse_flag("Fl(1,3;4)")
    assert len(data["points"]) == flag.rank
    assert sorted(tuple(map(tuple, pt["fixed_point"])) for pt in data["points"]) == \
        sorted(flag.fixed_points())
    for pt in data["points"]:
        assert [len(level) for level in pt["roots"]] == [1, 3]
        for I, level in zip(pt["fixed_point"], pt["roots"]):
            assert I == sorted(I)
            assert [root[0] for root in level] == [data["weights"][j - 1] for j in I]
            for root in level:
                assert len(root) == N and all(isinstance(c, int) and 0 <= c < p for c in root)


def test_points_draws_and_records_weights_and_line():
    data = json.loads(run("points", "Gr(2;4)", "--order", "2", "--seed", "5", "--json").stdout)
    again = json.loads(run("points", "Gr(2;4)", "--order", "2", "--seed", "5", "--json").stdout)
    assert data == again and data["seed"] == 5
    assert len(data["weights"]) == 4 and len(set(data["weights"])) == 4 and len(data["q_line"]) == 1


def test_points_human_summary():
    result = run("points", "P2", "--order", "3", "--seed", "1")
    assert result.returncode == 0
    assert "Bethe points of P2: 3 = rank" in result.stdout and "seed 1" in result.stdout


@pytest.mark.parametrize("args, fragment", [
    (["P2", "--weights", "3,5"], "needs 3 weights"),
    (["P2", "--weights", "3,5,3"], "T_1 and T_3 are equal"),
    (["P2", "--weights", "3,5,104", "--prime", "101"], "T_1 and T_3 are equal"),
    (["P2", "--weights", "3,x,4"], "--weights"),
    (["P2", "--weights", "3,0,4"], "T_2"),
    (["P2", "--q-line", "1,2"], "--q-line"),
    (["P2", "--prime", "1000"], "1000"),
    (["P2", "--prime", "3"], "too small"),
    (["P2", "--order", "0"], "--order"),
    (["P2", "--order", "two"], "--order"),
    (["Fl(3;3)"], "Fl(3;3)"),
])
def test_points_bad_input_is_one_line_exit_2(args, fragment):
    result = run_in_process("points", *args)
    assert result.returncode == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert fragment in lines[0]


@pytest.mark.parametrize("case", ["P2", "Gr(2;5)", "Fl(4)", "Fl(1,3;5)", "Fl(2,3;5)"])
def test_scalar_first_jacobian_coefficient_matches_the_series_sweep(case):
    # the first Newton step builds J_1 from scalars; the general sweep must give the same
    flag = parse_flag(case)
    setup = lifting.make_setup(flag, line_spec(flag))
    for fixed_point in flag.fixed_points():
        roots, J1 = lifting._first_step(setup, fixed_point, lifting._initial_inverse(setup, fixed_point))
        _, from_series = lifting._sweep(setup, roots, 2, 2, [])
        assert from_series == [J1]
