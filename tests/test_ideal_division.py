"""Division by several polynomials at once (compare/ideal_division.py).

Two implementations must agree: FLINT's own division by a list, reached through ctypes, and
python-flint's division by one polynomial repeated.  Both are checked against normal forms
worked by hand and against SymPy's `reduced` (an independent implementation) modulo
Gröbner bases, where the fully reduced remainder is unique; whole Gröbner bases computed
through either must be the same.
"""
from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import flint
import pytest
import sympy
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ringmatch.compare import algebra, groebner, ideal_division
from ringmatch.presentations import whitney
from ringmatch.presentations.flagtype import parse_flag
from ringmatch.presentations.interface import build_specialised

from conftest import examples

ROOT = Path(__file__).resolve().parent.parent
P = algebra.DEFAULT_PRIME


def context(names=("x", "y", "z"), modulus=P, ordering="degrevlex"):
    return flint.nmod_mpoly_ctx.get(names, modulus=modulus, ordering=ordering)


def test_flint_routine_is_used_with_python_flint_0_9():
    # The layout checks are written against python-flint 0.9.x, and pyproject.toml allows
    # nothing newer: on 0.9.x the fast division must be in use, since falling back to the
    # repeated `%` silently costs three to five times on the large cases.  Older releases
    # (allowed, never checked) take the slower path by design.
    if os.environ.get(ideal_division.DISABLE_VARIABLE):
        pytest.skip(f"{ideal_division.DISABLE_VARIABLE} is set: the slower path was asked for")
    if not flint.__version__.startswith("0.9."):
        pytest.skip(f"python-flint {flint.__version__}: the layout is checked against 0.9.x only")
    divisors = ideal_division.Divisors([context().gen(0)])
    assert divisors.native, ("python-flint " + flint.__version__ + ": FLINT's division is not "
                             "in use: " + ideal_division.description(context()))


@pytest.fixture(params=["through FLINT", "repeated division"])
def division_path(request, monkeypatch):
    """Run a test once through FLINT's routine and once with it switched off."""
    if request.param == "repeated division":
        monkeypatch.setattr(ideal_division, "_ROUTINE", None)
    elif not ideal_division.available(context()):
        pytest.skip(ideal_division.description(context()))
    return request.param


def test_normal_forms_by_hand(division_path):
    ctx = context()
    x, y, z = ctx.gens()
    # {x^2 − 1, y^2 − 3, z − 2} is a Gröbner basis (pairwise coprime leading monomials)
    basis = [x ** 2 - 1, y ** 2 - 3, z - 2]
    divisors = ideal_division.Divisors(basis)
    assert divisors.native == (division_path == "through FLINT")
    assert divisors.remainder(x ** 3 * y ** 3 + z ** 2) == 3 * x * y + 4
    assert divisors.remainder(x ** 2 * y ** 2 * z - 6) == 0
    assert divisors.remainder(ctx.constant(0)) == 0
    assert divisors.remainder(x + y) == x + y


def test_composite_modulus_is_an_error_not_a_crash():
    # FLINT's routine would abort the process on a non-invertible leading coefficient, so
    # it is never called modulo a composite; python-flint's own division refuses politely
    ctx = context(modulus=10)
    x, y, _ = ctx.gens()
    divisors = ideal_division.Divisors([x ** 2 - 1, y - 3])
    assert not divisors.native
    with pytest.raises(Exception, match="non-prime modulus"):
        divisors.remainder(x ** 3 + y ** 2)


def test_bad_divisors_are_errors():
    ctx, other = context(), context(("u", "v"))
    with pytest.raises(ValueError, match="zero polynomial"):
        ideal_division.Divisors([ctx.gen(0), ctx.constant(0)])
    with pytest.raises(ValueError, match="same nmod_mpoly context"):
        ideal_division.Divisors([ctx.gen(0), other.gen(0)])
    with pytest.raises(ValueError, match="same nmod_mpoly context"):
        ideal_division.Divisors([ctx.gen(0)]).remainder(other.gen(0) + 1)


def test_a_growing_list_of_divisors(division_path):
    ctx = context()
    x, y, z = ctx.gens()
    divisors = ideal_division.Divisors([x ** 2 - y])
    assert divisors.remainder(x ** 3) == x * y
    divisors.append(y ** 2 - 1)
    assert divisors.remainder(x ** 4) == 1
    divisors.replace(0, x ** 2 - y + z)          # same leading monomial, new tail
    assert divisors.remainder(x ** 2) == y - z
    with pytest.raises(ValueError, match="keep the leading monomial"):
        divisors.replace(1, z ** 3)


