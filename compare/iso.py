"""Explicit isomorphisms between two presentations of one ring, in closed form.

Given a source presentation A and a target presentation B of QK_T(Fl), find every generator
of B as a polynomial in the generators of A with coefficients exact in the parameters (the
"map"), and every generator of A in those of B (the "inverse"), then prove at a fresh
specialisation that the two substitutions are mutually inverse ring isomorphisms.

This module holds the entry point `find_isomorphism`; the phases below live in
compare/iso_search.py (search), compare/iso_interpolate.py (exact coefficients, with
compare/reconstruct.py) and compare/iso_verify.py (verification), their records in
compare/iso_records.py.

**Search (at the Bethe points).**  Both presentations are evaluated at the same lifted Bethe
points (compare/points.py) through the meanings of their generators, so the points of A and
of B are matched by their fixed-point labels.  The ring is the ring of functions on these
rank-many points, so "b = Σ_m c_m·m(a)" is a linear system with one equation per point and
unknowns in F_p[[s]].  Candidate monomials m are taken in order of total degree (up to
`max_degree`, by default up to the degree where the monomials span all functions on the points
at q = 0).  For each target generator the search looks, at the lowest degree where it is
reachable, for the *sparsest* support first (all supports of up to `max_terms` monomials,
within `search_budget` candidate sets; the human reader wants λ_j(Q_i) = w_{i,j}, not one of its
many equivalent forms), and falls back to the greedy basis of standard monomials at that
degree (the normal form; Buchberger–Möller order).  A support is only accepted when its
value columns are independent at s = 0 (so the coefficients are power series in q, with no
pole at q = 0), the equations at *all* points hold mod s^N, and every coefficient along the
line is a quotient num(s)/∏(1 − c_i s)^{E_i} of small degrees (Padé).  When no support within
the bounds works, the answer is "no isomorphism within bounds" — not an error.

**Exact coefficients.**  The coefficients do not depend on how the points are labelled, so
they are symmetric in T (permuting the weights permutes the points), and scaling all weights
by t scales every class by t^degree with q fixed (the Bethe equations are homogeneous of
degree 0 in T and the Chern roots), so a coefficient of m in b is homogeneous of degree
deg b − deg m in T.  The ansatz is therefore

    c = Σ_{α,β} a_{α,β} e(T)^α q^β / (e_n(T)^E ∏_i (1 − q_i)^{E_i}),   Σ_i i·α_i = deg b − deg m + nE,

with E_i and the q-degree read off the Padé form on the first line, and E the least value
from E_min (making the degree non-negative) to E_min + `t_pole_extra` whose equations are
consistent.  Each sample is a fresh random point (T, line q_i = c_i s) mod p; the coefficient
of s^t gives one linear equation Σ_{|β|=t} a_{α,β} e(T)^α c^β per sample, so several lines
with random directions separate the q-monomials (one line only sees one direction).  Every
system has `SLACK` more samples than unknowns and must be consistent.  The unknowns mod p are
lifted to Q by Chinese remaindering over several primes and rational-number reconstruction,
accepted once the reconstruction from k primes predicts the residues mod prime k+1.

**Verification (fresh prime, seed and specialisation, never used above).**
  * points: the reconstructed formulas evaluated at fresh Bethe points equal the target
    generators' values mod s^N at every point, both directions;
  * Gröbner: at fresh residues for T and q, with every declared unit inverted by its own
    variable, (1) every relation of B, with B's generators replaced by their formulas, has
    normal form 0 w.r.t. A's Gröbner basis, and B's units become units of A (the ideal they
    generate with A's is the unit ideal) — so the map is a well-defined ring homomorphism —
    and the same from A to B; (2) both round trips a ↦ a(b(a)) and b ↦ b(a(b)) are the
    identity modulo the ideals — so the two homomorphisms are mutually inverse.
  The verdict "verified" needs both; it is a probabilistic statement (one random
  specialisation per check), recorded with everything needed to repeat it.  When the points
  pass but the Gröbner check fails, the map found is the only one compatible with the
  generators' values at the matched points (the solution on each support is unique), so the
  answer is "none within bounds" and the failing relations are named.

Samples after the first are lifted only to the order their coefficients need (numerator
degree + pole orders + a few checking coefficients), which is what makes them cheap.
Above rank `GROEBNER_RANK_LIMIT` the Gröbner check is skipped: such a map is reported
"found" but not "verified" (it still has to pass the fresh points).

Limits, stated in every answer they produce: coefficients must be power series in q along
the line (supports whose columns are dependent at q = 0 are skipped) of the form
num/∏(1 − q_i)^{E_i}; a generator whose values are not symmetric under permuting the weights
(a Chern root x_a(S_i), labelled by the order of the weights, is an algebraic function of q,
not a rational one) therefore has no formula of this form, and the search says "none within
bounds" for it.  Non-equivariant cases (T_j = 1) are out of reach: the fixed points collide
and there are no points to evaluate at.
"""
from __future__ import annotations

