"""Gröbner bases over F_p for python-flint `nmod_mpoly` polynomials.

All polynomials of one computation live in one `nmod_mpoly_ctx`; the context's ordering
('degrevlex', 'deglex' or 'lex') is the monomial order.  The algorithm is Buchberger's with
the sugar selection strategy and the Gebauer–Möller criteria.  Linear relations are solved
first and their leading variables dropped from the ring (`_reduced_basis`).  Every
reduction is FLINT's division by the whole current basis (compare/ideal_division.py); where
that routine cannot be reached, FLINT's single-divisor division `f % g` — whose remainder
has no term divisible by LM(g), checked in tests/test_groebner.py — is repeated, steered by
a lookup of which element divides which monomial.  DEVELOPERS.md records where the time
goes and what was tried.

Exponent vectors are plain tuples; `order_key` turns one into a Python sort key that agrees
with the context's ordering, so the pair queue and the output sorting can be done in Python
without building polynomials.
"""
from __future__ import annotations

import contextlib
import heapq
import itertools
import operator
import time
from dataclasses import dataclass, field
from typing import Callable, Dict, Iterator, List, Optional, Sequence, Tuple

from ringmatch.compare import ideal_division
from ringmatch.errors import ResourceError, RingmatchError

Monomial = Tuple[int, ...]


class NotZeroDimensional(RingmatchError, ValueError):
    """The quotient ring is infinite-dimensional: some variable has no pure power among
    the leading monomials."""


class LimitExceeded(ResourceError, ValueError):
    """More standard monomials than the caller allowed."""


class BudgetExceeded(ResourceError):
    """A Gröbner basis was still running when the caller's time budget ran out."""


# A time budget for every Gröbner basis started inside `time_budget(...)`.  Module state
# rather than an argument because the budget covers whole stages of a check, many bases
# deep, and a basis cannot be resumed anyway: stopping early only saves the caller's time.
_deadline: Optional[float] = None


@contextlib.contextmanager
def time_budget(seconds: Optional[float]):
    """Within the block, Buchberger's loop raises BudgetExceeded once `seconds` of wall
    time have passed (None: no limit; nested budgets keep the earlier deadline)."""
    global _deadline
    saved = _deadline
    if seconds is not None:
        end = time.monotonic() + seconds
        _deadline = end if saved is None else min(saved, end)
    try:
        yield
    finally:
        _deadline = saved


# ---------------------------------------------------------------------------------------
# Monomials

def leading_monomial(f) -> Monomial:
    """Exponent vector of the leading term of f in its context's order."""
    if f.is_zero():
        raise ValueError("the zero polynomial has no leading monomial")
    return f.monomial(0)


def ordering_name(ctx) -> str:
    return ctx.ordering().value


def order_key(ordering: str) -> Callable[[Monomial], tuple]:
    """Sort key on exponent vectors that is increasing in the given monomial order."""
    if ordering == "lex":
        return tuple
    if ordering == "deglex":
        return lambda e: (sum(e), e)
    if ordering == "degrevlex":
        return lambda e: (sum(e), tuple(map(operator.neg, reversed(e))))
    raise ValueError(f"unsupported monomial ordering {ordering!r}")


# map() over operator functions: these run millions of times on small cases, where they
# cost more than the polynomial arithmetic.

def divides(a: Monomial, b: Monomial) -> bool:
    return all(map(operator.le, a, b))


def quotient(a: Monomial, b: Monomial) -> Monomial:
    return tuple(map(operator.sub, a, b))


# ---------------------------------------------------------------------------------------
# Reduction

def monic(f):
    lc = f.leading_coefficient()
    return f if int(lc) == 1 else f * (1 / lc)


def normal_form(f, basis: Sequence):
    """Fully reduced normal form of f with respect to `basis` (a Gröbner basis)."""
    return ideal_division.remainder(f, basis)


