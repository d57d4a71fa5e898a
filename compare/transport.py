"""Moving presentations into one common ring through the meanings of their generators.

The common ring C = F_p[λ_j(S_i)] has the λ-classes (named `S{i}_{j}` as in every built-in
family).  Each other meaning is replaced by a polynomial *representative* in the λ(S) that is
congruent to it in the quantum K ring:

  λ_j(Q_i), 1 ≤ j ≤ d_i     [y^j] λ_y(S_{i+1})/λ_y(S_i) as a power series in y — the q-term
                            of the Whitney relation (arXiv:2310.03826) starts at y^{d_i+1};
  e_j(Y^(i)), j < d_i       the same (N_i(y) and λ_y(S_{i+1}) differ from y^{d_i} on);
  e_{d_i}(Y^(i))            [y^{d_i}] λ_y(S_{i+1})/λ_y(S_i) / (1 − q_i)   (docs/mathematics.md §2.2);
  L_i, Chern roots          no representative without inverses: not transported.

Why this is enough (derived here, and the engine checks the hypothesis every time): let φ
substitute the representatives.  If a presentation A has every λ_j(S_i) among its
generators, C/φ(I_A) is the quotient of A's ring by g − φ(g) for its other generators g; when
its colength equals A's own colength, nothing was lost, so C/φ(I_A) ≅ A's ring compatibly
with the meanings ("faithful transport").  Two faithfully transported presentations agree
exactly when their transported ideals are equal, i.e. have equal reduced Gröbner bases.
"""
from __future__ import annotations

from typing import Dict, List, Optional

from ringmatch.presentations.flagtype import FlagType
from ringmatch.presentations.interface import Presentation, Relation
from ringmatch.presentations.meanings import Meaning, lambda_S_name
from ringmatch.presentations.lambda_classes import lambda_y_S

from . import algebra


def common_generator_names(flag: FlagType) -> List[str]:
    return [lambda_S_name(i, j) for i in range(1, flag.m + 1) for j in range(1, flag.k(i) + 1)]


def common_ring(flag: FlagType, spec: algebra.Specialisation, extra=()) -> algebra.Ring:
    return algebra.specialised_ring(common_generator_names(flag), spec, extra=extra)


def _classical_quotient(flag: FlagType, C: algebra.Ring, i: int) -> algebra.YPoly:
    """λ_y(S_{i+1})/λ_y(S_i) to order y^{d_i}."""
    return algebra.ypoly_divide_series(lambda_y_S(flag, C, i + 1), lambda_y_S(flag, C, i),
                                       flag.d(i) + 1, C.zero)


def representative(meaning: Meaning, flag: FlagType, C: algebra.Ring,
                   spec: algebra.Specialisation):
    """A polynomial in the λ(S) congruent to the meaning, or None (see the module notes)."""
    i, j = meaning.level, meaning.index
    if meaning.kind == "lambda_S":
        return C.gen[lambda_S_name(i, j)]
    if meaning.kind in ("lambda_Q", "vieta_aux"):
        value = _classical_quotient(flag, C, i)[j]
        if meaning.kind == "vieta_aux" and j == flag.d(i):
            value = value * pow((1 - spec.q[i - 1]) % spec.prime, -1, spec.prime)
        return value
    return None


def substitution(presentation: Presentation, C: algebra.Ring, spec: algebra.Specialisation
                 ) -> Optional[list]:
    """Images of the presentation's ring variables in C, or None when it cannot be moved
    there (some λ_j(S_i) is missing among its generators, or a generator has no
    representative).  Variables that are not generators (e.g. inverses) map to 0; they
    occur in no relation or unit."""
    flag = presentation.flag
    meanings = {g.meaning for g in presentation.generators}
    needed = {Meaning("lambda_S", i, j) for i in range(1, flag.m + 1)
              for j in range(1, flag.k(i) + 1)}
    if not needed <= meanings:
        return None
    images: Dict[str, object] = {}
    for g in presentation.generators:
        image = representative(g.meaning, flag, C, spec)
        if image is None:
            return None
        images[g.name] = image
    return [images.get(name, C.zero) for name in presentation.ring.ctx.names()]


def transport(presentation: Presentation, C: algebra.Ring, spec: algebra.Specialisation
              ) -> Optional[List[Relation]]:
    """The presentation's relations moved into C, or None (see `substitution`)."""
    values = substitution(presentation, C, spec)
    if values is None:
        return None
    return [Relation(r.label, r.poly.compose(*values, ctx=C.ctx)) for r in presentation.relations]


def transport_units(presentation: Presentation, C: algebra.Ring, spec: algebra.Specialisation
                    ) -> Optional[list]:
    values = substitution(presentation, C, spec)
    if values is None:
        return None
    return [u.compose(*values, ctx=C.ctx) for u in presentation.units]
