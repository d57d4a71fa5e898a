"""The one interface every presentation family implements.

A family is a plain record of functions (no class hierarchy):

* `generators(flag)`            → list of `Generator` (name, meaning, weight);
* `relations(flag, ring)`       → list of `Relation` (label, element of `ring`);
* `units(flag, ring)`           → elements of `ring` that must be invertible
                                  (the engine adjoins one inverse for their product);
* `expected_colength(flag)`     → colength of a correct presentation (usually the rank);
* `unsupported(flag)`           → None, or the reason the family has nothing for this flag;
* `integers(flag)`              → the integers written in the relations and units
                                  (numerators and denominators of their coefficients), so
                                  that a computation mod p can avoid a prime dividing one
                                  (which would silently drop a term); () when not known;
* `solved_by_points`            → True for the Bethe equations themselves: the lifted Bethe
                                  points are their solutions, and the ring they present is by
                                  definition the ring of functions on those points
                                  (docs/mathematics.md §2.3), the reference every other
                                  family is measured against.

`ring` is a `compare.algebra.Ring`: builders read generators from `ring.gen[name]` and the
parameters from `ring.T[j-1]`, `ring.q[i-1]`, so one builder serves the symbolic, the
specialised and the series rings alike.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, List, Optional, Sequence, Tuple

from ringmatch.compare import algebra
from ringmatch.errors import InputError
from .flagtype import FlagType
from .meanings import Meaning


@dataclass(frozen=True)
class Generator:
    name: str
    meaning: Meaning
    weight: int


@dataclass(frozen=True)
class Relation:
    label: str      # where the relation comes from, e.g. "level 1, coefficient of y^2"
    poly: object


class PresentationError(InputError):
    """A family cannot build anything for the requested flag type."""


@dataclass(frozen=True)
class Family:
    name: str
    description: str
    generators: Callable[[FlagType], List[Generator]]
    relations: Callable[[FlagType, algebra.Ring], List[Relation]]
    units: Callable[[FlagType, algebra.Ring], list] = lambda flag, ring: []
    expected_colength: Callable[[FlagType], int] = lambda flag: flag.rank
    unsupported: Callable[[FlagType], Optional[str]] = lambda flag: None
    solved_by_points: bool = False
    integers: Callable[[FlagType], Tuple[int, ...]] = lambda flag: ()


@dataclass(frozen=True)
class Presentation:
    """A family built for one flag type over one ring."""
    family: str
    flag: FlagType
    ring: algebra.Ring
    generators: Tuple[Generator, ...]
    relations: Tuple[Relation, ...]
    units: Tuple[object, ...]
    expected_colength: int

    @property
    def generator_names(self) -> List[str]:
        return [g.name for g in self.generators]


def _check_supported(family: Family, flag: FlagType) -> List[Generator]:
    reason = family.unsupported(flag)
    if reason:
        raise PresentationError(f"{family.name} has no presentation for {flag.name}: {reason}")
    return family.generators(flag)


def _assemble(family: Family, flag: FlagType, ring: algebra.Ring,
              generators: Sequence[Generator]) -> Presentation:
    return Presentation(family.name, flag, ring, tuple(generators),
                        tuple(family.relations(flag, ring)), tuple(family.units(flag, ring)),
                        family.expected_colength(flag))


def build_symbolic(family: Family, flag: FlagType, *, equivariant: bool = True) -> Presentation:
    generators = _check_supported(family, flag)
    ring = algebra.symbolic_ring([g.name for g in generators], flag.n, flag.m,
                                 equivariant=equivariant)
    return _assemble(family, flag, ring, generators)


def build_specialised(family: Family, flag: FlagType, spec: algebra.Specialisation, *,
                      extra: Sequence[str] = (), ordering: str = "degrevlex") -> Presentation:
    generators = _check_supported(family, flag)
    ring = algebra.specialised_ring([g.name for g in generators], spec, extra=extra,
                                    ordering=ordering)
    return _assemble(family, flag, ring, generators)


def build_series(family: Family, flag: FlagType, spec: algebra.Specialisation) -> Presentation:
    generators = _check_supported(family, flag)
    ring = algebra.series_ring([g.name for g in generators], spec)
    return _assemble(family, flag, ring, generators)
