"""Truncated power series over F_p in one variable s, as python-flint `nmod_poly`.

A series to order N is an `nmod_poly` of length at most N; every function that can create
higher terms takes the order and truncates.  Several parameters q_1…q_m are put on one line
through the origin, q_i = c_i·s, so that a multi-parameter expansion becomes a one-variable one
(docs/mathematics.md §2.3).

FLINT aborts the whole process when asked to invert a series without a constant term, so
`inverse` checks that first and raises `ZeroDivisionError` instead.
"""
from __future__ import annotations

from typing import Iterable, List, Optional, Sequence

import flint

Series = flint.nmod_poly


def constant(value: int, prime: int) -> Series:
    return flint.nmod_poly([value % prime], prime)


def from_coefficients(coefficients: Sequence[int], prime: int) -> Series:
    """The series c_0 + c_1 s + …, coefficients reduced mod p."""
    return flint.nmod_poly([c % prime for c in coefficients], prime)


def on_line(slope: int, prime: int) -> Series:
    """q = c·s: the value of one Novikov parameter on the line through the origin."""
    return flint.nmod_poly([0, slope % prime], prime)


def product(factors: Iterable[Series], order: int, prime: int) -> Series:
    result = constant(1, prime)
    for f in factors:
        result = result.mul_low(f, order)
    return result


def inverse(a: Series, order: int) -> Series:
    """1/a to the given order; `ZeroDivisionError` when a(0) = 0 (not a unit of F_p[[s]])."""
    if a[0] == 0:
        raise ZeroDivisionError("series with zero constant term is not invertible")
    return a.inverse_series_trunc(order)


def truncate(a: Series, order: int) -> Series:
    return a.truncate(order)


def coefficients(a: Series, order: int) -> List[int]:
    """Exactly `order` integer coefficients in [0, p): s^0 … s^{order−1}."""
    values = [int(c) for c in a.coeffs()[:order]]
    return values + [0] * (order - len(values))


def valuation(a: Series, order: int) -> Optional[int]:
    """Lowest power of s below `order` with a nonzero coefficient; None if a ≡ 0 mod s^order."""
    for power, c in enumerate(a.coeffs()[:order]):
        if c != 0:
            return power
    return None


def constant_term(a: Series) -> int:
    return int(a[0])


def elementary_symmetric(roots: Sequence[Series], order: int, prime: int) -> List[Series]:
    """[e_0, e_1, …, e_k] of the roots: the coefficients of ∏ (1 + y·x) = λ_y."""
    out = [constant(1, prime)]
    for x in roots:
        out.append(out[-1].mul_low(x, order))
        for j in range(len(out) - 2, 0, -1):
            out[j] = out[j] + out[j - 1].mul_low(x, order)
    return out