def test_division_by_the_first_divisors_only(division_path):
    ctx = context()
    x, y, z = ctx.gens()
    divisors = ideal_division.Divisors([x - 1, y - 2, z - 3])
    f = x * y * z + x + z
    assert divisors.remainder(f, first=3) == 6 + 1 + 3
    assert divisors.remainder(f, first=2) == 2 * z + 1 + z     # z is not reduced
    assert divisors.remainder(f, first=1) == y * z + 1 + z
    assert divisors.remainder(f, first=0) == f
    for bad in (-1, 4):
        with pytest.raises(ValueError, match=f"first {bad} of 3 divisors"):
            divisors.remainder(f, first=bad)


def test_a_list_longer_than_the_first_address_arrays(division_path):
    # the arrays FLINT reads start with room for a few divisors and grow; the remainders
    # must not notice: x_i − i for 30 variables, then one tail changed afterwards
    names = tuple(f"x{i}" for i in range(30))
    ctx = context(names)
    gens = ctx.gens()
    divisors = ideal_division.Divisors()
    for i, v in enumerate(gens):
        divisors.append(v - i)
        assert divisors.remainder(sum(gens[: i + 1], ctx.constant(0))) == i * (i + 1) // 2
    divisors.replace(17, gens[17] - 100)
    assert divisors.remainder(gens[17] * gens[29]) == 100 * 29


def test_environment_variable_turns_the_flint_routine_off():
    code = ("import flint; from ringmatch.compare import ideal_division as d; "
            "ctx = flint.nmod_mpoly_ctx.get(('x',), modulus=101, ordering='lex'); "
            "print(d.Divisors([ctx.gen(0)]).native)")
    env = dict(os.environ, **{ideal_division.DISABLE_VARIABLE: "1"})
    done = subprocess.run([sys.executable, "-c", code], cwd=ROOT, env=env, check=True,
                          capture_output=True, text=True)
    assert done.stdout.strip() == "False"


def random_poly(ctx, data, terms, degree):
    """Up to `terms` random terms of total degree at most `degree`."""
    exps = data.draw(st.lists(st.tuples(*[st.integers(0, degree)] * ctx.nvars()),
                              max_size=terms))
    exps = [e for e in exps if sum(e) <= degree]
    coeffs = data.draw(st.lists(st.integers(0, ctx.modulus() - 1),
                                min_size=len(exps), max_size=len(exps)))
    return ctx.from_dict(dict(zip(exps, coeffs))) if exps else ctx.constant(0)


def sympy_normal_form(f, basis, ctx, ordering):
    gens = sympy.symbols(ctx.names())
    p = ctx.modulus()

    def poly(g):
        terms = {m: int(c) for m, c in zip(g.monoms(), g.coeffs())}
        return sympy.Poly.from_dict(terms or {(0,) * len(gens): 0}, *gens, modulus=p)
    _, r = sympy.reduced(poly(f), [poly(g) for g in basis], *gens, modulus=p,
                         order={"degrevlex": "grevlex", "deglex": "grlex", "lex": "lex"}[ordering])
    return {m: int(c) % p for m, c in r.terms() if int(c) % p}


@settings(max_examples=examples(60), deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(["degrevlex", "deglex", "lex"]), st.data())
def test_both_divisions_give_sympys_normal_form_modulo_a_groebner_basis(ordering, data):
    ctx = context(modulus=32003, ordering=ordering)
    gens = ctx.gens()
    powers = [data.draw(st.integers(1, 3)) for _ in gens]
    polys = [g ** a + random_poly(ctx, data, 3, a - 1) for g, a in zip(gens, powers)]
    polys += [random_poly(ctx, data, 4, 3) for _ in range(data.draw(st.integers(0, 2)))]
    basis = groebner.groebner_basis(polys)
    f = random_poly(ctx, data, 8, 5)
    expected = sympy_normal_form(f, basis, ctx, ordering)
    native = ideal_division.Divisors(basis).remainder(f)
    saved = ideal_division._ROUTINE
    ideal_division._ROUTINE = None
    try:
        pure = ideal_division.Divisors(basis).remainder(f)
    finally:
        ideal_division._ROUTINE = saved
    for r in (native, pure):
        assert {m: int(c) for m, c in zip(r.monoms(), r.coeffs())} == expected


