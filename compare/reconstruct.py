"""Exact numbers and functions from their images mod p: the reconstruction toolkit.

Small pure functions on integers and python-flint types, used by the isomorphism finder
(compare/iso.py) to turn coefficients known mod p, as truncated series in s on a line
q_i = c_i·s, at random weights T, into exact rational functions of T and q.

* `rational_number`   — n/d from a residue mod M, |n|, d ≤ √(M/2) (Wang's algorithm via the
                        extended Euclidean algorithm; the bound makes the answer unique);
* `chinese_remainder` — one residue modulo the product of pairwise coprime moduli;
* `pade`              — a truncated series as num(s)/den(s) of small degrees, by the
                        extended Euclidean algorithm on (s^N, f), taking the step with the
                        largest degree drop ("maximal quotient"), and only when that drop
                        leaves `slack` coefficients unexplained by the degrees, so a
                        series that is not such a quotient is recognised as not being one;
* `line_pole_orders`  — the exponents E_i with den(s) = ∏_i (1 − c_i s)^{E_i}, or None;
* `weighted_exponents`, `exponents_of_degree` — the monomials of an interpolation ansatz
                        (elementary symmetric functions e_i(T) have weight i);
* `solve_overdetermined` — a linear system over F_p with more equations than unknowns:
                        the unique solution for every right-hand side whose equations are
                        consistent, None for the others.
"""
from __future__ import annotations

import itertools
from fractions import Fraction
from math import isqrt, prod
from typing import Iterator, List, Optional, Sequence, Tuple

import flint


# ---------------------------------------------------------------------------------------
# Integers

