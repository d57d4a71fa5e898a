"""The comparison engine: one case, several presentations, one verdict with its certificate.

What each kind of evidence proves is set out in docs/verdicts.md; in short:

* **Exact at a specialisation** (the only basis for `agree`, an unqualified "holds" and
  `complete`).  T and q are replaced by random residues mod a large prime p.  The reference is
  the q-Whitney ideal J, which presents the quantum K ring of every partial flag variety
  (arXiv:2409.15575), moved into the ring C of the λ_j(S_i) (docs/mathematics.md §3).  A
  presentation's relations, moved into C through the meanings of its generators (denominators
  det S_i cleared: they are units), *hold* when each reduces to 0 modulo J's Gröbner basis.
  Its ring then maps onto C/J when its generators include every λ_j(S_i), and it *equals*
  the quantum K ring at the specialisation when, in addition, its own colength with the
  units inverted is the rank.  Probabilistic only through the random choice.
* **Bethe points to order s^N** (q_i = c_i·s): a relation with a nonzero coefficient below
  s^N at some point is an exact witness that it does not hold (`disagree`); vanishing to
  order s^N alone gives the weaker verdict `consistent`, never `agree`.
* `bethe` (the equations in the Chern roots) is decided through `vieta` by construction:
  with distinct roots in each level, the Bethe equations say that the polynomial with roots
  −1/X^(i)_a, which is λ_y(S_i) up to its leading coefficient, divides N_i(y); that is the
  auxiliary-root form of `vieta` (docs/mathematics.md §2.2–2.3), so the symmetric part of
  the ring in the roots is the `vieta` ring.

In the automatic mode the points run first, as a filter that refutes without any Gröbner
basis; the exact route then decides every presentation and pair up to rank
EXACT_RANK_LIMIT (above it, or past the time budget, pairs are at most `consistent`).
All randomness comes from one seed; the certificate records everything needed to repeat it.
"""
from __future__ import annotations

import random
import time
from dataclasses import dataclass, field, replace
from typing import Dict, List, Optional, Sequence, Tuple

import flint

from ringmatch.errors import InputError
from ringmatch.presentations.flagtype import FlagType
from ringmatch.presentations.interface import Family, build_specialised, build_symbolic
from ringmatch.presentations.lambda_classes import det_S

from . import algebra, groebner, lifting, points, transport
from .records import (CaseResult, Certificate, Colength, PairResult, PointFailure,
                      PresentationResult, Witness)

# Every case up to this rank (all flag types with n ≤ 7, and Fl(2,4,6;8)) is decided exactly
# in the automatic mode; larger ones only with --method groebner or both.
EXACT_RANK_LIMIT = 5040
# Largest quotient whose multiplication matrix is built to localise at the units.
LOCALISATION_SIZE_LIMIT = 3000
DEFAULT_ORDER = 6
MAX_WITNESSES = 3
METHODS = ("auto", "groebner", "points", "both")
REFERENCE = "whitney"
INFINITE = "infinite"
PROBABILITY_BASIS = (
    "exact at a random specialisation of T and q mod p: a wrong verdict needs the random "
    "residues to hit the zeros of a nonzero polynomial, which happens with probability at "
    "most its degree / p; each further trial (--trials) repeats the check with an "
    "independent seed and prime")

# ---------------------------------------------------------------------------------------
# Specialisations and seeds

def trial_prime(prime: int, trial: int) -> int:
    """The given prime for trial 0, then the next smaller primes, one per trial.  Distinct
    primes make the trials independent together with their distinct seeds."""
    algebra.check_prime(prime)
    candidate = prime
    for _ in range(trial):
        candidate = next_prime_below(candidate)
        if candidate < 3:
            raise InputError(f"prime {prime}: too small for {trial + 1} trials with distinct "
                             "primes")
    return candidate


def next_prime_below(candidate: int) -> int:
    """The largest prime below candidate (2 or less when there is none of at least 3)."""
    candidate -= 1
    while candidate >= 3 and not flint.fmpz(candidate).is_prime():
        candidate -= 1
    return candidate


def usable_primes(prime: int, count: int, families: Sequence[Family], flag: FlagType,
                  extra: Sequence[int] = ()) -> Tuple[List[int], Optional[str]]:
    """`count` distinct primes from `prime` down (trial t's prime, as `trial_prime`), each
    skipping any prime that divides an integer written in a presentation's relations or units
    (or in `extra`): reduced mod such a prime a relation would silently lose a term, and the
    comparison would be of other ideals.  The note says which primes were passed over."""
    written = set(extra)
    for family in families:
        try:
            written.update(family.integers(flag))
        except InputError:
            pass                      # the family's own error comes when it is built
    primes, skipped = [], []
    candidate = prime
    while len(primes) < count:
        if candidate < 3:
            raise InputError(f"prime {prime}: too small for {count} trials with distinct primes")
        divides = next((w for w in written if w % candidate == 0), None)
        if divides is None:
            primes.append(candidate)
        else:
            skipped.append((candidate, divides))
        candidate = next_prime_below(candidate)
    if not skipped:
        return primes, None
    shown = "; ".join(f"{p} divides {str(w) if len(str(w)) <= 40 else str(w)[:20] + '…'}"
                      for p, w in skipped[:3])
    return primes, (f"primes passed over because they divide an integer written in the "
                    f"input ({shown}); used {', '.join(map(str, primes))}")


