"""Deliberately broken Whitney presentations shared by several test files.

The Whitney relations (arXiv:2310.03826) rebuilt with one controlled error, so tests can check
that every part of ringmatch notices it.  Only the error differs from presentations/whitney.py.
"""
from dataclasses import replace

from ringmatch.compare.algebra import ypoly_add, ypoly_mul, ypoly_scale, ypoly_shift, ypoly_sub
from ringmatch.presentations import whitney
from ringmatch.presentations.interface import Family, Relation


def whitney_variant(sign=1, square_q=False, label_suffix=""):
    """Relations builder: the sign of the q-term times `sign`, q_i → q_i² if `square_q`."""
    def relations(flag, ring):
        if square_q:
            ring = replace(ring, q=tuple(q * q for q in ring.q))
        zero, out = ring.zero, []
        for i in range(1, flag.m + 1):
            d, q = flag.d(i), ring.q[i - 1]
            lam_Q = [ring.one] + [ring.gen[f"Q{i}_{j}"] for j in range(1, d + 1)]
            lam_S = whitney.lambda_y_S(flag, ring, i)
            below, above = whitney.lambda_y_S(flag, ring, i - 1), whitney.lambda_y_S(flag, ring, i + 1)
            classical = ypoly_sub(ypoly_mul(lam_S, lam_Q, zero), above, zero)
            quantum = ypoly_shift(ypoly_scale(ypoly_sub(lam_S, below, zero), sign * q * lam_Q[d]),
                                  d, zero)
            total = ypoly_add(ypoly_scale(classical, ring.one - q), quantum, zero)
            out += [Relation(f"level {i}, y^{j}{label_suffix}", total[j])
                    for j in range(1, flag.k(i + 1) + 1)]
        return out
    return relations


def flipped_q_sign(name="broken-whitney", label_suffix=""):
    """The Whitney family with the sign of its q-term flipped."""
    return Family(name, "Whitney with the q-term's sign flipped (a deliberate error)",
                  whitney.generators, whitney_variant(sign=-1, label_suffix=label_suffix))
