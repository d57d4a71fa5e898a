"""Values of classes and "holds" at the Bethe points (docs/mathematics.md §2.3), which
compare/lifting.py lifts to power series.

**Values and holds.**  Generators are evaluated through their meanings (λ_y(S_i), λ_y(Q_i),
the Vieta roots, Toda ratios, Chern roots), relations are evaluated at every point, and a
presentation "holds" when every relation vanishes mod s^N at every point and every unit is
nonzero at s = 0 there.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Dict, List, Optional, Sequence, Tuple

from ringmatch.presentations.flagtype import FixedPoint, FlagType
from ringmatch.presentations.interface import Family, Generator, Presentation, build_series
from ringmatch.presentations.meanings import Meaning, meaning_problem

from . import series as ps
from .lifting import BethePoints, LiftedPoint, Setup, make_setup
from .series import Series


# ---------------------------------------------------------------------------------------
# Values of classes at the points

@dataclass
class _PointClasses:
    """What the meanings of generators are built from, computed on demand at one point."""
    setup: Setup
    point: LiftedPoint
    order: int
    _lambda: Dict[int, List[Series]] = field(default_factory=dict)
    _quotient: Dict[int, List[Series]] = field(default_factory=dict)
    _det_inverse: Dict[int, Series] = field(default_factory=dict)

    def lambda_S(self, i: int) -> List[Series]:
        """[1, e_1, …, e_{k_i}] of the level-i roots (S_0 = 0, S_{m+1} = the weights)."""
        if i not in self._lambda:
            if i == self.setup.flag.m + 1:
                self._lambda[i] = self.setup.top_lambda
            else:
                roots = self.point.roots[i - 1] if i else ()
                self._lambda[i] = ps.elementary_symmetric(roots, self.order, self.setup.prime)
        return self._lambda[i]

    def det_S(self, i: int) -> Series:
        return self.lambda_S(i)[-1]

    def det_S_inverse(self, i: int) -> Series:
        if i not in self._det_inverse:
            self._det_inverse[i] = ps.inverse(self.det_S(i), self.order)
        return self._det_inverse[i]

    def quotient(self, i: int) -> List[Series]:
        """Coefficients of λ_y(Y^(i)) = N_i(y) / λ_y(S_i), exact at the Bethe points, with
        N_i(y) = λ_y(S_{i+1}) + y^{d_i} q_i (det S_{i+1}/det S_i) λ_y(S_{i−1})."""
        if i not in self._quotient:
            N = self.order
            above, here = self.lambda_S(i + 1), self.lambda_S(i)
            d, k = len(above) - len(here), len(here) - 1
            top = self.setup.q_series[i - 1].mul_low(self.det_S(i + 1), N).mul_low(
                self.det_S_inverse(i), N)
            w = [above[0]]
            for j in range(1, d + 1):
                c = above[j] + top if j == d else above[j]
                for l in range(1, min(j, k) + 1):
                    c = c - here[l].mul_low(w[j - l], N)
                w.append(c)
            self._quotient[i] = w
        return self._quotient[i]

    def value(self, meaning: Meaning) -> Series:
        i, j, kind = meaning.level, meaning.index, meaning.kind
        if kind == "lambda_S":
            return self.lambda_S(i)[j]
        if kind == "vieta_aux":
            return self.quotient(i)[j]
        if kind == "lambda_Q":
            w = self.quotient(i)
            if j < len(w) - 1:
                return w[j]
            return w[j] - self.setup.q_series[i - 1].mul_low(w[j], self.order)
        if kind == "toda_L":
            ratio = self.det_S(i)
            return ratio.mul_low(self.det_S_inverse(i - 1), self.order) if i > 1 else ratio
        if kind == "root":
            return self.point.roots[i - 1][j - 1]
        raise ValueError(f"no value for meaning {meaning}")


def generator_values(points: BethePoints, generators: Sequence[Generator]) -> List[Dict[str, Series]]:
    """For every point (in `points.points` order): generator name → its value mod s^N."""
    for g in generators:
        problem = meaning_problem(g.meaning, points.flag)
        if problem:
            raise ValueError(f"generator {g.name}: {problem}")
    setup = make_setup(points.flag, points.spec)
    out = []
    for point in points.points:
        classes = _PointClasses(setup, point, points.order)
        out.append({g.name: classes.value(g.meaning) for g in generators})
    return out


# ---------------------------------------------------------------------------------------
# Evaluating relations: compiled once per presentation, then run at every point

@dataclass(frozen=True)
class _Program:
    """A list of polynomials prepared for evaluation at many points.

    Monomials in the generators are built once per point, each as an earlier monomial times
    one generator.  A polynomial's terms are grouped by their coefficient series in s up to a
    scalar (Whitney's are multiples of 1, q_i or 1 − q_i): each group is a scalar combination
    of monomials (additions where the scalar is ±1), times its series once."""
    steps: Tuple[Tuple[int, int], ...]      # (earlier slot, generator index)
    polys: Tuple[Tuple[Tuple[Optional[Series], Tuple[Tuple[int, int], ...]], ...], ...]


def _compile(polys: Sequence, generator_count: int, prime: int) -> _Program:
    slots: Dict[Tuple[int, ...], int] = {(0,) * generator_count: 0}
    steps: List[Tuple[int, int]] = []

    def slot(exponents: Tuple[int, ...]) -> int:
        if exponents not in slots:
            g = next(index for index, e in enumerate(exponents) if e)
            smaller = exponents[:g] + (exponents[g] - 1,) + exponents[g + 1:]
            earlier = slot(smaller)
            steps.append((earlier, g))
            slots[exponents] = len(steps)
        return slots[exponents]

    compiled = []
    for poly in polys:
        by_monomial: Dict[int, Dict[int, int]] = {}
        for exponents, coefficient in poly.terms():
            target = slot(tuple(exponents[:generator_count]))
            by_monomial.setdefault(target, {})[exponents[generator_count]] = int(coefficient)
        groups: Dict[Tuple[int, ...], List[Tuple[int, int]]] = {}
        for target, by_power in sorted(by_monomial.items()):
            coefficients = [0] * (max(by_power) + 1)
            for power, c in by_power.items():
                coefficients[power] = c
            lead = next(c for c in coefficients if c)
            scale = pow(lead, -1, prime)
            key = tuple(c * scale % prime for c in coefficients)
            groups.setdefault(key, []).append((target, lead % prime))
        compiled.append(tuple((None if key == (1,) else ps.from_coefficients(key, prime),
                               tuple(terms)) for key, terms in groups.items()))
    return _Program(tuple(steps), tuple(compiled))


def _run(program: _Program, values: Sequence[Series], order: int, prime: int) -> List[Series]:
    monomials = [ps.constant(1, prime)]
    for earlier, g in program.steps:
        monomials.append(monomials[earlier].mul_low(values[g], order))
    minus_one = prime - 1
    out = []
    for groups in program.polys:
        total = None
        for series, terms in groups:
            combination = None
            for target, scalar in terms:
                monomial = monomials[target]
                if combination is None:
                    combination = monomial if scalar == 1 else monomial * scalar
                elif scalar == 1:
                    combination = combination + monomial
                elif scalar == minus_one:
                    combination = combination - monomial
                else:
                    combination = combination + monomial * scalar
            if series is not None:
                combination = combination.mul_low(series, order)
            total = combination if total is None else total + combination
        out.append(total if total is not None else ps.constant(0, prime))
    return out


@dataclass(frozen=True)
class RelationFailure:
    relation: str               # label of the relation
    fixed_point: FixedPoint     # a point where it fails at the lowest order seen
    lowest_power: int           # lowest power of s with a nonzero coefficient there
    failing_points: int         # at how many points the relation does not vanish mod s^N

    @property
    def classical(self) -> bool:
        """Already wrong at q = 0."""
        return self.lowest_power == 0

    def as_dict(self) -> dict:
        return {"relation": self.relation, "fixed_point": [list(I) for I in self.fixed_point],
                "lowest_power": self.lowest_power, "classical": self.classical,
                "failing_points": self.failing_points}


@dataclass(frozen=True)
class UnitFailure:
    unit: int                   # position in the presentation's list of units
    fixed_point: FixedPoint     # first point where it vanishes at s = 0
    failing_points: int

    def as_dict(self) -> dict:
        return {"unit": self.unit, "fixed_point": [list(I) for I in self.fixed_point],
                "failing_points": self.failing_points}


@dataclass(frozen=True)
class HoldsResult:
    family: str
    case: str
    order: int
    points: int
    relations: int
    holds: bool                 # all relations vanish mod s^N and all units are units
    failures: Tuple[RelationFailure, ...]
    unit_failures: Tuple[UnitFailure, ...]
    separates: bool             # generator values at s = 0 tell all fixed points apart

    @property
    def classical_failure(self) -> bool:
        return any(f.classical for f in self.failures)

    def as_dict(self) -> dict:
        return {"family": self.family, "case": self.case, "order": self.order,
                "points": self.points, "relations": self.relations, "holds": self.holds,
                "separates": self.separates, "classical_failure": self.classical_failure,
                "failures": [f.as_dict() for f in self.failures],
                "unit_failures": [f.as_dict() for f in self.unit_failures]}


def _check_same_specialisation(presentation: Presentation, points: BethePoints) -> None:
    ring, spec = presentation.ring, points.spec
    if "s" not in ring.extra:
        raise ValueError("check_holds needs a presentation built with build_series")
    if ring.ctx.modulus() != spec.prime:
        raise ValueError(f"presentation is mod {ring.ctx.modulus()}, points mod {spec.prime}")
    if presentation.flag != points.flag:
        raise ValueError(f"presentation is for {presentation.flag.name}, points for {points.flag.name}")
    weights = [int(t.coefficient(0)) if not t.is_zero() else 0 for t in ring.T]
    if weights != [t % spec.prime for t in spec.T]:
        raise ValueError("presentation and points use different weights")
    s = ring.extra["s"]
    if [q for q in ring.q] != [s * c for c in spec.q_line]:
        raise ValueError("presentation and points use different q lines")


def check_holds(presentation: Presentation, points: BethePoints) -> HoldsResult:
    """Evaluate every relation and unit of `presentation` (from `build_series` at the same
    specialisation) at every Bethe point."""
    _check_same_specialisation(presentation, points)
    flag, p, N = points.flag, points.spec.prime, points.order
    generators = presentation.generators
    for g in generators:
        problem = meaning_problem(g.meaning, flag)
        if problem:
            raise ValueError(f"generator {g.name}: {problem}")
    relations = presentation.relations
    program = _compile([r.poly for r in relations] + list(presentation.units), len(generators), p)
    setup = make_setup(flag, points.spec)
    worst: Dict[int, Tuple[int, FixedPoint]] = {}
    counts: Dict[int, int] = {}
    unit_first: Dict[int, FixedPoint] = {}
    unit_counts: Dict[int, int] = {}
    signatures = set()
    for point in points.points:
        classes = _PointClasses(setup, point, N)
        values = [classes.value(g.meaning) for g in generators]
        signatures.add(tuple(int(v[0]) for v in values))
        results = _run(program, values, N, p)
        for r, value in enumerate(results[:len(relations)]):
            if value.is_zero():      # every series here is already truncated mod s^N
                continue
            lowest = ps.valuation(value, N)
            if lowest is not None:
                counts[r] = counts.get(r, 0) + 1
                if r not in worst or lowest < worst[r][0]:
                    worst[r] = (lowest, point.fixed_point)
        for u, value in enumerate(results[len(relations):]):
            if value[0] == 0:
                unit_counts[u] = unit_counts.get(u, 0) + 1
                unit_first.setdefault(u, point.fixed_point)
    failures = tuple(RelationFailure(relations[r].label, worst[r][1], worst[r][0], counts[r])
                     for r in sorted(worst))
    unit_failures = tuple(UnitFailure(u, unit_first[u], unit_counts[u]) for u in sorted(unit_first))
    return HoldsResult(presentation.family, flag.name, N, len(points.points), len(relations),
                       not failures and not unit_failures, failures, unit_failures,
                       len(signatures) == len(points.points))


def check_holds_family(family: Family, flag: FlagType, points: BethePoints) -> HoldsResult:
    """`check_holds` for a family, built over the points' own specialisation."""
    return check_holds(build_series(family, flag, points.spec), points)