def whitney_relations(case, plain=False):
    flag = parse_flag(case)
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=11, equivariant=not plain)
    return [r.poly for r in build_specialised(whitney.FAMILY, flag, spec,
                                               ordering="degrevlex").relations]


@pytest.mark.parametrize("case, plain", [("Gr(2,5)", False), ("Fl(1,3;5)", False),
                                         ("Fl(4)", True), ("Gr(3,6)", True), ("Fl(5)", False)])
def test_groebner_bases_do_not_depend_on_the_division(case, plain, monkeypatch):
    relations = whitney_relations(case, plain)
    through_flint = groebner.groebner_basis(relations)
    monkeypatch.setattr(ideal_division, "_ROUTINE", None)
    by_repeated_division = groebner.groebner_basis(relations)
    assert through_flint == by_repeated_division
    assert groebner.colength(through_flint) == parse_flag(case).rank


@settings(max_examples=examples(40), deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(["degrevlex", "deglex", "lex"]), st.data())
def test_random_groebner_bases_do_not_depend_on_the_division(ordering, data):
    # SymPy checks the bases of such ideals in tests/test_groebner.py (through FLINT's list
    # division); here the repeated single-divisor division must give the same bases
    ctx = context(("w", "x", "y", "z"), modulus=32003, ordering=ordering)
    powers = [data.draw(st.integers(1, 3)) for _ in ctx.gens()]
    polys = [g ** a + random_poly(ctx, data, 3, a - 1) for g, a in zip(ctx.gens(), powers)]
    polys += [random_poly(ctx, data, 4, 3) for _ in range(data.draw(st.integers(0, 2)))]
    through_flint = groebner.groebner_basis(polys)
    saved = ideal_division._ROUTINE
    ideal_division._ROUTINE = None
    try:
        by_repeated_division = groebner.groebner_basis(polys)
    finally:
        ideal_division._ROUTINE = saved
    assert through_flint == by_repeated_division


def test_lex_example_where_superseded_divisors_matter(monkeypatch):
    # found by a random search: dividing only by the elements whose leading monomials are
    # not multiples of newer ones made the intermediate elements grow past degree 3000
    # here (the run did not end); with every element, oldest first, both divisions finish
    # at once with the same basis (5 elements, the last a polynomial of degree 14 in z).
    # The leading monomials are those of SymPy's `groebner` on the same input (run once
    # when the example was found; it takes SymPy about 10 s, too long to repeat here).
    ctx = context(("w", "x", "y", "z"), modulus=32003, ordering="lex")
    w, x, y, z = ctx.gens()
    ideal = [8191 * w**2 * x * y + 15157 * w * x**2 + 1127 * w * x * y**2 + w,
             8595 * w * x * y * z**2 + x**3 + 11635 * x * z**2,
             4357 * w**2 * x * y**2 * z + y**2, 19101 * w * x**2 * y + z**2]
    through_flint = groebner.groebner_basis(ideal)
    assert [groebner.leading_monomial(g) for g in through_flint] == \
        [(0, 0, 0, 14), (0, 0, 2, 0), (0, 1, 0, 2), (0, 3, 0, 0), (1, 0, 0, 0)]
    assert all(groebner.is_member(f, through_flint) for f in ideal)
    monkeypatch.setattr(ideal_division, "_ROUTINE", None)
    assert groebner.groebner_basis(ideal) == through_flint


# A divisor list that overflowed an 8 MiB C stack inside FLINT's routine (issue: a sweep
# worker died of a segmentation fault on Fl(1,2,3;5)): 1200 divisors of 250 terms in 12
# variables, so that exponents take two words and FLINT puts two arrays per divisor on
# the stack.  Run in a child process: a crash must fail this test, not end pytest.
LONG_DIVISOR_LIST = """
import flint
from ringmatch.compare import ideal_division
n = 12
ctx = flint.nmod_mpoly_ctx.get([f"x{i}" for i in range(n)], modulus=4611686018427387847,
                               ordering="degrevlex")
x = ctx.gens()
divisors = []
for k in range(1200):
    lead = [0] * n
    lead[k % n], lead[(k // n) % n] = 6 + k // 144, 4
    terms = {tuple(lead): 1}
    for t in range(600):
        e = [0] * n
        e[t % n] += 1
        e[(t // n) % n] += 1
        e[(t * 7 + k) % n] += 1 + t // 144
        terms[tuple(e)] = t + 1
    divisors.append(ctx.from_dict(dict(list(terms.items())[:250])))
divisors.append(x[n - 1] - 1)
print(ideal_division.stack_bytes([len(g) for g in divisors]))
print(ideal_division.Divisors(divisors).remainder(x[0] + 3 * x[n - 1]))
"""


