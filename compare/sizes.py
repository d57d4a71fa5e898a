"""How large a request is, estimated before anything is built.

Every command that builds relations or lifts Bethe points first asks `guard` here.  The
estimates are deliberately rough (a factor of a few either way) and cheap: they read only
the flag type, never build a polynomial.  They rest on three measured facts:

* an equivariant relation expands a product over the n weights, ∏(1 + y·T_j), so the
  largest relations of every built-in family have about 2^(n+1) terms (whitney P12: 3436
  of 8192; bethe P12: 8193; toda Fl(12): 9913), while printing one term costs milliseconds;
* the Bethe points cost about 5 µs per point and squared number of Chern roots (Fl(6):
  720 points, 15 roots, under a second), and hold order·roots coefficients each;
* an isomorphism solves linear systems of the size of the rank (cubic).

A request that could not finish (hours, or more memory than the machine has) is refused
with one line giving the estimate and the option that overrides it; more memory than the
machine has is refused even then, since FLINT aborts the process on a failed allocation.
A request that is feasible but long is announced on stderr before it starts.
"""
from __future__ import annotations

import math
import os
import sys
from dataclasses import dataclass
from typing import Optional

from ringmatch.errors import ResourceError
from ringmatch.presentations.flagtype import FlagType

OVERRIDE = "--no-size-limit"
REFUSE_SECONDS = 6 * 3600.0
ANNOUNCE_SECONDS = 60.0
PRINT_SECONDS_PER_TERM = 5e-3
BYTES_PER_TERM = 64
POINT_SECONDS = 5e-6              # per point and squared number of Chern roots
POINT_BYTES = 64                  # per stored series coefficient (Python objects included)
GROEBNER_SECONDS = 2e-6           # per squared colength and presentation, the exact route at
# one specialisation (Fl(6) about 1 s, Fl(7) 25-60 s per presentation); presentations with
# many auxiliary variables take longer
EXACT_RANK_LIMIT = 5040           # the engine's automatic exact route (compare/engine.py)


class SizeError(ResourceError):
    """A request refused by its size estimate."""


@dataclass(frozen=True)
class Estimate:
    description: str          # what is large, for the message
    seconds: float
    bytes: float


def log10_rank(flag: FlagType) -> float:
    """log10 of the number of fixed points, without computing a huge factorial."""
    value = math.lgamma(flag.n + 1) - sum(math.lgamma(flag.d(i) + 1) for i in range(flag.m + 1))
    return value / math.log(10)


def rank_estimate(flag: FlagType) -> float:
    exponent = log10_rank(flag)
    return float("inf") if exponent > 300 else 10.0 ** exponent


def chern_roots(flag: FlagType) -> int:
    return sum(flag.dims)


def relation_terms(flag: FlagType, equivariant: bool) -> float:
    """Terms of all relations written out over Q with T and q as variables."""
    if not equivariant:
        return float(10 * (flag.m + 1) * flag.n)      # no product over the weights
    return 2.0 ** min(flag.n + 1, 1000) * (flag.m + 1)


def symbolic_estimate(flag: FlagType, equivariant: bool) -> Estimate:
    terms = relation_terms(flag, equivariant)
    return Estimate(f"about {_amount(terms)} relation terms", terms * PRINT_SECONDS_PER_TERM,
                    terms * BYTES_PER_TERM)


def points_estimate(flag: FlagType, order: int, repeats: float = 1.0) -> Estimate:
    rank, roots = rank_estimate(flag), chern_roots(flag)
    return Estimate(f"{_amount(rank)} Bethe points of {roots} Chern roots",
                    repeats * rank * POINT_SECONDS * roots ** 2,
                    rank * roots * order * POINT_BYTES)


def check_estimate(flag: FlagType, method: str, order: Optional[int], trials: int,
                   presentations: int) -> Estimate:
    estimate = points_estimate(flag, order or 8, repeats=trials * (1 + presentations / 2))
    rank = rank_estimate(flag)
    if method in ("groebner", "both") or (method == "auto" and rank <= EXACT_RANK_LIMIT):
        seconds = trials * presentations * GROEBNER_SECONDS * rank ** 2
        return Estimate(f"{estimate.description}, Gröbner bases of colength {_amount(rank)}",
                        estimate.seconds + seconds, estimate.bytes + rank ** 2 * 8)
    return estimate


def iso_estimate(flag: FlagType, order: int) -> Estimate:
    points = points_estimate(flag, order, repeats=2)
    rank = rank_estimate(flag)
    return Estimate(f"{points.description}, linear systems of size {_amount(rank)}",
                    points.seconds + 1e-8 * rank ** 3, points.bytes + 16 * rank ** 2)


def machine_memory() -> Optional[float]:
    """Bytes this process could have at most: physical memory, or a smaller address-space
    limit."""
    sizes = []
    try:
        sizes.append(os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE"))
    except (ValueError, OSError, AttributeError):
        pass
    try:
        import resource
        soft = resource.getrlimit(resource.RLIMIT_AS)[0]
        if soft != resource.RLIM_INFINITY:
            sizes.append(soft)
    except (ImportError, OSError, ValueError):
        pass
    return float(min(sizes)) if sizes else None


def guard(subject: str, estimate: Estimate, *, allow_large: bool = False,
          stream=None) -> None:
    """Refuse (SizeError) or announce (a line on stream, stderr by default) the request."""
    memory = machine_memory()
    what = f"{subject}: {estimate.description}, estimated {_duration(estimate.seconds)} and " \
           f"{_bytes(estimate.bytes)}"
    if memory is not None and estimate.bytes > memory:
        raise SizeError(f"{what}, more than the {_bytes(memory)} this machine allows; "
                        "not attempted")
    if estimate.seconds > REFUSE_SECONDS and not allow_large:
        raise SizeError(f"{what}; not started (run it anyway with {OVERRIDE})")
    if estimate.seconds > ANNOUNCE_SECONDS:
        stream = stream if stream is not None else sys.stderr
        print(f"ringmatch: {what}; this will take a while", file=stream, flush=True)


def _amount(x: float) -> str:
    if x == float("inf"):
        return "more than 10^300"
    if x < 1e6:
        return f"{x:,.0f}"
    return f"{x:.1e}".replace("e+", "e")


def _duration(seconds: float) -> str:
    if seconds == float("inf") or seconds > 3.15e9:
        return "more than a century"
    for unit, size in (("days", 86400), ("hours", 3600), ("minutes", 60)):
        if seconds >= 2 * size:
            return f"about {seconds / size:.0f} {unit}"
    return f"about {max(seconds, 1):.0f} s"


def _bytes(count: float) -> str:
    if count == float("inf") or count > 1e18:
        return "more than an exabyte"
    for unit, size in (("TB", 1e12), ("GB", 1e9), ("MB", 1e6)):
        if count >= size:
            return f"{count / size:.1f} {unit}"
    return f"{count / 1e3:.0f} kB"
