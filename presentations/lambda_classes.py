"""The λ-classes of the tautological bundles S_i, written in a ring's λ(S) generators.

Every family whose generators include the λ_j(S_i) (meaning kind `lambda_S`, see
meanings.py) builds its relations from these, and the engine uses them to write classes in
the common λ-class ring (compare/transport.py).  They live next to the meanings, not in one
family's module, so that no family and no engine module depends on another family.
Conventions (docs/mathematics.md §1.1, §1.4): S_0 = 0 and S_{m+1} = C^n, whose Chern roots
are the weights T_1…T_n.
"""
from __future__ import annotations

from ringmatch.compare import algebra

from .flagtype import FlagType
from .meanings import lambda_S_name


def lambda_y_S(flag: FlagType, ring: algebra.Ring, i: int) -> algebra.YPoly:
    """λ_y(S_i) for 0 ≤ i ≤ m + 1, as coefficients in y (lowest first): 1 for S_0, the
    elementary symmetric functions of ring.T for S_{m+1}, else 1, λ_1(S_i), …, λ_{k_i}(S_i)
    read from `ring.gen` (the ring must have those generators)."""
    if i == 0:
        return [ring.one]
    if i == flag.m + 1:
        return algebra.elementary_symmetric(ring.T, ring.one)
    return [ring.one] + [ring.gen[lambda_S_name(i, j)] for j in range(1, flag.k(i) + 1)]


def det_S(flag: FlagType, ring: algebra.Ring, i: int):
    """det S_i = λ_{k_i}(S_i) (with k_0 = 0, k_{m+1} = n: 1 and T_1⋯T_n at the ends)."""
    return lambda_y_S(flag, ring, i)[flag.k(i)]
