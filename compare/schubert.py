"""Quantum K structure constants of a Schubert basis in any presentation, and their checks.

Given a presentation and a candidate basis {O_λ} (built-in Grothendieck polynomials of
`presentations/schubert_bases.py` or polynomials from a file), every product is expanded as
O_λ ⋆ O_μ = Σ_ν N_{λμ}^ν(q) O_ν with N exact polynomials in q with integer coefficients:

1. At each of several random values of q mod a large prime p (non-equivariant, T_j = 1): the
   presentation's reduced Gröbner basis gives the quotient as a vector space on its standard
   monomials; the basis becomes a matrix B (one column per O_λ), and all products at once are
   Bᵀ·[X^b·B]_b, where X^b multiplies by the standard monomial b (the product O_λ·O_μ is
   Σ_b B[b,λ]·X^b·B[:,μ]).  Solving with B gives every N(q) mod p.
2. Interpolation through as many values as there are q-monomials of total degree ≤ D + 1,
   D the stated degree bound; the coefficients of degree D + 1 must vanish (the
   interpolation has stabilised below D + 1) and one further random value must agree —
   the *finiteness* check.  Coefficients are lifted to the symmetric range (−p/2, p/2).
3. The checks of `run_checks`, each from an outside source (see `schubert_reference.py`).

The lifting is right whenever every true coefficient lies in (−p/2, p/2), about ±2.3·10^18
for the default prime; nothing computed mod p can detect a coefficient outside that range,
which is one reason the certificate says `exact: false` (the other: random q values could, with
negligible probability, hit a degenerate specialisation).  The coefficients met here are tiny
(at most 2 in absolute value for Gr(3,6)).
"""
from __future__ import annotations

import itertools
import random
from dataclasses import dataclass, field
from typing import Dict, List, Optional, Sequence, Tuple

import flint

from ringmatch.errors import InputError
from ringmatch.presentations.flagtype import FlagType
from ringmatch.presentations.interface import Family, PresentationError
from ringmatch.presentations.meanings import Meaning, lambda_Q, lambda_S
from ringmatch.presentations import schubert_bases as sb

from . import algebra, groebner
from .engine import own_ideal
from . import schubert_reference as reference

Label = Tuple[int, ...]
QMonomial = Tuple[int, ...]

# Quotients larger than this are refused: the dense matrices grow with its square.
MAX_DIMENSION = 2000


class SchubertError(InputError):
    """A Schubert computation that cannot be set up as asked (one line)."""


# ---------------------------------------------------------------------------------------
# Bases as input

@dataclass(frozen=True)
class Basis:
    """A candidate Schubert basis: labels, and either a built-in candidate or polynomials in
    the presentation's generator names ({((name, power), …): integer})."""
    name: str
    labels: Tuple[Label, ...]
    candidate: Optional[sb.Candidate] = None
    polynomials: Optional[Tuple[dict, ...]] = None
    source: str = ""
    # Products at q = 0 that the basis' definition gives ({(u, v): {w: c}}), from a file.
    classical: Optional[Dict[Tuple[Label, Label], Dict[Label, int]]] = None


def candidate_basis(flag: FlagType, candidate: sb.Candidate) -> Basis:
    if not flag.is_grassmannian:
        raise SchubertError(f"the built-in Grothendieck bases are for Grassmannians; give a "
                            f"basis file for {flag.name}")
    k, n = flag.k(1), flag.n
    return Basis(candidate.name, tuple(sb.partitions_in_box(k, n - k)), candidate,
                 source=candidate.describe())


def check_labels(flag: FlagType, basis: Basis) -> None:
    """Count and, for Grassmannians, the box: a one-line error naming the culprit."""
    if len(set(basis.labels)) != len(basis.labels):
        raise SchubertError(f"basis {basis.name}: a Schubert label occurs twice")
    if flag.is_grassmannian:
        k, n = flag.k(1), flag.n
        for lam in basis.labels:
            if any(a < b for a, b in zip(lam, lam[1:])) or len(lam) > k or \
                    (lam and lam[0] > n - k):
                raise SchubertError(f"basis {basis.name}: label {sb.label_text(lam)} is not a "
                                    f"partition in the {k} x {n - k} box of {flag.name}")
    if len(basis.labels) != flag.rank:
        raise SchubertError(f"basis {basis.name} has {len(basis.labels)} elements; "
                            f"{flag.name} has rank {flag.rank}")


# ---------------------------------------------------------------------------------------
# The quotient at one value of q, as linear algebra

