"""Remainder on division by several polynomials at once, in one pass.

python-flint wraps FLINT's division by one polynomial (`f % g`) but not FLINT's division by
a list (`nmod_mpoly_divrem_ideal`, a heap-based division that reduces every term of f by
the first divisor whose leading monomial divides it).  Repeating `%` instead costs a pass
over f for every divisor used, and those passes are most of the time of a Gröbner basis
computation (DEVELOPERS.md, "The Gröbner engine").  This module calls the FLINT function
from the FLINT library that python-flint itself ships, through ctypes.

Calling it needs the addresses of FLINT's structs inside python-flint's objects, which
python-flint does not publish.  They are found at run time, and the call is made only when
everything checks out: the polynomial object must hold its context's address right after a
FLINT polynomial struct whose length field is the polynomial's length, the context object
must hold the variable count and the modulus where FLINT's context layout puts them, and
the routine must reproduce a worked normal form.  Otherwise — another python-flint or FLINT
release, another Python, or RINGMATCH_PURE_DIVISION set in the environment —
`Divisors.native` is false and `remainder` repeats `%` instead, steered by a lookup of
which divisor's leading monomial divides which monomial.  Both give a remainder none
of whose terms is divisible by a divisor's leading monomial; for a Gröbner basis that is
the normal form, so results never depend on which one ran.
"""
from __future__ import annotations

import ctypes
import glob
import operator
import os
import struct
from dataclasses import dataclass, field
from typing import Dict, List, Optional, Sequence, Tuple

import flint

_WORD = 8
_POLY_STRUCT_WORDS = 6            # coeffs, exps, length, bits, coeffs_alloc, exps_alloc
_LENGTH_FIELD = 2
# mpoly_ctx_struct: nvars, nfields, (ord, deg), (rev), lut_words_per_exp[64],
# lut_fix_bits[64 bytes]; the nmod_t modulus (n, ninv, norm) follows it.
_CTX_MODULUS_AFTER_NVARS = 4 + 64 + 8

DISABLE_VARIABLE = "RINGMATCH_PURE_DIVISION"


