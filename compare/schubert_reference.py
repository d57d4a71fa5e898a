"""Outside references for Schubert structure constants, computed without any presentation.

* K-theoretic Littlewood–Richardson coefficients of Gr(k;n): the classical limit of every
  quantum K structure constant.  Buch, "A Littlewood–Richardson rule for the K-theory of
  Grassmannians", Acta Math. 189 (2002): the stable Grothendieck polynomials multiply as
  G_λ·G_μ = Σ_ν c_{λμ}^ν G_ν (finitely many ν, signs (−1)^{|ν|−|λ|−|μ|} included in c), and
  G_λ ↦ O_λ for λ in the k × (n−k) box, G_λ ↦ 0 otherwise, is a ring map onto K(Gr(k;n))
  (§8 there).  So c_{λμ}^ν for ν in the box are the classical constants.

  Here the G_λ come from Buch's set-valued tableau formula (Thm 3.1 there) — a different
  route from the bialternant of `presentations/schubert_bases.py` — in k variables, where
  G_ν = 0 for ν with more than k parts and the G_ν with at most k parts are linearly
  independent; products are expanded with SymPy's sparse polynomials by peeling off the
  lowest-degree, lex-leading monomial z^ν (the lowest part of G_ν is the Schur polynomial s_ν,
  whose lex-leading monomial is z^ν with coefficient 1).

* Projective spaces: in QK(P^{n−1}), O_a ⋆ O_b = O_{a+b} for a + b ≤ n − 1 and q·O_{a+b−n}
  otherwise (Buch–Mihalcea, "Quantum K-theory of Grassmannians", Duke Math. J. 156 (2011);
  recalled from memory, consistent with the relation (1 − O(−1))^n = q of QK(P^{n−1})).
"""
from __future__ import annotations

import functools
from typing import Dict, Iterator, List, Tuple

from sympy import ZZ
from sympy.polys.orderings import lex
from sympy.polys.rings import ring

Partition = Tuple[int, ...]


@functools.lru_cache(maxsize=None)
def _ring(r: int):
    R, *z = ring(",".join(f"z{a}" for a in range(1, r + 1)), ZZ, lex)
    return R, z


def _set_valued_tableaux(shape: Partition, r: int) -> Iterator[List[frozenset]]:
    """Fillings of the boxes (row by row) by nonempty subsets of {1…r}: max of a box ≤ min of
    the box to its right, max of a box < min of the box below (Buch 2002, §3)."""
    boxes = [(i, j) for i, length in enumerate(shape) for j in range(length)]
    subsets = [frozenset(s) for size in range(1, r + 1)
               for s in _combinations(range(1, r + 1), size)]
    filling: Dict[Tuple[int, int], frozenset] = {}

    def extend(position: int):
        if position == len(boxes):
            yield [filling[b] for b in boxes]
            return
        i, j = boxes[position]
        left = filling.get((i, j - 1))
        above = filling.get((i - 1, j))
        for s in subsets:
            if left is not None and min(s) < max(left):
                continue
            if above is not None and min(s) <= max(above):
                continue
            filling[(i, j)] = s
            yield from extend(position + 1)
            del filling[(i, j)]

    yield from extend(0)


def _combinations(values, size):
    import itertools
    return itertools.combinations(values, size)


@functools.lru_cache(maxsize=None)
def stable_grothendieck(shape: Partition, r: int):
    """G_λ(z_1…z_r) = Σ_T (−1)^{|T|−|λ|} z^T over set-valued tableaux T (Buch 2002, Thm 3.1)."""
    R, z = _ring(r)
    if len(shape) > r:
        return R.zero
    size = sum(shape)
    terms: Dict[Tuple[int, ...], int] = {}
    for tableau in _set_valued_tableaux(shape, r):
        exponent = [0] * r
        count = 0
        for box in tableau:
            for a in box:
                exponent[a - 1] += 1
            count += len(box)
        key = tuple(exponent)
        terms[key] = terms.get(key, 0) + (-1) ** (count - size)
    return R.from_dict({e: c for e, c in terms.items() if c})


def expand_in_grothendieck(poly, r: int) -> Dict[Partition, int]:
    """The coefficients of a finite combination of G_ν (ν with ≤ r parts) equal to `poly`."""
    out: Dict[Partition, int] = {}
    rest = poly
    while rest:
        low = min(sum(e) for e in rest.keys())
        nu = max(e for e in rest.keys() if sum(e) == low)
        if any(a < b for a, b in zip(nu, nu[1:])):
            raise AssertionError(f"not symmetric: lowest leading monomial {nu}")
        coefficient = int(rest[nu])
        shape = tuple(p for p in nu if p)
        out[shape] = out.get(shape, 0) + coefficient
        rest = rest - stable_grothendieck(shape, r) * coefficient
    return out


@functools.lru_cache(maxsize=None)
def k_littlewood_richardson(lam: Partition, mu: Partition, k: int, n: int
                            ) -> Dict[Partition, int]:
    """{ν: c_{λμ}^ν} for ν in the k × (n−k) box, nonzero entries only."""
    product = stable_grothendieck(lam, k) * stable_grothendieck(mu, k)
    return {nu: c for nu, c in expand_in_grothendieck(product, k).items()
            if c and (not nu or nu[0] <= n - k)}


def projective_product(a: int, b: int, n: int) -> Tuple[int, int]:
    """(power of q, index c) with O_a ⋆ O_b = q^d O_c in QK(P^{n−1}), 0 ≤ a, b ≤ n − 1."""
    return (0, a + b) if a + b <= n - 1 else (1, a + b - n)
