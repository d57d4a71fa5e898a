"""The comparison engine: one case, several presentations, one verdict with its certificate.

For every presentation it measures
  * colength at a random specialisation of T and q (Gröbner basis mod p, units inverted),
  * classical colength (the same at q = 0),
  * "holds": every relation vanishes at every Bethe point to order s^N (docs/mathematics.md §2.3),
  * "complete": holds, classical colength = expected, and the generators separate the fixed
    points — the Nakayama-type criterion of docs/verdicts.md §4 (arXiv:2310.03826).
For every pair it decides agreement:
  * through the common ring of λ-classes (compare/transport.py) when both presentations can
    be moved there exactly: equal reduced Gröbner bases, with witnesses both ways otherwise;
  * otherwise through the Bethe points: two complete presentations present the same ring.
All randomness comes from one seed; the certificate records everything needed to repeat it.
"""
from __future__ import annotations

import random
import time
from dataclasses import dataclass, field, replace
from typing import Dict, List, Optional, Sequence, Tuple

import flint

from ringmatch.presentations.flagtype import FlagType
from ringmatch.presentations.interface import Family, build_specialised
from ringmatch.presentations.vieta import det_S

from . import algebra, groebner, points, transport

# Gröbner bases grow superlinearly with the colength; above this the default method leaves a
# presentation to the Bethe points (docs/verdicts.md §8: the points first, where they decide).
GROEBNER_COLENGTH_LIMIT = 150
# For the Bethe equations in the roots the Gröbner basis is only a consistency check, and
# saturating the Vandermonde products makes it far costlier per unit of colength (Fl(2,3;4),
# colength 144: 35 s against 0.1 s for Whitney of rank 120), hence a lower limit.
REFERENCE_COLENGTH_LIMIT = 80
# Classical (q = 0) ideals are far cheaper (Whitney for Fl(6): 0.1 s), and their colength is
# what completeness needs, so they get a much higher automatic limit.
CLASSICAL_COLENGTH_LIMIT = 5040
# Largest quotient whose multiplication matrix is built to localise at the units.
LOCALISATION_SIZE_LIMIT = 3000
DEFAULT_ORDER = 6
MAX_WITNESSES = 3
METHODS = ("auto", "groebner", "points", "both")


@dataclass
class PresentationReport:
    name: str
    generators: int
    relations: int
    expected_colength: int
    colength: Optional[int] = None
    classical_colength: Optional[int] = None
    holds: Optional[bool] = None
    separates: Optional[bool] = None
    complete: Optional[bool] = None
    colength_method: Optional[str] = None
    classical_method: Optional[str] = None
    fixed_points_ok: Optional[bool] = None   # at q = 0: relations vanish, units do not,
                                             # generators separate the fixed points
    failures: List[dict] = field(default_factory=list)
    notes: List[str] = field(default_factory=list)

    def as_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass
class PairReport:
    a: str
    b: str
    verdict: str                 # agree | disagree | inconclusive
    method: str                  # groebner | points
    reason: str
    witnesses: List[dict] = field(default_factory=list)

    def as_dict(self) -> dict:
        return dict(self.__dict__)


# ---------------------------------------------------------------------------------------
# Specialisations and seeds

def trial_prime(prime: int, trial: int) -> int:
    """The given prime for trial 0, then distinct primes further down, one per trial."""
    if trial == 0:
        return prime
    candidate = prime - trial * (1 << 32)
    while not flint.fmpz(candidate).is_prime():
        candidate -= 1
    return candidate


def trial_specialisations(flag: FlagType, seed: int, prime: int, equivariant: bool):
    """Residues for q (Gröbner route) and a line for q (points route), same weights."""
    residues = algebra.draw_specialisation(flag.n, flag.m, seed=seed, prime=prime,
                                           equivariant=equivariant)
    line = algebra.draw_specialisation(flag.n, flag.m, seed=seed, prime=prime,
                                       equivariant=equivariant, q_on_line=True)
    return residues, line


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
        if bound == flag.rank and points_bound:
            return bound, ("Gröbner basis of the relations without unit factors (upper bound) "
                           f"and {points_bound} (lower bound)")
        if bound is not None and bound <= LOCALISATION_SIZE_LIMIT:
            return localised_colength(stripped, presentation.units), (
                "Gröbner basis of the relations without unit factors, localised at the units "
                "by the rank of a power of their multiplication matrix")
    return own_ideal(family, flag, spec).colength, own_ideal_method(bool(presentation.units))


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