def normal_forms(polys: Sequence, basis: Sequence) -> List:
    """normal_form of each of `polys`, preparing the division by `basis` once."""
    divisors = ideal_division.Divisors([g for g in basis if not g.is_zero()])
    return [divisors.remainder(f) for f in polys]


def is_member(f, basis: Sequence) -> bool:
    """Whether f lies in the ideal of which `basis` is a Gröbner basis."""
    return normal_form(f, basis).is_zero()


# ---------------------------------------------------------------------------------------
# Buchberger with sugar and Gebauer–Möller

@dataclass(eq=False)
class _Pair:
    i: int
    j: int
    lcm: Monomial
    sugar: int
    alive: bool = True


@dataclass
class _State:
    key: Callable[[Monomial], tuple]
    polys: List = field(default_factory=list)   # every element ever added (monic)
    lms: List[Monomial] = field(default_factory=list)
    degrees: List[int] = field(default_factory=list)    # total degrees of the LMs
    excess: List[int] = field(default_factory=list)     # sugar minus degree of the LM
    active: List[int] = field(default_factory=list)     # indices whose LM no later LM divides
    pairs: List[_Pair] = field(default_factory=list)    # the live pairs, for the criteria
    queue: List = field(default_factory=list)   # heap of (sugar, lcm key, serial, pair)
    serial: Iterator[int] = field(default_factory=itertools.count)
    divisors: ideal_division.Divisors = field(default_factory=ideal_division.Divisors)
    tail_reduce: bool = True
    # the multipliers of S-polynomials, built once each: most recur (85–90% of them on
    # the Whitney ideals), and building a term costs more than the multiplication by it
    multipliers: Dict[Monomial, object] = field(default_factory=dict)


def _reduce(state: _State, f):
    """Fully reduced remainder of f by the basis so far.

    The elements are tried oldest first, superseded ones included: their leading
    monomials are the more specific ones, and on some lex examples leaving them out makes
    intermediate elements grow without bound (tests/test_ideal_division.py)."""
    return state.divisors.remainder(f)


def _add_to_basis(state: _State, h, sugar: int) -> None:
    """Gebauer–Möller update (Becker–Weispfenning, Gröbner Bases, 1993, §5.5).

    Divisibility and lcm are written out inline (all(map(le, …)), tuple(map(max, …)))
    rather than as calls: on small cases this bookkeeping costs as much as the
    polynomial arithmetic, and a function call adds about a fifth to each test."""
    le = operator.le
    k = len(state.polys)
    lm_h = leading_monomial(h)
    degree_h = sum(lm_h)
    lms, degrees, excess = state.lms, state.degrees, state.excess
    state.polys.append(h)
    lms.append(lm_h)
    degrees.append(degree_h)
    excess.append(sugar - degree_h)
    state.divisors.append(h)

    # Criteria M and F: a new pair goes if another new pair's lcm divides its lcm.  Taken
    # by increasing degree, a pair need only be compared with the pairs kept so far (a
    # discarded pair's lcm is a multiple of a kept one).  Pairs with coprime LMs (lcm of
    # degree deg LM(g) + deg LM(h)) come first among equals, so that they rather than a
    # pair that needs reducing survive a tie, and are dropped after the comparison
    # (Buchberger's product criterion).
    candidates = []
    for g in state.active:
        l = tuple(map(max, lm_h, lms[g]))
        d = sum(l)
        candidates.append((d, d != degree_h + degrees[g], g, l))
    candidates.sort()
    kept_lcms: List[Monomial] = []
    new_pairs = []
    for d, shares_a_variable, g, l in candidates:
        if any(all(map(le, l2, l)) for l2 in kept_lcms):
            continue
        kept_lcms.append(l)
        if shares_a_variable:
            new_pairs.append(_Pair(g, k, l, max(excess[g], excess[k]) + d))

    # Criterion B: an old pair goes if LM(h) divides its lcm strictly from both sides.
    kept_pairs = []
    for p in state.pairs:
        if not p.alive:         # already treated
            continue
        if (all(map(le, lm_h, p.lcm)) and tuple(map(max, lms[p.i], lm_h)) != p.lcm
                and tuple(map(max, lm_h, lms[p.j])) != p.lcm):
            p.alive = False     # left in the heap; skipped when popped
        else:
            kept_pairs.append(p)
    state.pairs = kept_pairs + new_pairs
    for p in new_pairs:
        heapq.heappush(state.queue, (p.sugar, state.key(p.lcm), next(state.serial), p))
    state.active = [g for g in state.active if not all(map(le, lm_h, lms[g]))] + [k]
    if state.tail_reduce:
        # Keep the older elements' tails reduced by h (LM(h) divides none of their LMs, so
        # only tails change): with one division per divisor, shorter divisors make every
        # later reduction cheaper (measured; with FLINT's division by the whole list it
        # costs more than it saves).  The degrees in each variable rule out most older
        # elements first, since a division costs a pass over the dividend.
        for a in state.active[:-1]:
            if divides(lm_h, state.polys[a].degrees()):
                state.polys[a] = state.polys[a] % h
                state.divisors.replace(a, state.polys[a])


