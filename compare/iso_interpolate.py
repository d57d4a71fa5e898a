"""Exact coefficients of an isomorphism found by the search (compare/iso.py, "Exact
coefficients"): samples at fresh random points and lines, one linear system per coefficient
mod p, and the lift of the unknowns to Q by Chinese remaindering and rational reconstruction
(compare/reconstruct.py)."""
from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction
from typing import Dict, List, Optional, Sequence, Tuple

from ringmatch.presentations.flagtype import FlagType
from ringmatch.presentations.interface import Generator

from . import lifting, reconstruct
from . import series as ps
from .iso_records import Bounds, Direction, ExactCoefficient, Form, GeneratorFormula, Term
from .iso_search import PADE_SLACK, lift_line, monomial_columns, point_values, solve_on_support
from .series import Series

SLACK = 3                 # extra samples beyond the unknowns of every interpolation system


@dataclass(frozen=True)
class _Sample:
    weights: Tuple[int, ...]
    slopes: Tuple[int, ...]
    seed: int
    # coefficients[d][k][t] = series of term t of target k in direction d
    coefficients: Tuple[Tuple[Tuple[Series, ...], ...], ...]



def _take_sample(flag: FlagType, generators: Tuple[Sequence[Generator], Sequence[Generator]],
                 directions: Sequence[Direction], order: int, seed: int, prime: int
                 ) -> Optional[_Sample]:
    lifted = lift_line(flag, order, seed, prime)
    values = [point_values(lifted, generators[0]), point_values(lifted, generators[1])]
    per_direction = []
    for d, direction in enumerate(directions):
        source, target = values[d], values[1 - d]
        per_target = []
        for k, support in enumerate(direction.supports):
            columns = monomial_columns(source, support.monomials, order, prime, {})
            solved = solve_on_support(columns, [pt[k] for pt in target], order, prime)
            if solved is None:
                return None     # this sample's weights are special for the support
            per_target.append(tuple(solved))
        per_direction.append(tuple(per_target))
    return _Sample(tuple(lifted.spec.T), tuple(lifted.spec.q_line), lifted.spec.seed,
                   tuple(per_direction))


def _unknowns(form: Form, n: int, m: int, E: int) -> List[List[Tuple[Tuple[int, ...], Tuple[int, ...]]]]:
    """Per power t of s: the (α, β) monomials of the ansatz with e_n(T)^E cleared."""
    alphas = reconstruct.weighted_exponents(form.t_degree + n * E, list(range(1, n + 1)))
    return [[(a, b) for a in alphas for b in reconstruct.exponents_of_degree(t, m)]
            for t in range(form.q_degree + 1)]