class Quotient:
    """F_p[generators]/I for a zero-dimensional I, on the standard monomials of its basis."""

    def __init__(self, ring: algebra.Ring, basis: list):
        self.ring, self.basis = ring, basis
        self.ctx = ring.ctx
        self.prime = self.ctx.modulus()
        if not basis or not groebner.is_zero_dimensional(basis):
            raise SchubertError("the presentation's quotient is not finite-dimensional at this "
                                "value of q")
        try:
            self.monomials = groebner.standard_monomials(basis, limit=MAX_DIMENSION)
        except groebner.LimitExceeded:
            raise SchubertError(f"quotient of dimension above {MAX_DIMENSION}") from None
        self.index = {m: i for i, m in enumerate(self.monomials)}
        self.dim = len(self.monomials)
        # built on demand: exponents → matrix of that monomial; each variable's matrix
        self._powers: Dict[Tuple[int, ...], object] = {}
        self._generators: List[object] = [None] * len(self.ctx.names())

    def vectors(self, polys: Sequence) -> List[List[int]]:
        out = []
        for image in groebner.normal_forms(list(polys), self.basis):
            v = [0] * self.dim
            for exponents, coefficient in image.terms():
                v[self.index[exponents]] = int(coefficient)
            out.append(v)
        return out

    def column(self, poly):
        return flint.nmod_mat(self.dim, 1, self.vectors([poly])[0], self.prime)

    def matrix(self, poly):
        """Multiplication by `poly`, column b the coordinates of poly·b: poly evaluated at
        the generators' multiplication matrices (a product of D×D matrices per monomial of
        poly, instead of D normal forms of poly times a standard monomial)."""
        total = flint.nmod_mat(self.dim, self.dim, self.prime)
        for exponents, coefficient in poly.terms():
            total = total + self._monomial_matrix(tuple(exponents)) * int(coefficient)
        return total

    def _monomial_matrix(self, exponents: Tuple[int, ...]):
        if exponents not in self._powers:
            if any(exponents):
                g, smaller = _one_variable_less(exponents)
                self._powers[exponents] = self._generator(g) * self._monomial_matrix(smaller)
            else:
                self._powers[exponents] = _identity(self.dim, self.prime)
        return self._powers[exponents]

    def generator_matrix(self, g: int):
        """Multiplication by the g-th variable: x_g·b is itself a standard monomial for most
        standard b (a unit column); only the others, on the border, need a normal form."""
        entries = [0] * (self.dim * self.dim)
        border, border_columns = [], []
        for c, b in enumerate(self.monomials):
            shifted = list(b)
            shifted[g] += 1
            target = self.index.get(tuple(shifted))
            if target is None:
                border.append(self.monomial(shifted))
                border_columns.append(c)
            else:
                entries[target * self.dim + c] = 1
        for c, vector in zip(border_columns, self.vectors(border)):
            for r, value in enumerate(vector):
                if value:
                    entries[r * self.dim + c] = value
        return flint.nmod_mat(self.dim, self.dim, entries, self.prime)

    def monomial(self, exponents):
        return self.ctx.from_dict({tuple(exponents): 1})

    def monomial_images(self, B) -> list:
        """X^b·B for every standard monomial b, in the order of `monomials`: each from a
        smaller monomial's by one product with a generator's multiplication matrix (every
        divisor of a standard monomial is standard).  That is D products of D×D by D×r;
        forming the D×D matrices X^b first would take D products of D×D by D×D, which for
        the Chern roots of `bethe` (D = rank·∏k_i!) dominated everything."""
        nvars = len(self.ctx.names())
        out = {tuple([0] * nvars): B}
        for b in sorted(self.monomials, key=sum):
            if sum(b) == 0:
                continue
            g, smaller = _one_variable_less(b)
            out[b] = self._generator(g) * out[smaller]
        return [out[b] for b in self.monomials]

    def _generator(self, g: int):
        if self._generators[g] is None:
            self._generators[g] = self.generator_matrix(g)
        return self._generators[g]


def _one_variable_less(exponents) -> Tuple[int, Tuple[int, ...]]:
    """(g, exponents − e_g) for the first variable g that occurs."""
    g = next(i for i, e in enumerate(exponents) if e)
    smaller = list(exponents)
    smaller[g] -= 1
    return g, tuple(smaller)


def _identity(size: int, prime: int):
    return flint.nmod_mat(size, size, [int(r == c) for r in range(size) for c in range(size)],
                          prime)


def signed(value: int, prime: int) -> int:
    value %= prime
    return value - prime if value > prime // 2 else value


# ---------------------------------------------------------------------------------------
# Basis elements as vectors

def _lambda_classes(family: Family, flag: FlagType, ring: algebra.Ring) -> Tuple[list, list]:
    """[1, λ_1(S), …, λ_k(S)] and [1, λ_1(Q), …] of a Grassmannian as ring elements, through
    the meanings of the presentation's generators: λ(S) directly or as e_j of the Chern roots;
    λ_j(Q) directly or as [y^j] λ_y(C^n)/λ_y(S) (valid in the quantum ring for j ≤ n − k:
    the q-term of the Whitney relation starts at y^{n−k+1}, arXiv:2310.03826)."""
    k, n = flag.k(1), flag.n
    by_meaning: Dict[Meaning, object] = {g.meaning: ring.gen[g.name]
                                         for g in family.generators(flag)}
    S = [by_meaning.get(lambda_S(1, j)) for j in range(1, k + 1)]
    if any(s is None for s in S):
        roots = [by_meaning.get(Meaning("root", 1, a)) for a in range(1, k + 1)]
        if any(r is None for r in roots):
            raise SchubertError(f"presentation {family.name} has neither the classes "
                                "lambda_j(S_1) nor the Chern roots x_a(S_1) among its generators; "
                                "the built-in bases are written in those")
        S = algebra.elementary_symmetric(roots, ring.one)[1:]
    lam_S = [ring.one] + S
    Q = [by_meaning.get(lambda_Q(1, j)) for j in range(1, n - k + 1)]
    if any(x is None for x in Q):
        Q = algebra.ypoly_divide_series(algebra.elementary_symmetric(ring.T, ring.one), lam_S,
                                        n - k + 1, ring.zero)[1:]
    return lam_S, [ring.one] + Q