def _s_polynomial(state: _State, pair: _Pair):
    return (_multiplier(state, quotient(pair.lcm, state.lms[pair.i])) * state.polys[pair.i]
            - _multiplier(state, quotient(pair.lcm, state.lms[pair.j])) * state.polys[pair.j])


def _multiplier(state: _State, e: Monomial):
    term = state.multipliers.get(e)
    if term is None:
        term = state.multipliers[e] = state.polys[0].context().term(1, e)
    return term


def _select(state: _State) -> Optional[_Pair]:
    """The live pair of least sugar, ties broken by the smaller lcm; None when done."""
    while state.queue:
        pair = heapq.heappop(state.queue)[-1]
        if pair.alive:
            pair.alive = False
            return pair
    return None


def _buchberger(polys: List, key: Callable[[Monomial], tuple]
                ) -> List[Tuple[Monomial, object]]:
    """A minimal, not yet reduced, Gröbner basis of the nonzero, monic input, as pairs
    (leading monomial, element).

    Minimal because every element enters fully reduced by the ones before it (so no
    earlier LM divides its LM) and `active` drops the elements whose LM it divides."""
    state = _State(key, tail_reduce=not ideal_division.available(polys[0].context()))
    for f in sorted(polys, key=lambda f: key(leading_monomial(f))):
        h = _reduce(state, f)
        if not h.is_zero():
            _add_to_basis(state, monic(h), f.total_degree())
    deadline = _deadline
    while True:
        pair = _select(state)
        if pair is None:
            break
        if deadline is not None and time.monotonic() > deadline:
            raise BudgetExceeded("the time budget ran out during a Gröbner basis")
        h = _reduce(state, _s_polynomial(state, pair))
        if h.is_zero():
            continue
        if h.is_constant():
            one = h.context().constant(1)
            return [(leading_monomial(one), one)]
        _add_to_basis(state, monic(h), pair.sugar)
    return [(state.lms[a], state.polys[a]) for a in state.active]


def _inter_reduce(basis: List[Tuple[Monomial, object]], key) -> List:
    """The reduced Gröbner basis from a minimal one given as (leading monomial, element).

    In ascending order of leading monomials, element t needs dividing by the elements
    before it only: a tail term is below LM(g_t), so an LM dividing it is below LM(g_t)
    too.  The remainder keeps LM(g_t), which no other LM of a minimal basis divides, and no
    other term of it is divisible by any LM: it is the reduced basis element."""
    minimal = [g for _, g in sorted(basis, key=lambda pair: key(pair[0]))]
    divisors = ideal_division.Divisors(minimal)
    return [monic(divisors.remainder(g, first=t)) for t, g in enumerate(minimal)]