def trial_specialisations(flag: FlagType, seed: int, prime: int, equivariant: bool):
    """Residues for q (Gröbner route) and a line for q (points route), same weights."""
    residues = algebra.draw_specialisation(flag.n, flag.m, seed=seed, prime=prime,
                                           equivariant=equivariant)
    line = algebra.draw_specialisation(flag.n, flag.m, seed=seed, prime=prime,
                                       equivariant=equivariant, q_on_line=True)
    return residues, line


def largest_q_degree(families: Sequence[Family], flag: FlagType) -> int:
    """The largest total degree in q_1, …, q_m of a term of any relation (symbolic, T = 1)."""
    largest = 0
    for family in families:
        presentation = build_symbolic(family, flag, equivariant=False)
        names = presentation.ring.ctx.names()
        q_index = [k for k, name in enumerate(names) if name in
                   {f"q{i}" for i in range(1, flag.m + 1)}]
        for relation in presentation.relations:
            for exponents, _ in relation.poly.terms():
                largest = max(largest, int(sum(exponents[k] for k in q_index)))
    return largest


def truncation_order(families: Sequence[Family], flag: FlagType) -> int:
    """The default order N: at least 2 + the largest q-degree among the relations, so that
    a relation differing from a correct one in a term of any degree it writes is seen."""
    return max(DEFAULT_ORDER, 2 + largest_q_degree(families, flag))


def classical(spec: algebra.Specialisation) -> algebra.Specialisation:
    return replace(spec, q=tuple(0 for _ in spec.q))


# ---------------------------------------------------------------------------------------
# Gröbner route

def inverse_names(count: int) -> tuple:
    return tuple(f"u{k}" for k in range(1, count + 1))


def with_inverses(polys: list, units: Sequence, inverses: Sequence) -> list:
    """The ideal with each unit inverted by its own new variable: u_k·unit_k − 1.

    One variable per unit rather than one for their product: the product has high degree
    and slows Buchberger's algorithm down by orders of magnitude (measured on Fl(5))."""
    return list(polys) + [u * unit - 1 for u, unit in zip(inverses, units)]


@dataclass
class Ideal:
    """Relations (labelled) and the reduced Gröbner basis of the ideal they generate,
    together with any unit inverses, in one specialised ring."""
    ring: algebra.Ring
    relations: list            # Relation records
    basis: list
    colength: Optional[int]
    faithful: bool = True      # for a transported ideal: the move kept the colength


def own_ideal(family: Family, flag: FlagType, spec: algebra.Specialisation) -> Ideal:
    """The presentation in its own generators, each declared unit inverted."""
    presentation = build_specialised(family, flag, spec)
    polys = [r.poly for r in presentation.relations]
    if presentation.units:
        names = inverse_names(len(presentation.units))
        presentation = build_specialised(family, flag, spec, extra=names)
        polys = with_inverses([r.poly for r in presentation.relations], presentation.units,
                              [presentation.ring.extra[n] for n in names])
    basis = groebner.groebner_basis(polys)
    return Ideal(presentation.ring, list(presentation.relations), basis,
                 groebner.colength(basis))


def own_ideal_method(units_inverted: bool) -> str:
    """How a colength read off `own_ideal` was obtained, for the reports."""
    return "Gröbner basis with each unit inverted" if units_inverted else "Gröbner basis"


def without_unit_factors(poly, units: Sequence):
    """The polynomial with every factor it shares with a unit divided out; it generates the
    same ideal once the units are inverted.  (Common factors by gcd and exact division:
    python-flint's multivariate factorisation fails for primes near 2^62.)"""
    for unit in units:
        while not poly.is_zero():
            common = poly.gcd(unit)
            if common.is_constant():
                break
            poly, remainder = divmod(poly, common)
            assert remainder.is_zero()
    return poly


