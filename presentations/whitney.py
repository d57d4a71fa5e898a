"""Quantum K Whitney relations (docs/mathematics.md §2.1).

For each level i = 1…m, the coefficients of y^1 … y^{k_{i+1}} of

    (1 − q_i)·(λ_y(S_i)·λ_y(Q_i) − λ_y(S_{i+1})) + y^{d_i}·q_i·det Q_i·(λ_y(S_i) − λ_y(S_{i−1}))

(the published relation multiplied by the unit 1 − q_i).  Sources: arXiv:2310.03826 (all
partial flags), arXiv:2208.01091 (Grassmannians).  At q = 0: the classical Whitney
presentation of K_T(Fl).
"""
from __future__ import annotations

from typing import List

from ringmatch.compare import algebra
from ringmatch.compare.algebra import ypoly_mul, ypoly_scale, ypoly_shift, ypoly_sub, ypoly_add
from .flagtype import FlagType
from .interface import Family, Generator, Relation
from .lambda_classes import lambda_y_S   # noqa: F401  (also imported from here by older code)
from .meanings import lambda_Q, lambda_Q_name, lambda_S, lambda_S_name


def generators(flag: FlagType) -> List[Generator]:
    gens = []
    for i in range(1, flag.m + 1):
        gens += [Generator(lambda_S_name(i, j), lambda_S(i, j), j) for j in range(1, flag.k(i) + 1)]
        gens += [Generator(lambda_Q_name(i, j), lambda_Q(i, j), j) for j in range(1, flag.d(i) + 1)]
    return gens


def relations(flag: FlagType, ring: algebra.Ring) -> List[Relation]:
    zero = ring.zero
    out = []
    for i in range(1, flag.m + 1):
        d = flag.d(i)
        lam_Q = [ring.one] + [ring.gen[lambda_Q_name(i, j)] for j in range(1, d + 1)]
        lam_S, below, above = (lambda_y_S(flag, ring, i), lambda_y_S(flag, ring, i - 1),
                               lambda_y_S(flag, ring, i + 1))
        q = ring.q[i - 1]
        classical = ypoly_sub(ypoly_mul(lam_S, lam_Q, zero), above, zero)
        quantum = ypoly_shift(ypoly_scale(ypoly_sub(lam_S, below, zero), q * lam_Q[d]), d, zero)
        total = ypoly_add(ypoly_scale(classical, ring.one - q), quantum, zero)
        out += [Relation(f"level {i}, y^{j}", total[j]) for j in range(1, flag.k(i + 1) + 1)]
    return out


FAMILY = Family(
    name="whitney",
    description="quantum K Whitney relations in λ(S_i), λ(Q_i) (arXiv:2310.03826)",
    generators=generators,
    relations=relations,
)