def witnesses_between(a: str, b: str, A: Ideal, B: Ideal) -> List[dict]:
    """Relations of one ideal that are not in the other, with their normal forms."""
    names = A.ring.ctx.names()
    found = []
    for source, target, X, Y in ((a, b, A, B), (b, a, B, A)):
        count = 0
        for relation in X.relations:
            remainder = groebner.normal_form(relation.poly, Y.basis)
            if remainder != 0:
                found.append({"relation_of": source, "not_in": target,
                              "relation": relation.label,
                              "normal_form": _formula(remainder, names)})
                count += 1
                if count >= MAX_WITNESSES:
                    break
    return found


def compare_ideals(a: str, b: str, A: Ideal, B: Ideal, where: str) -> PairReport:
    """Two ideals in one ring: equal reduced Gröbner bases, or witnesses both ways."""
    if A.basis == B.basis and A.faithful and B.faithful:
        return PairReport(a, b, "agree", "groebner", f"equal reduced Gröbner bases {where}")
    witnesses = witnesses_between(a, b, A, B)
    if A.colength != B.colength:
        reason = f"colengths differ {where}: {A.colength} and {B.colength}"
    elif not (A.faithful and B.faithful):
        unfaithful = " and ".join(n for n, X in ((a, A), (b, B)) if not X.faithful)
        reason = (f"{unfaithful} loses relations when its generators are replaced by their "
                  "meanings")
    else:
        reason = f"the ideals differ {where}"
    return PairReport(a, b, "disagree", "groebner", reason, witnesses)


def _formula(poly, names) -> str:
    from ringmatch.reports.formulas import formula
    return formula(poly, names, symmetric=True)


# ---------------------------------------------------------------------------------------
# Points route

def points_reports(families: Sequence[Family], flag: FlagType, line: algebra.Specialisation,
                   order: int, reports: Dict[str, PresentationReport]) -> dict:
    """Fill holds / separates / failures from the Bethe points; returns the lift record."""
    lifted = points.lift_points(flag, line, order)
    for family in families:
        report = reports[family.name]
        result = points.check_holds_family(family, flag, lifted)
        report.holds = result.holds
        report.separates = result.separates
        report.fixed_points_ok = bool(result.separates and not result.classical_failure
                                      and not result.unit_failures)
        report.failures = [failure.as_dict() for failure in result.failures[:MAX_WITNESSES]]
        report.failures += [dict(failure.as_dict(), relation=f"unit {failure.unit} vanishes")
                            for failure in result.unit_failures[:MAX_WITNESSES]]
    return {"order": order, "q_line": list(line.q_line), "points": len(lifted.points)}


def decide_completeness(report: PresentationReport, family: Family) -> None:
    if report.holds is None:
        report.complete = None
    elif family.solved_by_points:
        # The reference: complete when the points are its solutions, and its own colength
        # (a consistency check, where a Gröbner basis was affordable) is the expected one.
        report.complete = bool(report.holds and report.separates) and \
            report.classical_colength in (None, report.expected_colength)
    elif report.classical_colength is None:
        report.complete = None
    else:
        report.complete = bool(report.holds and report.separates
                               and report.classical_colength == report.expected_colength)


def compare_by_points(a: PresentationReport, b: PresentationReport) -> PairReport:
    if a.complete and b.complete:
        return PairReport(a.name, b.name, "agree", "points",
                          "both present the ring of functions on the Bethe points")
    complete, other = (a, b) if a.complete else (b, a)
    if complete.complete and other.complete is False:
        return PairReport(a.name, b.name, "disagree", "points",
                          f"{other.name} does not present the ring: " + why_incomplete(other),
                          list(other.failures))
    undecided = [r.name for r in (a, b) if r.complete is None]
    if undecided:
        return PairReport(a.name, b.name, "inconclusive", "points",
                          "no common generators to compare the ideals, and completeness of "
                          + " and ".join(undecided) + " is not decided")
    return PairReport(a.name, b.name, "inconclusive", "points",
                      "no common generators to compare the ideals, and neither presentation "
                      "presents the ring")


