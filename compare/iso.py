"""Explicit isomorphisms between two presentations of one ring, in closed form.

Given a source presentation A and a target presentation B of QK_T(Fl), find every generator
of B as a polynomial in the generators of A with coefficients exact in the parameters (the
"map"), and every generator of A in those of B (the "inverse"), then prove at a fresh
specialisation that the two substitutions are mutually inverse ring isomorphisms.

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
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Dict, List, Optional, Sequence, Tuple

import flint

from ringmatch.errors import InputError
from ringmatch.presentations.flagtype import FlagType
from ringmatch.presentations.interface import Family, Generator, PresentationError
from ringmatch.presentations.meanings import Meaning

from . import algebra, groebner, points, reconstruct
from . import series as ps
from .series import Series

SLACK = 3                 # extra samples beyond the unknowns of every interpolation system
PADE_SLACK = 2            # series coefficients a Padé form must explain beyond its degrees
GROEBNER_RANK_LIMIT = 150


class IsoInputError(InputError):
    """The request cannot be run as asked (reported to the user in one line)."""


@dataclass(frozen=True)
class Bounds:
    max_degree: Optional[int] = None   # None: up to the degree where the monomials span
    max_terms: int = 4                 # sparsest-support search: at most this many monomials
    search_budget: int = 20000         # candidate supports tried per generator
    order: int = 16                    # series order N: points mod s^N
    t_pole_extra: int = 1              # powers of 1/e_n(T) tried beyond the least possible
    max_primes: int = 4
    max_samples: int = 600

    def record(self) -> dict:
        return dict(self.__dict__)


@dataclass(frozen=True)
class ExactCoefficient:
    """Σ value·e(T)^α q^β / (e_n(T)^E ∏ (1 − q_i)^{E_i}); e(T) = (e_1(T), …, e_n(T))."""
    numerator: Tuple[Tuple[Tuple[int, ...], Tuple[int, ...], Fraction], ...]
    e_top_power: int
    q_poles: Tuple[int, ...]

    def height(self) -> int:
        return max((max(abs(v.numerator), v.denominator) for _, _, v in self.numerator),
                   default=0)


@dataclass(frozen=True)
class Term:
    monomial: Tuple[int, ...]          # exponents over the source generators
    coefficient: ExactCoefficient


@dataclass(frozen=True)
class GeneratorFormula:
    target: str
    terms: Tuple[Term, ...]
    how: str                           # "sparsest" or "normal form"


@dataclass(frozen=True)
class _Form:
    """How one coefficient looks along the first line."""
    t_degree: int                      # deg(target) − deg(monomial)
    q_degree: int                      # degree of the numerator in s
    q_poles: Tuple[int, ...]


@dataclass(frozen=True)
class _Support:
    target: str
    monomials: Tuple[Tuple[int, ...], ...]
    forms: Tuple[_Form, ...]
    how: str
    degree: int


@dataclass
class Direction:
    """One direction of the search: target generators in source generators."""
    source: str
    target: str
    source_generators: Tuple[str, ...]
    target_generators: Tuple[str, ...]
    supports: List[_Support] = field(default_factory=list)
    formulas: List[GeneratorFormula] = field(default_factory=list)
    failure: Optional[str] = None
    searched_degree: Optional[int] = None


@dataclass
class IsoResult:
    case: str
    source: str
    target: str
    found: bool
    verified: bool
    status: str                        # found | none within bounds | inconclusive
    reason: str
    forward: Direction                 # target generators in source generators (the map)
    backward: Direction                # source generators in target generators (the inverse)
    bounds: dict
    certificate: dict
    checks: List[dict] = field(default_factory=list)
    timings: Dict[str, float] = field(default_factory=dict)   # CPU seconds per phase


# ---------------------------------------------------------------------------------------
# Degrees and values

def meaning_degree(meaning: Meaning) -> int:
    """Degree under T → tT (every Chern root scales by t, q fixed): λ_j and e_j have degree j,
    L_i and Chern roots degree 1."""
    return 1 if meaning.kind in ("toda_L", "root") else meaning.index


def monomial_degree(exponents: Sequence[int], degrees: Sequence[int]) -> int:
    return sum(e * d for e, d in zip(exponents, degrees))


def _monomial_series(values: Sequence[Series], exponents: Sequence[int], order: int,
                     prime: int) -> Series:
    out = ps.constant(1, prime)
    for v, e in zip(values, exponents):
        for _ in range(e):
            out = out.mul_low(v, order)
    return out


def _columns(per_point: Sequence[Sequence[Series]], monomials: Sequence[Tuple[int, ...]],
             order: int, prime: int, cache: Dict) -> List[List[Series]]:
    """For every monomial, its values at every point (cached by exponent vector)."""
    out = []
    for e in monomials:
        if e not in cache:
            cache[e] = [_monomial_series(v, e, order, prime) for v in per_point]
        out.append(cache[e])
    return out


# ---------------------------------------------------------------------------------------
# Linear algebra over F_p[[s]]: series matrices as lists of coefficient matrices

def _coefficient_matrices(rows: Sequence[Sequence[Series]], order: int, prime: int) -> list:
    coefficients = [[ps.coefficients(x, order) for x in row] for row in rows]
    nrows, ncols = len(rows), len(rows[0])
    return [flint.nmod_mat(nrows, ncols, [c[t] for row in coefficients for c in row], prime)
            for t in range(order)]


def _series_solve(V: list, B: list, order: int) -> list:
    """C with V·C = B mod s^order; V[0] must be invertible."""
    inverse = V[0].inv()
    C = []
    for t in range(order):
        acc = B[t]
        for a in range(1, t + 1):
            acc = acc - V[a] * C[t - a]
        C.append(inverse * acc)
    return C


def _pivot_columns(matrix) -> List[int]:
    reduced, rank = matrix.rref()
    out = []
    for r in range(rank):
        out.append(next(c for c in range(matrix.ncols()) if reduced[r, c] != 0))
    return out


def _scalar_matrix(columns: Sequence[Sequence[int]], prime: int):
    """Points as rows, the given columns (lists of residues) side by side."""
    nrows = len(columns[0])
    return flint.nmod_mat(nrows, len(columns), [c[r] for r in range(nrows) for c in columns],
                          prime)


def solve_on_support(columns: Sequence[Sequence[Series]], target: Sequence[Series], order: int,
                     prime: int) -> Optional[List[Series]]:
    """Coefficients c (power series) with Σ_m c_m·column_m = target at every point mod
    s^order, or None: columns dependent at s = 0, or no such combination."""
    k = len(columns)
    if k == 0:
        return None if any(not t.is_zero() for t in target) else []
    at_zero = [[int(x[0]) for x in column] for column in columns]
    rows = _pivot_columns(_scalar_matrix(at_zero, prime).transpose())
    if len(rows) < k:
        return None
    V = _coefficient_matrices([[columns[c][r] for c in range(k)] for r in rows], order, prime)
    B = _coefficient_matrices([[target[r]] for r in rows], order, prime)
    C = _series_solve(V, B, order)
    coefficients = [flint.nmod_poly([int(C[t][c, 0]) for t in range(order)], prime)
                    for c in range(k)]
    for r in range(len(target)):
        total = ps.constant(0, prime)
        for c in range(k):
            total = total + coefficients[c].mul_low(columns[c][r], order)
        if total != target[r].truncate(order):
            return None
    return coefficients


def coefficient_form(series: Series, order: int, slopes: Sequence[int]) -> Optional[Tuple[int, Tuple[int, ...]]]:
    """(numerator degree, pole orders E_i) when the series is num(s)/∏(1 − c_i s)^{E_i}."""
    found = reconstruct.pade(series, order, PADE_SLACK)
    if found is None:
        return None
    num, den = found
    poles = reconstruct.line_pole_orders(den, slopes)
    if poles is None:
        return None
    return max(num.degree(), 0), poles


# ---------------------------------------------------------------------------------------
# Search at the first sample

@dataclass
class _SearchData:
    source_values: List[List[Series]]    # per point, per source generator
    target_values: List[List[Series]]    # per point, per target generator
    source_degrees: Tuple[int, ...]
    target_degrees: Tuple[int, ...]
    slopes: Tuple[int, ...]
    order: int
    prime: int
    cache: Dict = field(default_factory=dict)
    # candidate monomials in search order, grown one degree at a time and shared by targets
    pool: List[Tuple[int, ...]] = field(default_factory=list)
    pool_zero: List[List[int]] = field(default_factory=list)     # their values at s = 0
    degree_starts: List[int] = field(default_factory=list)
    ranks: List[int] = field(default_factory=list)                # rank of the pool up to each degree


def _monomials_of_degree(degree: int, variables: int) -> List[Tuple[int, ...]]:
    return sorted(reconstruct.exponents_of_degree(degree, variables), reverse=True)


def _grow_pool(data: _SearchData, degree: int) -> None:
    """Extend the pool by all monomials up to `degree`; each value at s = 0 is an earlier
    monomial's times one generator's."""
    p = data.prime
    generators = len(data.source_degrees)
    at_zero = [[int(x[0]) for x in point] for point in data.source_values]
    known = dict(zip(data.pool, data.pool_zero))
    while len(data.degree_starts) <= degree:
        d = len(data.degree_starts)
        data.degree_starts.append(len(data.pool))
        for e in _monomials_of_degree(d, generators):
            if d == 0:
                column = [1] * len(at_zero)
            else:
                g = next(i for i, a in enumerate(e) if a)
                parent = known[e[:g] + (e[g] - 1,) + e[g + 1:]]
                column = [x * point[g] % p for x, point in zip(parent, at_zero)]
            known[e] = column
            data.pool.append(e)
            data.pool_zero.append(column)
        data.ranks.append(_scalar_matrix(data.pool_zero, p).rank())


def _accept(data: _SearchData, monomials, target_index: int, how: str, degree: int
            ) -> Optional[_Support]:
    """A support whose coefficients exist, hold at every point and have the Padé form."""
    p, N = data.prime, data.order
    columns = _columns(data.source_values, monomials, N, p, data.cache)
    target = [point[target_index] for point in data.target_values]
    coefficients = solve_on_support(columns, target, N, p)
    if coefficients is None:
        return None
    kept_monomials, forms = [], []
    target_degree = data.target_degrees[target_index]
    for e, c in zip(monomials, coefficients):
        if c.is_zero():
            continue
        form = coefficient_form(c, N, data.slopes)
        if form is None:
            return None
        kept_monomials.append(e)
        forms.append(_Form(target_degree - monomial_degree(e, data.source_degrees), *form))
    return _Support("", tuple(kept_monomials), tuple(forms), how, degree)


def _try_degree(data: _SearchData, target_index: int, degree: int, bounds: Bounds
                ) -> Optional[_Support]:
    """Sparsest supports reaching this degree, then the greedy basis of the pool."""
    p = data.prime
    target_zero = [int(point[target_index][0]) for point in data.target_values]
    end = data.degree_starts[degree + 1] if degree + 1 < len(data.degree_starts) else len(data.pool)
    pool_zero = data.pool_zero[:end]
    if _scalar_matrix(pool_zero + [target_zero], p).rank() > data.ranks[degree]:
        return None                       # not reachable at this degree even at q = 0
    sizes = range(1, min(bounds.max_terms, end) + 1)
    for tried, combo in enumerate(reconstruct.subsets_by_size(end, sizes,
                                                              data.degree_starts[degree])):
        if tried >= bounds.search_budget:
            break
        matrix = _scalar_matrix([pool_zero[i] for i in combo] + [target_zero], p)
        if _pivot_columns(matrix) != list(range(len(combo))):
            continue
        support = _accept(data, [data.pool[i] for i in combo], target_index, "sparsest", degree)
        if support is not None:
            return support
    basis = _pivot_columns(_scalar_matrix(pool_zero, p))
    return _accept(data, [data.pool[i] for i in basis], target_index, "normal form", degree)


def _express(data: _SearchData, target_index: int, bounds: Bounds
             ) -> Tuple[Optional[_Support], int]:
    """The support found for one target and the last degree examined.

    Degrees go up until the target is expressed, the bound is reached, the monomials span
    every function on the points at s = 0 (a basis is then at hand: higher degrees add
    nothing), or their span stops growing (then it never grows again: it is closed under
    multiplication by the generators)."""
    everything = len(data.source_values)
    degree = 0
    while True:
        _grow_pool(data, degree)
        support = _try_degree(data, target_index, degree, bounds)
        if support is not None:
            return support, degree
        rank = data.ranks[degree]
        if rank == everything or (degree > 0 and rank == data.ranks[degree - 1]) or \
                (bounds.max_degree is not None and degree >= bounds.max_degree):
            return None, degree
        degree += 1


def search_direction(direction: Direction, data: _SearchData, bounds: Bounds) -> None:
    searched = 0
    for k, name in enumerate(direction.target_generators):
        support, degree = _express(data, k, bounds)
        searched = max(searched, degree)
        direction.searched_degree = searched
        if support is None:
            rank, everything = data.ranks[degree], len(data.source_values)
            spans = "" if rank == everything else \
                f" (monomials of degree ≤ {degree} span only {rank} of the {everything} " \
                "functions on the points at q = 0)"
            direction.failure = (f"{name} is not a combination of {direction.source} monomials of "
                                 f"degree ≤ {degree} with power-series coefficients of the form "
                                 f"num/∏(1 − q_i)^E{spans}")
            return
        direction.supports.append(_Support(name, support.monomials, support.forms, support.how,
                                           support.degree))


# ---------------------------------------------------------------------------------------
# Samples and exact reconstruction

@dataclass(frozen=True)
class _Sample:
    weights: Tuple[int, ...]
    slopes: Tuple[int, ...]
    seed: int
    # coefficients[d][k][t] = series of term t of target k in direction d
    coefficients: Tuple[Tuple[Tuple[Series, ...], ...], ...]


def _values(lifted: points.BethePoints, generators: Sequence[Generator]) -> List[List[Series]]:
    by_point = points.generator_values(lifted, generators)
    return [[v[g.name] for g in generators] for v in by_point]


def _lift(flag: FlagType, order: int, seed: int, prime: int) -> points.BethePoints:
    lifted = points.random_line_points(flag, order, seed=seed, prime=prime)
    if len(set(lifted.spec.q_line)) < len(lifted.spec.q_line):
        raise points.LiftError("q-line slopes coincide")
    return lifted


def _take_sample(flag: FlagType, generators: Tuple[Sequence[Generator], Sequence[Generator]],
                 directions: Sequence[Direction], order: int, seed: int, prime: int
                 ) -> Optional[_Sample]:
    lifted = _lift(flag, order, seed, prime)
    values = [_values(lifted, generators[0]), _values(lifted, generators[1])]
    per_direction = []
    for d, direction in enumerate(directions):
        source, target = values[d], values[1 - d]
        per_target = []
        for k, support in enumerate(direction.supports):
            columns = _columns(source, support.monomials, order, prime, {})
            solved = solve_on_support(columns, [pt[k] for pt in target], order, prime)
            if solved is None:
                return None     # this sample's weights are special for the support
            per_target.append(tuple(solved))
        per_direction.append(tuple(per_target))
    return _Sample(tuple(lifted.spec.T), tuple(lifted.spec.q_line), lifted.spec.seed,
                   tuple(per_direction))


def _unknowns(form: _Form, n: int, m: int, E: int) -> List[List[Tuple[Tuple[int, ...], Tuple[int, ...]]]]:
    """Per power t of s: the (α, β) monomials of the ansatz with e_n(T)^E cleared."""
    alphas = reconstruct.weighted_exponents(form.t_degree + n * E, list(range(1, n + 1)))
    return [[(a, b) for a in alphas for b in reconstruct.exponents_of_degree(t, m)]
            for t in range(form.q_degree + 1)]


def _least_E(form: _Form, n: int) -> int:
    """The least power of e_n(T) (degree n) that makes the numerator's degree non-negative."""
    return 0 if form.t_degree >= 0 else -(form.t_degree // n)


def _numerator_coefficients(series: Series, form: _Form, slopes, weights, E: int, order: int,
                            prime: int) -> Optional[List[int]]:
    """[s^t] of c·∏(1 − c_i s)^{E_i}·e_n(T)^E for t ≤ q-degree; None when higher powers of s
    survive (the coefficient does not have the form found on the first line)."""
    cleared = series.mul_low(reconstruct.line_factor(slopes, form.q_poles, prime, order), order)
    coefficients = ps.coefficients(cleared, order)
    if any(coefficients[form.q_degree + 1:]):
        return None
    top = pow(reconstruct.elementary_symmetric_values(weights, prime)[-1], E, prime)
    return [c * top % prime for c in coefficients[:form.q_degree + 1]]


def _design_row(sample: _Sample, columns, prime: int) -> List[int]:
    e = reconstruct.elementary_symmetric_values(sample.weights, prime)
    return [reconstruct.monomial_value(e, a, prime) *
            reconstruct.monomial_value(sample.slopes, b, prime) % prime for a, b in columns]


def _solve_coefficient(samples: Sequence[_Sample], d: int, k: int, term: int, form: _Form,
                       n: int, m: int, E: int, order: int, prime: int
                       ) -> Optional[Dict[Tuple, int]]:
    """Residues a_{α,β} mod prime of one coefficient with e_n^E cleared, or None."""
    rhs_by_sample = []
    for sample in samples:
        numerator = _numerator_coefficients(sample.coefficients[d][k][term], form, sample.slopes,
                                            sample.weights, E, order, prime)
        if numerator is None:
            return None
        rhs_by_sample.append(numerator)
    out: Dict[Tuple, int] = {}
    for t, columns in enumerate(_unknowns(form, n, m, E)):
        if not columns:
            if any(rhs[t] for rhs in rhs_by_sample):
                return None
            continue
        if len(samples) < len(columns) + SLACK:
            return None
        rows = [_design_row(sample, columns, prime) for sample in samples]
        solved = reconstruct.solve_overdetermined(rows, [[rhs[t] for rhs in rhs_by_sample]],
                                                  prime)
        if solved is None or solved[0] is None:
            return None
        for column, value in zip(columns, solved[0]):
            if value:
                out[column] = value
    return out


def _sample_order(directions: Sequence[Direction], bounds: Bounds) -> int:
    """Enough powers of s for every cleared numerator and a few to check that nothing
    follows it: samples are lifted only this far (lifting cost grows with the order)."""
    need = max((form.q_degree + sum(form.q_poles) for direction in directions
                for support in direction.supports for form in support.forms), default=0)
    return min(bounds.order, need + PADE_SLACK + 2)


@dataclass
class _SamplePool:
    """Samples at one prime, drawn on demand from one seed."""
    flag: FlagType
    generators: tuple
    directions: Sequence[Direction]
    order: int
    seed: int
    prime: int
    samples: List[_Sample] = field(default_factory=list)
    attempts: int = 0
    notes: List[str] = field(default_factory=list)


def _ensure_samples(pool: _SamplePool, count: int) -> None:
    while len(pool.samples) < count:
        if pool.attempts >= count + 20:
            raise points.LiftError(f"only {len(pool.samples)} usable samples in "
                                   f"{pool.attempts} draws mod {pool.prime}")
        sample_seed = (pool.seed * 1_000_003 + pool.attempts) % 2**63
        pool.attempts += 1
        try:
            sample = _take_sample(pool.flag, pool.generators, pool.directions, pool.order,
                                  sample_seed, pool.prime)
        except points.LiftError as error:
            pool.notes.append(f"sample seed {sample_seed} skipped: {error}")
            continue
        if sample is None:
            pool.notes.append(f"sample seed {sample_seed} skipped: a support is singular there")
            continue
        pool.samples.append(sample)


def _coefficient_residues(pool: _SamplePool, key: Tuple[int, int, int], form: _Form,
                          candidates: Sequence[int], n: int, m: int, bounds: Bounds
                          ) -> Optional[Tuple[int, Dict]]:
    """(E, residues) for the least E among the candidates whose system is consistent."""
    d, k, term = key
    for E in candidates:
        need = max(len(c) for c in _unknowns(form, n, m, E)) + SLACK
        if need > bounds.max_samples:
            return None
        _ensure_samples(pool, need)
        solved = _solve_coefficient(pool.samples, d, k, term, form, n, m, E, pool.order,
                                    pool.prime)
        if solved is not None:
            return E, solved
    return None


def reconstruct_directions(flag: FlagType, generators, directions: Sequence[Direction],
                           bounds: Bounds, seed: int, primes: Sequence[int], certificate: dict
                           ) -> Optional[str]:
    """Fill `formulas` of every direction; returns the reason when it cannot."""
    n, m = flag.n, flag.m
    order = _sample_order(directions, bounds)
    residues_by_prime: List[Dict] = []
    chosen_E: Dict[Tuple[int, int, int], int] = {}
    pools: List[_SamplePool] = []
    for index, prime in enumerate(primes[:bounds.max_primes]):
        pool = _SamplePool(flag, generators, directions, order, seed + 7919 * index, prime)
        pools.append(pool)
        residues: Dict[Tuple[int, int, int], Dict] = {}
        for d, direction in enumerate(directions):
            for k, support in enumerate(direction.supports):
                for term, form in enumerate(support.forms):
                    key = (d, k, term)
                    least = _least_E(form, n)
                    candidates = [chosen_E[key]] if key in chosen_E else \
                        range(least, least + bounds.t_pole_extra + 1)
                    found = _coefficient_residues(pool, key, form, candidates, n, m, bounds)
                    if found is None:
                        return (f"the coefficient of "
                                f"{_monomial_text(support.monomials[term], direction.source_generators)} "
                                f"in {support.target} is not a symmetric Laurent polynomial in T "
                                f"(1/e_n(T) up to power {least + bounds.t_pole_extra}) times a "
                                f"polynomial in q of degree ≤ {form.q_degree} over "
                                f"∏(1 − q_i)^{list(form.q_poles)} within {bounds.max_samples} "
                                f"samples (mod {prime})")
                    chosen_E[key], residues[key] = found
        residues_by_prime.append(residues)
        if index == 0:
            continue
        used = [p.prime for p in pools]
        exact = _lift_to_rationals(residues_by_prime[:-1], used[:-1])
        if exact is not None and _predicts(exact, residues, prime):
            _fill_formulas(directions, exact, chosen_E)
            certificate["reconstruction"] = {
                "primes": used, "samples_per_prime": [len(p.samples) for p in pools],
                "sample_order": order, "seed": seed,
                "sample_seed_rule": "(seed + 7919·prime index)·1000003 + attempt",
                "height_bound": f"|numerator|, denominator ≤ √(∏ primes / 2) ≈ 2^"
                                f"{_log2_bound(used[:-1])} (from {len(used) - 1} prime(s); "
                                f"the last prime confirms)",
                "notes": [note for p in pools for note in p.notes][:20]}
            return None
    used = [p.prime for p in pools]
    return (f"rational reconstruction did not stabilise over {len(used)} primes "
            f"(height bound ≈ 2^{_log2_bound(used[:-1])})")


def _log2_bound(primes: Sequence[int]) -> int:
    product = 1
    for p in primes:
        product *= p
    return (product // 2).bit_length() // 2


def _lift_to_rationals(residues_by_prime: Sequence[Dict], primes: Sequence[int]) -> Optional[Dict]:
    exact: Dict = {}
    for key in residues_by_prime[0]:
        unknowns = set()
        for residues in residues_by_prime:
            if key not in residues:
                return None
            unknowns |= set(residues[key])
        values = {}
        for column in unknowns:
            x, M = reconstruct.chinese_remainder([r[key].get(column, 0) for r in residues_by_prime],
                                                 primes)
            value = reconstruct.rational_number(x, M)
            if value is None:
                return None
            if value:
                values[column] = value
        exact[key] = values
    return exact


def _predicts(exact: Dict, residues: Dict, prime: int) -> bool:
    for key, values in exact.items():
        observed = residues.get(key)
        if observed is None:
            return False
        for column in set(values) | set(observed):
            predicted = reconstruct.residue_of(values.get(column, Fraction(0)), prime)
            if predicted is None or predicted != observed.get(column, 0):
                return False
    return True


def _simplified(values: Dict, E: int, poles: Tuple[int, ...], n: int) -> ExactCoefficient:
    """Cancel common factors e_n(T) between numerator and denominator."""
    while E > 0 and values and all(a[n - 1] > 0 for a, _ in values):
        values = {(a[:n - 1] + (a[n - 1] - 1,), b): v for (a, b), v in values.items()}
        E -= 1
    terms = tuple(sorted(((a, b, v) for (a, b), v in values.items()), key=lambda x: (x[1], x[0])))
    return ExactCoefficient(terms, E, poles)


def _fill_formulas(directions: Sequence[Direction], exact: Dict, chosen_E: Dict) -> None:
    for d, direction in enumerate(directions):
        n = None
        direction.formulas = []
        for k, support in enumerate(direction.supports):
            terms = []
            for term, (monomial, form) in enumerate(zip(support.monomials, support.forms)):
                values = exact[(d, k, term)]
                if not values:
                    continue
                n = len(next(iter(values))[0])
                terms.append(Term(monomial, _simplified(values, chosen_E[(d, k, term)],
                                                        form.q_poles, n)))
            direction.formulas.append(GeneratorFormula(support.target, tuple(terms), support.how))


def _monomial_text(exponents: Sequence[int], names: Sequence[str]) -> str:
    parts = [name if e == 1 else f"{name}^{e}" for name, e in zip(names, exponents) if e]
    return "*".join(parts) if parts else "1"


# ---------------------------------------------------------------------------------------
# Evaluating exact formulas mod p

def coefficient_residue(c: ExactCoefficient, weights: Sequence[int], q: Sequence[int],
                        prime: int) -> Optional[int]:
    """The coefficient at residues T, q; None when a denominator vanishes mod p."""
    e = reconstruct.elementary_symmetric_values(weights, prime)
    total = 0
    for a, b, v in c.numerator:
        r = reconstruct.residue_of(v, prime)
        if r is None:
            return None
        total += r * reconstruct.monomial_value(e, a, prime) * reconstruct.monomial_value(q, b, prime)
    denominator = pow(e[-1], c.e_top_power, prime)
    for qi, E in zip(q, c.q_poles):
        denominator = denominator * pow(1 - qi, E, prime) % prime
    if denominator % prime == 0:
        return None
    return total * pow(denominator, -1, prime) % prime


def coefficient_series(c: ExactCoefficient, weights: Sequence[int], slopes: Sequence[int],
                       order: int, prime: int) -> Optional[Series]:
    """The coefficient on the line q_i = c_i·s, mod s^order."""
    e = reconstruct.elementary_symmetric_values(weights, prime)
    numerator = ps.constant(0, prime)
    for a, b, v in c.numerator:
        r = reconstruct.residue_of(v, prime)
        if r is None:
            return None
        scalar = r * reconstruct.monomial_value(e, a, prime) * \
            reconstruct.monomial_value(slopes, b, prime) % prime
        numerator = numerator + ps.constant(scalar, prime).left_shift(sum(b)).truncate(order)
    top = pow(e[-1], c.e_top_power, prime)
    if top == 0:
        return None
    denominator = reconstruct.line_factor(slopes, c.q_poles, prime, order) * top
    return numerator.mul_low(ps.inverse(denominator, order), order)


def formula_polynomial(formula: GeneratorFormula, ring: algebra.Ring, names: Sequence[str],
                       spec: algebra.Specialisation):
    """The formula at the residues of `spec`, in `ring` (whose first variables are `names`)."""
    nvars = ring.ctx.nvars()
    terms = {}
    for term in formula.terms:
        r = coefficient_residue(term.coefficient, spec.T, spec.q, spec.prime)
        if r is None:
            return None
        exponents = tuple(term.monomial) + (0,) * (nvars - len(names))
        terms[exponents] = (terms.get(exponents, 0) + r) % spec.prime
    return ring.ctx.from_dict({e: v for e, v in terms.items() if v})


# ---------------------------------------------------------------------------------------
# Verification

def verify_at_points(flag: FlagType, generators, directions: Sequence[Direction], order: int,
                     seed: int, prime: int) -> dict:
    lifted = _lift(flag, order, seed, prime)
    values = [_values(lifted, generators[0]), _values(lifted, generators[1])]
    spec = lifted.spec
    failures = []
    for d, direction in enumerate(directions):
        source, target = values[d], values[1 - d]
        for k, formula in enumerate(direction.formulas):
            terms = []
            for term in formula.terms:
                c = coefficient_series(term.coefficient, spec.T, spec.q_line, order, prime)
                if c is None:
                    return {"check": "values at fresh Bethe points", "passed": None,
                            "detail": f"a denominator vanishes mod {prime}"}
                terms.append((c, term.monomial))
            bad = 0
            for point_source, point_target in zip(source, target):
                total = ps.constant(0, prime)
                for c, e in terms:
                    total = total + c.mul_low(_monomial_series(point_source, e, order, prime), order)
                if total != point_target[k].truncate(order):
                    bad += 1
            if bad:
                failures.append(f"{direction.target}.{formula.target} differs at {bad} points")
    return {"check": "values at fresh Bethe points", "method": f"points mod s^{order}",
            "passed": not failures, "prime": prime, "seed": spec.seed,
            "weights": list(spec.T), "q_line": list(spec.q_line), "order": order,
            "detail": "; ".join(failures) if failures else
            "every formula equals its generator at every point, both directions"}


def _substitution(images: Dict[str, object], ctx, zero) -> list:
    return [images.get(name, zero) for name in ctx.names()]


def verify_by_groebner(flag: FlagType, families: Tuple[Family, Family],
                       directions: Sequence[Direction], spec: algebra.Specialisation) -> dict:
    from .engine import own_ideal
    ideals = [own_ideal(families[0], flag, spec), own_ideal(families[1], flag, spec)]
    record = {"check": "ring isomorphism at a fresh specialisation",
              "method": "Gröbner normal forms", "prime": spec.prime, "seed": spec.seed,
              "weights": list(spec.T), "q_values": list(spec.q),
              "colengths": [ideals[0].colength, ideals[1].colength]}
    images = []
    for d, direction in enumerate(directions):
        source_ring = ideals[d].ring
        mapped = {}
        for formula in direction.formulas:
            poly = formula_polynomial(formula, source_ring, direction.source_generators, spec)
            if poly is None:
                return dict(record, passed=None, detail=f"a denominator vanishes mod {spec.prime}")
            mapped[formula.target] = poly
        images.append(mapped)
    problems = []
    for d, direction in enumerate(directions):
        source, target = ideals[d], ideals[1 - d]
        substitution = _substitution(images[d], target.ring.ctx, source.ring.zero)
        for relation in target.relations:
            image = relation.poly.compose(*substitution, ctx=source.ring.ctx)
            if not groebner.normal_form(image, source.basis).is_zero():
                problems.append(f"relation [{relation.label}] of {direction.target} is not in the "
                                f"ideal of {direction.source} after substitution")
        for u, unit in enumerate(_units(families[1 - d], flag, target.ring)):
            image = unit.compose(*substitution, ctx=source.ring.ctx)
            if groebner.groebner_basis(list(source.basis) + [image]) != [source.ring.one]:
                problems.append(f"unit {u + 1} of {direction.target} does not become a unit of "
                                f"{direction.source}")
    for d, direction in enumerate(directions):
        # a ↦ a(b(a)): the inverse's formula for a, with b replaced by the map's formulas
        source, target = ideals[d], ideals[1 - d]
        substitution = _substitution(images[d], target.ring.ctx, source.ring.zero)
        back = images[1 - d]
        for name in direction.source_generators:
            round_trip = back[name].compose(*substitution, ctx=source.ring.ctx)
            if not groebner.normal_form(round_trip - source.ring.gen[name], source.basis).is_zero():
                problems.append(f"{direction.source} generator {name} does not come back to itself")
    return dict(record, passed=not problems,
                detail="; ".join(problems[:6]) if problems else
                "relations and units map into the ideals both ways; both round trips are the "
                "identity")


def _units(family: Family, flag: FlagType, ring: algebra.Ring) -> list:
    return list(family.units(flag, ring))


# ---------------------------------------------------------------------------------------
# The whole search

def _prime_sequence(prime: int, count: int) -> List[int]:
    from .engine import trial_prime
    return [trial_prime(prime, t) for t in range(count)]


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
    primes = _prime_sequence(prime, bounds.max_primes + 2)
    certificate = {"seed": seed, "search": {}, "kind": "probabilistic"}
    result = IsoResult(flag.name, source.name, target.name, False, False, "inconclusive", "",
                       forward, backward, bounds.record(), certificate)
    try:
        _search_reconstruct_verify(result, flag, (source, target), generators, bounds, seed,
                                   primes)
    except points.LiftError as error:
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
    first = _lift(flag, bounds.order, seed, primes[0])
    certificate["search"] = {"prime": primes[0], "seed": first.spec.seed,
                             "weights": list(first.spec.T), "q_line": list(first.spec.q_line),
                             "order": bounds.order}
    values = [_values(first, generators[0]), _values(first, generators[1])]
    degrees = [tuple(meaning_degree(g.meaning) for g in gens) for gens in generators]
    for d, direction in enumerate(directions):
        data = _SearchData(values[d], values[1 - d], degrees[d], degrees[1 - d],
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
        problem = points.meaning_problem(g.meaning, flag)
        if problem:
            raise IsoInputError(f"{family.name}: generator {g.name}: {problem}")
    return gens
