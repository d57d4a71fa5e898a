"""Verification of a reconstructed isomorphism (compare/iso.py, "Verification"): the exact
formulas evaluated mod p, compared with the generators at fresh Bethe points, and checked as a
ring isomorphism by Gröbner normal forms at a fresh specialisation."""
from __future__ import annotations

from typing import Dict, Optional, Sequence, Tuple

from ringmatch.presentations.flagtype import FlagType
from ringmatch.presentations.interface import Family

from . import algebra, groebner, reconstruct
from . import series as ps
from .iso_records import Direction, ExactCoefficient, GeneratorFormula
from .iso_search import lift_line, monomial_series, point_values
from .series import Series


# ---------------------------------------------------------------------------------------
# Evaluating exact formulas mod p

def coefficient_residue(c: ExactCoefficient, weights: Sequence[int], q: Sequence[int],
                        prime: int) -> Optional[int]:
    """The coefficient at residues T, q; None when a denominator vanishes mod p."""
    e = reconstruct.elementary_symmetric_values(weights, prime)
    total = 0
    for a, b, v in c.numerator:
        r = reconstruct.residue_of(v, prime)
        if r is None:
            return None
        total += r * reconstruct.monomial_value(e, a, prime) * reconstruct.monomial_value(q, b, prime)
    denominator = pow(e[-1], c.e_top_power, prime)
    for qi, E in zip(q, c.q_poles):
        denominator = denominator * pow(1 - qi, E, prime) % prime
    if denominator % prime == 0:
        return None
    return total * pow(denominator, -1, prime) % prime


def coefficient_series(c: ExactCoefficient, weights: Sequence[int], slopes: Sequence[int],
                       order: int, prime: int) -> Optional[Series]:
    """The coefficient on the line q_i = c_i·s, mod s^order."""
    e = reconstruct.elementary_symmetric_values(weights, prime)
    numerator = ps.constant(0, prime)
    for a, b, v in c.numerator:
        r = reconstruct.residue_of(v, prime)
        if r is None:
            return None
        scalar = r * reconstruct.monomial_value(e, a, prime) * \
            reconstruct.monomial_value(slopes, b, prime) % prime
        numerator = numerator + ps.constant(scalar, prime).left_shift(sum(b)).truncate(order)
    top = pow(e[-1], c.e_top_power, prime)
    if top == 0:
        return None
    denominator = reconstruct.line_factor(slopes, c.q_poles, prime, order) * top
    return numerator.mul_low(ps.inverse(denominator, order), order)


def formula_polynomial(formula: GeneratorFormula, ring: algebra.Ring, names: Sequence[str],
                       spec: algebra.Specialisation):
    """The formula at the residues of `spec`, in `ring` (whose first variables are `names`)."""
    nvars = ring.ctx.nvars()
    terms = {}
    for term in formula.terms:
        r = coefficient_residue(term.coefficient, spec.T, spec.q, spec.prime)
        if r is None:
            return None
        exponents = tuple(term.monomial) + (0,) * (nvars - len(names))
        terms[exponents] = (terms.get(exponents, 0) + r) % spec.prime
    return ring.ctx.from_dict({e: v for e, v in terms.items() if v})


# ---------------------------------------------------------------------------------------
# Verification

def verify_at_points(flag: FlagType, generators, directions: Sequence[Direction], order: int,
                     seed: int, prime: int) -> dict:
    lifted = lift_line(flag, order, seed, prime)
    values = [point_values(lifted, generators[0]), point_values(lifted, generators[1])]
    spec = lifted.spec
    failures = []
    for d, direction in enumerate(directions):
        source, target = values[d], values[1 - d]
        for k, formula in enumerate(direction.formulas):
            terms = []
            for term in formula.terms:
                c = coefficient_series(term.coefficient, spec.T, spec.q_line, order, prime)
                if c is None:
                    return {"check": "values at fresh Bethe points", "passed": None,
                            "detail": f"a denominator vanishes mod {prime}"}
                terms.append((c, term.monomial))
            bad = 0
            for point_source, point_target in zip(source, target):
                total = ps.constant(0, prime)
                for c, e in terms:
                    total = total + c.mul_low(monomial_series(point_source, e, order, prime), order)
                if total != point_target[k].truncate(order):
                    bad += 1
            if bad:
                failures.append(f"{direction.target}.{formula.target} differs at {bad} points")
    return {"check": "values at fresh Bethe points", "method": f"points mod s^{order}",
            "passed": not failures, "prime": prime, "seed": spec.seed,
            "weights": list(spec.T), "q_line": list(spec.q_line), "order": order,
            "detail": "; ".join(failures) if failures else
            "every formula equals its generator at every point, both directions"}


def _substitution(images: Dict[str, object], ctx, zero) -> list:
    return [images.get(name, zero) for name in ctx.names()]


def verify_by_groebner(flag: FlagType, families: Tuple[Family, Family],
                       directions: Sequence[Direction], spec: algebra.Specialisation) -> dict:
    from .engine import own_ideal
    ideals = [own_ideal(families[0], flag, spec), own_ideal(families[1], flag, spec)]
    record = {"check": "ring isomorphism at a fresh specialisation",
              "method": "Gröbner normal forms", "prime": spec.prime, "seed": spec.seed,
              "weights": list(spec.T), "q_values": list(spec.q),
              "colengths": [ideals[0].colength, ideals[1].colength]}
    images = []
    for d, direction in enumerate(directions):
        source_ring = ideals[d].ring
        mapped = {}
        for formula in direction.formulas:
            poly = formula_polynomial(formula, source_ring, direction.source_generators, spec)
            if poly is None:
                return dict(record, passed=None, detail=f"a denominator vanishes mod {spec.prime}")
            mapped[formula.target] = poly
        images.append(mapped)
    problems = []
    for d, direction in enumerate(directions):
        source, target = ideals[d], ideals[1 - d]
        substitution = _substitution(images[d], target.ring.ctx, source.ring.zero)
        for relation in target.relations:
            image = relation.poly.compose(*substitution, ctx=source.ring.ctx)
            if not groebner.normal_form(image, source.basis).is_zero():
                problems.append(f"relation [{relation.label}] of {direction.target} is not in the "
                                f"ideal of {direction.source} after substitution")
        for u, unit in enumerate(_units(families[1 - d], flag, target.ring)):
            image = unit.compose(*substitution, ctx=source.ring.ctx)
            if groebner.groebner_basis(list(source.basis) + [image]) != [source.ring.one]:
                problems.append(f"unit {u + 1} of {direction.target} does not become a unit of "
                                f"{direction.source}")
    for d, direction in enumerate(directions):
        # a ↦ a(b(a)): the inverse's formula for a, with b replaced by the map's formulas
        source, target = ideals[d], ideals[1 - d]
        substitution = _substitution(images[d], target.ring.ctx, source.ring.zero)
        back = images[1 - d]
        for name in direction.source_generators:
            round_trip = back[name].compose(*substitution, ctx=source.ring.ctx)
            if not groebner.normal_form(round_trip - source.ring.gen[name], source.basis).is_zero():
                problems.append(f"{direction.source} generator {name} does not come back to itself")
    return dict(record, passed=not problems,
                detail="; ".join(problems[:6]) if problems else
                "relations and units map into the ideals both ways; both round trips are the "
                "identity")


def _units(family: Family, flag: FlagType, ring: algebra.Ring) -> list:
    return list(family.units(flag, ring))
