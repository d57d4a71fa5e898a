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
    if not has_every_lambda_S(presentation):
        return None
    return _images(presentation, C, lambda meaning: representative(
        meaning, presentation.flag, C, spec))


def _images(presentation: Presentation, C: algebra.Ring, represent) -> Optional[list]:
    """`represent(meaning)` of every generator, in the order of the presentation's ring
    variables (0 for the variables that are not generators), or None when one has none."""
    images: Dict[str, object] = {}
    for g in presentation.generators:
        image = represent(g.meaning)
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


# ---------------------------------------------------------------------------------------
# Moving with denominators: generators whose meaning is a ratio of determinants

def _inverse_name(i: int) -> str:
    return f"inverse_det_S{i}"


def _fraction_representative(meaning: Meaning, flag: FlagType, C2: algebra.Ring,
                             spec: algebra.Specialisation):
    """A representative in C[1/det S_1, …, 1/det S_m], written with one variable per
    inverse, or None.  L_i = det S_i / det S_{i−1} with det S_0 = 1, det S_{m+1} = T_1⋯T_n."""
    if meaning.kind != "toda_L":
        return representative(meaning, flag, C2, spec)
    i = meaning.level

    def det(level):
        if level == 0:
            return C2.one
        if level == flag.m + 1:
            product = C2.one
            for t in C2.T:
                product = product * t
            return product
        return C2.gen[lambda_S_name(level, flag.k(level))]

    inverse = C2.one if i - 1 == 0 else C2.extra[_inverse_name(i - 1)]
    return det(i) * inverse


def det_S_indices(flag: FlagType, C: algebra.Ring) -> List[int]:
    """Positions of det S_1, …, det S_m (the variables λ_{k_i}(S_i)) among C's variables."""
    names = C.ctx.names()
    return [names.index(lambda_S_name(i, flag.k(i))) for i in range(1, flag.m + 1)]


def _clear_inverses(poly, C: algebra.Ring, flag: FlagType):
    """u·poly written without the inverse variables, for the least monomial u in the
    det S_i that clears them.  det S_i is a unit of the quantum K ring (docs/mathematics.md
    §2.1: det S_i · det Q_i = (1 − q_i) det S_{i+1}, and det S_{m+1} = T_1⋯T_n), so poly
    lies in an ideal of that ring exactly when the cleared polynomial does."""
    size = len(C.ctx.names())
    terms = list(poly.terms())
    if not terms:
        return C.zero
    m = flag.m
    highest = [max(exponents[size + i] for exponents, _ in terms) for i in range(m)]
    det_index = det_S_indices(flag, C)
    cleared = {}
    for exponents, coefficient in terms:
        e = list(exponents[:size])
        for i in range(m):
            e[det_index[i]] += highest[i] - exponents[size + i]
        key = tuple(e)
        cleared[key] = cleared.get(key, 0) + int(coefficient)
    return C.ctx.from_dict({k: v for k, v in cleared.items() if v % C.ctx.modulus()})


def generator_images(presentation: Presentation, C: algebra.Ring,
                     spec: algebra.Specialisation) -> Optional[list]:
    """Elements of C generating, modulo the quantum K ideal, the same subalgebra as the
    generators' meanings, or None when there is no such list here.

    Ratios L_j = det S_j / det S_{j−1} are replaced by det S_j.  When L_1 … L_j are all
    generators, det S_j = L_1⋯L_j lies in their subalgebra, and so does its inverse (in a
    finite-dimensional algebra the inverse of a unit is a polynomial in it); conversely each
    L_j is det S_j · (det S_{j−1})^{-1}.  So both lists generate the same subalgebra."""
    flag = presentation.flag
    levels = {g.meaning.level for g in presentation.generators if g.meaning.kind == "toda_L"}
    if levels and levels != set(range(1, max(levels) + 1)):
        return None
    images = []
    for g in presentation.generators:
        if g.meaning.kind == "toda_L":
            j = g.meaning.level
            if j == flag.m + 1:
                continue          # det S_{m+1} = T_1⋯T_n is a constant
            images.append(C.gen[lambda_S_name(j, flag.k(j))])
            continue
        image = representative(g.meaning, flag, C, spec)
        if image is None:
            return None
        images.append(image)
    return images


def move_cleared(presentation: Presentation, C: algebra.Ring, spec: algebra.Specialisation
                 ) -> Optional[tuple]:
    """(relations, units) of the presentation moved into C with denominators cleared, or
    None when some generator has no representative (Chern roots).  Unlike `transport`,
    generators may be ratios of determinants (Toda's L_i), and the λ_j(S_i) need not all be
    among the generators; whether the images generate the ring is the caller's question."""
    flag = presentation.flag
    names = tuple(_inverse_name(i) for i in range(1, flag.m + 1))
    C2 = common_ring(flag, spec, extra=names)
    values = _images(presentation, C2, lambda meaning: _fraction_representative(
        meaning, flag, C2, spec))
    if values is None:
        return None

    def move(poly):
        return _clear_inverses(poly.compose(*values, ctx=C2.ctx), C, flag)
    relations = [Relation(r.label, move(r.poly)) for r in presentation.relations]
    return relations, [move(u) for u in presentation.units]


def has_every_lambda_S(presentation: Presentation) -> bool:
    """Whether every λ_j(S_i) is a generator: then the images generate the common ring."""
    flag = presentation.flag
    meanings = {g.meaning for g in presentation.generators}
    return all(Meaning("lambda_S", i, j) in meanings for i in range(1, flag.m + 1)
               for j in range(1, flag.k(i) + 1))