def candidate_vectors(quotient: Quotient, family: Family, flag: FlagType,
                      basis: Basis) -> list:
    """The columns B[:, λ] of a built-in candidate."""
    candidate = basis.candidate
    lam_S, lam_Q = _lambda_classes(family, flag, quotient.ring)
    classes = lam_Q if candidate.bundle == "Q" else lam_S
    A = [quotient.matrix(c) for c in classes]
    try:
        inverse_top = A[-1].inv() if candidate.bundle == "Sdual" or \
            candidate.substitution == "1-1/x" else None
    except ZeroDivisionError:
        raise SchubertError(f"the top λ-class of {candidate.bundle} is not invertible in "
                            f"{family.name} at this q") from None
    if candidate.bundle == "Sdual":
        A = sb.inverted_roots(A, inverse_top)
        inverse_top = A[-1].inv() if candidate.substitution == "1-1/x" else None
    E = sb.substituted_elementary(candidate.substitution, A, inverse_top)
    rank = len(E) - 1
    unit = quotient.column(quotient.ring.one)
    memo = {tuple([0] * rank): unit}

    def power_vector(exponents):
        if exponents not in memo:
            j = next(i for i, e in enumerate(exponents) if e)
            smaller = list(exponents)
            smaller[j] -= 1
            memo[exponents] = E[j + 1] * power_vector(tuple(smaller))
        return memo[exponents]

    out = []
    for lam in basis.labels:
        total = flint.nmod_mat(quotient.dim, 1, quotient.prime)
        for exponents, c in sb.grothendieck_in_elementary(candidate.polynomial_label(lam),
                                                          rank).items():
            total = total + power_vector(exponents) * (c % quotient.prime)
        out.append([int(x) for x in total.entries()])
    return out


def polynomial_vectors(quotient: Quotient, basis: Basis) -> list:
    return quotient.vectors(_polynomials(quotient.ring, basis))


def _polynomials(ring: algebra.Ring, basis: Basis) -> list:
    polys = []
    for label, terms in zip(basis.labels, basis.polynomials):
        total = ring.zero
        for monomial, c in terms.items():
            term = ring.const(c % ring.ctx.modulus())
            for name, power in monomial:
                if name not in ring.gen:
                    raise SchubertError(f"basis {basis.name}, {sb.label_text(label)}: unknown "
                                        f"generator {name!r} (known: "
                                        f"{', '.join(sorted(ring.gen))})")
                term = term * ring.gen[name] ** power
            total = total + term
        polys.append(total)
    return polys


# ---------------------------------------------------------------------------------------
# Constants at one q

@dataclass
class Evaluation:
    """N(q) mod p at one value of q: rows ν, columns λ·r + μ; or why there is none."""
    q: Tuple[int, ...]
    constants: Optional[object]           # nmod_mat r × r²
    dependency: Optional[Dict[Label, int]] = None
    not_closed: Optional[Tuple[Label, Label]] = None
    dimension: int = 0


def evaluate(family: Family, flag: FlagType, basis: Basis, q: Sequence[int],
             prime: int, weights: Optional[Sequence[int]] = None,
             quotients: Optional[dict] = None) -> Evaluation:
    """N(q) for one q.  `quotients`, when given, keeps each specialisation's quotient (its
    Gröbner basis and multiplication matrices) for later calls with the same family, so that
    several candidate bases at the same q values cost one Gröbner basis per q."""
    spec = algebra.Specialisation(prime, tuple(weights or [1] * flag.n), tuple(q))
    quotient = quotients.get(spec) if quotients is not None else None
    if quotient is None:
        try:
            ideal = own_ideal(family, flag, spec)
        except PresentationError as error:
            raise SchubertError(str(error)) from None
        quotient = Quotient(ideal.ring, ideal.basis)
        if quotients is not None:
            quotients[spec] = quotient
    if basis.candidate is not None:
        columns = candidate_vectors(quotient, family, flag, basis)
    else:
        columns = polynomial_vectors(quotient, basis)
    D, r = quotient.dim, len(columns)
    B = flint.nmod_mat(D, r, [columns[c][row] for row in range(D) for c in range(r)], prime)
    dependency = _dependency(B, basis.labels, prime)
    if dependency is not None:
        return Evaluation(tuple(q), None, dependency=dependency, dimension=D)
    pivots = _independent_rows(B)
    # All products: P[λ, row·r + μ] = Σ_b B[b, λ]·(X^b B)[row, μ].
    stacked = []
    for XB in quotient.monomial_images(B):
        stacked.extend(XB.entries())
    P = B.transpose() * flint.nmod_mat(D, D * r, stacked, prime)
    entries = [int(x) for x in P.entries()]
    # products[row][λ·r + μ]
    products = [[entries[lam * D * r + row * r + mu] for lam in range(r) for mu in range(r)]
                for row in range(D)]
    B_rows = flint.nmod_mat(r, r, [int(B[i, c]) for i in pivots for c in range(r)], prime)
    rhs = flint.nmod_mat(r, r * r, [x for i in pivots for x in products[i]], prime)
    N = B_rows.inv() * rhs
    if D > r:
        full = flint.nmod_mat(D, r * r, [x for row in products for x in row], prime)
        residual = B * N - full
        for column in range(r * r):
            if any(int(residual[row, column]) for row in range(D)):
                lam, mu = divmod(column, r)
                return Evaluation(tuple(q), None, not_closed=(basis.labels[lam],
                                                             basis.labels[mu]), dimension=D)
    return Evaluation(tuple(q), N, dimension=D)


