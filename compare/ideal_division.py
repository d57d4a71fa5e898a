"""Remainder on division by several polynomials at once, in one pass.

python-flint wraps FLINT's division by one polynomial (`f % g`) but not FLINT's division by
a list (`nmod_mpoly_divrem_ideal`, a heap-based division that reduces every term of f by
the first divisor whose leading monomial divides it).  Repeating `%` instead costs a pass
over f for every divisor used, and those passes are most of the time of a Gröbner basis
computation (DEVELOPERS.md, "The Gröbner engine").  This module calls the FLINT function
through ctypes, from the FLINT library python-flint has loaded (the one mapped into the
process, never a file found by name), when it is the FLINT version python-flint reports.

Calling it needs the addresses of FLINT's structs inside python-flint's objects, which
python-flint does not publish.  They are found at run time, and the call is made only when
everything checks out: the polynomial object must hold its context's address right after a
FLINT polynomial struct whose length field is the polynomial's length, the context object
must hold the variable count and the modulus where FLINT's context layout puts them, and
the routine must reproduce a worked normal form — first in a forked child, since a routine
of another signature might crash.  Otherwise — another python-flint or FLINT
release, another Python, or RINGMATCH_PURE_DIVISION set in the environment —
`Divisors.native` is false and `remainder` repeats `%` instead, steered by a lookup of
which divisor's leading monomial divides which monomial.  Both give a remainder none
of whose terms is divisible by a divisor's leading monomial; for a Gröbner basis that is
the normal form, so results never depend on which one ran.

The routine puts arrays per divisor on the C stack (`stack_bytes`); a division that needs
more than a small share of a thread's stack runs on a thread with a stack large enough,
or, when no such thread can be had, by the repeated division.
"""
from __future__ import annotations

import ctypes
import operator
import os
import struct
import sys
import threading
import time
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


def _loaded_flint_library() -> Optional[str]:
    """The path of the FLINT library mapped into this process, which python-flint loaded:
    a file found by name beside python-flint might be another build."""
    try:
        with open("/proc/self/maps") as maps:
            paths = {line.split(None, 5)[5].strip() for line in maps
                     if len(line.split(None, 5)) == 6}
    except OSError:
        return None
    found = {path for path in paths
             if os.path.basename(path).startswith("libflint") and ".so" in path}
    return found.pop() if len(found) == 1 else None


def _load_routine():
    # id() is an object's address only in CPython, and the word size is assumed below.
    if sys.implementation.name != "cpython" or struct.calcsize("P") != _WORD:
        return None
    path, no_load = _loaded_flint_library(), getattr(os, "RTLD_NOLOAD", None)
    if path is None or no_load is None:
        return None
    try:
        # RTLD_NOLOAD: only the copy already in memory, never a second one loaded here.
        library = ctypes.CDLL(path, mode=os.RTLD_NOW | no_load)
        routine = library.nmod_mpoly_divrem_ideal
        version = (ctypes.c_char * 16).in_dll(library, "flint_version").value
    except (OSError, AttributeError, ValueError):
        return None
    if version.decode("ascii", "replace") != getattr(flint, "__FLINT_VERSION__", None):
        return None     # not the FLINT python-flint was built against
    routine.restype = None
    routine.argtypes = [ctypes.c_void_p, ctypes.c_void_p, ctypes.c_void_p,
                        ctypes.c_void_p, ctypes.c_long, ctypes.c_void_p]
    return routine


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
        layout = _checked_layout(ctx)
        if layout is not None and not _first_call_survives():
            layout = None
        if layout is not None and not _worked_example(ctx, layout):
            layout = None
        _LAYOUTS[key] = layout
        _CONTEXTS[key] = ctx
    return _LAYOUTS[key]


def _checked_layout(ctx) -> Optional[tuple]:
    poly, context = _poly_offset(ctx), _context_offset(ctx)
    return None if poly is None or context is None else (poly, context)


_FIRST_CALL: Dict[str, bool] = {}     # "survived" once decided in this process (or a parent)
_FIRST_CALL_SECONDS = 20.0


def _first_call_survives() -> bool:
    """Whether the routine reproduces the worked normal forms in a forked child.

    Everything that can be checked without calling it has been (the symbol of the loaded
    library, its FLINT version, the struct layout), but not its signature: were it
    another, the first call could crash or corrupt memory, and it should be the child's."""
    if "survived" not in _FIRST_CALL:
        _FIRST_CALL["survived"] = _run_first_call_in_child()
    return _FIRST_CALL["survived"]


def _run_first_call_in_child() -> bool:
    if not hasattr(os, "fork"):
        return False
    import warnings
    try:
        with warnings.catch_warnings():   # the child only divides and exits, taking no locks
            warnings.simplefilter("ignore", DeprecationWarning)
            pid = os.fork()
    except OSError:
        return False
    if pid == 0:    # the child: report by exit status only, run no cleanup of the parent
        status = 1
        try:
            import faulthandler
            faulthandler.disable()      # a crash here is an answer, not a report
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, 1)
            os.dup2(devnull, 2)
            ctx = flint.nmod_mpoly_ctx.get(("x", "y"), modulus=2**61 - 1, ordering="degrevlex")
            layout = _checked_layout(ctx)
            status = 0 if layout is not None and _worked_example(ctx, layout) else 1
        finally:
            os._exit(status)
    deadline = time.monotonic() + _FIRST_CALL_SECONDS
    while True:
        try:
            done, status = os.waitpid(pid, os.WNOHANG)
        except ChildProcessError:
            return False
        if done:
            return os.WIFEXITED(status) and os.WEXITSTATUS(status) == 0
        if time.monotonic() > deadline:     # a hung routine is as bad as a crashed one
            os.kill(pid, 9)
            os.waitpid(pid, 0)
            return False
        time.sleep(0.002)


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