def localised_colength(basis: list, units: Sequence) -> int:
    """Dimension of (F[x]/I)[1/units] for a zero-dimensional I given by its Gröbner basis:
    the rank of a high power of multiplication by the product of the units (Fitting's lemma:
    the ranks of the powers decrease until they are stable, at most dim steps)."""
    monomials = groebner.standard_monomials(basis)
    index = {m: k for k, m in enumerate(monomials)}
    ctx = basis[0].context()
    product = ctx.constant(1)
    for unit in units:
        product = product * unit
    size = len(monomials)
    matrix = flint.nmod_mat(size, size, ctx.modulus())
    images = groebner.normal_forms([product * ctx.from_dict({m: 1}) for m in monomials], basis)
    for column, image in enumerate(images):
        for exponents, coefficient in image.terms():
            matrix[index[exponents], column] = int(coefficient)
    rank = matrix.rank()
    while True:
        matrix = matrix * matrix
        smaller = matrix.rank()
        if smaller == rank:
            return rank
        rank = smaller


def colength_with_units(family: Family, flag: FlagType, spec: algebra.Specialisation,
                        points_bound: Optional[str]) -> Tuple[Optional[int], str]:
    """Colength with the units inverted, and how it was obtained.

    Inverting units by extra variables is what makes these bases slow.  The relations with
    their unit factors removed generate an ideal with the same localisation; when it is
    zero-dimensional, its colength bounds the answer above.  If the points give the matching
    lower bound of rank — `points_bound` names them: the fixed points at q = 0, or the Bethe
    points over F_p((s)) for a generic q — that settles it; otherwise the localisation is
    measured by linear algebra on the quotient (`localised_colength`)."""
    presentation = build_specialised(family, flag, spec)
    if presentation.units:
        stripped = groebner.groebner_basis([without_unit_factors(r.poly, presentation.units)
                                            for r in presentation.relations])
        bound = groebner.colength(stripped)
        if bound is not None and bound == flag.rank and points_bound:
            return bound, ("Gröbner basis of the relations without unit factors (upper bound) "
                           f"and {points_bound} (lower bound)")
        if bound is not None and bound <= LOCALISATION_SIZE_LIMIT:
            return localised_colength(stripped, presentation.units), (
                "Gröbner basis of the relations without unit factors, localised at the units "
                "by the rank of a power of their multiplication matrix")
    return _colength_value(own_ideal(family, flag, spec).colength), \
        own_ideal_method(bool(presentation.units))


@dataclass
class CommonRing:
    ring: algebra.Ring
    units: list                # elements of `ring`, each inverted by its own variable
    inverses: list


def common_setup(families: Sequence[Family], flag: FlagType, spec: algebra.Specialisation
                 ) -> CommonRing:
    """The common λ-class ring with det S_1 … det S_m and every other unit that a movable
    presentation declares inverted (each by its own variable)."""
    plain = transport.common_ring(flag, spec)
    units = [det_S(flag, plain, i) for i in range(1, flag.m + 1)]
    for family in families:
        for unit in transport.transport_units(build_specialised(family, flag, spec), plain,
                                              spec) or []:
            if not unit.is_constant() and all(unit != u and unit != -u for u in units):
                units.append(unit)
    names = inverse_names(len(units))
    C = transport.common_ring(flag, spec, extra=names)
    embedding = [C.gen[name] for name in plain.ctx.names()]
    return CommonRing(C, [u.compose(*embedding, ctx=C.ctx) for u in units],
                      [C.extra[n] for n in names])


def transported_ideal(family: Family, flag: FlagType, spec: algebra.Specialisation,
                      common: CommonRing, own: Ideal) -> Optional[Ideal]:
    relations = transport.transport(build_specialised(family, flag, spec), common.ring, spec)
    if relations is None:
        return None
    basis = groebner.groebner_basis(with_inverses([r.poly for r in relations], common.units,
                                                  common.inverses))
    moved = groebner.colength(basis)
    return Ideal(common.ring, relations, basis, moved, faithful=moved == own.colength)


def same_ring(A: Ideal, B: Ideal) -> bool:
    return A.ring.ctx is B.ring.ctx


def relations_outside(source: str, target: str, relations: Sequence, basis: list
                      ) -> List[Witness]:
    """Up to MAX_WITNESSES relations of `source` whose normal form modulo `target`'s Gröbner
    basis is not 0, each as a witness with that normal form."""
    found = []
    for relation in relations:
        remainder = groebner.normal_form(relation.poly, basis)
        if remainder != 0:
            found.append(Witness(source, relation.label, not_in=target,
                                 normal_form=algebra.poly_text(remainder,
                                                               remainder.context().names())))
            if len(found) >= MAX_WITNESSES:
                break
    return found


def witnesses_between(a: str, b: str, A: Ideal, B: Ideal) -> List[Witness]:
    """Relations of one ideal that are not in the other, with their normal forms."""
    return relations_outside(a, b, A.relations, B.basis) + \
        relations_outside(b, a, B.relations, A.basis)