def why_incomplete(report: PresentationReport) -> str:
    if report.holds is False:
        return "some relations do not vanish at the Bethe points"
    if report.classical_colength != report.expected_colength:
        return (f"classical colength {report.classical_colength} ≠ expected "
                f"{report.expected_colength}")
    if report.separates is False:
        return "its generators do not separate the fixed points"
    return "undecided"


# ---------------------------------------------------------------------------------------
# One trial and the whole check

def run_trial(flag: FlagType, families: Sequence[Family], *, seed: int, prime: int,
              equivariant: bool, order: int, method: str) -> dict:
    residues, line = trial_specialisations(flag, seed, prime, equivariant)
    use_points = method in ("points", "both", "auto")
    reports: Dict[str, PresentationReport] = {}
    timings = {"groebner": 0.0, "points": 0.0}
    for family in families:
        probe = build_specialised(family, flag, residues)
        reports[family.name] = PresentationReport(
            family.name, len(probe.generators), len(probe.relations), probe.expected_colength)

    started = time.perf_counter()
    points_record = None
    if use_points:
        try:
            points_record = points_reports(families, flag, line, order, reports)
        except points.LiftError as error:
            for report in reports.values():
                report.notes.append(f"Bethe points unavailable: {error}")
    timings["points"] = time.perf_counter() - started

    started = time.perf_counter()
    limit = {f.name: REFERENCE_COLENGTH_LIMIT if f.solved_by_points else GROEBNER_COLENGTH_LIMIT
             for f in families}
    by_groebner = [f for f in families if method in ("groebner", "both") or (
        method == "auto" and reports[f.name].expected_colength <= limit[f.name])]
    for family in families:
        report = reports[family.name]
        if family in by_groebner or (method == "auto" and not family.solved_by_points and
                                     report.expected_colength <= CLASSICAL_COLENGTH_LIMIT):
            report.classical_colength, report.classical_method = colength_with_units(
                family, flag, classical(residues),
                "the fixed points" if report.fixed_points_ok else None)
        if family not in by_groebner and method == "auto":
            report.notes.append(
                f"no Gröbner basis at generic q: expected colength {report.expected_colength} "
                f"is above the automatic limit {limit[family.name]} (use --method both)")
    for family in families:
        decide_completeness(reports[family.name], family)
    # Two complete presentations present the same ring, so in the automatic mode the ideals
    # are moved into the common ring only where the points leave something to explain.
    with_transport = method in ("groebner", "both") or not all(
        reports[f.name].complete for f in families)
    own, moved = groebner_reports(by_groebner, flag, residues, reports, with_transport)
    use_groebner = any(r.classical_colength is not None for r in reports.values())
    timings["groebner"] = time.perf_counter() - started

    pairs = [compare_pair(families[x].name, families[y].name, own, moved, reports)
             for x in range(len(families)) for y in range(x + 1, len(families))]

    certificate = residues.record()
    certificate.update({"q_line": list(line.q_line), "order": order if use_points else None,
                        "method": _method_label(use_groebner, use_points),
                        "exact": False, "kind": "probabilistic"})
    return {"certificate": certificate, "presentations": reports, "pairs": pairs,
            "timings": timings, "points": points_record}


def groebner_reports(families: Sequence[Family], flag: FlagType,
                     residues: algebra.Specialisation, reports: Dict[str, PresentationReport],
                     with_transport: bool
                     ) -> Tuple[Dict[str, Ideal], Dict[str, Optional[Ideal]]]:
    """Own (and, if asked, transported) ideals of the given presentations; fills in the
    colengths."""
    own: Dict[str, Ideal] = {}
    moved: Dict[str, Optional[Ideal]] = {}
    if not families:
        return own, moved
    common = common_setup(families, flag, residues) if with_transport else None
    for family in families:
        report = reports[family.name]
        if not with_transport:
            # Nothing to compare ideal by ideal: only the colength is wanted.
            report.colength, report.colength_method = colength_with_units(
                family, flag, residues, "the Bethe points" if report.complete else None)
            continue
        own[family.name] = own_ideal(family, flag, residues)
        report.colength = own[family.name].colength
        report.colength_method = own_ideal_method(bool(own[family.name].ring.extra))
        moved[family.name] = transported_ideal(family, flag, residues, common, own[family.name])
        if moved[family.name] is not None and not moved[family.name].faithful:
            report.notes.append(
                f"replacing its generators by their meanings changes the colength from "
                f"{report.colength} to {moved[family.name].colength}")
    return own, moved