def _dependency(B, labels, prime) -> Optional[Dict[Label, int]]:
    if B.rank() == B.ncols():
        return None
    kernel, nullity = B.nullspace()
    return {labels[c]: signed(int(kernel[c, 0]), prime) for c in range(B.ncols())
            if int(kernel[c, 0])}


def _independent_rows(B) -> List[int]:
    reduced, rank = B.transpose().rref()
    pivots = []
    for row in range(rank):
        pivots.append(next(c for c in range(reduced.ncols()) if int(reduced[row, c])))
    return pivots


# ---------------------------------------------------------------------------------------
# Interpolation in q

def q_monomials(m: int, degree: int) -> List[QMonomial]:
    return sorted((e for e in itertools.product(range(degree + 1), repeat=m)
                   if sum(e) <= degree), key=lambda e: (sum(e), e))


def default_degree_bound(flag: FlagType) -> int:
    """The stated bound D on the q-degree of the constants: min(k, n − k) for Gr(k;n)
    (Buch–Mihalcea, Duke Math. J. 156 (2011): powers of q in O_λ ⋆ O_μ stay at most
    min(k, n−k); recalled from memory — the finiteness check tests it, never assumes it),
    n − 1 in total degree for other flag types (a generous guess, stated as such)."""
    if flag.is_grassmannian:
        return min(flag.k(1), flag.n - flag.k(1))
    return flag.n - 1


@dataclass
class SchubertResult:
    case: str
    presentation: str
    basis: Basis
    constants: Dict[Tuple[Label, Label, Label], Dict[QMonomial, int]]
    checks: List[dict]
    certificate: dict
    m: int
    notes: List[str] = field(default_factory=list)

    @property
    def passed(self) -> bool:
        return all(c["passed"] for c in self.checks)


def _q_value(rng: random.Random, prime: int, m: int, used: set) -> Tuple[int, ...]:
    while True:
        value = tuple(rng.randrange(2, prime) for _ in range(m))
        if value not in used:
            used.add(value)
            return value