def compare_ideals(a: str, b: str, A: Ideal, B: Ideal, where: str) -> PairResult:
    """Two ideals in one ring: equal reduced Gröbner bases, or witnesses both ways."""
    if A.basis == B.basis and A.faithful and B.faithful:
        return PairResult(a, b, "agree", "groebner", f"equal reduced Gröbner bases {where}")
    witnesses = witnesses_between(a, b, A, B)
    if A.colength != B.colength:
        reason = (f"colengths differ {where}: {_colength_value(A.colength)} and "
                  f"{_colength_value(B.colength)}")
    elif not (A.faithful and B.faithful):
        unfaithful = " and ".join(n for n, X in ((a, A), (b, B)) if not X.faithful)
        reason = (f"{unfaithful} loses relations when its generators are replaced by their "
                  "meanings")
    else:
        reason = f"the ideals differ {where}"
    return PairResult(a, b, "disagree", "groebner", reason, witnesses)




# ---------------------------------------------------------------------------------------
# The exact route: the q-Whitney ideal as reference

@dataclass
class Reference:
    """The q-Whitney ideal J moved into C = F_p[λ_j(S_i)] at one specialisation."""
    ring: algebra.Ring
    basis: list
    colength: Colength


@dataclass
class Status:
    """Whether a presentation equals the quantum K ring at the specialisation."""
    equal: Optional[bool]
    exact: bool
    reason: str
    witnesses: List[Witness] = field(default_factory=list)


def reference_ideal(flag: FlagType, spec: algebra.Specialisation) -> Reference:
    from ringmatch.presentations import get_family
    whitney = build_specialised(get_family(REFERENCE), flag, spec)
    C = transport.common_ring(flag, spec)
    moved = transport.transport(whitney, C, spec)
    basis = groebner.groebner_basis([r.poly for r in moved])
    return Reference(C, basis, _colength_value(groebner.colength(basis)))


def _colength_value(value: Optional[int]) -> Colength:
    return INFINITE if value is None else value


def reference_status() -> "Status":
    """The reference presents the quantum K ring by a theorem, not by a computation."""
    return Status(True, True, "the q-Whitney relations present the quantum K ring "
                  "(arXiv:2409.15575)")


def is_reference_family(family: Family) -> bool:
    from ringmatch.presentations import FAMILIES
    return FAMILIES.get(REFERENCE) is family


def _is_unit_modulo(poly, ref: Reference, flag: FlagType) -> bool:
    """Whether the element is invertible in C/J: a constant times a monomial in the
    det S_i is (docs/mathematics.md §2.1); otherwise 1 ∈ J + (element) decides."""
    dets = set(transport.det_S_indices(flag, ref.ring))
    terms = list(poly.terms())
    if len(terms) == 1 and all(e == 0 or k in dets for k, e in enumerate(terms[0][0])):
        return True
    return groebner.groebner_basis(list(ref.basis) + [poly]) == [ref.ring.one]


# Largest rank at which "the generators' images generate the ring" is decided by spanning
# the quotient (quadratic in the rank per product); above it only through the fixed points.
GENERATION_RANK_LIMIT = 200


def generate_quotient(images: Sequence, ref: Reference, rank: int) -> bool:
    """Whether the images generate C/J as an algebra: the span of their products, grown
    one multiplication at a time in normal form, reaches dimension `rank`."""
    modulus = ref.ring.ctx.modulus()
    pivots: Dict[tuple, Dict[tuple, int]] = {}
    order_key = groebner.order_key(groebner.ordering_name(ref.ring.ctx))

    def reduce(vector: Dict[tuple, int]) -> Dict[tuple, int]:
        vector = dict(vector)
        while vector:
            top = max(vector, key=order_key)
            row = pivots.get(top)
            if row is None:
                return vector
            factor = vector[top]
            for monomial, c in row.items():
                value = (vector.get(monomial, 0) - factor * c) % modulus
                if value:
                    vector[monomial] = value
                else:
                    vector.pop(monomial, None)
        return vector

    def add(poly) -> bool:
        vector = reduce({e: int(c) for e, c in poly.terms()})
        if not vector:
            return False
        top = max(vector, key=order_key)
        inverse = pow(vector[top], -1, modulus)
        pivots[top] = {m: c * inverse % modulus for m, c in vector.items()}
        return True

    images = [groebner.normal_form(g, ref.basis) for g in images]
    queue = [ref.ring.one]
    add(ref.ring.one)
    while queue and len(pivots) < rank:
        element = queue.pop()
        for image in images:
            product = groebner.normal_form(element * image, ref.basis)
            if add(product):
                queue.append(product)
    return len(pivots) == rank


def _generates(presentation, ref: Reference, spec, flag: FlagType) -> bool:
    images = transport.generator_images(presentation, ref.ring, spec)
    return images is not None and generate_quotient(images, ref, flag.rank)


