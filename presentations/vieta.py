"""Critical-point (Coulomb branch) equations symmetrised by Vieta's formulas
(docs/mathematics.md §2.2).

With N_i(y) = λ_y(S_{i+1}) + y^{d_i}·q_i·(det S_{i+1}/det S_i)·λ_y(S_{i−1}), every −1/X^(i)_a
is a root of N_i, so λ_y(S_i) divides N_i(y).  Multiplying by the unit det S_i gives the
polynomial

    M_i(y) = det S_i·λ_y(S_{i+1}) + y^{d_i}·q_i·det S_{i+1}·λ_y(S_{i−1})      (degree k_{i+1}).

Two forms (sources for the equations: arXiv:2208.01091, arXiv:2310.03826):

* auxiliary-root form ("vieta"): new generators w_{i,j} = e_j(Y^(i)), 1 ≤ j ≤ d_i, and the
  coefficients of y^1…y^{k_{i+1}} of det S_i·λ_y(S_i)·λ_y(Y^(i)) − M_i(y);
* eliminated form ("vieta-eliminated"): only λ(S); λ_y(S_i) divides M_i(y) — i.e. the
  remainder of the division vanishes — exactly when the power series M_i(y)/λ_y(S_i) is a
  polynomial of degree ≤ d_i, i.e. its coefficients of y^{d_i+1} … y^{k_{i+1}} vanish: k_i
  relations per level.  Why this form (derived here; the tests confirm the resulting ideal):
  λ_y(S_i) has constant term 1, so the power series division needs no inverse of det S_i
  and the relations stay polynomial and small, where the remainder of the division by the
  leading coefficient det S_i would need its inverse.

In both forms det S_i must be invertible; it is declared a unit and the engine adjoins the
inverse (which is how spurious solutions with det S_i = 0 are excluded).
"""
from __future__ import annotations

from typing import List

from ringmatch.compare import algebra
from ringmatch.compare.algebra import ypoly_add, ypoly_mul, ypoly_scale, ypoly_shift, ypoly_sub
from .flagtype import FlagType
from .interface import Family, Generator, Relation
from .lambda_classes import det_S, lambda_y_S   # noqa: F401  (det_S: also imported from here)
from .meanings import Meaning, lambda_S, lambda_S_name


def aux_name(i: int, j: int) -> str:
    return f"w{i}_{j}"


def _lambda_S_generators(flag: FlagType) -> List[Generator]:
    return [Generator(lambda_S_name(i, j), lambda_S(i, j), j)
            for i in range(1, flag.m + 1) for j in range(1, flag.k(i) + 1)]


def cleared_N(flag: FlagType, ring: algebra.Ring, i: int) -> algebra.YPoly:
    """M_i(y) = det S_i · N_i(y), a polynomial in y of degree k_{i+1}."""
    zero = ring.zero
    head = ypoly_scale(lambda_y_S(flag, ring, i + 1), det_S(flag, ring, i))
    tail = ypoly_shift(ypoly_scale(lambda_y_S(flag, ring, i - 1),
                                   ring.q[i - 1] * det_S(flag, ring, i + 1)), flag.d(i), zero)
    return ypoly_add(head, tail, zero)


def auxiliary_generators(flag: FlagType) -> List[Generator]:
    gens = []
    for i in range(1, flag.m + 1):
        gens += [Generator(lambda_S_name(i, j), lambda_S(i, j), j) for j in range(1, flag.k(i) + 1)]
        gens += [Generator(aux_name(i, j), Meaning("vieta_aux", i, j), j)
                 for j in range(1, flag.d(i) + 1)]
    return gens


def auxiliary_relations(flag: FlagType, ring: algebra.Ring) -> List[Relation]:
    zero = ring.zero
    out = []
    for i in range(1, flag.m + 1):
        lam_Y = [ring.one] + [ring.gen[aux_name(i, j)] for j in range(1, flag.d(i) + 1)]
        product = ypoly_scale(ypoly_mul(lambda_y_S(flag, ring, i), lam_Y, zero),
                              det_S(flag, ring, i))
        total = ypoly_sub(product, cleared_N(flag, ring, i), zero)
        out += [Relation(f"level {i}, y^{j}", total[j]) for j in range(1, flag.k(i + 1) + 1)]
    return out


def eliminated_relations(flag: FlagType, ring: algebra.Ring) -> List[Relation]:
    out = []
    for i in range(1, flag.m + 1):
        top = flag.k(i + 1)
        quotient = algebra.ypoly_divide_series(cleared_N(flag, ring, i), lambda_y_S(flag, ring, i),
                                               top + 1, ring.zero)
        out += [Relation(f"level {i}, quotient y^{j}", quotient[j])
                for j in range(flag.d(i) + 1, top + 1)]
    return out


def units(flag: FlagType, ring: algebra.Ring) -> list:
    return [det_S(flag, ring, i) for i in range(1, flag.m + 1)]


FAMILY = Family(
    name="vieta",
    description="Vieta-symmetrised critical-point equations with auxiliary roots e_j(Y^(i))",
    generators=auxiliary_generators,
    relations=auxiliary_relations,
    units=units,
)

ELIMINATED = Family(
    name="vieta-eliminated",
    description="Vieta-symmetrised critical-point equations, auxiliary roots eliminated",
    generators=_lambda_S_generators,
    relations=eliminated_relations,
    units=units,
)