@pytest.mark.slow   # builds 250-term divisors in a fresh interpreter, both ways: ~6 s each
@pytest.mark.parametrize("pure", [False, True])
def test_a_divisor_list_that_overflowed_the_stack(pure):
    env = dict(os.environ)
    env.pop(ideal_division.DISABLE_VARIABLE, None)
    if pure:
        env[ideal_division.DISABLE_VARIABLE] = "1"
    done = subprocess.run([sys.executable, "-c", LONG_DIVISOR_LIST], cwd=ROOT, env=env,
                          capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, (done.returncode, done.stderr[-2000:])
    stack, remainder = done.stdout.split("\n")[:2]
    assert int(stack) > 8 << 20          # more than the usual main-thread stack
    assert remainder == "x0 + 3"


def test_stack_estimate_grows_with_the_divisors():
    assert ideal_division.stack_bytes([3] * 10) < ideal_division._DIRECT_STACK
    short, long = ideal_division.stack_bytes([250] * 100), ideal_division.stack_bytes([250] * 200)
    assert long - short >= 100 * 250 * 40       # two arrays of 4 + 1 words per term
    # beyond 8 KiB an array comes from the heap: the stack share of one divisor is bounded
    assert ideal_division.stack_bytes([10**6]) - ideal_division.stack_bytes([10**5]) < 64


def test_the_routine_comes_from_the_flint_library_in_memory():
    if ideal_division._ROUTINE is None:
        pytest.skip(ideal_division.description(context()))
    path = ideal_division._loaded_flint_library()
    with open("/proc/self/maps") as maps:
        assert path in maps.read()
    assert os.path.basename(path).startswith("libflint")


def test_a_routine_that_crashes_on_its_first_call_is_not_used(monkeypatch):
    """A routine with another signature may crash: that happens in a child process."""
    if not hasattr(os, "fork"):
        pytest.skip("no fork on this platform")
    import ctypes
    monkeypatch.setattr(ideal_division, "_ROUTINE", ctypes.CDLL(None).abort)
    monkeypatch.setattr(ideal_division, "_FIRST_CALL", {})
    monkeypatch.setattr(ideal_division, "_LAYOUTS", {})
    ctx = context(names=("u", "v"))
    assert not ideal_division.available(ctx)          # and this process is still here
    assert ideal_division.Divisors([ctx.gen(0) - 1]).remainder(ctx.gen(0) ** 2) == 1


def test_no_addresses_are_read_outside_cpython(monkeypatch):
    monkeypatch.setattr(sys.implementation, "name", "pypy")
    assert ideal_division._load_routine() is None


def test_a_flint_of_another_version_is_not_used(monkeypatch):
    """The library in memory must be the FLINT python-flint reports (checked without a call)."""
    if ideal_division._loaded_flint_library() is None:
        pytest.skip("no FLINT library mapped into this process")
    monkeypatch.setattr(flint, "__FLINT_VERSION__", "0.0.0", raising=False)
    assert ideal_division._load_routine() is None


def test_the_routine_is_never_called_when_the_layout_does_not_check_out(monkeypatch):
    """What can be checked without calling the routine is checked first: with a layout that
    does not match, not even the child's first call is made."""
    calls = []
    monkeypatch.setattr(ideal_division, "_ROUTINE", lambda *args: calls.append(args))
    monkeypatch.setattr(ideal_division, "_LAYOUTS", {})
    monkeypatch.setattr(ideal_division, "_FIRST_CALL", {})
    monkeypatch.setattr(ideal_division, "_checked_layout", lambda ctx: None)
    monkeypatch.setattr(ideal_division, "_run_first_call_in_child",
                        lambda: calls.append("child") or True)
    ctx = context(names=("p", "r"))
    assert not ideal_division.available(ctx)
    assert calls == []