def exact_status(family: Family, flag: FlagType, spec: algebra.Specialisation,
                 ref: Reference, report: PresentationResult) -> Status:
    """Decide exactly whether the presentation equals the quantum K ring at `spec`; fills
    in holds, colength and their methods on the report."""
    name = family.name
    if is_reference_family(family):
        report.holds, report.holds_evidence = True, "exact: the reference itself"
        report.colength = ref.colength
        report.colength_method = ("Gröbner basis of the q-Whitney ideal in the λ_j(S_i) "
                                  "(each λ_j(Q_i) eliminated by its linear relation)")
        return reference_status()
    presentation = build_specialised(family, flag, spec)
    moved = transport.move_cleared(presentation, ref.ring, spec)
    if moved is None:
        report.notes.append("its generators (Chern roots) have no expression in the "
                            "λ-classes: no exact route")
        return Status(None, False, f"{name} cannot be moved into the λ-class ring")
    relations, units = moved
    witnesses = relations_outside(name, REFERENCE, relations, ref.basis)
    report.holds = not witnesses
    report.holds_evidence = ("exact: every relation reduces to 0 modulo the q-Whitney ideal"
                             if report.holds else
                             "exact: a relation does not reduce to 0 modulo the q-Whitney "
                             "ideal")
    if witnesses:
        return Status(False, True, f"{witnesses[0].relation} of {name} is not in the "
                      "q-Whitney ideal at the specialisation", witnesses)
    for unit in units:
        if not _is_unit_modulo(unit, ref, flag):
            return Status(False, True, f"a unit declared by {name} is not invertible in the "
                          "quantum K ring at the specialisation")
    onto = transport.has_every_lambda_S(presentation)
    if onto:
        bound = ("its relations hold exactly and its generators include every λ_j(S_i), so "
                 "its ring maps onto the quantum K ring (lower bound: the rank)")
    elif flag.rank <= GENERATION_RANK_LIMIT and _generates(presentation, ref, spec, flag):
        onto = True
        bound = ("its relations hold exactly and the images of its generators span the "
                 "quantum K ring as an algebra (lower bound: the rank)")
    elif report.separates:
        onto = True
        bound = ("its relations hold exactly and its generators separate the fixed points, "
                 "so they generate at a generic specialisation (lower bound: the rank)")
    else:
        bound = None
    report.colength, report.colength_method = colength_with_units(family, flag, spec, bound)
    rank = flag.rank
    if report.colength == INFINITE:
        return Status(False, True, f"{name} has infinite colength: too few relations")
    if onto and report.colength == rank:
        return Status(True, True, f"{name} equals the q-Whitney ideal: its relations reduce "
                      f"to 0 modulo it and its colength is the rank {rank}")
    if report.colength > rank:
        return Status(False, True, f"{name}: its relations hold, but its colength "
                      f"{report.colength} exceeds the rank {rank} (a smaller ideal)")
    if report.colength < rank:
        return Status(False, True, f"{name}: colength {report.colength} is below the rank "
                      f"{rank}")
    return Status(None, False, f"{name}: whether its generators generate the ring is not "
                  "decided")


def classical_colength(family: Family, flag: FlagType, spec: algebra.Specialisation,
                       report: PresentationResult) -> None:
    report.classical_colength, report.classical_method = colength_with_units(
        family, flag, classical(spec), "the fixed points" if report.fixed_points_ok else None)


# ---------------------------------------------------------------------------------------
# Points route

def points_reports(families: Sequence[Family], flag: FlagType, line: algebra.Specialisation,
                   order: int, reports: Dict[str, PresentationResult]) -> dict:
    """Fill separates / failures / holds-to-order from the Bethe points.  A failing
    relation is an exact refutation; vanishing to order s^N only says so."""
    lifted = lifting.lift_points(flag, line, order)
    for family in families:
        report = reports[family.name]
        result = points.check_holds_family(family, flag, lifted)
        report.separates = result.separates
        report.fixed_points_ok = bool(result.separates and not result.classical_failure
                                      and not result.unit_failures)
        report.failures = [PointFailure.from_json(failure.as_dict())
                           for failure in result.failures[:MAX_WITNESSES]]
        report.failures += [PointFailure.from_json(dict(failure.as_dict(),
                                                        relation=f"unit {failure.unit} vanishes"))
                            for failure in result.unit_failures[:MAX_WITNESSES]]
        if result.holds:
            report.holds_to_order = order
        else:
            report.holds = False
            report.holds_evidence = (f"exact: a relation does not vanish at a Bethe point "
                                     f"(below s^{order})")
    return {"order": order, "q_line": list(line.q_line), "points": len(lifted.points)}


def points_status(report: PresentationResult) -> Status:
    if report.holds is False and report.failures:
        failure = report.failures[0]
        return Status(False, True, f"{report.name}: {failure.relation} does not vanish "
                      "at a Bethe point", [Witness(report.name, f.relation, fails_at_points=f)
                                           for f in report.failures])
    return Status(None, False, "only the Bethe points were used")


