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
import itertools
from typing import Dict, Iterator, List, Optional, Tuple

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
    the box to its right, max of a box < min of the box below (Buch 2002, §3).

    A box in row i (from 0) of a column of height h has i letters below it in the column
    above and h − 1 − i below, so its letters lie in i+1 … r−(h−1−i); subsets outside that
    window are never tried (without this, dead ends dominate for the 4 × 4 box)."""
    boxes = [(i, j) for i, length in enumerate(shape) for j in range(length)]
    heights = [sum(1 for length in shape if length > j) for j in range(shape[0] if shape else 0)]
    subsets = [(min(s), max(s), frozenset(s)) for size in range(1, r + 1)
               for s in itertools.combinations(range(1, r + 1), size)]
    allowed = {(i, j): [t for t in subsets if t[0] >= i + 1 and t[1] <= r - (heights[j] - 1 - i)]
               for i, j in boxes}
    filling: Dict[Tuple[int, int], tuple] = {}

    def extend(position: int):
        if position == len(boxes):
            yield [filling[b][2] for b in boxes]
            return
        i, j = boxes[position]
        left = filling.get((i, j - 1))
        above = filling.get((i - 1, j))
        low_left = left[1] if left is not None else 0
        low_above = above[1] + 1 if above is not None else 0
        low = max(low_left, low_above)
        for t in allowed[(i, j)]:
            if t[0] < low:
                continue
            filling[(i, j)] = t
            yield from extend(position + 1)
            del filling[(i, j)]

    yield from extend(0)


@functools.lru_cache(maxsize=None)
def tableau_grothendieck(shape: Partition, r: int):
    """G_λ(z_1…z_r) = Σ_T (−1)^{|T|−|λ|} z^T over set-valued tableaux T (Buch 2002, Thm 3.1),
    by listing the tableaux: the plain definition, kept as the oracle for `stable_grothendieck`."""
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


def stable_grothendieck(shape: Partition, r: int):
    """G_λ(z_1…z_r), the same sum over set-valued tableaux, grouped by where the largest letter
    r sits (derived here from the tableau conditions, not quoted): the boxes {r} form a
    horizontal strip λ/μ, and r may also join any box at the end of a row of μ that has no
    box of λ below it — c(λ, μ) such boxes, each adding a letter (a factor −z_r).  So

        G_λ(z_1…z_r) = Σ_{λ/μ horizontal strip} z_r^{|λ/μ|} (1 − z_r)^{c(λ, μ)} G_μ(z_1…z_{r−1}).

    The tests compare it with `tableau_grothendieck` (the listing) on small shapes."""
    return _branching(tuple(shape), r, r)


@functools.lru_cache(maxsize=None)
def _branching(shape: Partition, r: int, nvars: int):
    R, z = _ring(nvars)
    if len(shape) > r:
        return R.zero
    if r == 0:
        return R.one
    x = z[r - 1]
    total = R.zero
    for mu in _horizontal_strips_inside(shape):
        corners = sum(1 for i, part in enumerate(mu)
                      if part and (shape[i + 1] if i + 1 < len(shape) else 0) < part)
        strip = sum(shape) - sum(mu)
        total += x ** strip * (1 - x) ** corners * _branching(mu, r - 1, nvars)
    return total


def _horizontal_strips_inside(shape: Partition) -> Iterator[Partition]:
    """μ ⊆ λ with λ/μ a horizontal strip: λ_{i+1} ≤ μ_i ≤ λ_i."""
    ranges = [range(shape[i + 1] if i + 1 < len(shape) else 0, shape[i] + 1)
              for i in range(len(shape))]
    for parts in itertools.product(*ranges):
        yield tuple(p for p in parts if p)


def expand_in_grothendieck(poly, r: int, max_degree: Optional[int] = None
                           ) -> Dict[Partition, int]:
    """The coefficients of a finite combination of G_ν (ν with ≤ r parts) equal to `poly`,
    for the ν with |ν| ≤ max_degree (all when None).  Since G_ν starts in degree |ν|, the
    terms of higher degree never change these, and are dropped from the start."""
    rest: Dict[int, Dict[Tuple[int, ...], int]] = {}
    for e, c in poly.items():
        if max_degree is None or sum(e) <= max_degree:
            rest.setdefault(sum(e), {})[tuple(e)] = int(c)
    top = max_degree if max_degree is not None else max(rest, default=-1)
    out: Dict[Partition, int] = {}
    degree = min(rest, default=top + 1)
    while degree <= top:
        bucket = rest.get(degree)
        if not bucket:
            degree += 1
            continue
        nu = max(bucket)
        if any(a < b for a, b in zip(nu, nu[1:])):
            raise AssertionError(f"not symmetric: lowest leading monomial {nu}")
        coefficient = bucket[nu]
        shape = tuple(p for p in nu if p)
        out[shape] = out.get(shape, 0) + coefficient
        for d, terms in _by_degree(shape, r, top).items():
            target = rest.setdefault(d, {})
            for e, c in terms.items():
                value = target.get(e, 0) - coefficient * c
                if value:
                    target[e] = value
                else:
                    target.pop(e, None)
    return {nu: c for nu, c in out.items() if c}


@functools.lru_cache(maxsize=None)
def _by_degree(shape: Partition, r: int, top: int) -> Dict[int, Dict[Tuple[int, ...], int]]:
    out: Dict[int, Dict[Tuple[int, ...], int]] = {}
    for e, c in stable_grothendieck(shape, r).items():
        if sum(e) <= top:
            out.setdefault(sum(e), {})[tuple(e)] = int(c)
    return out


@functools.lru_cache(maxsize=None)
def _truncated(shape: Partition, r: int, top: int):
    R, z = _ring(r)
    return R.from_dict({e: c for terms in _by_degree(shape, r, top).values()
                        for e, c in terms.items()})


@functools.lru_cache(maxsize=None)
def k_littlewood_richardson(lam: Partition, mu: Partition, k: int, n: int
                            ) -> Dict[Partition, int]:
    """{ν: c_{λμ}^ν} for ν in the k × (n−k) box, nonzero entries only.  Only degrees up to
    k(n−k), the largest |ν| in the box, are kept in the product."""
    top = k * (n - k)
    product = _truncated(lam, k, top) * _truncated(mu, k, top)
    return {nu: c for nu, c in expand_in_grothendieck(product, k, top).items()
            if c and (not nu or nu[0] <= n - k)}


def projective_product(a: int, b: int, n: int) -> Tuple[int, int]:
    """(power of q, index c) with O_a ⋆ O_b = q^d O_c in QK(P^{n−1}), 0 ≤ a, b ≤ n − 1."""
    return (0, a + b) if a + b <= n - 1 else (1, a + b - n)