import random
import time
from typing import List, Optional, Sequence

from ringmatch.errors import InputError
from ringmatch.presentations.flagtype import FlagType
from ringmatch.presentations.interface import Family, Generator, PresentationError
from ringmatch.presentations.meanings import meaning_problem

from . import algebra, lifting
from .iso_interpolate import reconstruct_directions
from .iso_records import Bounds, Direction, IsoResult
from .iso_search import PADE_SLACK, SearchData, lift_line, meaning_degree, point_values, \
    search_direction
from .iso_verify import verify_at_points, verify_by_groebner

GROEBNER_RANK_LIMIT = 150


class IsoInputError(InputError):
    """The request cannot be run as asked (reported to the user in one line)."""


# ---------------------------------------------------------------------------------------
# The whole search

def _prime_sequence(prime: int, count: int, families, flag: FlagType) -> List[int]:
    """Distinct primes from `prime` down, none dividing an integer written in either
    presentation (engine.usable_primes)."""
    from .engine import usable_primes
    return usable_primes(prime, count, families, flag)[0]


def find_isomorphism(flag: FlagType, source: Family, target: Family, *,
                     bounds: Bounds = Bounds(), seed: Optional[int] = None,
                     prime: int = algebra.DEFAULT_PRIME) -> IsoResult:
    """Search, reconstruct and verify an isomorphism between two presentations of one case.

    Raises PresentationError when a family has nothing for the flag type and IsoInputError
    for bounds that cannot work; every mathematical outcome is a result."""
    if source.name == target.name:
        raise IsoInputError(f"source and target are the same presentation {source.name!r}")
    generators = (_generators(source, flag), _generators(target, flag))
    if bounds.order < 2 * PADE_SLACK + 2:
        raise IsoInputError(f"order {bounds.order} is too small; at least {2 * PADE_SLACK + 2}")
    if seed is None:
        seed = random.SystemRandom().randrange(2**32)
    forward = Direction(source.name, target.name, tuple(g.name for g in generators[0]),
                        tuple(g.name for g in generators[1]))
    backward = Direction(target.name, source.name, forward.target_generators,
                         forward.source_generators)
    primes = _prime_sequence(prime, bounds.max_primes + 2, (source, target), flag)
    certificate = {"seed": seed, "search": {}, "kind": "probabilistic"}
    result = IsoResult(flag.name, source.name, target.name, False, False, "inconclusive", "",
                       forward, backward, bounds.record(), certificate)
    try:
        _search_reconstruct_verify(result, flag, (source, target), generators, bounds, seed,
                                   primes)
    except lifting.LiftError as error:
        result.found = result.verified = False
        result.status = "inconclusive"
        result.reason = f"inconclusive: the Bethe points could not be lifted: {error}"
    return result


