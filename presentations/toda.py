"""Relativistic (finite-difference) Toda relations, complete flags only (docs/mathematics.md §2.4).

Generators L_j = det S_j / det S_{j−1}, j = 1…n.  Relations, i = 1…n:

    Σ_{|I| = i}  ∏_{j∈I} L_j · ∏_{j∈I, j≥2, j−1∉I} (1 − q_{j−1})  =  e_i(T_1,…,T_n).

Source: "Quantum K-theory on flag manifolds, finite-difference Toda lattices and quantum
groups", Invent. Math. 151 (2003); proved in arXiv:1711.08414.  The index convention is
recalled (docs/mathematics.md §2.4), and the tests confirm it at the Bethe points.  At q = 0
this is the Borel presentation e_i(L) = e_i(T).  The relation for i = n reads L_1⋯L_n = T_1⋯T_n, so
every L_j is already a unit and none needs adjoining.
"""
from __future__ import annotations

import itertools
from typing import List, Optional

from ringmatch.compare import algebra
from .flagtype import FlagType
from .interface import Family, Generator, Relation
from .meanings import Meaning


def generator_name(j: int) -> str:
    return f"L{j}"


def generators(flag: FlagType) -> List[Generator]:
    return [Generator(generator_name(j), Meaning("toda_L", j), 1) for j in range(1, flag.n + 1)]


def relations(flag: FlagType, ring: algebra.Ring) -> List[Relation]:
    n = flag.n
    L = [ring.gen[generator_name(j)] for j in range(1, n + 1)]
    e_T = algebra.elementary_symmetric(ring.T, ring.one)
    out = []
    for i in range(1, n + 1):
        total = ring.zero
        for subset in itertools.combinations(range(1, n + 1), i):
            term = ring.one
            for j in subset:
                term = term * L[j - 1]
                if j >= 2 and (j - 1) not in subset:
                    term = term * (ring.one - ring.q[j - 2])
            total = total + term
        out.append(Relation(f"e_{i}", total - e_T[i]))
    return out


def unsupported(flag: FlagType) -> Optional[str]:
    if not flag.is_complete:
        return "the Toda presentation exists for complete flags Fl(n) only"
    return None


FAMILY = Family(
    name="toda",
    description="relativistic Toda relations in L_j = det S_j/det S_{j-1} (complete flags)",
    generators=generators,
    relations=relations,
    unsupported=unsupported,
)