def compare_pair(a: str, b: str, own: Dict[str, Ideal], moved: Dict[str, Optional[Ideal]],
                 reports: Dict[str, PresentationReport]) -> PairReport:
    """Same generators: compare the ideals as they are.  Otherwise in the common λ-class
    ring when both can be moved there; otherwise through the Bethe points."""
    if a in own and b in own and same_ring(own[a], own[b]):
        pair = compare_ideals(a, b, own[a], own[b], "in their common generators")
    elif moved.get(a) is not None and moved.get(b) is not None:
        pair = compare_ideals(a, b, moved[a], moved[b], "in the common λ-class ring")
    else:
        return compare_by_points(reports[a], reports[b])
    _attach_points_evidence(pair, reports[a], reports[b])
    return pair


def _attach_points_evidence(pair: PairReport, a: PresentationReport, b: PresentationReport):
    """Where the points know more (which relation fails, where, at what order), add it."""
    for report in (a, b):
        if report.holds is False:
            for failure in report.failures:
                pair.witnesses.append({"relation_of": report.name, "fails_at_points": failure})


def _method_label(use_groebner: bool, use_points: bool) -> str:
    return {(True, True): "both", (True, False): "groebner", (False, True): "points"}[
        (use_groebner, use_points)]


def overall_verdict(presentations: Dict[str, PresentationReport], pairs: List[PairReport]):
    if any(p.verdict == "disagree" for p in pairs):
        return "disagree", "at least one pair of presentations differs"
    incomplete = [r.name for r in presentations.values() if r.complete is False]
    if incomplete:
        return "disagree", "does not present the ring: " + ", ".join(incomplete)
    if pairs and all(p.verdict == "agree" for p in pairs) and \
            all(r.complete for r in presentations.values()):
        return "agree", "every pair agrees and every presentation is complete"
    if not pairs and all(r.complete for r in presentations.values()):
        return "agree", "the presentation is complete"
    undecided = [r.name for r in presentations.values() if r.complete is None]
    reason = "completeness not decided for " + ", ".join(undecided) if undecided else \
        "some pair is inconclusive"
    return "inconclusive", reason


def check_case(flag: FlagType, families: Sequence[Family], *, seed: Optional[int] = None,
               prime: int = algebra.DEFAULT_PRIME, equivariant: bool = True,
               order: int = DEFAULT_ORDER, trials: int = 1, method: str = "auto") -> dict:
    """Run `trials` independent trials; the verdict stands only if all trials agree."""
    if seed is None:
        seed = random.SystemRandom().randrange(2**32)
    outcomes = []
    for t in range(trials):
        outcome = run_trial(flag, families, seed=seed + t, prime=trial_prime(prime, t),
                            equivariant=equivariant, order=order, method=method)
        outcome["verdict"], outcome["reason"] = overall_verdict(outcome["presentations"],
                                                                outcome["pairs"])
        outcomes.append(outcome)
    first = outcomes[0]
    verdicts = {o["verdict"] for o in outcomes}
    verdict, reason = (first["verdict"], first["reason"]) if len(verdicts) == 1 else \
        ("inconclusive", "independent trials reached different verdicts: "
         + ", ".join(o["verdict"] for o in outcomes))
    certificate = dict(first["certificate"])
    certificate["seed"] = seed
    certificate["trials"] = [o["certificate"] for o in outcomes]
    return {
        "case": flag.name,
        "rank": flag.rank,
        "equivariant": equivariant,
        "verdict": verdict,
        "reason": reason,
        "certificate": certificate,
        "presentations": {name: r.as_dict() for name, r in first["presentations"].items()},
        "pairs": [p.as_dict() for p in first["pairs"]],
        "timings": first["timings"],
    }