# ---------------------------------------------------------------------------------------
# Pairs and the overall verdict

def compare_pair(a: str, b: str, status: Dict[str, Status],
                 reports: Dict[str, PresentationResult], order: Optional[int],
                 own_pair=None) -> PairResult:
    sa, sb = status[a], status[b]
    if sa.equal and sb.equal:
        return PairResult(a, b, "agree", "exact at a specialisation",
                          "both equal the q-Whitney ideal at the specialisation", exact=True)
    for good, bad in ((sa, sb), (sb, sa)):
        if good.equal and bad.equal is False:
            method = ("Bethe points" if any(w.fails_at_points is not None for w in bad.witnesses)
                      else "exact at a specialisation")
            return PairResult(a, b, "disagree", method, bad.reason, list(bad.witnesses),
                              exact=True, order=order if method == "Bethe points" else None)
    if sa.equal is False and sb.equal is False:
        if own_pair is not None:
            return own_pair()
        return PairResult(a, b, "inconclusive", "exact at a specialisation",
                          "neither presents the quantum K ring (" + sa.reason + "; "
                          + sb.reason + "); their ideals were not compared with each other",
                          list(sa.witnesses) + list(sb.witnesses), exact=False)
    ra, rb = reports[a], reports[b]
    if order is not None and all(r.holds_to_order == order for r in (ra, rb)):
        undecided = " and ".join(r.name for r, s in ((ra, sa), (rb, sb)) if not s.equal)
        return PairResult(a, b, "consistent", "Bethe points",
                          f"every relation vanishes at every Bethe point to order s^{order}; "
                          f"not proven ({undecided}: "
                          + "; ".join(dict.fromkeys(s.reason for s in (sa, sb)
                                                    if not s.equal)) + ")",
                          exact=False, order=order)
    reasons = "; ".join(s.reason for s in (sa, sb) if s.equal is not True)
    return PairResult(a, b, "inconclusive", "none", reasons or "not decided",
                      list(sa.witnesses) + list(sb.witnesses), exact=False, order=order)


def overall_verdict(presentations: Dict[str, PresentationResult], pairs: List[PairResult],
                    order: Optional[int]) -> Tuple[str, str]:
    if any(p.verdict == "disagree" for p in pairs):
        return "disagree", "at least one pair of presentations differs"
    wrong = [r.name for r in presentations.values() if r.complete is False and r.exact]
    if wrong:
        return "disagree", "does not present the ring: " + ", ".join(wrong)
    if all(p.verdict == "agree" for p in pairs) and \
            all(r.complete and r.exact for r in presentations.values()):
        return "agree", ("every pair agrees exactly at the specialisation" if pairs else
                         "the presentation equals the quantum K ring at the specialisation")
    if pairs and all(p.verdict in ("agree", "consistent") for p in pairs) or \
            not pairs and all(r.holds_to_order for r in presentations.values()):
        return "consistent", (f"every relation vanishes at every Bethe point to order "
                              f"s^{order}; not proven")
    undecided = [r.name for r in presentations.values() if r.complete is None]
    budget = any("time budget" in note for r in presentations.values() for note in r.notes)
    return "inconclusive", ("not decided for " + ", ".join(undecided)
                            + (" (the exact route ran past --budget)" if budget else "")
                            if undecided else "some pair is inconclusive")


# ---------------------------------------------------------------------------------------
# One trial and the whole check

@dataclass
class Trial:
    """One trial's outcome; `check_case` makes the CaseResult from the trials."""
    certificate: Certificate
    presentations: Dict[str, PresentationResult]
    pairs: List[PairResult]
    timings: Dict[str, float]
    points: Optional[dict]            # what the points route lifted (None: not run)
    verdict: str = "inconclusive"
    reason: str = ""


