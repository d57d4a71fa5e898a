"""Bethe points (docs/mathematics.md §2.3): torus-fixed points lifted to power series.

**Equations.**  For a Chern root x = X^(i)_a at level i (X^(m+1) = the weights T), the
critical-point equation of §2.2 multiplied by x^{k_{i+1}} reads

    ∏_b (x − X^(i+1)_b) + (−1)^{d_i} q_i (det S_{i+1}/det S_i) x^{k_i − k_{i−1}} ∏_c (x − X^(i−1)_c) = 0

(write (1 − X/x) = (x − X)/x and collect the powers of x: the right-hand side of §2.2 picks up
x^{k_{i+1} − d_i − k_{i−1}}).  For P^{n−1} it becomes ∏_j (x − T_j) = (−1)^n q T_1⋯T_n, that
is ∏_j (1 − x/T_j) = q.

**Specialisation.**  T_j are residues mod p and q_i = c_i·s, so every point lies in
F_p[[s]]; a point is kept to order N (N coefficients per root).

**Lifting.**  At s = 0 a fixed point I_1 ⊂ … ⊂ I_m gives X^(i) = {T_j : j ∈ I_i}.  There the
Jacobian is block triangular: the row of a root x = T_j at level i has ∏_{b≠b*}(T_j − X_b)
on the diagonal, its negative in the column of the level-(i+1) root b* that also equals T_j,
and nothing else (the q-term is O(s)).  It is invertible exactly when the weights are
distinct, and its inverse is read off the chains of equal weights.  Newton's iteration then
doubles the precision at every step; the inverse Jacobian, kept as a list of coefficient
matrices B_0, B_1, … (B = Σ B_t s^t), is doubled alongside by Schulz's iteration
B ← B + B(I − J B), so no matrix is ever inverted after s = 0.

The values of classes at the points and "holds" are in compare/points.py.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Dict, List, Optional, Sequence, Tuple

import flint

from ringmatch.errors import RingmatchError
from ringmatch.presentations.flagtype import FixedPoint, FlagType

from . import algebra
from . import series as ps
from .series import Series


class LiftError(RingmatchError, ArithmeticError):
    """The fixed points cannot be lifted (or a lifted point failed its final check)."""


class SingularJacobian(LiftError):
    """The Jacobian of the Bethe equations is singular at a fixed point (s = 0)."""


@dataclass(frozen=True)
class LiftedPoint:
    fixed_point: FixedPoint
    # roots[i-1][a] = X^(i)_{a+1}; the roots of a level are ordered so that their constant
    # terms are T_j for increasing j in I_i.
    roots: Tuple[Tuple[Series, ...], ...]


@dataclass(frozen=True)
class BethePoints:
    flag: FlagType
    spec: algebra.Specialisation
    order: int
    points: Tuple[LiftedPoint, ...]
    notes: Tuple[str, ...] = ()

    def record(self) -> dict:
        return {"case": self.flag.name, "prime": self.spec.prime, "weights": list(self.spec.T),
                "q_line": list(self.spec.q_line), "order": self.order, "seed": self.spec.seed,
                "notes": list(self.notes),
                "points": [point_record(p, self.order) for p in self.points]}


def point_record(point: LiftedPoint, order: int) -> dict:
    return {"fixed_point": [list(I) for I in point.fixed_point],
            "roots": [[ps.coefficients(x, order) for x in level] for level in point.roots]}


# ---------------------------------------------------------------------------------------
# Setup shared by all points of one flag and specialisation

@dataclass(frozen=True)
class Setup:
    """Everything about the flag and specialisation that does not depend on the point.

    The sweep works with each equation multiplied by a sign (which changes neither the
    solutions nor Newton's iteration) so that no series ever has to be negated:

        σ_i F = ∏_b (X^(i+1)_b − x) + s · κ_i D_i x^e ∏_c (X^(i−1)_c − x),

    σ_i = (−1)^{k_{i+1}}, κ_i = σ_i (−1)^{k_{i−1}} (−1)^{d_i} c_i for q_i = c_i s."""
    flag: FlagType
    prime: int
    weights: Tuple[int, ...]
    top: Tuple[Series, ...]             # the weights as constant series: level m+1
    folded_slope: Tuple[int, ...]       # κ_i
    row_sign: Tuple[int, ...]           # σ_i, levels 1…m
    offsets: Tuple[int, ...]            # position of level i's first root in the flat vector
    size: int                           # number of unknowns, Σ k_i
    top_polynomial: Series              # ∏_j (T_j − t): level m's product, composed with x
    top_derivative: Series
    weight_product: int                 # det S_{m+1} = T_1⋯T_n
    inverse_differences: Tuple[Tuple[int, ...], ...]   # 1/(T_j − T_l) mod p (0 on the diagonal)
    top_lambda: Tuple[Series, ...]      # [1, e_1(T), …, e_n(T)]: λ_y(S_{m+1})
    inverse_weights: Tuple[int, ...]    # 1/T_j mod p
    exponents: Tuple[int, ...]          # e_i = k_i − k_{i−1} (index i; 0 unused)
    q_series: Tuple[Series, ...]        # q_i = c_i s
    rank_one_signs: object              # m×m matrix: −1 on the diagonal, +1 just above it


def make_setup(flag: FlagType, spec: algebra.Specialisation) -> Setup:
    p = spec.prime
    if spec.q_line is None:
        raise ValueError("Bethe points need q on a line (Specialisation.q_line)")
    if len(spec.T) != flag.n:
        raise ValueError(f"{flag.name} needs {flag.n} weights, got {len(spec.T)}")
    if len(spec.q_line) != flag.m:
        raise ValueError(f"{flag.name} needs {flag.m} q-line coefficients, got {len(spec.q_line)}")
    check_weights(spec.T, p)
    m = flag.m
    offsets = [sum(flag.dims[:i]) for i in range(m)]
    weights = tuple(t % p for t in spec.T)
    top = ps.constant(1, p)
    for t in weights:
        top = top * flint.nmod_poly([t, -1], p)
    row_sign = tuple((-1) ** flag.k(i + 1) for i in range(1, m + 1))
    folded = tuple((row_sign[i - 1] * (-1) ** (flag.k(i - 1) + flag.d(i)) * spec.q_line[i - 1]) % p
                   for i in range(1, m + 1))
    signs = flint.nmod_mat(m, m, p)
    for i in range(m):
        signs[i, i] = -1
        if i + 1 < m:
            signs[i, i + 1] = 1
    constants = tuple(ps.constant(t, p) for t in weights)
    return Setup(
        flag=flag, prime=p, weights=weights, top=constants, folded_slope=folded,
        row_sign=row_sign, offsets=tuple(offsets), size=sum(flag.dims),
        top_polynomial=top, top_derivative=top.derivative(),
        weight_product=math.prod(weights) % p,
        inverse_differences=tuple(tuple(pow(a - b, -1, p) if a != b else 0 for b in weights)
                                  for a in weights),
        top_lambda=tuple(ps.elementary_symmetric(constants, 1, p)),
        inverse_weights=tuple(pow(t, -1, p) for t in weights),
        exponents=(0,) + tuple(flag.k(i) - flag.k(i - 1) for i in range(1, m + 1)),
        q_series=tuple(ps.on_line(c, p) for c in spec.q_line),
        rank_one_signs=signs)


def check_weights(weights: Sequence[int], prime: int) -> None:
    """Raise `SingularJacobian` unless the weights are nonzero and pairwise distinct mod p.

    Equal weights make the Jacobian at the fixed points singular (two roots collide); a zero
    weight makes det S_i vanish, and it must be a unit."""
    seen: Dict[int, int] = {}
    for j, t in enumerate(weights, start=1):
        r = t % prime
        if r == 0:
            raise SingularJacobian(f"weight T_{j} = {t} is 0 mod {prime}: det S_i would not be a unit")
        if r in seen:
            raise SingularJacobian(f"weights T_{seen[r]} and T_{j} are equal mod {prime}: "
                                   "the Bethe points need distinct weights (the Jacobian at the "
                                   "fixed points is singular)")
        seen[r] = j


# ---------------------------------------------------------------------------------------
# The equations and their Jacobian, in one sweep over the roots

def residuals(setup: Setup, roots: Sequence[Sequence[Series]], order: int) -> List[Series]:
    """The cleared Bethe equations (each up to a sign) at the given roots, one per root in
    flat order, mod s^order."""
    return _sweep(setup, roots, order, 0, [])[0]


def _sweep(setup: Setup, roots: Sequence[Sequence[Series]], f_order: int, j_order: int,
           jacobian: List) -> Tuple[List[Series], List]:
    """Residuals mod s^f_order and the coefficient matrices J_1 … J_{j_order−1} of their
    Jacobian.  J_t depends only on the roots mod s^{t+1}, which Newton's steps never change
    again, so `jacobian` (J_1, J_2, … from earlier sweeps) is only extended; J_0 is never
    needed (see `_schulz_step`).

    For a root x at level i, with the factors of `Setup`, P = ∏_b (X^(i+1)_b − x),
    C = ∏_c (X^(i−1)_c − x), K = κ_i D_i x^e and Q = K·C (so σ_i F = P + s·Q):
      ∂/∂X^(i+1)_b  = ∏_{b'≠b} (X_b' − x) + s·Q / X^(i+1)_b     (the factor, and det S_{i+1})
      ∂/∂X^(i)_a'   = −s·Q / X^(i)_a'                            (det S_i), a' ≠ a
      ∂/∂X^(i−1)_c  = s·K ∏_{c'≠c} (X_c' − x)
      ∂/∂x          = dP/dx − s·(K Σ_c ∏_{c'≠c} (X_c' − x) − (e − 1) Q/x)
    The Q/X terms are an outer product, level by level (Q per row, 1/X per column), added
    as small matrix products; the rank-one part also puts −s·Q/x on the diagonal, which the
    diagonal entry below compensates.  Products leaving out one factor come from prefix and
    suffix products, never by division: X_b − x vanishes at s = 0 for the root above that
    starts at the same weight.
    """
    p, m, u = setup.prime, setup.flag.m, setup.size
    levels = [()] + [list(level) for level in roots] + [setup.top]
    f_low = f_order - 1             # precision of the s-cofactors of q-terms in F …
    low = j_order - 1               # … and in the Jacobian
    first = len(jacobian) + 1       # the first J_t still to compute
    new_J = [flint.nmod_mat(u, u, p) for _ in range(first, j_order)]
    want_j = bool(new_J)
    cofactors = [None] * (m + 1)
    if f_low > 0:
        dets = [None] + [ps.product(level, f_low, p) for level in levels[1:m + 1]] \
            + [ps.constant(setup.weight_product, p)]
        for i in range(1, m + 1):
            ratio = dets[i + 1].mul_low(ps.inverse(dets[i], f_low), f_low)
            cofactors[i] = ratio * setup.folded_slope[i - 1]
    if want_j:
        Q_rows = [flint.nmod_mat(u, m, p) for _ in range(low)]
        inverse_columns = [flint.nmod_mat(m, u, p) for _ in range(low)]
        # roots are units: their constant terms are nonzero weights (check_weights)
        inverse_roots = [[x.inverse_series_trunc(low) for x in level] for level in levels[1:m + 1]]
        for i in range(1, m + 1):
            for a, y in enumerate(inverse_roots[i - 1]):
                column = setup.offsets[i - 1] + a
                for t in range(low):
                    inverse_columns[t][i - 1, column] = y[t]
    out, entries = [], []
    row = 0
    for i in range(1, m + 1):
        above, below = levels[i + 1], levels[i - 1]
        e = setup.exponents[i]
        above_base = setup.offsets[i] if i < m else 0
        below_base = setup.offsets[i - 2] if i > 1 else 0
        cofactor = cofactors[i]
        for a, x in enumerate(levels[i]):
            if i == m:      # the factors T_j − x: one fixed polynomial, composed with x
                P = setup.top_polynomial.compose(x).truncate(f_order)
                if want_j:
                    diagonal = setup.top_derivative.compose(x).truncate(j_order)
            else:
                diffs = [X - x for X in above]
                prefix = [diffs[0]]
                for d in diffs[1:]:
                    prefix.append(prefix[-1].mul_low(d, f_order))
                P = prefix[-1]
                if want_j:
                    k = len(diffs)
                    suffix = diffs[-1]
                    partial = prefix[k - 2]
                    total = partial
                    entries.append((row, above_base + k - 1, partial, first))
                    for b in range(k - 2, 0, -1):
                        partial = prefix[b - 1].mul_low(suffix, j_order)
                        suffix = suffix.mul_low(diffs[b], j_order)
                        total = total + partial
                        entries.append((row, above_base + b, partial, first))
                    total = total + suffix
                    entries.append((row, above_base, suffix, first))
                    diagonal = -total
            if f_low > 0:
                K = cofactor.mul_low(x if e == 1 else x.pow_trunc(e, f_low), f_low)
                bdiffs = [X - x for X in below]
                with_K = [K]
                for d in bdiffs:
                    with_K.append(with_K[-1].mul_low(d, f_low))
                Q = with_K[-1]
                P = P + Q.left_shift(1)
                if want_j:
                    q_part = Q.mul_low(inverse_roots[i - 1][a], low) * (-e)
                    suffix = None
                    for c in range(len(bdiffs) - 1, -1, -1):
                        KC = with_K[c] if suffix is None else with_K[c].mul_low(suffix, low)
                        suffix = bdiffs[c] if suffix is None else suffix.mul_low(bdiffs[c], low)
                        q_part = q_part + KC
                        entries.append((row, below_base + c, KC, first - 1))
                    for t in range(low):
                        Q_rows[t][row, i - 1] = Q[t]
                    diagonal = diagonal - q_part.left_shift(1)
            if want_j:
                entries.append((row, row, diagonal, first))
            out.append(P)
            row += 1
    if want_j:
        # entry (row, column, series, power of its coefficient that goes into J_first)
        for t, matrix in enumerate(new_J):
            for r, c, value, power in entries:
                matrix[r, c] = value[power + t]
        signed = [setup.rank_one_signs * w for w in inverse_columns]
        for t in range(first, j_order):
            for a in range(t):
                new_J[t - first] += Q_rows[a] * signed[t - 1 - a]
    return out, jacobian + new_J


# ---------------------------------------------------------------------------------------
# Newton lifting

def _precision_schedule(order: int) -> List[int]:
    """Precisions after each Newton step: …, ⌈N/4⌉, ⌈N/2⌉, N (each at most twice the last)."""
    steps = []
    while order > 1:
        steps.append(order)
        order = (order + 1) // 2
    return steps[::-1]


def _initial_inverse(setup: Setup, fixed_point: FixedPoint):
    """B_0 = J(s = 0)^{-1}, read off the chains of equal weights (see the module notes).

    At s = 0 the row of x = T_j at level i has −δ on the diagonal and δ in the column of the
    root above that also starts at T_j, δ = ∏_{l ∈ I_{i+1}, l ≠ j} (T_l − T_j) (the sweep's
    sign convention); the inverse of this telescoping system has −1/δ(column) in every column
    of the chain of T_j from the row's level up.  −1/δ = σ_i ∏ 1/(T_j − T_l)."""
    flag, inverse_differences = setup.flag, setup.inverse_differences
    inverse = flint.nmod_mat(setup.size, setup.size, setup.prime)
    everything = tuple(range(1, flag.n + 1))
    chains: Dict[int, List[Tuple[int, int]]] = {}   # weight index j → [(row, 1/δ)], top level first
    for i in range(flag.m, 0, -1):
        above = fixed_point[i] if i < flag.m else everything
        for a, j in enumerate(fixed_point[i - 1]):
            row_of_differences = inverse_differences[j - 1]
            inverse_delta = 1
            for l in above:
                if l != j:
                    inverse_delta = inverse_delta * row_of_differences[l - 1]
            row = setup.offsets[i - 1] + a
            chain = chains.setdefault(j, [])
            chain.append((row, -inverse_delta % setup.prime if setup.row_sign[i - 1] == -1
                          else inverse_delta % setup.prime))
            for column, value in chain:
                inverse[row, column] = value
    return inverse


def _schulz_step(inverse: List, J: List, precision: int) -> List:
    """Double the precision of B ≈ J^{-1}: B + B(I − J B), from the coefficient matrices
    J_1, J_2, … (J[a − 1] = J_a).  As J_0 B_0 = I and the higher products J_0 B_t only
    matter below the known precision, J_0 never enters."""
    known = len(inverse)
    E = {}
    for t in range(known, precision):
        total = None
        for a in range(t - known + 1, t + 1):
            term = J[a - 1] * inverse[t - a]
            total = term if total is None else total + term
        E[t] = -total
    new = list(inverse)
    for t in range(known, precision):
        total = None
        for b in range(known, t + 1):
            term = inverse[t - b] * E[b]
            total = term if total is None else total + term
        new.append(total)
    return new


def _newton_correction(setup: Setup, inverse: List, values: List[Series], shift: int,
                       precision: int) -> List[Series]:
    """B·(F / s^shift) mod s^precision, for F = values (which vanish below s^shift)."""
    u, p = setup.size, setup.prime
    flat = []
    for v in values:
        flat.extend(v[t] for t in range(shift, shift + precision))
    G = flint.nmod_mat(u, precision, flat, p)
    total = inverse[0] * G
    for a in range(1, precision):
        total = total + inverse[a] * G * _shift_matrix(a, precision, p)
    entries = total.entries()
    return [flint.nmod_poly(entries[r * precision:(r + 1) * precision], p) for r in range(u)]


_SHIFTS: Dict[Tuple[int, int, int], object] = {}


def _shift_matrix(a: int, size: int, prime: int):
    """Right-multiplying by it moves column t to column t + a (multiplication by s^a)."""
    key = (a, size, prime)
    if key not in _SHIFTS:
        m = flint.nmod_mat(size, size, prime)
        for t in range(size - a):
            m[t, t + a] = 1
        _SHIFTS[key] = m
    return _SHIFTS[key]


def _split_levels(setup: Setup, flat: Sequence[Series]) -> List[List[Series]]:
    return [list(flat[o:o + setup.flag.k(i + 1)]) for i, o in enumerate(setup.offsets)]


def _first_step(setup: Setup, fixed_point: FixedPoint, inverse):
    """The Newton step from s^0 to s^1 and the Jacobian coefficient J_1, all in scalars.

    At the fixed point the product over the level above vanishes exactly, so σF = s·Q_0 with
    Q_0 = K_0 C_0, K_0 = κ_i D_i(0) T_j^e, D_i(0) = ∏ of the weights in I_{i+1} ∖ I_i and
    C_0 = ∏_{c ∈ I_{i−1}} (T_c − T_j).  J_1 needs only these and the s^1 coefficients ξ of
    the roots: the s^1 coefficient of ∏_b (α_b + β_b s) is Σ_b β_b ∏_{b'≠b} α_b', and
    here α_b = T_b − T_j vanishes for the root b* above that starts at T_j.  Returns the roots
    mod s^2 and J_1 (it agrees with `_sweep` at j_order = 2, checked in the tests)."""
    flag, p, T, m, u = setup.flag, setup.prime, setup.weights, setup.flag.m, setup.size
    inverse_differences = setup.inverse_differences
    chain = tuple(fixed_point) + (tuple(range(1, flag.n + 1)),)
    Q0, K0, rows = [], [], []
    for i in range(1, m + 1):
        here, above, below = chain[i - 1], chain[i], chain[i - 2] if i > 1 else ()
        ratio = setup.folded_slope[i - 1]
        for l in above:
            if l not in here:
                ratio = ratio * T[l - 1] % p
        e = setup.exponents[i]
        for a, j in enumerate(here):
            K = ratio * pow(T[j - 1], e, p) % p
            value = K
            for c in below:
                value = value * (T[c - 1] - T[j - 1]) % p
            K0.append(K)
            Q0.append(value)
            rows.append((i, a, j))
    correction = (inverse * flint.nmod_mat(u, 1, Q0, p)).entries()
    xi = [-int(c) % p for c in correction]          # s^1 coefficients of the roots
    roots, position = [], 0
    for I in fixed_point:
        roots.append([flint.nmod_poly([T[j - 1], xi[position + a]], p) for a, j in enumerate(I)])
        position += len(I)

    J1 = flint.nmod_mat(u, u, p)
    Q_rows = flint.nmod_mat(u, m, p)
    inverse_columns = flint.nmod_mat(m, u, p)
    for r, (i, a, j) in enumerate(rows):
        inverse_columns[i - 1, r] = setup.inverse_weights[j - 1]
        Q_rows[r, i - 1] = Q0[r]
        above, below = chain[i], chain[i - 2] if i > 1 else ()
        differences = inverse_differences[j - 1]          # 1/(T_j − T_l)
        # the factors X_b − x over the level above: α_b = T_b − T_j, β_b = ξ_b − ξ_r; leaving
        # out b ≠ b* keeps α_b* = 0, so only the term β_b* ∏_{b'≠b,b*} α_b' = β_b* Π/α_b survives
        above_base = setup.offsets[i] if i < m else None
        beta = [((xi[above_base + b] if above_base is not None else 0) - xi[r]) % p
                for b in range(len(above))]
        star = above.index(j)
        Pi = 1
        for l in above:
            if l != j:
                Pi = Pi * (T[l - 1] - T[j - 1]) % p
        diagonal, star_entry = 0, 0
        for b, l in enumerate(above):
            if b == star:
                continue
            over_alpha = -differences[l - 1]                  # 1/α_b = −1/(T_j − T_l)
            star_entry += beta[b] * over_alpha
            entry = beta[star] * Pi * over_alpha % p
            diagonal -= entry
            if above_base is not None:
                J1[r, above_base + b] = entry
        star_entry = Pi * star_entry % p                    # Π Σ_{b≠b*} β_b/α_b
        diagonal -= star_entry
        if above_base is not None:
            J1[r, above_base + star] = star_entry
        # the q-term s·K·C: below entries K_0 ∏_{c'≠c} (T_c' − T_j) (only c = c* when T_j is
        # also a root below, C_0/(T_c − T_j) times K_0 otherwise), and e·Q_0/x_0 on the diagonal
        q_part = -setup.exponents[i] * Q0[r] * setup.inverse_weights[j - 1]
        if below:
            below_base = setup.offsets[i - 2]
            if j in below:
                entry = K0[r]
                for l in below:
                    if l != j:
                        entry = entry * (T[l - 1] - T[j - 1]) % p
                q_part += entry
                J1[r, below_base + below.index(j)] = entry
            else:
                for c, l in enumerate(below):
                    entry = Q0[r] * inverse_differences[l - 1][j - 1] % p
                    q_part += entry
                    J1[r, below_base + c] = entry
        J1[r, r] = (diagonal - q_part) % p
    J1 += Q_rows * (setup.rank_one_signs * inverse_columns)
    return roots, J1


def lift_point(setup: Setup, fixed_point: FixedPoint, order: int) -> LiftedPoint:
    inverse = [_initial_inverse(setup, fixed_point)]
    if order == 1:
        roots = [[setup.top[j - 1] for j in I] for I in fixed_point]
        return LiftedPoint(fixed_point, tuple(tuple(level) for level in roots))
    roots, J1 = _first_step(setup, fixed_point, inverse[0])
    jacobian: List = [J1]
    precision = 2
    for target in _precision_schedule(order)[1:]:
        need = target - precision
        values, jacobian = _sweep(setup, roots, target, need if len(inverse) < need else 0,
                                  jacobian)
        while len(inverse) < need:
            inverse = _schulz_step(inverse, jacobian, min(2 * len(inverse), need))
        correction = _newton_correction(setup, inverse, values, precision, need)
        flat = [x for level in roots for x in level]
        flat = [x - c.left_shift(precision) for x, c in zip(flat, correction)]
        roots = _split_levels(setup, flat)
        precision = target
    return LiftedPoint(fixed_point, tuple(tuple(level) for level in roots))


def lift_points(flag: FlagType, spec: algebra.Specialisation, order: int) -> BethePoints:
    """Lift every torus-fixed point to a solution of the Bethe equations mod s^order.

    Raises `SingularJacobian` for equal or zero weights, `LiftError` if a final check fails:
    every point satisfies the equations to order N, the points are pairwise distinct at
    s = 0, and there are `flag.rank` of them."""
    if order < 1:
        raise ValueError(f"the truncation order must be at least 1, got {order}")
    setup = make_setup(flag, spec)
    points = tuple(lift_point(setup, fp, order) for fp in flag.fixed_points())
    verify_points(setup, points, order)
    return BethePoints(flag, spec, order, points)


def verify_points(setup: Setup, points: Sequence[LiftedPoint], order: int) -> None:
    flag = setup.flag
    if len(points) != flag.rank:
        raise LiftError(f"{len(points)} points lifted for {flag.name}, expected rank {flag.rank}")
    seen = set()
    for point in points:
        key = tuple(tuple(sorted(ps.constant_term(x) for x in level)) for level in point.roots)
        if key in seen:
            raise LiftError(f"two Bethe points of {flag.name} coincide at s = 0 ({point.fixed_point})")
        seen.add(key)
        for value in residuals(setup, point.roots, order):
            lowest = None if value.is_zero() else ps.valuation(value, order)
            if lowest is not None:
                raise LiftError(f"the lift of {point.fixed_point} violates a Bethe equation "
                                f"at s^{lowest}")


def random_line_points(flag: FlagType, order: int, *, seed: Optional[int] = None,
                       prime: int = algebra.DEFAULT_PRIME, weights: Optional[Sequence[int]] = None,
                       q_line: Optional[Sequence[int]] = None, max_draws: int = 20) -> BethePoints:
    """`lift_points` at a specialisation drawn from `seed` (drawn itself when None), with
    given weights / line taking precedence over the draw.

    Drawn weights that make the Jacobian singular are drawn again (seed + 1, …) and the
    redraw is noted in the record; given weights are never replaced."""
    if prime - 2 < flag.n:
        raise ValueError(f"the prime {prime} is too small for {flag.n} distinct nonzero weights")
    notes = []
    for _ in range(max_draws):
        spec = algebra.draw_specialisation(flag.n, flag.m, seed=seed, prime=prime, q_on_line=True)
        spec = algebra.Specialisation(prime, tuple(weights) if weights is not None else spec.T,
                                      None, tuple(q_line) if q_line is not None else spec.q_line,
                                      spec.seed)
        try:
            lifted = lift_points(flag, spec, order)
        except SingularJacobian as error:
            if weights is not None:
                raise
            notes.append(f"seed {spec.seed} redrawn: {error}")
            seed = (spec.seed + 1) % 2**32
            continue
        return BethePoints(lifted.flag, lifted.spec, lifted.order, lifted.points, tuple(notes))
    raise LiftError(f"no usable weights in {max_draws} draws mod {prime}")



# ---------------------------------------------------------------------------------------
# Human-readable summary

def summary_text(points: BethePoints, shown: int = 6, coefficients: int = 3) -> str:
    spec, N = points.spec, points.order
    lines = [f"Bethe points of {points.flag.name}: {len(points.points)} = rank, "
             f"each satisfying the Bethe equations mod s^{N}",
             f"  prime {spec.prime}, seed {spec.seed}",
             f"  weights T = {', '.join(map(str, spec.T))}",
             "  q line: " + ", ".join(f"q{i} = {c}·s" for i, c in enumerate(spec.q_line, start=1))]
    lines += [f"  note: {note}" for note in points.notes]
    lines.append(f"first {coefficients} coefficients of each root (s^0, s^1, …):")
    for point in points.points[:shown]:
        chain = " ⊂ ".join("{" + ",".join(map(str, I)) + "}" for I in point.fixed_point)
        lines.append(f"  {chain}")
        for i, level in enumerate(point.roots, start=1):
            for a, x in enumerate(level, start=1):
                lines.append(f"    X^({i})_{a} = " + ", ".join(
                    map(str, ps.coefficients(x, min(coefficients, N)))) + (", …" if N > coefficients else ""))
    if len(points.points) > shown:
        lines.append(f"  … and {len(points.points) - shown} more points (--json prints all)")
    return "\n".join(lines)
