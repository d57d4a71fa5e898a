"""Candidate Schubert bases: Grothendieck polynomials in the Chern roots, several conventions.

For the Grassmannian Gr(k;n) the Schubert structure sheaves O_λ are labelled by partitions λ
in the k × (n−k) box.  The literature writes O_λ as a Grothendieck polynomial in "the" roots of
a tautological bundle, but the bundle (S, S^∨ or Q) and the change of variables differ from
paper to paper (arXiv:2208.01091, arXiv:2309.06980, arXiv:1402.2907; Buch, "A Littlewood–
Richardson rule for the K-theory of Grassmannians", Acta Math. 189 (2002), §8).  So this module
defines every combination as a *candidate* and leaves the decision to the checks of
`compare/schubert.py`, which come from geometry rather than from any of these conventions.

A candidate is a bundle and a substitution:

  bundle        roots r_a (K-theoretic: the classes of the line bundles of a splitting)
  S             x_a, the roots of S, λ_y(S) = ∏ (1 + y·x_a)
  Sdual         1/x_a
  Q             the roots of Q = C^n/S; here the label is conjugated (λ' has ≤ n−k rows)
  substitution  z_a = r_a,  1 − r_a,  or 1 − 1/r_a

and O_λ is represented by G_λ(z_1, …, z_r).  Grothendieck polynomials in the convention of
Buch (2002) (G_1 = 1 − ∏(1 − z_a)), computed by the bialternant formula
    G_λ(z_1…z_r) = det( z_i^{λ_j + r − j} (1 − z_i)^{j−1} ) / ∏_{i<j} (z_i − z_j)
(Buch, Acta Math. 189 (2002), §2, after Lascoux–Schützenberger; recalled from memory, and the
tests check it against the set-valued tableau formula of the same paper, Thm 3.1).

The polynomial is kept as an integer polynomial in the elementary symmetric functions e_j(z)
(`grothendieck_in_elementary`), and `substituted_elementary` gives e_j(z) from the λ-classes
of the bundle, so that one definition serves polynomials and multiplication matrices alike.
"""
from __future__ import annotations

import functools
import itertools
import math
from dataclasses import dataclass
from typing import Dict, List, Sequence, Tuple

import flint

from ringmatch.errors import InputError

Partition = Tuple[int, ...]

BUNDLES = ("S", "Sdual", "Q")
SUBSTITUTIONS = ("x", "1-x", "1-1/x")


class SchubertInputError(InputError):
    """A Schubert basis, label or candidate name that cannot be used."""


def partitions_in_box(rows: int, columns: int) -> List[Partition]:
    """Partitions with at most `rows` parts, each at most `columns`, without trailing zeros:
    by size, then in decreasing lexicographic order (the empty partition first)."""
    out = []
    for parts in itertools.combinations_with_replacement(range(columns, -1, -1), rows):
        out.append(tuple(p for p in parts if p))
    out = sorted(set(out), key=lambda lam: (sum(lam), [-p for p in lam]))
    return out


def conjugate(lam: Partition) -> Partition:
    return tuple(sum(1 for p in lam if p > i) for i in range(lam[0] if lam else 0))


def label_text(lam: Sequence[int]) -> str:
    return "[" + ",".join(map(str, lam)) + "]"


def parse_label(text: str) -> Tuple[int, ...]:
    """'[2,1]', '2,1', '(2 1)', '[]' or '0' → (2, 1) / (); one-line error otherwise."""
    body = text.strip().strip("[]()").replace(",", " ").split()
    try:
        values = tuple(int(t) for t in body)
    except ValueError:
        raise SchubertInputError(f"Schubert label {text!r}: expected integers such as [2,1]") from None
    if any(v < 0 for v in values):
        raise SchubertInputError(f"Schubert label {text!r}: negative part")
    return tuple(v for v in values if v) if _weakly_decreasing(values) else values


def _weakly_decreasing(values: Sequence[int]) -> bool:
    return all(a >= b for a, b in zip(values, values[1:]))


# ---------------------------------------------------------------------------------------
# Grothendieck polynomials

@functools.lru_cache(maxsize=None)
def _variables(r: int):
    ctx = flint.fmpz_mpoly_ctx.get(tuple(f"z{a}" for a in range(1, r + 1)), "lex")
    return ctx, ctx.gens()


def grothendieck(lam: Partition, r: int):
    """G_λ(z_1…z_r) as an fmpz_mpoly (zero when λ has more than r parts)."""
    ctx, z = _variables(r)
    if len(lam) > r:
        return ctx.constant(0)
    parts = list(lam) + [0] * (r - len(lam))
    one = ctx.constant(1)
    entry = [[z[i] ** (parts[j] + r - 1 - j) * (one - z[i]) ** j for j in range(r)]
             for i in range(r)]
    numerator = ctx.constant(0)
    for perm in itertools.permutations(range(r)):
        term = ctx.constant(_sign(perm))
        for i, j in enumerate(perm):
            term = term * entry[i][j]
        numerator = numerator + term
    vandermonde = one
    for i in range(r):
        for j in range(i + 1, r):
            vandermonde = vandermonde * (z[i] - z[j])
    return numerator / vandermonde