def run_trial(flag: FlagType, families: Sequence[Family], *, seed: int, prime: int,
              equivariant: bool, order: int, method: str,
              budget: Optional[float] = None) -> Trial:
    residues, line = trial_specialisations(flag, seed, prime, equivariant)
    reports: Dict[str, PresentationResult] = {}
    timings = {"groebner": 0.0, "points": 0.0}
    for family in families:
        probe = build_specialised(family, flag, residues)
        reports[family.name] = PresentationResult(
            family.name, len(probe.generators), len(probe.relations), probe.expected_colength)

    use_points = method in ("points", "both", "auto")
    started = time.perf_counter()
    points_record = None
    if use_points and equivariant:
        try:
            points_record = points_reports(families, flag, line, order, reports)
        except lifting.LiftError as error:
            for report in reports.values():
                report.notes.append(f"Bethe points unavailable: {error}")
    elif use_points:
        for report in reports.values():
            report.notes.append("no Bethe points without equivariant weights (all T_j = 1)")
    timings["points"] = time.perf_counter() - started
    points_order = order if points_record is not None else None

    status: Dict[str, Status] = {f.name: points_status(reports[f.name]) for f in families}
    for family in families:
        if is_reference_family(family):
            status[family.name] = reference_status()

    use_exact = method in ("groebner", "both") or (
        method == "auto" and flag.rank <= EXACT_RANK_LIMIT)
    if method == "auto" and not use_exact:
        for report in reports.values():
            report.notes.append(f"rank {flag.rank} is above {EXACT_RANK_LIMIT}: no exact "
                                "route in the automatic mode (--method both forces it)")
    started = time.perf_counter()
    if use_exact:
        exact_reports(families, flag, residues, reports, status, budget)
    timings["groebner"] = time.perf_counter() - started

    for family in families:
        report, s = reports[family.name], status[family.name]
        report.complete, report.exact = s.equal, s.exact
        report.decided_by = s.reason
        if is_reference_family(family) and report.holds is None:
            report.holds, report.holds_evidence = True, "by theorem (arXiv:2409.15575)"

    def own_pair(fa: Family, fb: Family):
        if not use_exact or [g.name for g in fa.generators(flag)] != \
                [g.name for g in fb.generators(flag)]:
            return None
        return lambda: compare_own_ideals(fa, fb, flag, residues)

    pairs = [compare_pair(families[x].name, families[y].name, status, reports, points_order,
                          own_pair(families[x], families[y]))
             for x in range(len(families)) for y in range(x + 1, len(families))]

    certificate = Certificate(**residues.record())
    certificate.q_line = list(line.q_line)
    certificate.order = points_order
    certificate.method = _method_label(use_exact, points_record is not None)
    certificate.probability, certificate.budget_seconds = PROBABILITY_BASIS, budget
    return Trial(certificate, reports, pairs, timings, points_record)


def exact_reports(families: Sequence[Family], flag: FlagType,
                  residues: algebra.Specialisation, reports: Dict[str, PresentationResult],
                  status: Dict[str, Status], budget: Optional[float]) -> None:
    """The exact route for every presentation not already refuted by the points."""
    from ringmatch.presentations import get_family
    if all(status[f.name].equal is False or is_reference_family(f) for f in families):
        return     # everything is decided already: refuted at the points, or the reference
    try:
        with groebner.time_budget(budget):
            ref = reference_ideal(flag, residues)
            if ref.colength != flag.rank:
                for report in reports.values():
                    report.notes.append(
                        f"the q-Whitney ideal has colength {ref.colength} ≠ rank {flag.rank} at "
                        "this specialisation (an unlucky draw): no exact route; try another seed")
                return
            vieta = get_family("vieta")
            vieta_status = None
            # Every other family first, so that bethe can reuse vieta's status.
            for family in sorted(families, key=lambda f: f.solved_by_points):
                report = reports[family.name]
                if status[family.name].equal is False:     # refuted by the points:
                    if family is vieta:                    # no Gröbner basis needed
                        vieta_status = status[family.name]
                    continue
                if family.solved_by_points:
                    if vieta_status is None or not vieta_status.exact:
                        probe = PresentationResult(vieta.name, 0, 0, flag.rank,
                                                   separates=report.separates)
                        vieta_status = exact_status(vieta, flag, residues, ref, probe)
                    status[family.name] = _through_vieta(vieta_status, report)
                    continue
                status[family.name] = exact_status(family, flag, residues, ref, report)
                if family is vieta:
                    vieta_status = status[family.name]
                classical_colength(family, flag, residues, report)
    except groebner.BudgetExceeded:
        for family in families:
            if status[family.name].equal is None:
                reports[family.name].notes.append(
                    f"the exact route ran past the time budget ({budget:g} s): not decided; "
                    "a larger --budget (or none) decides it")


def compare_own_ideals(fa: Family, fb: Family, flag: FlagType,
                       spec: algebra.Specialisation) -> PairResult:
    """Two presentations in the same generators, compared ideal to ideal (reduced Gröbner
    bases with the units inverted)."""
    A, B = own_ideal(fa, flag, spec), own_ideal(fb, flag, spec)
    if not same_ring(A, B):
        return PairResult(fa.name, fb.name, "inconclusive", "none",
                          "neither presents the quantum K ring and their rings differ")
    pair = compare_ideals(fa.name, fb.name, A, B, "in their common generators")
    pair.method, pair.exact = "exact at a specialisation", True
    return pair