def structure_constants(flag: FlagType, family: Family, basis: Basis, *, seed: Optional[int] = None,
                        prime: int = algebra.DEFAULT_PRIME,
                        degree_bound: Optional[int] = None,
                        equivariant: bool = False,
                        quotients: Optional[dict] = None) -> SchubertResult:
    """All N_{λμ}^ν(q) and the checks.  Equivariantly (T at random residues drawn from the
    seed) the coefficients are residues mod p, not integers, and only the checks that make
    sense for a specialised T run (basis, finiteness, classical ring)."""
    check_labels(flag, basis)
    if seed is None:
        seed = random.SystemRandom().randrange(2**32)
    prime, prime_note = _usable_prime(prime, flag, family, basis)
    bound = default_degree_bound(flag) if degree_bound is None else degree_bound
    m = flag.m
    monomials = q_monomials(m, bound + 1)
    rng = random.Random(seed)
    used: set = set()
    points = [_q_value(rng, prime, m, used) for _ in monomials]
    extra = _q_value(rng, prime, m, used)
    weights = algebra.draw_specialisation(flag.n, m, seed=seed, prime=prime).T \
        if equivariant else None
    certificate = {"prime": prime, "seed": seed, "degree_bound": bound,
                   "weights": list(weights) if weights else None,
                   "q_values": [list(p) for p in points], "extra_q": list(extra),
                   "method": "normal forms at random q mod p, interpolation, " + (
                       "coefficients as residues mod p (T specialised)" if equivariant
                       else "signed lifting"),
                   "exact": False}
    r = len(basis.labels)
    checks: List[dict] = []
    evaluations = []
    notes: List[str] = [prime_note] if prime_note else []
    for q in points + [extra, tuple([0] * m)]:
        evaluation = evaluate(family, flag, basis, q, prime, weights, quotients)
        if not any(q) and evaluation.dimension != evaluations[0].dimension:
            # e.g. the Bethe equations at T = 1: roots collide at q = 0 and the inverted
            # Vandermonde kills the ring, so q = 0 is no point of the family.
            notes.append(f"{family.name} does not specialise to q = 0 (quotient of dimension "
                         f"{evaluation.dimension} there, {evaluations[0].dimension} at random "
                         "q); the classical constants are the interpolated N(0)")
            evaluations.append(None)
            break
        if evaluation.constants is None:
            checks.append(_basis_failure(flag, basis, evaluation))
            return SchubertResult(flag.name, family.name, basis, {},
                                  checks + _not_run(flag, basis),
                                  certificate, m, notes)
        evaluations.append(evaluation)
    checks.append(_check("basis", True, f"{r} elements, the rank of {flag.name}, linearly "
                         f"independent modulo the ideal at all {len(evaluations)} values of q "
                         "(including q = 0)", "rank of the basis matrix on the standard monomials"))
    coefficients = _interpolate(points, monomials,
                                [e.constants for e in evaluations[:len(points)]], prime)
    top = [mono for mono in monomials if sum(mono) == bound + 1]
    nonzero_top = [mono for mono in top if coefficients[mono] != _zero_like(coefficients[mono])]
    predicted = _value_at(coefficients, extra, prime)
    agrees = predicted == evaluations[len(points)].constants
    constants = _lift(coefficients, basis.labels, prime, residues=equivariant)
    first = _first_triple(coefficients, nonzero_top, basis.labels) if nonzero_top else None
    checks.append(_check(
        "finiteness", not nonzero_top and agrees,
        (f"every N has q-degree ≤ {bound}; the interpolation through {len(points)} values "
         f"stabilised below degree {bound + 1} and the value at one further q agrees")
        if not nonzero_top and agrees else
        (f"a coefficient of total q-degree {bound + 1} is nonzero, first at "
         f"{first}" if nonzero_top else "the value at the extra q disagrees with the "
         "interpolation, first at " + _first_entry_difference(
             predicted, evaluations[len(points)].constants, basis.labels, prime,
             ("interpolated", "computed"))),
        "N is a polynomial in q: Buch-Mihalcea, Duke Math. J. 156 (2011) (Grassmannians); "
        "Anderson-Chen-Tseng, arXiv:1804.04579, and Kato (flag varieties) -- recalled from "
        "memory"))
    if evaluations[-1] is not None:
        at_zero = evaluations[-1].constants
        classical_agrees = coefficients[monomials[0]] == at_zero
        checks.append(_check("classical_ring", classical_agrees,
                             "N(0) from the interpolation equals the products computed in the "
                             "classical ring (q = 0)" if classical_agrees else
                             "N(0) from the interpolation differs from the products in the "
                             "classical ring (q = 0), first at " + _first_entry_difference(
                                 coefficients[monomials[0]], at_zero, basis.labels, prime,
                                 ("interpolated", "classical ring")),
                             "QK(X) at q = 0 is K(X)"))
    else:
        at_zero = coefficients[monomials[0]]
    if equivariant:
        notes.append("equivariant at the recorded weights: coefficients are residues mod p; the "
                     "Littlewood-Richardson, sum-rule and projective-space checks are "
                     "non-equivariant statements and do not run (equivariant Schubert classes "
                     "would be double Grothendieck polynomials, not built in)")
        return SchubertResult(flag.name, family.name, basis, constants, checks, certificate, m,
                              notes)
    classical = _lift({tuple([0] * m): at_zero}, basis.labels, prime)
    checks.extend(run_checks(flag, basis.labels, constants, classical,
                             polynomial=not nonzero_top and agrees))
    if basis.classical:
        checks.append(_given_classical(basis, classical))
    return SchubertResult(flag.name, family.name, basis, constants, checks, certificate, m,
                          notes)


def _zero_like(matrix):
    return flint.nmod_mat(matrix.nrows(), matrix.ncols(), matrix.modulus())


def _interpolate(points, monomials, values, prime) -> Dict[QMonomial, object]:
    size = len(points)
    V = flint.nmod_mat(size, size, [_power(p, mono, prime) for p in points for mono in monomials],
                       prime)
    try:
        Vinv = V.inv()
    except ZeroDivisionError:
        raise SchubertError("the random q values give a singular interpolation matrix; "
                            "try another --seed") from None
    out = {}
    for a, mono in enumerate(monomials):
        total = _zero_like(values[0])
        for i in range(size):
            c = int(Vinv[a, i])
            if c:
                total = total + values[i] * c
        out[mono] = total
    return out


def _power(point, mono, prime) -> int:
    value = 1
    for x, e in zip(point, mono):
        value = value * pow(x, e, prime) % prime
    return value


def _value_at(coefficients, point, prime):
    total = None
    for mono, matrix in coefficients.items():
        term = matrix * _power(point, mono, prime)
        total = term if total is None else total + term
    return total


def _lift(coefficients, labels, prime, residues: bool = False
          ) -> Dict[Tuple[Label, Label, Label], Dict[QMonomial, int]]:
    r = len(labels)
    out: Dict[Tuple[Label, Label, Label], Dict[QMonomial, int]] = {}
    for mono, matrix in coefficients.items():
        if matrix == _zero_like(matrix):
            continue
        entries = matrix.entries()
        for index, value in enumerate(entries):
            value = int(value)
            if value:
                nu, column = divmod(index, r * r)
                lam, mu = divmod(column, r)
                key = (labels[lam], labels[mu], labels[nu])
                out.setdefault(key, {})[mono] = value if residues else signed(value, prime)
    return {key: out[key] for key in sorted(out, key=lambda t: tuple(
        _position(labels, x) for x in t))}


def _position(labels, label):
    return labels.index(label)


def _first_triple(coefficients, monomials, labels) -> str:
    r = len(labels)
    for mono in monomials:
        for index, value in enumerate(coefficients[mono].entries()):
            if int(value):
                nu, column = divmod(index, r * r)
                lam, mu = divmod(column, r)
                return (f"N_{{{sb.label_text(labels[lam])},{sb.label_text(labels[mu])}}}"
                        f"^{sb.label_text(labels[nu])}, q-monomial {mono}")
    return "?"


