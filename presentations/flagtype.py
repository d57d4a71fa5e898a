"""Type-A partial flag varieties Fl(k_1,…,k_m; n): parsing, rank, torus-fixed points.

Conventions follow docs/mathematics.md §1: k_0 = 0, k_{m+1} = n, d_i = k_{i+1} − k_i, and levels are
numbered 1…m.  A torus-fixed point is a chain I_1 ⊂ … ⊂ I_m of subsets of {1…n} with
|I_i| = k_i; we store index sets as sorted tuples of 1-based integers.
"""
from __future__ import annotations

import itertools
import math
import re
from dataclasses import dataclass
from typing import Iterator, Tuple

from ringmatch.errors import InputError

FixedPoint = Tuple[Tuple[int, ...], ...]


class FlagTypeError(InputError):
    """A case name that does not describe a flag variety."""


@dataclass(frozen=True)
class FlagType:
    dims: Tuple[int, ...]   # k_1 < … < k_m
    n: int

    def __post_init__(self):
        if self.n < 2:
            raise FlagTypeError(f"ambient dimension n = {self.n} must be at least 2")
        if not self.dims:
            raise FlagTypeError("a flag needs at least one subspace dimension")
        chain = (0, *self.dims, self.n)
        for a, b in zip(chain, chain[1:]):
            if not a < b:
                raise FlagTypeError(
                    f"dimensions must satisfy 0 < k_1 < … < k_m < n, got {self.dims} in C^{self.n}")

    @property
    def m(self) -> int:
        return len(self.dims)

    def k(self, i: int) -> int:
        """k_i with the conventions k_0 = 0 and k_{m+1} = n."""
        if i == 0:
            return 0
        if i == self.m + 1:
            return self.n
        return self.dims[i - 1]

    def d(self, i: int) -> int:
        """Rank of Q_i = S_{i+1}/S_i, for i = 0…m."""
        return self.k(i + 1) - self.k(i)

    @property
    def is_grassmannian(self) -> bool:
        return self.m == 1

    @property
    def is_complete(self) -> bool:
        return self.dims == tuple(range(1, self.n))

    @property
    def rank(self) -> int:
        """Number of torus-fixed points: the multinomial n!/(d_0!⋯d_m!)."""
        r = math.factorial(self.n)
        for i in range(self.m + 1):
            r //= math.factorial(self.d(i))
        return r

    @property
    def name(self) -> str:
        return format_flag(self)

    def fixed_points(self) -> Iterator[FixedPoint]:
        """All chains I_1 ⊂ … ⊂ I_m, in lexicographic order of the chain of sorted tuples."""
        def extend(prefix: FixedPoint, level: int):
            if level > self.m:
                yield prefix
                return
            previous = prefix[-1] if prefix else ()
            rest = [j for j in range(1, self.n + 1) if j not in previous]
            for extra in itertools.combinations(rest, self.d(level - 1)):
                yield from extend(prefix + (tuple(sorted(previous + extra)),), level + 1)
        yield from extend((), 1)


def format_flag(flag: FlagType) -> str:
    if flag.is_complete and flag.n >= 3:
        return f"Fl({flag.n})"
    if flag.dims == (1,):
        return f"P{flag.n - 1}"
    if flag.is_grassmannian:
        return f"Gr({flag.dims[0]};{flag.n})"
    return "Fl(" + ",".join(map(str, flag.dims)) + f";{flag.n})"


MAX_COMPLETE_N = 100_000

_NUMBER_LIST = r"\s*\d+\s*(?:,\s*\d+\s*)*"
_PATTERNS = [
    ("partial", re.compile(rf"Fl\s*\(({_NUMBER_LIST});\s*(\d+)\s*\)")),
    ("complete", re.compile(r"Fl\s*\(\s*(\d+)\s*\)")),
    ("grassmannian", re.compile(r"Gr\s*\(\s*(\d+)\s*[,;]\s*(\d+)\s*\)")),
    ("projective", re.compile(r"P\^?\s*(\d+)")),
]


def parse_flag(text: str) -> FlagType:
    """Parse the trade notation: Fl(1,3;5), Fl(4), Gr(2;5), Gr(2,5), P4 (or P^4)."""
    try:
        return _parse_flag(text)
    except FlagTypeError as error:
        message = str(error)
        raise FlagTypeError(message if message.startswith(repr(text)) else f"{text!r}: {message}")


def _parse_flag(text: str) -> FlagType:
    s = text.strip()
    for kind, pattern in _PATTERNS:
        match = pattern.fullmatch(s)
        if not match:
            continue
        if kind == "partial":
            dims = tuple(int(x) for x in match.group(1).split(","))
            return FlagType(dims, int(match.group(2)))
        if kind == "complete":
            n = int(match.group(1))
            if n < 2:
                raise FlagTypeError(f"{text!r}: complete flags need n ≥ 2")
            if n > MAX_COMPLETE_N:   # the dims tuple alone would fill the memory
                raise FlagTypeError(f"{text!r}: complete flags are limited to n ≤ "
                                    f"{MAX_COMPLETE_N}")
            return FlagType(tuple(range(1, n)), n)
        if kind == "grassmannian":
            k, n = int(match.group(1)), int(match.group(2))
            if not 0 < k < n:
                raise FlagTypeError(f"{text!r}: Gr(k;n) needs 0 < k < n, got k = {k}, n = {n}")
            return FlagType((k,), n)
        if kind == "projective":
            return FlagType((1,), int(match.group(1)) + 1)
    if re.fullmatch(r"Fl\s*\(\s*\d+\s*(,\s*\d+\s*)+\)", s):
        raise FlagTypeError(f"{text!r}: write the ambient dimension after a semicolon, "
                            "as in Fl(1,3;5)")
    nearest = _nearest_spelling(s)
    hint = f"; did you mean {nearest!r}?" if nearest else ""
    raise FlagTypeError(f"{text!r} is not a flag type; expected Fl(k_1,…,k_m;n), Fl(n), "
                        f"Gr(k;n), Gr(k,n) or Pn{hint}")


_PREFIXES = {"fl": "Fl", "gr": "Gr", "g": "Gr", "p": "P", "cp": "P"}


def _nearest_spelling(s: str):
    """The text with the usual slips mended (letter case of the prefix, other brackets,
    spaces), when that is a valid case name; else None."""
    mended = s.translate(str.maketrans("[]{}", "()()")).strip()
    match = re.match(r"([A-Za-z]+)\s*(?=[(^\d])", mended)
    if match and match.group(1).lower() in _PREFIXES:
        mended = _PREFIXES[match.group(1).lower()] + mended[match.end():]
    mended = re.sub(r"\s+", "", mended)
    if mended == s:
        return None
    try:
        _parse_flag(mended)
    except FlagTypeError:
        return None
    return mended