def _search_reconstruct_verify(result: IsoResult, flag: FlagType, families, generators,
                               bounds: Bounds, seed: int, primes: Sequence[int]) -> None:
    source, target = families
    directions = (result.forward, result.backward)
    certificate = result.certificate
    clock = time.process_time()
    first = lift_line(flag, bounds.order, seed, primes[0])
    certificate["search"] = {"prime": primes[0], "seed": first.spec.seed,
                             "weights": list(first.spec.T), "q_line": list(first.spec.q_line),
                             "order": bounds.order}
    values = [point_values(first, generators[0]), point_values(first, generators[1])]
    degrees = [tuple(meaning_degree(g.meaning) for g in gens) for gens in generators]
    for d, direction in enumerate(directions):
        data = SearchData(values[d], values[1 - d], degrees[d], degrees[1 - d],
                           tuple(first.spec.q_line), bounds.order, primes[0])
        search_direction(direction, data, bounds)
        if direction.failure:
            result.status = "none within bounds"
            result.reason = (f"no isomorphism within bounds ({_bounds_text(bounds, direction)}): "
                             f"{direction.failure}")
            return

    clock = _lap(result, "search", clock)
    reason = reconstruct_directions(flag, generators, directions, bounds, seed, primes[:-1],
                                    certificate)
    clock = _lap(result, "reconstruction", clock)
    if reason:
        result.reason = "inconclusive: a map exists mod p, but its exact coefficients were not " \
                        "reconstructed: " + reason
        return

    fresh_prime = primes[-1]
    fresh_seed = (seed + 104729) % 2**32
    at_points = verify_at_points(flag, generators, directions, bounds.order, fresh_seed,
                                 fresh_prime)
    result.checks.append(at_points)
    clock = _lap(result, "verification at points", clock)
    if not at_points["passed"]:
        result.reason = "inconclusive: the reconstructed formulas fail at fresh Bethe points (" + \
                        at_points["detail"] + ")"
        return
    if flag.rank > GROEBNER_RANK_LIMIT:
        result.found, result.status = True, "found"
        result.reason = (f"found; the ring isomorphism is not verified: rank {flag.rank} is above "
                         f"the Gröbner limit {GROEBNER_RANK_LIMIT} (the formulas do hold at fresh "
                         "Bethe points)")
        return
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=fresh_seed, prime=fresh_prime)
    algebraic = verify_by_groebner(flag, (source, target), directions, spec)
    result.checks.append(algebraic)
    _lap(result, "verification by Gröbner bases", clock)
    if algebraic["passed"] is None:
        result.found, result.status = True, "found"
        result.reason = "found; verification inconclusive: " + algebraic["detail"]
    elif algebraic["passed"]:
        result.found = result.verified = True
        result.status = "found"
        result.reason = "found and verified: " + algebraic["detail"]
    else:
        result.status = "none within bounds"
        result.reason = ("no isomorphism within bounds: the only map compatible with the "
                         "generators' values at the Bethe points is not a ring isomorphism of "
                         "the presentations: " + algebraic["detail"])


def _lap(result: IsoResult, phase: str, since: float) -> float:
    now = time.process_time()
    result.timings[phase] = now - since
    return now


def _bounds_text(bounds: Bounds, direction: Direction) -> str:
    degree = bounds.max_degree if bounds.max_degree is not None else direction.searched_degree
    return f"{direction.target} in {direction.source}, monomials of degree ≤ {degree}, order s^{bounds.order}"


def _generators(family: Family, flag: FlagType) -> List[Generator]:
    reason = family.unsupported(flag)
    if reason:
        raise PresentationError(f"{family.name} has no presentation for {flag.name}: {reason}")
    gens = family.generators(flag)
    for g in gens:
        problem = meaning_problem(g.meaning, flag)
        if problem:
            raise IsoInputError(f"{family.name}: generator {g.name}: {problem}")
    return gens
