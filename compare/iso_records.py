"""The records of an isomorphism search (compare/iso.py): its bounds, the exact coefficients
and formulas it finds, the supports found at the Bethe points, one direction of the search and
the whole result."""
from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction
from typing import Dict, List, Optional, Tuple


@dataclass(frozen=True)
class Bounds:
    max_degree: Optional[int] = None   # None: up to the degree where the monomials span
    max_terms: int = 4                 # sparsest-support search: at most this many monomials
    search_budget: int = 20000         # candidate supports tried per generator
    order: int = 16                    # series order N: points mod s^N
    t_pole_extra: int = 1              # powers of 1/e_n(T) tried beyond the least possible
    max_primes: int = 4
    max_samples: int = 600

    def record(self) -> dict:
        return dict(self.__dict__)


@dataclass(frozen=True)
class ExactCoefficient:
    """Σ value·e(T)^α q^β / (e_n(T)^E ∏ (1 − q_i)^{E_i}); e(T) = (e_1(T), …, e_n(T))."""
    numerator: Tuple[Tuple[Tuple[int, ...], Tuple[int, ...], Fraction], ...]
    e_top_power: int
    q_poles: Tuple[int, ...]

    def height(self) -> int:
        return max((max(abs(v.numerator), v.denominator) for _, _, v in self.numerator),
                   default=0)


@dataclass(frozen=True)
class Term:
    monomial: Tuple[int, ...]          # exponents over the source generators
    coefficient: ExactCoefficient


@dataclass(frozen=True)
class GeneratorFormula:
    target: str
    terms: Tuple[Term, ...]
    how: str                           # "sparsest" or "normal form"


@dataclass(frozen=True)
class Form:
    """How one coefficient looks along the first line."""
    t_degree: int                      # deg(target) − deg(monomial)
    q_degree: int                      # degree of the numerator in s
    q_poles: Tuple[int, ...]


@dataclass(frozen=True)
class Support:
    target: str
    monomials: Tuple[Tuple[int, ...], ...]
    forms: Tuple[Form, ...]
    how: str
    degree: int


@dataclass
class Direction:
    """One direction of the search: target generators in source generators."""
    source: str
    target: str
    source_generators: Tuple[str, ...]
    target_generators: Tuple[str, ...]
    supports: List[Support] = field(default_factory=list)
    formulas: List[GeneratorFormula] = field(default_factory=list)
    failure: Optional[str] = None
    searched_degree: Optional[int] = None


@dataclass
class IsoResult:
    case: str
    source: str
    target: str
    found: bool
    verified: bool
    status: str                        # found | none within bounds | inconclusive
    reason: str
    forward: Direction                 # target generators in source generators (the map)
    backward: Direction                # source generators in target generators (the inverse)
    bounds: dict
    certificate: dict
    checks: List[dict] = field(default_factory=list)
    timings: Dict[str, float] = field(default_factory=dict)   # CPU seconds per phase