def groebner_basis(polys: Sequence) -> List:
    """Reduced Gröbner basis of the ideal generated by `polys`, in their context's order.

    Monic, inter-reduced, sorted by leading monomial ascending; [] for the zero ideal and
    [1] for the unit ideal."""
    nonzero = [f for f in polys if not f.is_zero()]
    if not nonzero:
        return []
    ctx = nonzero[0].context()
    for f in nonzero:
        if f.context() is not ctx:
            raise ValueError("all polynomials must belong to the same nmod_mpoly context")
    if any(f.is_constant() for f in nonzero):
        return [ctx.constant(1)]
    return _reduced_basis([monic(f) for f in nonzero])


def _reduced_basis(polys: List) -> List:
    """groebner_basis for nonzero, nonconstant, monic input.

    Linear relations are solved first and their leading variables removed from the ring:
    every later division then moves shorter exponent vectors (Fl(6) has 20 variables, 5
    of them fixed by linear relations).  For the orders used here the restriction of the
    order to the remaining variables is the same kind of order, the leading monomial of a
    linear polynomial is its largest variable, and with E the reduced echelon form of the
    linear relations and H the reduced basis of the rest (rewritten without E's leading
    variables), E ∪ H is a Gröbner basis: pairs within E or within H reduce to zero by
    construction and pairs across have coprime leading monomials."""
    ctx = polys[0].context()
    key = order_key(ordering_name(ctx))
    linear = [f for f in polys if f.total_degree() == 1]
    if not linear:
        return _buchberger_reduced(polys, key)
    echelon = _buchberger_reduced(linear, key)
    if echelon[0].is_constant():
        return echelon
    pivots = [leading_monomial(e).index(1) for e in echelon]
    by_echelon = ideal_division.Divisors(echelon)
    rest = [by_echelon.remainder(f) for f in polys if f.total_degree() != 1]
    rest = [f for f in rest if not f.is_zero()]
    if any(f.is_constant() for f in rest):
        return [ctx.constant(1)]
    if not rest:
        return echelon
    smaller = ctx.drop_gens(pivots)
    # compose() with the generators is project_to_context() without its lookup of names,
    # at half the cost; the pivots no longer occur in `rest`, so they may go to 0
    kept = [v for v in range(ctx.nvars()) if v not in pivots]
    down = [smaller.constant(0)] * ctx.nvars()
    for w, v in enumerate(kept):
        down[v] = smaller.gen(w)
    inner = _reduced_basis([monic(f.compose(*down, ctx=smaller)) for f in rest])
    if inner[0].is_constant():
        return [ctx.constant(1)]
    up = [ctx.gen(v) for v in kept]
    inner = [g.compose(*up, ctx=ctx) for g in inner]
    by_inner = ideal_division.Divisors(inner)
    echelon = [monic(by_inner.remainder(e)) for e in echelon]
    return sorted(inner + echelon, key=lambda f: key(leading_monomial(f)))


def _buchberger_reduced(polys: List, key) -> List:
    basis = _buchberger(polys, key)
    if len(basis) == 1 and basis[0][1].is_constant():
        return [basis[0][1]]
    return _inter_reduce(basis, key)


# ---------------------------------------------------------------------------------------
# The quotient ring

def _leading_monomials(basis: Sequence) -> List[Monomial]:
    return [leading_monomial(g) for g in basis if not g.is_zero()]


def _nvars(basis: Sequence) -> int:
    return basis[0].context().nvars()


def _pure_power_bounds(lms: Sequence[Monomial], nvars: int) -> List[Optional[int]]:
    """For each variable, the smallest exponent a with x^a among the leading monomials."""
    bounds: List[Optional[int]] = [None] * nvars
    for e in lms:
        support = [v for v, x in enumerate(e) if x]
        if len(support) == 1:
            v = support[0]
            bounds[v] = e[v] if bounds[v] is None else min(bounds[v], e[v])
    return bounds


