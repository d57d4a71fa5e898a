"""The search of an isomorphism at the Bethe points (compare/iso.py, "Search"): generator
values at the lifted points, linear algebra over F_p[[s]], and for every target generator the
sparsest support of source monomials whose coefficients are power series of a Padé form."""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Dict, List, Optional, Sequence, Tuple

import flint

from ringmatch.presentations.flagtype import FlagType
from ringmatch.presentations.interface import Generator
from ringmatch.presentations.meanings import Meaning

from . import lifting, points, reconstruct
from . import series as ps
from .iso_records import Bounds, Direction, Form, Support
from .series import Series

PADE_SLACK = 2            # series coefficients a Padé form must explain beyond its degrees


# ---------------------------------------------------------------------------------------
# Degrees and values

def meaning_degree(meaning: Meaning) -> int:
    """Degree under T → tT (every Chern root scales by t, q fixed): λ_j and e_j have degree j,
    L_i and Chern roots degree 1."""
    return meaning.degree


def monomial_degree(exponents: Sequence[int], degrees: Sequence[int]) -> int:
    return sum(e * d for e, d in zip(exponents, degrees))


def monomial_series(values: Sequence[Series], exponents: Sequence[int], order: int,
                     prime: int) -> Series:
    out = ps.constant(1, prime)
    for v, e in zip(values, exponents):
        for _ in range(e):
            out = out.mul_low(v, order)
    return out


def monomial_columns(per_point: Sequence[Sequence[Series]], monomials: Sequence[Tuple[int, ...]],
             order: int, prime: int, cache: Dict) -> List[List[Series]]:
    """For every monomial, its values at every point (cached by exponent vector)."""
    out = []
    for e in monomials:
        if e not in cache:
            cache[e] = [monomial_series(v, e, order, prime) for v in per_point]
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
class SearchData:
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


def _grow_pool(data: SearchData, degree: int) -> None:
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


def _accept(data: SearchData, monomials, target_index: int, how: str, degree: int
            ) -> Optional[Support]:
    """A support whose coefficients exist, hold at every point and have the Padé form."""
    p, N = data.prime, data.order
    columns = monomial_columns(data.source_values, monomials, N, p, data.cache)
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
        forms.append(Form(target_degree - monomial_degree(e, data.source_degrees), *form))
    return Support("", tuple(kept_monomials), tuple(forms), how, degree)


def _try_degree(data: SearchData, target_index: int, degree: int, bounds: Bounds
                ) -> Optional[Support]:
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


def _express(data: SearchData, target_index: int, bounds: Bounds
             ) -> Tuple[Optional[Support], int]:
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


def search_direction(direction: Direction, data: SearchData, bounds: Bounds) -> None:
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
        direction.supports.append(Support(name, support.monomials, support.forms, support.how,
                                           support.degree))


# ---------------------------------------------------------------------------------------
# Values at lifted Bethe points

def point_values(lifted: lifting.BethePoints, generators: Sequence[Generator]) -> List[List[Series]]:
    by_point = points.generator_values(lifted, generators)
    return [[v[g.name] for g in generators] for v in by_point]


def lift_line(flag: FlagType, order: int, seed: int, prime: int) -> lifting.BethePoints:
    lifted = lifting.random_line_points(flag, order, seed=seed, prime=prime)
    if len(set(lifted.spec.q_line)) < len(lifted.spec.q_line):
        raise lifting.LiftError("q-line slopes coincide")
    return lifted