def _first_entry_difference(first, second, labels, prime, names: Tuple[str, str]) -> str:
    """The first N_{λμ}^ν (in the order of the r × r² matrices) where two matrices of
    constants mod p differ, with both values lifted to the symmetric range."""
    r = len(labels)
    for index, (a, b) in enumerate(zip(first.entries(), second.entries())):
        if int(a) != int(b):
            nu, column = divmod(index, r * r)
            lam, mu = divmod(column, r)
            return (f"N_{{{sb.label_text(labels[lam])},{sb.label_text(labels[mu])}}}"
                    f"^{sb.label_text(labels[nu])}: {signed(int(a), prime)} ({names[0]}), "
                    f"{signed(int(b), prime)} ({names[1]}), mod p")
    return "?"


def _check(name: str, passed: bool, detail: str, source: str) -> dict:
    return {"name": name, "passed": bool(passed), "detail": detail, "source": source}


def _basis_failure(flag: FlagType, basis: Basis, evaluation: Evaluation) -> dict:
    where = "q = 0" if not any(evaluation.q) else f"q = {list(evaluation.q)} mod p"
    if evaluation.dependency is not None:
        combination = " + ".join(f"({c})*O{sb.label_text(lam)}"
                                 for lam, c in evaluation.dependency.items())
        detail = (f"linearly dependent modulo the ideal at {where}: {combination} = 0 "
                  "(coefficients mod p, lifted to the symmetric range)")
    else:
        lam, mu = evaluation.not_closed
        detail = (f"independent, but O{sb.label_text(lam)}·O{sb.label_text(mu)} is not in "
                  f"their span (quotient of dimension {evaluation.dimension} at {where})")
    return _check("basis", False, detail, "a basis of QK has rank-many independent elements")


def _not_run(flag: FlagType, basis: Basis) -> List[dict]:
    names = ["finiteness", "classical_ring"] + _applicable(flag) + (
        ["classical_given"] if basis.classical else [])
    return [_check(name, False, "not run: the candidates are not a basis", "") for name in names]


def _applicable(flag: FlagType) -> List[str]:
    out = []
    if flag.is_grassmannian:
        out.append("classical_lr")
    out.append("sum_rule")
    if flag.is_grassmannian and (flag.k(1) == 1 or flag.k(1) == flag.n - 1):
        out.append("projective_space")
    return out


# ---------------------------------------------------------------------------------------
# Checks from outside sources

def _value(constants, key, at) -> int:
    poly = constants.get(key, {})
    return sum(c * _monomial_value(mono, at) for mono, c in poly.items())


def _monomial_value(mono, at) -> int:
    value = 1
    for e in mono:
        value *= at ** e
    return value


def run_checks(flag: FlagType, labels: Sequence[Label], constants, classical, *,
               polynomial: bool = True) -> List[dict]:
    """`classical`: the constants computed in the classical ring itself (q = 0), so that the
    classical check does not lean on the interpolation; the others need the polynomials."""
    out = []
    if flag.is_grassmannian:
        out.append(_classical_lr(flag, labels, classical))
    checks = [_sum_rule]
    if flag.is_grassmannian and (flag.k(1) == 1 or flag.k(1) == flag.n - 1):
        checks.append(_projective)
    for check in checks:
        if polynomial:
            out.append(check(flag, labels, constants))
        else:
            name = check.__name__.strip("_").replace("projective", "projective_space")
            out.append(_check(name, False, "not run: the constants are not polynomials in q "
                              "below the stated degree (see finiteness)", ""))
    return out


def _classical_lr(flag, labels, constants) -> dict:
    k, n = flag.k(1), flag.n
    for i, lam in enumerate(labels):
        for mu in labels[i:]:
            expected = reference.k_littlewood_richardson(lam, mu, k, n)
            for nu in labels:
                got = _value(constants, (lam, mu, nu), 0)
                if got != expected.get(nu, 0):
                    return _check("classical_lr", False,
                                  f"N_{{{sb.label_text(lam)},{sb.label_text(mu)}}}^"
                                  f"{sb.label_text(nu)}(0) = {got}, but the K-theoretic "
                                  f"Littlewood-Richardson coefficient is {expected.get(nu, 0)}",
                                  _LR_SOURCE)
    return _check("classical_lr", True, "N(0) equals the K-theoretic Littlewood-Richardson "
                  "coefficient for every product", _LR_SOURCE)


_LR_SOURCE = ("Buch, A Littlewood-Richardson rule for the K-theory of Grassmannians, Acta Math. "
              "189 (2002); products of stable Grothendieck polynomials expanded with SymPy")


def _given_classical(basis: Basis, classical) -> dict:
    """The basis' own classical products, where its file states them, against N(0) computed
    in the presentation (for partial flags, where no Littlewood-Richardson rule is built in)."""
    source = f"the classical products stated with the basis ({basis.source or basis.name})"
    for (u, v), stated in basis.classical.items():
        for w in basis.labels:
            got = sum(classical.get((u, v, w), {}).values())
            if got != stated.get(w, 0):
                return _check("classical_given", False,
                              f"O{sb.label_text(u)} * O{sb.label_text(v)} at q = 0: coefficient "
                              f"of O{sb.label_text(w)} is {got}, the file states "
                              f"{stated.get(w, 0)}", source)
    return _check("classical_given", True, f"all {len(basis.classical)} stated classical "
                  "products agree with N(0)", source)