def _sign(perm: Sequence[int]) -> int:
    inversions = sum(1 for a in range(len(perm)) for b in range(a + 1, len(perm))
                     if perm[a] > perm[b])
    return -1 if inversions % 2 else 1


@functools.lru_cache(maxsize=None)
def grothendieck_in_elementary(lam: Partition, r: int) -> Dict[Tuple[int, ...], int]:
    """G_λ(z_1…z_r) = Σ c·∏_j e_j(z)^{a_j}, as {(a_1…a_r): c} (fundamental theorem of
    symmetric polynomials: peel off the lex-leading monomial z^μ by ∏ e_j^{μ_j − μ_{j+1}})."""
    ctx, z = _variables(r)
    e = [ctx.constant(1)]
    for j in range(1, r + 1):
        total = ctx.constant(0)
        for subset in itertools.combinations(z, j):
            total = total + math.prod(subset[1:], start=subset[0])
        e.append(total)
    remainder = grothendieck(lam, r)
    out: Dict[Tuple[int, ...], int] = {}
    while not remainder.is_zero():
        mu = remainder.monomial(0)
        coefficient = int(remainder.coeffs()[0])
        if not _weakly_decreasing(mu):
            raise AssertionError(f"G_{lam} is not symmetric: leading monomial {mu}")
        powers = tuple(mu[j] - (mu[j + 1] if j + 1 < r else 0) for j in range(r))
        out[powers] = out.get(powers, 0) + coefficient
        product = ctx.constant(coefficient)
        for j, a in enumerate(powers, start=1):
            if a:
                product = product * e[j] ** a
        remainder = remainder - product
    return out


def substituted_elementary(substitution: str, lam: Sequence, inverse_top) -> list:
    """[e_0(z), …, e_r(z)] for z_a = f(r_a), given lam = [λ_0, …, λ_r] of the roots r_a
    (λ_0 the unit) and the inverse of λ_r (used only when f involves 1/r).  Works on anything
    with +, * and integer multiples: ring elements or multiplication matrices.

    e_j(1/r) = λ_{r−j}/λ_r, and ∏(1 + y(1 − r_a)) = Σ_i (1 + y)^{r−i} (−y)^i λ_i gives
    e_j(1 − r) = Σ_{i≤j} (−1)^i C(r−i, j−i) λ_i."""
    if substitution not in SUBSTITUTIONS:
        raise SchubertInputError(f"unknown substitution {substitution!r}; expected one of "
                                 f"{', '.join(SUBSTITUTIONS)}")
    lam = list(lam)
    if substitution == "x":
        return lam
    if substitution == "1-1/x":
        lam = inverted_roots(lam, inverse_top)
    return one_minus(lam)


def inverted_roots(lam: Sequence, inverse_top) -> list:
    """λ_j of the inverse roots: λ_{r−j}·λ_r^{-1} (λ_0 stays the unit)."""
    r = len(lam) - 1
    return [lam[0]] + [lam[r - j] * inverse_top for j in range(1, r + 1)]


def one_minus(lam: Sequence) -> list:
    r = len(lam) - 1
    out = [lam[0]]
    for j in range(1, r + 1):
        total = None
        for i in range(j + 1):
            term = lam[i] * ((-1) ** i * math.comb(r - i, j - i))
            total = term if total is None else total + term
        out.append(total)
    return out


@dataclass(frozen=True)
class Candidate:
    """O_λ = G_{λ or λ'}(f(roots of the bundle))."""
    bundle: str
    substitution: str

    @property
    def name(self) -> str:
        return f"groth:{self.bundle}:{self.substitution}"

    def describe(self) -> str:
        roots = {"S": "x_a (roots of S)", "Sdual": "1/x_a (roots of S^dual)",
                 "Q": "the roots of Q, label conjugated"}[self.bundle]
        return f"Grothendieck polynomial G_lambda(z), z_a = {self.substitution} in {roots}"

    def polynomial_label(self, lam: Partition) -> Partition:
        return conjugate(lam) if self.bundle == "Q" else lam


CANDIDATES = tuple(Candidate(b, s) for b in BUNDLES for s in SUBSTITUTIONS)


def candidate_named(name: str) -> Candidate:
    for candidate in CANDIDATES:
        if candidate.name == name:
            return candidate
    raise SchubertInputError(f"unknown built-in basis {name!r}; known: "
                             f"{', '.join(c.name for c in CANDIDATES)}, auto, or a .toml file")