def _least_E(form: Form, n: int) -> int:
    """The least power of e_n(T) (degree n) that makes the numerator's degree non-negative."""
    return 0 if form.t_degree >= 0 else -(form.t_degree // n)


def _numerator_coefficients(series: Series, form: Form, slopes, weights, E: int, order: int,
                            prime: int) -> Optional[List[int]]:
    """[s^t] of c·∏(1 − c_i s)^{E_i}·e_n(T)^E for t ≤ q-degree; None when higher powers of s
    survive (the coefficient does not have the form found on the first line)."""
    cleared = series.mul_low(reconstruct.line_factor(slopes, form.q_poles, prime, order), order)
    coefficients = ps.coefficients(cleared, order)
    if any(coefficients[form.q_degree + 1:]):
        return None
    top = pow(reconstruct.elementary_symmetric_values(weights, prime)[-1], E, prime)
    return [c * top % prime for c in coefficients[:form.q_degree + 1]]


def _design_row(sample: _Sample, columns, prime: int) -> List[int]:
    e = reconstruct.elementary_symmetric_values(sample.weights, prime)
    return [reconstruct.monomial_value(e, a, prime) *
            reconstruct.monomial_value(sample.slopes, b, prime) % prime for a, b in columns]


def _solve_coefficient(samples: Sequence[_Sample], d: int, k: int, term: int, form: Form,
                       n: int, m: int, E: int, order: int, prime: int
                       ) -> Optional[Dict[Tuple, int]]:
    """Residues a_{α,β} mod prime of one coefficient with e_n^E cleared, or None."""
    rhs_by_sample = []
    for sample in samples:
        numerator = _numerator_coefficients(sample.coefficients[d][k][term], form, sample.slopes,
                                            sample.weights, E, order, prime)
        if numerator is None:
            return None
        rhs_by_sample.append(numerator)
    out: Dict[Tuple, int] = {}
    for t, columns in enumerate(_unknowns(form, n, m, E)):
        if not columns:
            if any(rhs[t] for rhs in rhs_by_sample):
                return None
            continue
        if len(samples) < len(columns) + SLACK:
            return None
        rows = [_design_row(sample, columns, prime) for sample in samples]
        solved = reconstruct.solve_overdetermined(rows, [[rhs[t] for rhs in rhs_by_sample]],
                                                  prime)
        if solved is None or solved[0] is None:
            return None
        for column, value in zip(columns, solved[0]):
            if value:
                out[column] = value
    return out


def _sample_order(directions: Sequence[Direction], bounds: Bounds) -> int:
    """Enough powers of s for every cleared numerator and a few to check that nothing
    follows it: samples are lifted only this far (lifting cost grows with the order)."""
    need = max((form.q_degree + sum(form.q_poles) for direction in directions
                for support in direction.supports for form in support.forms), default=0)
    return min(bounds.order, need + PADE_SLACK + 2)


@dataclass
class _SamplePool:
    """Samples at one prime, drawn on demand from one seed."""
    flag: FlagType
    generators: tuple
    directions: Sequence[Direction]
    order: int
    seed: int
    prime: int
    samples: List[_Sample] = field(default_factory=list)
    attempts: int = 0
    notes: List[str] = field(default_factory=list)


def _ensure_samples(pool: _SamplePool, count: int) -> None:
    while len(pool.samples) < count:
        if pool.attempts >= count + 20:
            raise lifting.LiftError(f"only {len(pool.samples)} usable samples in "
                                   f"{pool.attempts} draws mod {pool.prime}")
        sample_seed = (pool.seed * 1_000_003 + pool.attempts) % 2**63
        pool.attempts += 1
        try:
            sample = _take_sample(pool.flag, pool.generators, pool.directions, pool.order,
                                  sample_seed, pool.prime)
        except lifting.LiftError as error:
            pool.notes.append(f"sample seed {sample_seed} skipped: {error}")
            continue
        if sample is None:
            pool.notes.append(f"sample seed {sample_seed} skipped: a support is singular there")
            continue
        pool.samples.append(sample)


def _coefficient_residues(pool: _SamplePool, key: Tuple[int, int, int], form: Form,
                          candidates: Sequence[int], n: int, m: int, bounds: Bounds
                          ) -> Optional[Tuple[int, Dict]]:
    """(E, residues) for the least E among the candidates whose system is consistent."""
    d, k, term = key
    for E in candidates:
        need = max(len(c) for c in _unknowns(form, n, m, E)) + SLACK
        if need > bounds.max_samples:
            return None
        _ensure_samples(pool, need)
        solved = _solve_coefficient(pool.samples, d, k, term, form, n, m, E, pool.order,
                                    pool.prime)
        if solved is not None:
            return E, solved
    return None


def reconstruct_directions(flag: FlagType, generators, directions: Sequence[Direction],
                           bounds: Bounds, seed: int, primes: Sequence[int], certificate: dict
                           ) -> Optional[str]:
    """Fill `formulas` of every direction; returns the reason when it cannot."""
    n, m = flag.n, flag.m
    order = _sample_order(directions, bounds)
    residues_by_prime: List[Dict] = []
    chosen_E: Dict[Tuple[int, int, int], int] = {}
    pools: List[_SamplePool] = []
    for index, prime in enumerate(primes[:bounds.max_primes]):
        pool = _SamplePool(flag, generators, directions, order, seed + 7919 * index, prime)
        pools.append(pool)
        residues: Dict[Tuple[int, int, int], Dict] = {}
        for d, direction in enumerate(directions):
            for k, support in enumerate(direction.supports):
                for term, form in enumerate(support.forms):
                    key = (d, k, term)
                    least = _least_E(form, n)
                    candidates = [chosen_E[key]] if key in chosen_E else \
                        range(least, least + bounds.t_pole_extra + 1)
                    found = _coefficient_residues(pool, key, form, candidates, n, m, bounds)
                    if found is None:
                        return (f"the coefficient of "
                                f"{_monomial_text(support.monomials[term], direction.source_generators)} "
                                f"in {support.target} is not a symmetric Laurent polynomial in T "
                                f"(1/e_n(T) up to power {least + bounds.t_pole_extra}) times a "
                                f"polynomial in q of degree ≤ {form.q_degree} over "
                                f"∏(1 − q_i)^{list(form.q_poles)} within {bounds.max_samples} "
                                f"samples (mod {prime})")
                    chosen_E[key], residues[key] = found
        residues_by_prime.append(residues)
        if index == 0:
            continue
        used = [p.prime for p in pools]
        exact = _lift_to_rationals(residues_by_prime[:-1], used[:-1])
        if exact is not None and _predicts(exact, residues, prime):
            _fill_formulas(directions, exact, chosen_E)
            certificate["reconstruction"] = {
                "primes": used, "samples_per_prime": [len(p.samples) for p in pools],
                "sample_order": order, "seed": seed,
                "sample_seed_rule": "(seed + 7919·prime index)·1000003 + attempt",
                "height_bound": f"|numerator|, denominator ≤ √(∏ primes / 2) ≈ 2^"
                                f"{_log2_bound(used[:-1])} (from {len(used) - 1} prime(s); "
                                f"the last prime confirms)",
                "notes": [note for p in pools for note in p.notes][:20]}
            return None
    used = [p.prime for p in pools]
    return (f"rational reconstruction did not stabilise over {len(used)} primes "
            f"(height bound ≈ 2^{_log2_bound(used[:-1])})")


def _log2_bound(primes: Sequence[int]) -> int:
    product = 1
    for p in primes:
        product *= p
    return (product // 2).bit_length() // 2


def _lift_to_rationals(residues_by_prime: Sequence[Dict], primes: Sequence[int]) -> Optional[Dict]:
    exact: Dict = {}
    for key in residues_by_prime[0]:
        unknowns = set()
        for residues in residues_by_prime:
            if key not in residues:
                return None
            unknowns |= set(residues[key])
        values = {}
        for column in unknowns:
            x, M = reconstruct.chinese_remainder([r[key].get(column, 0) for r in residues_by_prime],
                                                 primes)
            value = reconstruct.rational_number(x, M)
            if value is None:
                return None
            if value:
                values[column] = value
        exact[key] = values
    return exact


def _predicts(exact: Dict, residues: Dict, prime: int) -> bool:
    for key, values in exact.items():
        observed = residues.get(key)
        if observed is None:
            return False
        for column in set(values) | set(observed):
            predicted = reconstruct.residue_of(values.get(column, Fraction(0)), prime)
            if predicted is None or predicted != observed.get(column, 0):
                return False
    return True


def _simplified(values: Dict, E: int, poles: Tuple[int, ...], n: int) -> ExactCoefficient:
    """Cancel common factors e_n(T) between numerator and denominator."""
    while E > 0 and values and all(a[n - 1] > 0 for a, _ in values):
        values = {(a[:n - 1] + (a[n - 1] - 1,), b): v for (a, b), v in values.items()}
        E -= 1
    terms = tuple(sorted(((a, b, v) for (a, b), v in values.items()), key=lambda x: (x[1], x[0])))
    return ExactCoefficient(terms, E, poles)


def _fill_formulas(directions: Sequence[Direction], exact: Dict, chosen_E: Dict) -> None:
    for d, direction in enumerate(directions):
        n = None
        direction.formulas = []
        for k, support in enumerate(direction.supports):
            terms = []
            for term, (monomial, form) in enumerate(zip(support.monomials, support.forms)):
                values = exact[(d, k, term)]
                if not values:
                    continue
                n = len(next(iter(values))[0])
                terms.append(Term(monomial, _simplified(values, chosen_E[(d, k, term)],
                                                        form.q_poles, n)))
            direction.formulas.append(GeneratorFormula(support.target, tuple(terms), support.how))


def _monomial_text(exponents: Sequence[int], names: Sequence[str]) -> str:
    parts = [name if e == 1 else f"{name}^{e}" for name, e in zip(names, exponents) if e]
    return "*".join(parts) if parts else "1"