def _sum_rule(flag, labels, constants) -> dict:
    # Both abstracts state it (checked against the arXiv abstracts): "the sum of the structure
    # constants of any product of Schubert classes is equal to 1" (G/P), resp. "... equal to
    # one" (cominuscule G/P, Grassmannians among them).
    source = ("Buch-Chung-Li-Mihalcea, Euler characteristics in the quantum K-theory of flag "
              "varieties, arXiv:1903.02215 (Selecta Math. 2020, recalled from memory); "
              "Grassmannians: Buch-Chung, Euler characteristics of cominuscule quantum "
              "K-theory, arXiv:1701.06240")
    for i, lam in enumerate(labels):
        for mu in labels[i:]:
            total = sum(_value(constants, (lam, mu, nu), 1) for nu in labels)
            if total != 1:
                return _check("sum_rule", False, f"the constants of O{sb.label_text(lam)} * "
                              f"O{sb.label_text(mu)} sum to {total} at q = 1, not 1", source)
    return _check("sum_rule", True, "for every product the constants sum to 1 at q = 1", source)


def _projective(flag, labels, constants) -> dict:
    n = flag.n
    # Not confirmed against the paper's text (no copy of it was at hand when this was
    # audited); the quantum cohomology limit σ_a σ_b = q σ_{a+b-n} and the sum rule agree.
    source = ("Buch-Mihalcea, Quantum K-theory of Grassmannians, Duke Math. J. 156 (2011) "
              "(recalled from memory; consistent with (1 - O(-1))^n = q)")
    column = flag.k(1) == n - 1     # Gr(n−1;n): the labels are the columns (1^a)

    def label(a):
        return tuple([1] * a) if column else ((a,) if a else ())

    for a in range(n):
        for b in range(a, n):
            d, c = reference.projective_product(a, b, n)
            for nu in labels:
                got = constants.get((label(a), label(b), nu), {})
                want = {(d,): 1} if nu == label(c) else {}
                if got != want:
                    return _check("projective_space", False,
                                  f"O_{a} * O_{b}: coefficient of O{sb.label_text(nu)} is "
                                  f"{_poly_text(got)}, expected {_poly_text(want)}", source)
    return _check("projective_space", True, "O_a * O_b = O_{a+b} for a+b <= n-1, "
                  "q O_{a+b-n} otherwise", source)


def _poly_text(poly: Dict[QMonomial, int]) -> str:
    """2 - 2*q, q1*q2^2, … (ascending degree; the notation of `ringmatch schubert`'s table)."""
    out = ""
    for mono, c in sorted(poly.items(), key=lambda item: (sum(item[0]), item[0])):
        names = [("q" if len(mono) == 1 else f"q{i}") + (f"^{e}" if e > 1 else "")
                 for i, e in enumerate(mono, start=1) if e]
        body = "*".join(([str(abs(c))] if abs(c) != 1 or not names else []) + names)
        out += (("-" if c < 0 else "") if not out else (" - " if c < 0 else " + ")) + body
    return out or "0"


# ---------------------------------------------------------------------------------------
# Comparing tables

def first_difference(a: SchubertResult, b: SchubertResult) -> Optional[dict]:
    """The first product (in the label order of `a`) whose constants differ, or None.  The
    two bases need the same labels, not in the same order (a file lists them as it likes)."""
    if sorted(a.basis.labels) != sorted(b.basis.labels):
        return {"reason": "the bases have different labels"}
    labels = a.basis.labels
    for lam in labels:
        for mu in labels:
            for nu in labels:
                key = (lam, mu, nu)
                if a.constants.get(key, {}) != b.constants.get(key, {}):
                    return {"u": list(lam), "v": list(mu), "w": list(nu),
                            "first": _poly_text(a.constants.get(key, {})),
                            "second": _poly_text(b.constants.get(key, {}))}
    return None


# ---------------------------------------------------------------------------------------
# Choosing among the built-in candidates

def _usable_prime(prime: int, flag: FlagType, family: Family, basis: Optional[Basis] = None):
    """`prime`, or the next smaller one that divides no integer written in the presentation
    or in the basis' polynomials (mod such a prime a term would silently vanish)."""
    from .engine import usable_primes
    polynomials = basis.polynomials if basis is not None else None
    written = {abs(c) for poly in (polynomials or ()) for c in poly.values() if abs(c) > 1}
    primes, note = usable_primes(prime, 1, [family], flag, sorted(written))
    return primes[0], note


def classical_screen(flag: FlagType, family: Family, basis: Basis, prime: int,
                     quotients: Optional[dict] = None) -> Optional[bool]:
    """Whether the candidate's products at q = 0 are the K-theoretic Littlewood–Richardson
    coefficients (a necessary condition, one Gröbner basis); None when the presentation
    does not specialise to q = 0 with the rank as dimension (then only the full run says)."""
    evaluation = evaluate(family, flag, basis, tuple([0] * flag.m), prime,
                          quotients=quotients)
    if evaluation.dimension != flag.rank:
        return None
    if evaluation.constants is None:
        return False
    classical = _lift({tuple([0] * flag.m): evaluation.constants}, basis.labels, prime)
    return _classical_lr(flag, basis.labels, classical)["passed"]