def rational_number(residue: int, modulus: int, bound: Optional[int] = None) -> Optional[Fraction]:
    """The fraction n/d with n ≡ residue·d (mod modulus), |n| ≤ bound, 0 < d ≤ bound and
    gcd(d, modulus) = 1; None if there is none.  Default bound ⌊√(modulus/2)⌋, for which the
    answer is unique when it exists."""
    if bound is None:
        bound = isqrt(modulus // 2)
    r0, r1 = modulus, residue % modulus
    t0, t1 = 0, 1
    while r1 > bound:
        quotient = r0 // r1
        r0, r1 = r1, r0 - quotient * r1
        t0, t1 = t1, t0 - quotient * t1
    if t1 == 0 or abs(t1) > bound:
        return None
    value = Fraction(r1, t1)
    if (value.numerator - residue * value.denominator) % modulus or \
            flint.fmpz(value.denominator).gcd(modulus) != 1:
        return None
    return value


def small_residue(value: int, modulus: int) -> Fraction:
    """A residue mod p as the rational a/b it reduces from when |a|, b ≤ (p/2)^(1/4), else as
    its representative in (−p/2, p/2] (a Fraction with denominator 1).

    The bound is the square root of the one that makes rational reconstruction unique, so a
    random residue passes only with probability about p^(−1/2) (2^−31 for the default
    62-bit primes): what comes out as a small fraction almost surely is one, and a residue
    that stands for nothing small stays an integer rather than a made-up fraction."""
    value %= modulus
    fraction = rational_number(value, modulus, isqrt(isqrt(modulus // 2)))
    if fraction is not None:
        return fraction
    return Fraction(value - modulus if value > modulus // 2 else value)


def chinese_remainder(residues: Sequence[int], moduli: Sequence[int]) -> Tuple[int, int]:
    """(x, M) with x ≡ residues[i] mod moduli[i], 0 ≤ x < M = ∏ moduli (pairwise coprime)."""
    x, M = 0, 1
    for r, m in zip(residues, moduli):
        # x + M·k ≡ r (mod m)
        k = (r - x) * pow(M, -1, m) % m
        x, M = x + M * k, M * m
    return x, M


def residue_of(value: Fraction, prime: int) -> Optional[int]:
    """value mod prime, None when the denominator vanishes there."""
    if value.denominator % prime == 0:
        return None
    return value.numerator * pow(value.denominator, -1, prime) % prime


# ---------------------------------------------------------------------------------------
# Series in s

def pade(series: flint.nmod_poly, order: int, slack: int = 2
         ) -> Optional[Tuple[flint.nmod_poly, flint.nmod_poly]]:
    """(num, den) with den(0) = 1 and num ≡ den·series mod s^order, where
    deg num + deg den ≤ order − 1 − slack; None when the series has no such form.

    The extended Euclidean algorithm on (s^N, f) lists every candidate num/den (remainder and
    cofactor); the step with the largest drop in remainder degree is the one where a genuine
    quotient of small degrees shows itself (deg num + deg den = N − drop)."""
    p = series.modulus()
    f = series.truncate(order)
    if f.is_zero():
        return flint.nmod_poly([0], p), flint.nmod_poly([1], p)
    r0, r1 = flint.nmod_poly([0] * order + [1], p), f
    v0, v1 = flint.nmod_poly([0], p), flint.nmod_poly([1], p)
    best = None
    while not r1.is_zero():
        drop = r0.degree() - r1.degree()
        if best is None or drop > best[0]:
            best = (drop, r1, v1)
        quotient, remainder = divmod(r0, r1)
        r0, r1 = r1, remainder
        v0, v1 = v1, v0 - quotient * v1
    drop, num, den = best
    if drop < slack + 1 or den[0] == 0:
        return None
    scale = 1 / den[0]
    num, den = num * scale, den * scale
    if num.degree() + den.degree() > order - 1 - slack:
        return None
    if (den.mul_low(f, order) - num).truncate(order) != 0:
        return None
    return num, den


def line_pole_orders(den: flint.nmod_poly, slopes: Sequence[int]) -> Optional[Tuple[int, ...]]:
    """Exponents E_i with den = ∏_i (1 − c_i s)^{E_i} (den(0) = 1, slopes pairwise distinct
    and nonzero); None when den has any other factor."""
    p = den.modulus()
    rest = den
    orders = []
    for c in slopes:
        factor = flint.nmod_poly([1, -c % p], p)
        e = 0
        while rest.degree() > 0:
            quotient, remainder = divmod(rest, factor)
            if not remainder.is_zero():
                break
            rest, e = quotient, e + 1
        orders.append(e)
    return tuple(orders) if rest.degree() == 0 and int(rest[0]) == 1 else None


def line_factor(slopes: Sequence[int], orders: Sequence[int], prime: int, order: int
                ) -> flint.nmod_poly:
    """∏ (1 − c_i s)^{E_i} mod s^order."""
    out = flint.nmod_poly([1], prime)
    for c, e in zip(slopes, orders):
        for _ in range(e):
            out = out.mul_low(flint.nmod_poly([1, -c % prime], prime), order)
    return out


# ---------------------------------------------------------------------------------------
# Interpolation ansatz

def weighted_exponents(degree: int, weights: Sequence[int]) -> List[Tuple[int, ...]]:
    """All exponent vectors a with Σ a_i·weights[i] = degree (empty for degree < 0)."""
    if degree < 0:
        return []
    out: List[Tuple[int, ...]] = []

    def extend(prefix: Tuple[int, ...], left: int) -> None:
        i = len(prefix)
        if i == len(weights):
            if left == 0:
                out.append(prefix)
            return
        for a in range(left // weights[i] + 1):
            extend(prefix + (a,), left - a * weights[i])

    extend((), degree)
    return out


def exponents_of_degree(degree: int, variables: int) -> List[Tuple[int, ...]]:
    """All exponent vectors in `variables` variables of total degree `degree`."""
    return weighted_exponents(degree, [1] * variables)


def monomial_value(values: Sequence[int], exponents: Sequence[int], prime: int) -> int:
    return prod(pow(v, e, prime) for v, e in zip(values, exponents)) % prime


def elementary_symmetric_values(values: Sequence[int], prime: int) -> List[int]:
    """[e_1, …, e_n] of the residues."""
    e = [1] + [0] * len(values)
    for x in values:
        for j in range(len(e) - 1, 0, -1):
            e[j] = (e[j] + x * e[j - 1]) % prime
    return e[1:]


def solve_overdetermined(rows: Sequence[Sequence[int]], right_sides: Sequence[Sequence[int]],
                         prime: int) -> Optional[List[Optional[List[int]]]]:
    """For the system rows·x = b (more rows than unknowns), the solution x for every right
    side b (given as columns), or None in place of a b whose equations are inconsistent.
    Returns None altogether when the rows do not have full column rank (too few or too
    special samples)."""
    count, unknowns = len(rows), len(rows[0])
    sides = len(right_sides)
    entries = []
    for r in range(count):
        entries.extend(rows[r])
        entries.extend(b[r] for b in right_sides)
    reduced, rank = flint.nmod_mat(count, unknowns + sides, entries, prime).rref()
    pivots = []
    for r in range(rank):
        column = next(c for c in range(unknowns + sides) if reduced[r, c] != 0)
        if column >= unknowns:
            break
        pivots.append(column)
    if len(pivots) < unknowns:
        return None
    out: List[Optional[List[int]]] = []
    for k in range(sides):
        column = unknowns + k
        if any(reduced[r, column] != 0 for r in range(unknowns, count)):
            out.append(None)
        else:
            out.append([int(reduced[r, column]) for r in range(unknowns)])
    return out


def subsets_by_size(pool: int, sizes: Sequence[int], must_reach: int) -> Iterator[Tuple[int, ...]]:
    """Index sets of the given sizes from range(pool), each with its largest index at least
    `must_reach` (so supports found at a lower degree are not listed again)."""
    for size in sizes:
        for combo in itertools.combinations(range(pool), size):
            if combo[-1] >= must_reach:
                yield combo