def _object_words(obj) -> tuple:
    raw = ctypes.string_at(id(obj), type(obj).__basicsize__)
    return struct.unpack(f"{len(raw) // _WORD}Q", raw[: len(raw) // _WORD * _WORD])


def _load_routine():
    if struct.calcsize("P") != _WORD:
        return None
    libdir = os.path.join(os.path.dirname(os.path.dirname(flint.__file__)), "python_flint.libs")
    for path in sorted(glob.glob(os.path.join(libdir, "libflint*.so*"))):
        try:
            routine = ctypes.CDLL(path).nmod_mpoly_divrem_ideal
        except (OSError, AttributeError):
            continue
        routine.restype = None
        routine.argtypes = [ctypes.c_void_p, ctypes.c_void_p, ctypes.c_void_p,
                            ctypes.c_void_p, ctypes.c_long, ctypes.c_void_p]
        return routine
    return None


def _poly_offset(ctx) -> Optional[int]:
    """Byte offset of the FLINT polynomial struct inside python-flint's polynomial object."""
    probes = [ctx.gen(0) + 1, ctx.gen(0) ** 3 + 2 * ctx.gen(0) + 5, ctx.constant(7)]
    offsets = set()
    for f in probes:
        words = _object_words(f)
        hits = [i for i, w in enumerate(words) if w == id(ctx)]
        if len(hits) != 1 or hits[0] < _POLY_STRUCT_WORDS:
            return None
        start = hits[0] - _POLY_STRUCT_WORDS
        if words[start + _LENGTH_FIELD] != len(f):
            return None
        offsets.add(start * _WORD)
    return offsets.pop() if len(offsets) == 1 else None


def _context_offset(ctx) -> Optional[int]:
    """Byte offset of the FLINT context struct inside python-flint's context object: the
    word holding the variable count, followed by the field count (one more for the graded
    orders) and, after the lookup tables, the modulus and its normalisation shift."""
    words = _object_words(ctx)
    n, p = ctx.nvars(), ctx.modulus()
    hits = [i for i in range(len(words) - _CTX_MODULUS_AFTER_NVARS - 2)
            if words[i] == n and words[i + 1] in (n, n + 1)
            and words[i + _CTX_MODULUS_AFTER_NVARS] == p
            and words[i + _CTX_MODULUS_AFTER_NVARS + 2] == 8 * _WORD - p.bit_length()]
    return hits[0] * _WORD if len(hits) == 1 else None


_ROUTINE = None if os.environ.get(DISABLE_VARIABLE) else _load_routine()
_LAYOUTS: Dict[int, Optional[tuple]] = {}     # id(ctx) -> (poly offset, ctx offset) or None
_CONTEXTS: Dict[int, object] = {}              # keeps checked contexts alive (ids stay valid)


def _layout(ctx) -> Optional[tuple]:
    """(polynomial offset, context offset) when FLINT's routine may be called for ctx."""
    if _ROUTINE is None or not isinstance(ctx, flint.nmod_mpoly_ctx) or not ctx.is_prime():
        return None     # FLINT aborts the process on a leading coefficient it cannot invert
    key = id(ctx)
    if key not in _LAYOUTS:
        layout = None
        poly, context = _poly_offset(ctx), _context_offset(ctx)
        if poly is not None and context is not None:
            layout = (poly, context)
            if not _worked_example(ctx, layout):
                layout = None
        _LAYOUTS[key] = layout
        _CONTEXTS[key] = ctx
    return _LAYOUTS[key]


def _worked_example(ctx, layout) -> bool:
    """Normal forms by hand: x^3 + x^2 + 1 by {x^2 − 2} is 2x + 3, and, with two variables,
    x^2·y + y^3 + x by the Gröbner basis {x^2 − 1, y^2 − 3} is x + 4y."""
    x = ctx.gen(0)
    if _call(x ** 3 + x ** 2 + 1, [x ** 2 - 2], layout) != 2 * x + 3:
        return False
    if ctx.nvars() < 2:
        return True
    y = ctx.gen(1)
    return _call(x ** 2 * y + y ** 3 + x, [x ** 2 - 1, y ** 2 - 3], layout) == x + 4 * y


def _call(f, divisors: Sequence, layout):
    quotients = [f.context().constant(0) for _ in divisors]
    return _flint_remainder(f, _addresses(divisors, layout), _addresses(quotients, layout),
                            len(divisors), layout)


def _addresses(polys: Sequence, layout, capacity: int = 0):
    """The array of FLINT struct addresses of `polys` that the routine reads, with room
    for `capacity` addresses in all."""
    return (ctypes.c_void_p * max(capacity, len(polys)))(*[id(g) + layout[0] for g in polys])


def _flint_remainder(f, divisor_addresses, quotient_addresses, count: int, layout):
    poly_offset, ctx_offset = layout
    ctx = f.context()
    remainder = ctx.constant(0)
    _ROUTINE(quotient_addresses, id(remainder) + poly_offset, id(f) + poly_offset,
             divisor_addresses, count, id(ctx) + ctx_offset)
    return remainder


@dataclass
class _LeadingMonomials:
    """Which of a growing list of leading monomials divides a given monomial (the first).

    `found` maps a monomial to the index of a dividing LM, or to -(k + 1) when none of the
    first k LMs divides it; the list only grows, so a hit stays valid and a miss needs
    checking against the newer LMs only.  The support masks cheaply rule out most LMs."""
    lms: List[Tuple[int, ...]] = field(default_factory=list)
    masks: List[int] = field(default_factory=list)
    found: Dict[Tuple[int, ...], int] = field(default_factory=dict)

    def add(self, lm: Tuple[int, ...]) -> None:
        self.lms.append(lm)
        self.masks.append(_support_mask(lm))

    def first_divisor(self, m: Tuple[int, ...]) -> int:
        """Index of the first LM dividing m, or -1."""
        k = self.found.get(m)
        if k is None:
            return self._search(m, 0)
        if k < 0 and k != -len(self.lms) - 1:
            return self._search(m, -k - 1)
        return k

    def _search(self, m: Tuple[int, ...], start: int) -> int:
        mask = _support_mask(m)
        lms, masks = self.lms, self.masks
        for k in range(start, len(lms)):
            if not masks[k] & ~mask and all(map(operator.le, lms[k], m)):
                self.found[m] = k
                return k
        self.found[m] = -len(lms) - 1
        return -1


def _support_mask(e: Tuple[int, ...]) -> int:
    mask = 0
    for v, x in enumerate(e):
        if x:
            mask |= 1 << v
    return mask


def available(ctx) -> bool:
    """Whether divisions of polynomials of ctx go through FLINT's routine."""
    return _layout(ctx) is not None


class Divisors:
    """A list of divisors (nonzero, one context), tried oldest first, for repeated division.

    The list may grow (`append`), and an element may be swapped for another with the same
    leading monomial (`replace`, for a tail-reduced version).  The address arrays FLINT
    reads are kept in step entry by entry, with room to grow: rebuilding them after every
    new element cost more than a division on small cases."""

    def __init__(self, polys: Sequence = ()):
        self.polys: List = []
        self._ctx = None
        self._layout: Optional[tuple] = None
        self._leading = _LeadingMonomials()
        self._quotients: List = []
        self._divisor_array = None
        self._quotient_array = None
        for g in polys:
            self.append(g)

    @property
    def native(self) -> bool:
        return self._layout is not None

    def append(self, g) -> None:
        self._admit(g)
        self.polys.append(g)
        if self._layout is not None:
            self._quotients.append(self._ctx.constant(0))
            self._point_at(len(self.polys) - 1)

    def replace(self, index: int, g) -> None:
        self._admit(g)
        if g.monomial(0) != self.polys[index].monomial(0):
            raise ValueError("a replacement must keep the leading monomial")
        self.polys[index] = g
        if self._layout is not None:
            self._point_at(index)

    def _point_at(self, index: int) -> None:
        if self._divisor_array is None or index >= len(self._divisor_array):
            capacity = 2 * len(self.polys) + 8
            self._divisor_array = _addresses(self.polys, self._layout, capacity)
            self._quotient_array = _addresses(self._quotients, self._layout, capacity)
        else:
            self._divisor_array[index] = id(self.polys[index]) + self._layout[0]
            self._quotient_array[index] = id(self._quotients[index]) + self._layout[0]

    def _admit(self, g) -> None:
        if self._ctx is None:
            self._ctx = g.context()
            self._layout = _layout(self._ctx)
        elif g.context() is not self._ctx:
            raise ValueError("all polynomials must belong to the same nmod_mpoly context")
        if g.is_zero():
            raise ValueError("division by the zero polynomial")

    def remainder(self, f, first: Optional[int] = None):
        """A remainder of f none of whose terms is divisible by a divisor's leading monomial;
        with `first`, by the first `first` divisors only."""
        count = len(self.polys) if first is None else first
        if not 0 <= count <= len(self.polys):
            raise ValueError(f"cannot divide by the first {first} of {len(self.polys)} divisors")
        if not count or f.is_zero():
            return f
        if f.context() is not self._ctx:
            raise ValueError("all polynomials must belong to the same nmod_mpoly context")
        if self._layout is None:
            return self._steered_remainder(f, count)
        return _flint_remainder(f, self._divisor_array, self._quotient_array, count,
                                self._layout)

    def _steered_remainder(self, f, count: int):
        """The same by python-flint's division by one element, repeated.

        First the leading term alone is watched: reading one monomial is cheap, while
        listing all of f's monomials costs more than a division, and a reduction to zero
        (most of a Gröbner basis computation) never needs more.  Once the leading term is
        irreducible, the tail is reduced in rounds: each round reads the terms of f once and
        divides only by the elements those terms ask for (`f % g` costs a pass over f even
        when LM(g) divides none of its terms), until a round finds every term irreducible."""
        leading, polys = self._leading, self.polys
        for g in polys[len(leading.lms):]:      # the lookup is only needed on this path
            leading.add(g.monomial(0))
        while not f.is_zero():
            k = leading.first_divisor(f.monomial(0))
            if not 0 <= k < count:
                break
            f = f % polys[k]
        while not f.is_zero():
            wanted: Dict[int, None] = {}     # insertion-ordered set
            for m in f.monoms():
                k = leading.first_divisor(m)
                if 0 <= k < count:
                    wanted[k] = None
            if not wanted:
                return f
            for k in wanted:
                f = f % polys[k]
                if f.is_zero():
                    return f
        return f


def remainder(f, divisors: Sequence):
    """A remainder of f on division by `divisors` (see Divisors.remainder)."""
    return Divisors([g for g in divisors if not g.is_zero()]).remainder(f)


def description(ctx) -> str:
    """Which division runs for polynomials of ctx, for benchmark and diagnostic output."""
    if _layout(ctx) is not None:
        return "FLINT's division by the whole list (nmod_mpoly_divrem_ideal)"
    if os.environ.get(DISABLE_VARIABLE):
        reason = f"{DISABLE_VARIABLE} is set"
    elif _ROUTINE is None:
        reason = "FLINT routine not found"
    elif not isinstance(ctx, flint.nmod_mpoly_ctx) or not ctx.is_prime():
        reason = "not a polynomial ring over a prime field"
    else:
        reason = "python-flint's object layout not recognised"
    return f"python-flint's division by one polynomial, repeated ({reason})"