def choose_candidate(flag: FlagType, family: Family, *, seed: Optional[int], prime: int,
                     degree_bound: Optional[int], equivariant: bool = False) -> SchubertResult:
    """The first built-in candidate (in the fixed order of `schubert_bases.CANDIDATES`) that
    passes every check; when none does, the result of the first one, saying so.  The choice
    is made non-equivariantly (where the checks live), then repeated equivariantly if asked."""
    if equivariant:
        chosen = choose_candidate(flag, family, seed=seed, prime=prime,
                                  degree_bound=degree_bound)
        result = structure_constants(flag, family, chosen.basis, seed=chosen.certificate["seed"],
                                     prime=prime, degree_bound=degree_bound, equivariant=True)
        result.notes[:0] = chosen.notes
        return result
    # One seed for all candidates: the same q values, so each q's quotient is computed once.
    seed = random.SystemRandom().randrange(2**32) if seed is None else seed
    prime, _ = _usable_prime(prime, flag, family)
    quotients: dict = {}
    rejected, first = [], None
    for candidate in sb.CANDIDATES:
        basis = candidate_basis(flag, candidate)
        if classical_screen(flag, family, basis, prime, quotients) is False:
            rejected.append(f"{candidate.name} (classical products at q = 0 are not the "
                            "K-theoretic Littlewood-Richardson coefficients)")
            continue
        result = structure_constants(flag, family, basis, seed=seed, prime=prime,
                                     degree_bound=degree_bound, quotients=quotients)
        if result.passed:
            result.notes.insert(0, "basis chosen automatically: the first built-in candidate "
                                   "that passes every check" + (
                                       "; rejected before it: " + "; ".join(rejected)
                                       if rejected else ""))
            return result
        rejected.append(f"{candidate.name} (fails "
                        f"{', '.join(c['name'] for c in result.checks if not c['passed'])})")
        first = first or result
    if first is None:
        first = structure_constants(flag, family, candidate_basis(flag, sb.CANDIDATES[0]),
                                    seed=seed, prime=prime, degree_bound=degree_bound)
    first.notes.insert(0, "no built-in candidate passes every check: " + "; ".join(rejected))
    return first


# ---------------------------------------------------------------------------------------
# The same classes? Both bases moved into the common λ-class ring

def same_classes(flag: FlagType, first: Tuple[Family, Basis], second: Tuple[Family, Basis], *,
                 seed: int, prime: int) -> Optional[dict]:
    """Whether two bases (each in its presentation) are the same classes, label by label.

    Equal tables do not make equal bases (on P^1, −O_1 multiplies like O_1), so the elements
    themselves are compared: both presentations are moved into the common λ-class ring
    through the meanings of their generators (compare/transport.py) at one random q; when both
    moves are faithful and give the same ideal, each basis element becomes a vector on the
    standard monomials there, and the vectors must coincide.  None when a presentation cannot
    be moved (e.g. the Chern roots of `bethe` have no λ-class representative)."""
    from . import engine, transport
    from ringmatch.presentations.interface import Generator, build_specialised
    if sorted(first[1].labels) != sorted(second[1].labels):
        return {"same": False, "reason": "the bases have different labels"}
    rng = random.Random(seed)
    spec = algebra.Specialisation(prime, tuple([1] * flag.n),
                                  tuple(rng.randrange(2, prime) for _ in range(flag.m)))
    families = [first[0], second[0]]
    common = engine.common_setup(families, flag, spec)
    moved = []
    for family in families:
        own = engine.own_ideal(family, flag, spec)
        ideal = engine.transported_ideal(family, flag, spec, common, own)
        if ideal is None or not ideal.faithful:
            return None
        moved.append(ideal)
    if not engine.same_ring(moved[0], moved[1]) or \
            sorted(map(str, moved[0].basis)) != sorted(map(str, moved[1].basis)):
        return {"same": False, "reason": "the presentations give different ideals in the "
                                         "common ring"}
    quotient = Quotient(common.ring, moved[0].basis)
    lambda_family = Family(
        name="common λ-class ring", description="",
        generators=lambda f: [Generator(name, lambda_S(1, j), j) for j, name in
                              enumerate(transport.common_generator_names(f), start=1)],
        relations=lambda f, ring: [])
    vectors = []
    for family, basis in (first, second):
        if basis.candidate is not None:
            vectors.append(candidate_vectors(quotient, lambda_family, flag, basis))
            continue
        presentation = build_specialised(family, flag, spec)
        images = transport.substitution(presentation, common.ring, spec)
        if images is None:
            return None
        polys = _polynomials(presentation.ring, basis)
        vectors.append(quotient.vectors([p.compose(*images, ctx=common.ring.ctx)
                                         for p in polys]))
    theirs = dict(zip(second[1].labels, vectors[1]))
    for label, a in zip(first[1].labels, vectors[0]):
        if a != theirs[label]:
            return {"same": False, "label": list(label)}
    return {"same": True}
