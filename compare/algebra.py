"""Algebra backend on python-flint: coefficient rings, specialisations, λ_y-class helpers.

A presentation family builds its relations once, against a `Ring`.  The same builder code
then serves three purposes, depending on which ring it is handed:

* `symbolic_ring`    — over Q, with T_1…T_n and q_1…q_m as polynomial variables (display);
* `specialised_ring` — over F_p, with T and q replaced by residues (Gröbner computations);
* `series_ring`      — over F_p, with T residues and q_i = c_i·s on a line, s a variable
                       (evaluation at the Bethe points, which are power series in s).

Polynomials in the auxiliary variable y (generating functions such as λ_y(S_i)) are plain
Python lists of ring elements, index = power of y.
"""
from __future__ import annotations

import random
from dataclasses import dataclass, field
from typing import Dict, List, Optional, Sequence, Tuple

import flint

from ringmatch.errors import InputError

# The largest prime below 2^62: word-size for every nmod type of python-flint, with
# headroom so that no intermediate of FLINT's nmod arithmetic needs special handling.
DEFAULT_PRIME = 4611686018427387847


def check_prime(prime) -> int:
    """`prime` itself when it is an integer prime p with 3 ≤ p < 2^63 (one machine word, as
    FLINT's nmod types need); otherwise InputError, one line naming the value.  The one
    check of a user-supplied prime: the command line and the components call it alike."""
    if isinstance(prime, bool) or not isinstance(prime, int) or prime < 3 or prime >= 2**63 \
            or not flint.fmpz(prime).is_prime():
        raise InputError(f"{prime!r} is not a prime with 3 ≤ p < 2^63")
    return prime


YPoly = List  # coefficients in y, lowest first


@dataclass(frozen=True)
class Specialisation:
    """Residues for the parameters.  `q` holds residues, or None when q sits on a line."""
    prime: int
    T: Tuple[int, ...]
    q: Optional[Tuple[int, ...]] = None
    q_line: Optional[Tuple[int, ...]] = None
    seed: Optional[int] = None

    def record(self) -> dict:
        return {"prime": self.prime, "seed": self.seed, "weights": list(self.T),
                "q_values": None if self.q is None else list(self.q),
                "q_line": None if self.q_line is None else list(self.q_line)}


def draw_specialisation(n: int, m: int, *, seed: Optional[int] = None,
                        prime: int = DEFAULT_PRIME, equivariant: bool = True,
                        q_on_line: bool = False) -> Specialisation:
    """Random distinct nonzero weights and random q residues (or a random line for q).

    The seed is drawn when not given and always recorded, so the draw can be repeated."""
    if equivariant and prime - 2 < n:
        raise ValueError(f"the prime {prime} is too small for {n} distinct weights")
    if seed is None:
        seed = random.SystemRandom().randrange(2**32)
    rng = random.Random(seed)
    if equivariant:
        weights: List[int] = []
        while len(weights) < n:
            w = rng.randrange(2, prime)
            if w not in weights:
                weights.append(w)
    else:
        weights = [1] * n
    values = tuple(rng.randrange(2, prime) for _ in range(m))
    if q_on_line:
        return Specialisation(prime, tuple(weights), None, values, seed)
    return Specialisation(prime, tuple(weights), values, None, seed)


@dataclass(frozen=True)
class Ring:
    """A polynomial ring with named generators and values for the parameters T and q."""
    ctx: object
    gen: Dict[str, object]
    T: Tuple[object, ...]
    q: Tuple[object, ...]
    extra: Dict[str, object] = field(default_factory=dict)   # e.g. 's' or the unit inverter

    @property
    def one(self):
        return self.ctx.constant(1)

    @property
    def zero(self):
        return self.ctx.constant(0)

    def const(self, c):
        return self.ctx.constant(c)


def parameter_names(n: int, m: int, equivariant: bool = True) -> List[str]:
    return ([f"T{j}" for j in range(1, n + 1)] if equivariant else []) + \
           [f"q{i}" for i in range(1, m + 1)]


def symbolic_ring(generators: Sequence[str], n: int, m: int, *,
                  equivariant: bool = True, ordering: str = "degrevlex") -> Ring:
    """Generators and parameters all as variables over Q (T_j = 1 when not equivariant)."""
    names = list(generators) + parameter_names(n, m, equivariant)
    ctx = flint.fmpq_mpoly_ctx.get(tuple(names), ordering)
    gens = ctx.gens()
    gen = dict(zip(generators, gens[:len(generators)]))
    rest = gens[len(generators):]
    T = tuple(rest[:n]) if equivariant else tuple(ctx.constant(1) for _ in range(n))
    q = tuple(rest[n:] if equivariant else rest)
    return Ring(ctx, gen, T, q)


