"""The Bethe presentation: the critical-point equations in the Chern roots
(docs/mathematics.md §2.3).

Generators x{i}_{a}: the Chern roots X^(i)_a of S_i (weight 1).  For the root x = X^(i)_a,
the equation of §2.2 cleared of denominators is

    det S_i · ∏_b (x − X^(i+1)_b) + (−1)^{d_i} q_i det S_{i+1} x^{k_i − k_{i−1}} ∏_c (x − X^(i−1)_c),

(X^(m+1) = the weights T); both terms contain x once more (det S_i = x·∏_{a'≠a} X^(i)_a' and
k_i − k_{i−1} ≥ 1), and x is a unit, so the relation keeps one factor x less.  The units are
each level's Vandermonde product (the roots of a level are distinct at the points) and each
det S_i; inverting them is the saturation of §2.3.  Every torus-fixed point then gives
∏ k_i! solutions (the orderings of each level's roots), hence the colength rank · ∏ k_i!.
"""
from __future__ import annotations

import math
from typing import List

from ringmatch.compare import algebra
from .flagtype import FlagType
from .interface import Family, Generator, Relation
from .meanings import Meaning


def root_name(i: int, a: int) -> str:
    return f"x{i}_{a}"


def generators(flag: FlagType) -> List[Generator]:
    return [Generator(root_name(i, a), Meaning("root", i, a), 1)
            for i in range(1, flag.m + 1) for a in range(1, flag.k(i) + 1)]


def _roots(flag: FlagType, ring: algebra.Ring, i: int) -> list:
    if i == 0:
        return []
    if i == flag.m + 1:
        return list(ring.T)
    return [ring.gen[root_name(i, a)] for a in range(1, flag.k(i) + 1)]


def _product(factors, one):
    out = one
    for f in factors:
        out = out * f
    return out


def relations(flag: FlagType, ring: algebra.Ring) -> List[Relation]:
    out = []
    for i in range(1, flag.m + 1):
        here, above, below = _roots(flag, ring, i), _roots(flag, ring, i + 1), _roots(flag, ring, i - 1)
        sign = (-1) ** flag.d(i)
        det_above = _product(above, ring.one)
        for a, x in enumerate(here):
            others = _product(here[:a] + here[a + 1:], ring.one)
            classical = others * _product([x - X for X in above], ring.one)
            quantum = sign * ring.q[i - 1] * det_above * x ** (flag.k(i) - flag.k(i - 1) - 1) \
                * _product([x - X for X in below], ring.one)
            out.append(Relation(f"Bethe equation of {root_name(i, a + 1)}", classical + quantum))
    return out


def units(flag: FlagType, ring: algebra.Ring) -> list:
    out = []
    for i in range(1, flag.m + 1):
        roots = _roots(flag, ring, i)
        if len(roots) > 1:
            out.append(_product([roots[a] - roots[b] for a in range(len(roots))
                                 for b in range(a + 1, len(roots))], ring.one))
        out.append(_product(roots, ring.one))
    return out


def expected_colength(flag: FlagType) -> int:
    return flag.rank * math.prod(math.factorial(flag.k(i)) for i in range(1, flag.m + 1))


FAMILY = Family(
    name="bethe",
    description="Bethe (critical-point) equations in the Chern roots, saturated by the "
                "Vandermonde products and det S_i",
    generators=generators,
    relations=relations,
    units=units,
    expected_colength=expected_colength,
    solved_by_points=True,
)