def _is_unit_ideal(basis: Sequence) -> bool:
    return any(g.is_constant() and not g.is_zero() for g in basis)


def is_zero_dimensional(basis: Sequence) -> bool:
    """Whether the quotient by the ideal of the Gröbner basis `basis` is finite-dimensional
    (every variable has a pure power among the leading monomials; true for the unit ideal)."""
    basis = [g for g in basis if not g.is_zero()]
    if not basis:
        return False
    if _is_unit_ideal(basis):
        return True
    return all(b is not None for b in _pure_power_bounds(_leading_monomials(basis), _nvars(basis)))


def standard_monomials(basis: Sequence, limit: Optional[int] = None) -> List[Monomial]:
    """Exponent vectors of the monomials not divisible by any leading monomial, in
    ascending order.  Raises NotZeroDimensional if there are infinitely many, LimitExceeded
    if more than `limit`."""
    basis = [g for g in basis if not g.is_zero()]
    if not basis:
        raise NotZeroDimensional("the zero ideal has an infinite-dimensional quotient")
    if _is_unit_ideal(basis):
        return []
    lms = _leading_monomials(basis)
    nvars = _nvars(basis)
    bounds = _pure_power_bounds(lms, nvars)
    if any(b is None for b in bounds):
        missing = [basis[0].context().name(v) for v, b in enumerate(bounds) if b is None]
        raise NotZeroDimensional(f"no pure power of {', '.join(missing)} among leading monomials")
    found: List[Monomial] = []

    def extend(prefix: Tuple[int, ...]) -> None:
        # depth-first over exponent vectors; every prefix of a standard monomial (padded
        # with zeros) is standard, so a divisible prefix prunes its whole subtree
        v = len(prefix)
        if v == nvars:
            found.append(prefix)
            if limit is not None and len(found) > limit:
                raise LimitExceeded(f"more than {limit} standard monomials")
            return
        for a in range(bounds[v]):
            candidate = prefix + (a,)
            padded = candidate + (0,) * (nvars - v - 1)
            if any(divides(e, padded) for e in lms):
                break
            extend(candidate)

    extend(())
    key = order_key(ordering_name(basis[0].context()))
    return sorted(found, key=key)


def _count_outside(generators: frozenset, bounds: Tuple[int, ...],
                   memo: Dict) -> int:
    """Number of monomials in len(bounds) variables, exponent v below bounds[v], that are
    not multiples of any monomial in `generators` (tuples of the same length).

    Splits on the last variable: a monomial with last exponent a avoids the ideal iff its
    other exponents avoid the generators whose last exponent is at most a."""
    if any(all(x == 0 for x in g) for g in generators):
        return 0
    if not bounds:
        return 1
    state = (generators, bounds)
    if state in memo:
        return memo[state]
    total = 0
    for a in range(bounds[-1]):
        below = frozenset(g[:-1] for g in generators if g[-1] <= a)
        total += _count_outside(_minimal(below), bounds[:-1], memo)
    memo[state] = total
    return total


def _minimal(monomials: frozenset) -> frozenset:
    items = sorted(monomials, key=sum)
    kept: List[Monomial] = []
    for e in items:
        if not any(divides(k, e) for k in kept):
            kept.append(e)
    return frozenset(kept)


def colength(basis: Sequence) -> Optional[int]:
    """Dimension over F_p of the quotient by the ideal of the Gröbner basis `basis`; None
    when it is infinite.  Counted by splitting on variables, not by listing monomials."""
    basis = [g for g in basis if not g.is_zero()]
    if not basis:
        return None
    if _is_unit_ideal(basis):
        return 0
    lms = _leading_monomials(basis)
    bounds = _pure_power_bounds(lms, _nvars(basis))
    if any(b is None for b in bounds):
        return None
    return _count_outside(_minimal(frozenset(lms)), tuple(bounds), {})