# The C stack FLINT's routine takes.  Its temporary arrays come from FLINT's TMP_ALLOC: on
# the stack up to 8 KiB each, from the heap beyond (leaving a 16-byte record on the stack).
# With exponents of more than one word (more than about 8 variables) it takes two such
# arrays per divisor, sized by the divisor's length, so that a long list of long divisors
# overflows an 8 MiB stack (a segmentation fault, not an exception).
_TMP_ON_STACK = 8192
_FRAMES = 4096                    # the routine's own frames, generously
_DIRECT_STACK = 256 * 1024        # taken on any calling thread
_MAX_THREAD_STACK = 1 << 30       # beyond: the pure path (address space under --case-memory)


def _tmp_block(size: int) -> int:
    return (16 if size > _TMP_ON_STACK else (size + 15) // 16 * 16) + 16


def _divisor_stack(length: int) -> int:
    """The two per-divisor arrays: heap chain nodes (4 words each) and indices (1 word)."""
    return _tmp_block(32 * length) + _tmp_block(8 * length)


def stack_bytes(divisor_lengths: Sequence[int]) -> int:
    """A bound on the C stack FLINT's routine takes to divide by divisors of these lengths."""
    return _stack_bytes(len(divisor_lengths), sum(divisor_lengths),
                        sum(map(_divisor_stack, divisor_lengths)))


def _stack_bytes(count: int, terms: int, per_divisor: int) -> int:
    # arrays of one word per divisor (seven of them, with the entry point's), and the heap,
    # the store of popped entries, the exponents and their list, sized by the total length
    # (the exponent array by a word count not known here: taken at its cap)
    fixed = 7 * _tmp_block(8 * count) + _tmp_block(16 * (terms + 1)) + \
        _tmp_block(24 * terms) + _tmp_block(_TMP_ON_STACK + 1) + _tmp_block(8 * terms)
    return _FRAMES + fixed + per_divisor


def _main_thread_stack() -> int:
    """What a division may take on the main thread: half its stack limit, less a margin for
    the interpreter's own frames (the limit is usually 8 MiB)."""
    try:
        import resource
        soft = resource.getrlimit(resource.RLIMIT_STACK)[0]
    except (ImportError, OSError, ValueError):
        return _DIRECT_STACK
    if soft == resource.RLIM_INFINITY:
        soft = 8 << 20
    return max(_DIRECT_STACK, soft // 2 - (1 << 20))


_MAIN_THREAD_STACK = _main_thread_stack()


def _direct_stack() -> int:
    # other threads (a Dask worker's) may have small stacks of unknown size
    if threading.current_thread() is threading.main_thread():
        return _MAIN_THREAD_STACK
    return _DIRECT_STACK


_THREAD_LOCK = threading.Lock()


def _remainder_on_large_stack(f, divisor_addresses, quotient_addresses, count, layout,
                              stack: int):
    """The routine on a thread of its own whose stack holds what it takes; None when such
    a thread cannot be had (the caller divides without FLINT's routine then)."""
    size = -(-(2 * stack + (1 << 20)) // (1 << 20)) * (1 << 20)
    if size > _MAX_THREAD_STACK:
        return None
    answer: List = []

    def work():
        answer.append(_flint_remainder(f, divisor_addresses, quotient_addresses, count,
                                       layout))
    # stack_size is one setting for the whole process: set, start and restore it together
    with _THREAD_LOCK:
        try:
            previous = threading.stack_size(size)
        except (ValueError, RuntimeError):
            return None
        try:
            worker = threading.Thread(target=work, name="ringmatch-flint-division",
                                      daemon=True)
            worker.start()
        except (RuntimeError, MemoryError):
            return None
        finally:
            threading.stack_size(previous)
    worker.join()
    return answer[0] if answer else None


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
        # per prefix of the list: number of terms and FLINT's per-divisor stack, summed
        self._terms: List[int] = [0]
        self._stack: List[int] = [0]
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
            self._terms.append(self._terms[-1] + len(g))
            self._stack.append(self._stack[-1] + _divisor_stack(len(g)))

    def replace(self, index: int, g) -> None:
        self._admit(g)
        if g.monomial(0) != self.polys[index].monomial(0):
            raise ValueError("a replacement must keep the leading monomial")
        old_length = len(self.polys[index])
        self.polys[index] = g
        if self._layout is not None:
            self._point_at(index)
            if len(g) != old_length:
                for k in range(index + 1, len(self.polys) + 1):
                    length = len(self.polys[k - 1])
                    self._terms[k] = self._terms[k - 1] + length
                    self._stack[k] = self._stack[k - 1] + _divisor_stack(length)

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
        stack = _stack_bytes(count, self._terms[count], self._stack[count])
        if stack <= _direct_stack():
            return _flint_remainder(f, self._divisor_array, self._quotient_array, count,
                                    self._layout)
        remainder = _remainder_on_large_stack(f, self._divisor_array, self._quotient_array,
                                              count, self._layout, stack)
        return self._steered_remainder(f, count) if remainder is None else remainder

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