def specialised_ring(generators: Sequence[str], spec: Specialisation, *,
                     extra: Sequence[str] = (), ordering: str = "degrevlex") -> Ring:
    """Over F_p with T and q replaced by the residues of `spec` (which must fix q)."""
    if spec.q is None:
        raise ValueError("specialised_ring needs q residues, not a line")
    names = tuple(generators) + tuple(extra)
    ctx = flint.nmod_mpoly_ctx.get(names, spec.prime, ordering)
    gens = ctx.gens()
    return Ring(ctx, dict(zip(generators, gens)), tuple(ctx.constant(t) for t in spec.T),
                tuple(ctx.constant(v) for v in spec.q),
                dict(zip(extra, gens[len(generators):])))


def series_ring(generators: Sequence[str], spec: Specialisation, *,
                ordering: str = "degrevlex") -> Ring:
    """Over F_p with T residues and q_i = c_i·s; s is the last variable (in `extra['s']`)."""
    if spec.q_line is None:
        raise ValueError("series_ring needs a q line")
    names = tuple(generators) + ("s",)
    ctx = flint.nmod_mpoly_ctx.get(names, spec.prime, ordering)
    gens = ctx.gens()
    s = gens[-1]
    return Ring(ctx, dict(zip(generators, gens[:-1])), tuple(ctx.constant(t) for t in spec.T),
                tuple(c * s for c in spec.q_line), {"s": s})


# ---------------------------------------------------------------------------------------
# Polynomials in y (generating functions)

def ypoly_add(a: YPoly, b: YPoly, zero) -> YPoly:
    size = max(len(a), len(b))
    return [(a[i] if i < len(a) else zero) + (b[i] if i < len(b) else zero) for i in range(size)]


def ypoly_sub(a: YPoly, b: YPoly, zero) -> YPoly:
    return ypoly_add(a, [-c for c in b], zero)


def ypoly_mul(a: YPoly, b: YPoly, zero) -> YPoly:
    if not a or not b:
        return []
    out = [zero] * (len(a) + len(b) - 1)
    for i, x in enumerate(a):
        for j, y in enumerate(b):
            out[i + j] = out[i + j] + x * y
    return out


def ypoly_scale(a: YPoly, c) -> YPoly:
    return [c * x for x in a]


def ypoly_shift(a: YPoly, k: int, zero) -> YPoly:
    """Multiply by y^k."""
    return [zero] * k + list(a)


def elementary_symmetric(values: Sequence, one) -> List:
    """[e_0, e_1, …, e_k] of the given ring elements — also λ_y of a bundle with these Chern
    roots, ∏ (1 + y·x), as a polynomial in y."""
    out = [one]
    for x in values:
        out = out + [one * 0]
        for j in range(len(out) - 1, 0, -1):
            out[j] = out[j] + x * out[j - 1]
    return out


def ypoly_divide_series(a: YPoly, b: YPoly, terms: int, zero) -> YPoly:
    """First `terms` coefficients of a/b as a power series in y; b[0] must be 1."""
    out = []
    for j in range(terms):
        c = a[j] if j < len(a) else zero
        for i in range(1, min(j, len(b) - 1) + 1):
            c = c - b[i] * out[j - i]
        out.append(c)
    return out


def poly_text(poly, names: Sequence[str]) -> str:
    """A polynomial over F_p in the presentation-file grammar (`*`, `^`, residues as the
    small rationals they reduce from: reconstruct.small_residue), so that a printed witness
    can be pasted back into a file."""
    from .reconstruct import small_residue
    modulus = poly.context().modulus()
    pieces = []
    for exponents, coefficient in poly.terms():
        fraction = small_residue(int(coefficient), modulus)
        numerator, denominator = fraction.numerator, fraction.denominator
        factors = [name if e == 1 else f"{name}^{e}"
                   for name, e in zip(names, exponents) if e]
        magnitude = f"{abs(numerator)}" + (f"/{denominator}" if denominator != 1 else "")
        if factors and magnitude == "1":
            body = "*".join(factors)
        else:
            body = "*".join([magnitude] + factors)
        pieces.append(("-" if numerator < 0 else "+", body))
    if not pieces:
        return "0"
    text = ("-" if pieces[0][0] == "-" else "") + pieces[0][1]
    return text + "".join(f" {sign} {body}" for sign, body in pieces[1:])