def _through_vieta(vieta: Status, report: PresentationResult) -> Status:
    """`bethe` equals the quantum K ring exactly when `vieta` does (module notes)."""
    argument = ("by construction: with distinct roots in each level the Bethe equations say "
                "that λ_y(S_i) divides N_i(y), i.e. the auxiliary-root (Vieta) form, so the "
                "symmetric part of its ring is the vieta ring")
    report.holds = vieta.equal if vieta.equal is not None else report.holds
    report.holds_evidence = "exact through vieta" if vieta.exact else report.holds_evidence
    report.notes.append("decided through vieta, " + argument)
    if vieta.equal:
        report.colength = report.expected_colength
        report.colength_method = ("rank × ∏ k_i! " + argument + ", over which the roots of "
                                  "distinct values form a free extension of rank ∏ k_i!")
    return Status(vieta.equal, vieta.exact, f"{report.name} through vieta (Vieta's formulas): "
                  + vieta.reason, list(vieta.witnesses))


def _method_label(use_groebner: bool, use_points: bool) -> str:
    return {(True, True): "both", (True, False): "groebner", (False, True): "points",
            (False, False): "none"}[(use_groebner, use_points)]


def _certificate_kind(verdict: str, pairs: List[PairResult],
                      presentations: Dict[str, PresentationResult]) -> Tuple[bool, str]:
    exact = verdict in ("agree", "disagree") and (
        all(p.exact for p in pairs if p.verdict == verdict) if pairs else
        all(r.exact for r in presentations.values()))
    if verdict == "consistent":
        return False, "Bethe points to order s^N (not a proof)"
    if exact and verdict == "disagree" and pairs and all(
            p.method == "Bethe points" for p in pairs if p.verdict == "disagree"):
        return True, "exact witness at the Bethe points (no probability)"
    if exact:
        return True, "exact at a random specialisation (probabilistic)"
    return False, "not decided"


def validate(flag: FlagType, families: Sequence[Family], *, prime: int, trials: int,
             method: str, order: Optional[int], budget: Optional[float]) -> None:
    """The arguments of check_case, checked before any work (one-line InputError)."""
    algebra.check_prime(prime)
    if isinstance(trials, bool) or not isinstance(trials, int) or trials < 1:
        raise InputError(f"trials must be a positive integer, not {trials!r}")
    if method not in METHODS:
        raise InputError(f"unknown method {method!r}; expected one of {', '.join(METHODS)}")
    if order is not None and (isinstance(order, bool) or not isinstance(order, int)
                              or order < 1):
        raise InputError(f"order must be a positive integer, not {order!r}")
    if budget is not None and not budget > 0:
        raise InputError(f"budget must be a positive number of seconds, not {budget!r}")
    if not families:
        raise InputError("no presentation to check")
    if prime - 2 < flag.n:
        raise InputError(f"prime {prime} is too small for {flag.n} distinct weights")
    trial_prime(prime, trials - 1)


def check_case(flag: FlagType, families: Sequence[Family], *, seed: Optional[int] = None,
               prime: int = algebra.DEFAULT_PRIME, equivariant: bool = True,
               order: Optional[int] = None, trials: int = 1, method: str = "auto",
               budget: Optional[float] = None) -> CaseResult:
    """Run `trials` independent trials; the verdict stands only if all trials agree.

    `order` None: the truncation order is chosen from the relations (`truncation_order`).
    `budget`: seconds of Gröbner bases per trial before the exact route gives up."""
    validate(flag, families, prime=prime, trials=trials, method=method, order=order,
             budget=budget)
    if seed is None:
        seed = random.SystemRandom().randrange(2**32)
    order_source = "given"
    if order is None:
        order, order_source = truncation_order(families, flag), "2 + largest q-degree"
    primes, prime_note = usable_primes(prime, trials, families, flag)
    outcomes = []
    for t in range(trials):
        outcome = run_trial(flag, families, seed=seed + t, prime=primes[t],
                            equivariant=equivariant, order=order, method=method,
                            budget=budget)
        outcome.verdict, outcome.reason = overall_verdict(
            outcome.presentations, outcome.pairs, outcome.certificate.order)
        outcome.certificate.exact, outcome.certificate.kind = _certificate_kind(
            outcome.verdict, outcome.pairs, outcome.presentations)
        outcomes.append(outcome)
    first = outcomes[0]
    verdicts = {o.verdict for o in outcomes}
    verdict, reason = (first.verdict, first.reason) if len(verdicts) == 1 else \
        ("inconclusive", "independent trials reached different verdicts: "
         + ", ".join(o.verdict for o in outcomes))
    certificate = replace(first.certificate, seed=seed, order_source=order_source,
                          exact=first.certificate.exact and len(verdicts) == 1,
                          trials=[o.certificate for o in outcomes], prime_note=prime_note)
    return CaseResult(flag.name, flag.rank, equivariant, verdict, reason, certificate,
                      exact=certificate.exact, presentations=first.presentations,
                      pairs=first.pairs, timings=first.timings)
