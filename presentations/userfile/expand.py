"""Presentation files, part 3: expanding a parsed file for one flag type.

All arithmetic happens once per flag type in one canonical ring over Q — python-flint
`fmpq_mpoly` in the generator names, T1…Tn, q1…qm and the auxiliary variable y — and
`transport` then maps the results into whatever `compare.algebra.Ring` a caller hands over
(symbolic, specialised mod p, or the series ring with q_i = c_i·s) through the ring
homomorphism generator ↦ ring.gen[name], T_j ↦ ring.T[j-1], q_i ↦ ring.q[i-1].  Doing the
work in the symbolic ring makes every error and every limit independent of the ring asked
for: a file either expands for a flag type or it does not.

Values during evaluation are Python ints (indices, exponents, ranges) or `Frac` records
num/den with den a product of units (T_j, 1 − q_i, declared units) — division by a unit is
carried as a denominator, and a finished relation is its numerator, i.e. the relation
multiplied through by that unit, which generates the same ideal.
"""
from __future__ import annotations

import difflib
import re
from dataclasses import dataclass, field, replace
from typing import Dict, Iterator, List, Optional, Set, Tuple, Union

import flint

from ..flagtype import FlagType
from ..interface import Generator
from ..meanings import KIND_BY_SYNTAX, Meaning
from .container import (ClassDecl, FileSpec, GeneratorDecl, RelationDecl, SchubertFamily,
                        UnitDecl)
from .syntax import (RESERVED, Apply, Chain, Coefficient, Equation, Extremum, Loc, Loop,
                              Negate, Node, Num, Power, PresentationFileError, Symbol, Template,
                              Toda, fail)

MAX_DEGREE = 200              # total degree, y included, of any intermediate polynomial
MAX_TERMS = 20_000            # terms of any intermediate polynomial
MAX_PRODUCT_WORK = 4_000_000  # len(a)·len(b) for one multiplication
# Below Python's 4300-digit limit for printing integers, so every number a file can produce
# can also be written out (relations, case files, reports).
MAX_COEFFICIENT_BITS = 14_000
MAX_STEPS = 300_000           # evaluation steps (syntax-tree nodes and loop rounds) per flag type
# All arithmetic of one expansion together: term products of multiplications, weighted by
# the size of their coefficients in 64-bit words, plus the terms of additions.  Each step
# within its own limits can still add up to minutes and gigabytes over a loop.
MAX_TOTAL_WORK = 30_000_000
# A pass over a polynomial's coefficients in Python (measuring their sizes) costs about as
# much as this many term operations of FLINT's arithmetic.  Term operations themselves
# count once more for every 64 variables of the ring (`_State.term_weight`).
PYTHON_TERM_WORK = 100
# And one addition or multiplication of polynomials, whatever their size, costs the
# interpreter about this much (5–10 µs): h_200(S_1) is 400 of them on one-term polynomials,
# and a loop of it took 40 s while its term operations came to a fraction of the limit.
OPERATION_WORK = 200
# What an expansion keeps: the terms of all relations and units together, each counted once
# more per 64 bits of its largest coefficient and per 64 variables.  Every relation within
# its own limits, repeated by a loop, must not fill the memory (the shipped q-Whitney file
# keeps 8 595 terms for Fl(12), the largest flag type its intermediate polynomials allow).
MAX_KEPT_WORDS = 200_000
MAX_GENERATORS = 2_000
MAX_RELATIONS = 5_000
MAX_UNITS = 32                # each declared unit becomes an inverse variable in the engine
MAX_DIVISOR_TERMS = 400       # a divisor is checked to be a unit (by gcds with the units)
MAX_SHOWN_INTEGER = 10**18    # template holes and expected_colength

GENERATOR_NAME = re.compile(r"([A-Za-z][A-Za-z0-9]*)((?:_[0-9]+)*)")
PARAMETER_NAME = re.compile(r"([Tq])([0-9]+)")


@dataclass(frozen=True)
class Expanded:
    """A file expanded for one flag type, in the canonical ring `ctx`."""
    file: str
    flag: FlagType
    ctx: object
    generators: Tuple[Generator, ...]
    relations: Tuple[Tuple[str, object], ...]    # (label, polynomial without y)
    units: Tuple[object, ...]
    expected_colength: int


@dataclass(frozen=True)
class Frac:
    num: object
    den: object
    bits: int          # upper bound for the coefficient sizes of num and den


Value = Union[int, Frac]


class _Blocked:
    """Marks the variable of a coefficients clause while the expression is evaluated."""


@dataclass
class _State:
    flag: FlagType
    ctx: object = None
    gen_index: Dict[str, int] = field(default_factory=dict)
    by_meaning: Dict[Meaning, str] = field(default_factory=dict)
    # the units: variables (T_j, and those dividing a declared unit), and polynomials without
    # monomial factors (1 − q_i, the declared units' other parts) with their coefficient
    # sizes in 64-bit words; a divisor is a unit when gcds with these leave a number
    unit_vars: Set[int] = field(default_factory=set)
    unit_polys: List[Tuple[object, int]] = field(default_factory=list)
    unit_cache: Dict[str, Optional[str]] = field(default_factory=dict)
    cache: Dict[tuple, List[Value]] = field(default_factory=dict)
    steps: int = 0
    work: int = 0
    kept: int = 0
    # a term of the canonical ring is an exponent vector of a byte or more per variable:
    # operations on terms, and the memory they take, grow with the number of variables
    term_weight: int = 1
    y_index: int = -1
    params: Dict[str, object] = field(default_factory=dict)     # name → ParameterDecl
    values: Dict[str, int] = field(default_factory=dict)        # "a" or "a_2" → value


# ---------------------------------------------------------------------------------------
# Driver

def unsupported_reason(spec: FileSpec, flag: FlagType) -> Optional[str]:
    if spec.flavour == "case":
        return None if flag == spec.case else f"this case file describes {spec.case.name} only"
    if applies(spec.applies_to, flag):
        return None
    return f"the file applies to {', '.join(spec.applies_to)} only"


def applies(words: Tuple[str, ...], flag: FlagType) -> bool:
    """Whether an `applies_to` list ("all", "grassmannians", …, flag names) takes in flag."""
    return any(word == "all" or (word == "grassmannians" and flag.is_grassmannian)
               or (word == "projective" and flag.dims == (1,))
               or (word == "complete" and flag.is_complete) or word == flag.name
               for word in words)


def expand(spec: FileSpec, flag: FlagType, values: Optional[Dict[str, int]] = None) -> Expanded:
    """`values`: the parameters' values (name, or name_i for a per-step parameter), already
    checked against the declarations (userfile.bind_values)."""
    st = _State(flag)
    st.params = {p.name: p for p in spec.parameters}
    st.values = dict(values or {})
    for p in spec.parameters:
        if p.name not in st.values and not p.per_step:
            fail(p.at, f"parameter {p.name} has no value (give one with --set {p.name}=…)")
        if p.per_step:
            for i in range(1, flag.m + 1):
                value = st.values.get(f"{p.name}_{i}", st.values.get(p.name))
                if value is None:
                    fail(p.at, f"parameter {p.name}_{i} has no value for {flag.name} (give one "
                               f"with --set {p.name}=… or --set {p.name}_{i}=…)")
                st.values[f"{p.name}_{i}"] = value
    generators = _expand_generators(spec, st)
    _open_ring(st, generators)
    gens = st.ctx.gens()
    st.unit_vars = {len(generators) + j - 1 for j in range(1, flag.n + 1)}
    st.unit_polys = [(1 - gens[len(generators) + flag.n + i - 1], 1) for i in range(1, flag.m + 1)]
    units = _expand_units(spec, st)
    relations = _expand_relations(spec, st)
    return Expanded(spec.file, flag, st.ctx, tuple(generators), tuple(relations), tuple(units),
                    _expected_colength(spec, st))


def _open_ring(st: _State, generators) -> None:
    """The canonical ring of one flag type: the generators, then T1…Tn, q1…qm and y."""
    flag = st.flag
    names = [g.name for g in generators] + [f"T{j}" for j in range(1, flag.n + 1)] + \
            [f"q{i}" for i in range(1, flag.m + 1)] + ["y"]
    st.ctx = flint.fmpq_mpoly_ctx.get(tuple(names), "degrevlex")
    st.y_index = len(names) - 1
    st.term_weight = 1 + len(names) // 64
    st.gen_index = {g.name: index for index, g in enumerate(generators)}


MAX_CLASSES = 5_000


def expand_classes(family: SchubertFamily, flag: FlagType, generators) -> List[Tuple[str, Loc, dict]]:
    """The Schubert classes a [[schubert.family]] gives for `flag`, in a presentation with
    these `generators`: (label text, where its entry is, polynomial as {((name, power), …):
    integer}).  Names and meanings (lambda_j(S_i), det(S_i), x_a(S_i), …) resolve against
    the generators, so one family serves every presentation that has them.  A class is
    non-equivariant and classical in form: no y, T_j or q_i, integer coefficients, no
    division.  Errors name file:line:col."""
    st = _State(flag)
    _open_ring(st, generators)
    names = st.ctx.names()
    st.by_meaning = {g.meaning: g.name for g in generators}
    out: List[Tuple[str, Loc, dict]] = []
    for decl, env, at, _ in _walk(family.classes, {}, st):
        assert isinstance(decl, ClassDecl)
        label = _render(decl.label, env, st)
        try:
            value = _as_frac(_eval(decl.expr, env, st), st, decl.expr.at)
        except PresentationFileError as error:
            raise _with_generators(error, generators) from None
        if not value.den.is_one():
            fail(decl.expr.at, "a Schubert class cannot divide (write it as a polynomial in "
                               "the generators)")
        degrees = value.num.degrees()
        extra = [names[v] for v in range(len(generators), len(names)) if degrees[v] > 0]
        if extra:
            fail(decl.expr.at, f"a Schubert class is a polynomial in the generators alone; "
                               f"this one contains {extra[0]}")
        polynomial = {}
        for exponents, c in zip(value.num.monoms(), value.num.coeffs()):
            if c.q != 1:
                fail(decl.expr.at, f"a Schubert class needs integer coefficients, not {c}")
            monomial = tuple((names[v], int(e)) for v, e in enumerate(exponents) if e)
            polynomial[tuple(sorted(monomial))] = int(c.p)
        _keep(value.num, decl.expr.at, st)
        out.append((label, at, polynomial))
        if len(out) > MAX_CLASSES:
            fail(at, f"more than {MAX_CLASSES} Schubert classes")
    return out


def _with_generators(error: PresentationFileError, generators) -> PresentationFileError:
    """An unknown name in a Schubert class most often is a generator of another presentation:
    name the nearest generator of this one, and all of them."""
    names = [g.name for g in generators]
    shown = ", ".join(names[:12]) + (", …" if len(names) > 12 else "")
    match = re.match(r"unknown symbol '([^']*)'$", error.message)
    missing = re.match(r"(no generator means [^;]*);", error.message)
    if match:
        nearest = difflib.get_close_matches(match.group(1), names, n=1)
        hint = f"did you mean {nearest[0]}? " if nearest else ""
        message = (f"{error.message} ({hint}this presentation's generators: {shown}; or write "
                   "a meaning such as lambda_1(S_1))")
    elif missing:
        message = f"{missing.group(1)} in this presentation (its generators: {shown})"
    else:
        return error
    return PresentationFileError(message, error.file, error.line, error.column)


def _walk(entries, env: dict, st: _State) -> Iterator[Tuple[object, dict, Loc, int]]:
    """Every declaration with every binding of its loops, in file order."""
    for number, entry in enumerate(entries, 1):
        for bound in _bindings(entry.loops, env, st):
            if entry.group:
                yield from _walk(entry.group, bound, st)
            else:
                yield entry.decl, bound, entry.at, number


def _bindings(loops, env: dict, st: _State) -> Iterator[dict]:
    if not loops:
        yield env
        return
    first = loops[0]
    _check_new_variable(first.var, first.at, env, st)
    low = _integer(first.low, env, st, "a range bound")
    high = _integer(first.high, env, st, "a range bound")
    _check_range(low, high, first.at, st)
    for value in range(low, high + 1):
        _step(st, first.at)
        yield from _bindings(loops[1:], {**env, first.var: value}, st)


def _check_new_variable(var: str, at: Loc, env: dict, st: _State) -> None:
    if var in env:
        fail(at, f"loop variable {var!r} is already bound here")
    if var in st.gen_index:
        fail(at, f"loop variable {var!r} has the name of a generator")
    if var in st.params:
        fail(at, f"loop variable {var!r} has the name of a parameter")


def _check_range(low: int, high: int, at: Loc, st: _State) -> None:
    if high - low + 1 > MAX_STEPS - st.steps:
        fail(at, f"range {low}..{high} is too long (expansion is limited to {MAX_STEPS} steps)")


def _step(st: _State, at: Loc) -> None:
    st.steps += 1
    if st.steps > MAX_STEPS:
        fail(at, f"expansion takes more than {MAX_STEPS} steps")


def _expand_generators(spec: FileSpec, st: _State) -> List[Generator]:
    out: List[Generator] = []
    names: Dict[str, Loc] = {}
    for decl, env, at, _ in _walk(spec.generators, {}, st):
        assert isinstance(decl, GeneratorDecl)
        name = _render(decl.name, env, st)
        _check_generator_name(name, decl.name.at, st.params)
        if name in names:
            fail(decl.name.at, f"duplicate generator {name!r}")
        meaning = _meaning(decl.meaning, env, st)
        if meaning in st.by_meaning:
            fail(decl.meaning.at, f"two generators mean {meaning.text}: "
                                  f"{st.by_meaning[meaning]!r} and {name!r}")
        weight = decl.weight if isinstance(decl.weight, int) else \
            _integer(decl.weight, env, st, "a weight")
        if not 1 <= weight <= 1000:
            fail(decl.weight_at,
                 f"weight of {name} must be between 1 and 1000, got {weight}")
        names[name] = at
        st.by_meaning[meaning] = name
        out.append(Generator(name, meaning, weight))
        if len(out) > MAX_GENERATORS:
            fail(at, f"more than {MAX_GENERATORS} generators")
    if not out:
        fail(spec.at.get("generators", spec.at[""]),
             f"the generators expand to nothing for {st.flag.name}")
    return out


def _check_generator_name(name: str, at: Loc, params=None) -> None:
    match = GENERATOR_NAME.fullmatch(name)
    if not match:
        fail(at, f"generator name {name!r} must be a letter, then letters and digits, then "
                 "optional _number parts, as in S1_2 or w")
    base = match.group(1)
    if base in RESERVED or PARAMETER_NAME.fullmatch(base) and not match.group(2):
        fail(at, f"generator name {name!r} is reserved for a built-in symbol")
    if params and base in params:
        fail(at, f"generator name {name!r} is the name of a parameter")


def _meaning(node: Node, env: dict, st: _State) -> Meaning:
    flag = st.flag
    if isinstance(node, Toda):
        i = _integer(node.index, env, st, "an index")
        _in_range(i, 1, flag.m + 1, "L_i needs 1 ≤ i ≤ m+1", node.at)
        return Meaning("toda_L", i)
    assert isinstance(node, Apply)
    j = _integer(node.sub, env, st, "an index")
    i = _integer(node.bundle.index, env, st, "a level")
    _in_range(i, 1, flag.m, f"level {i} out of range 1..m = 1..{flag.m}", node.bundle.at)
    kind = KIND_BY_SYNTAX[(node.func, node.bundle.kind)]
    top = kind.index_bound(flag, i)
    _in_range(j, 1, top, f"index {j} out of range 1..{top} for level {i}", node.at)
    return Meaning(kind.name, i, j)


def _expand_units(spec: FileSpec, st: _State) -> List[object]:
    out = []
    for decl, env, at, _ in _walk(spec.units, {}, st):
        assert isinstance(decl, UnitDecl)
        if len(out) >= MAX_UNITS:
            fail(at, f"more than {MAX_UNITS} declared units")
        value = _as_frac(_eval(decl.expr, env, st), st, decl.expr.at)
        if value.num.is_zero():
            fail(decl.expr.at, "a declared unit is zero")
        if value.num.degrees()[st.y_index] > 0:
            fail(decl.expr.at, "a declared unit cannot contain y")
        if len(value.num) > MAX_DIVISOR_TERMS:
            fail(decl.expr.at, f"a declared unit has more than {MAX_DIVISOR_TERMS} terms")
        _keep(value.num, decl.expr.at, st)
        if not value.num.is_constant():
            _add_unit(value.num, decl.expr.at, st)
        out.append(value.num)
    return out


def _expand_relations(spec: FileSpec, st: _State) -> List[Tuple[str, object]]:
    out: List[Tuple[str, object]] = []
    for decl, env, at, number in _walk(spec.relations, {}, st):
        assert isinstance(decl, RelationDecl)
        if decl.coefficients is None:
            value = _as_frac(_eval(decl.expr, env, st), st, decl.expr.at)
            if value.num.degrees()[st.y_index] > 0:
                fail(decl.expr.at, "the relation still contains y: take coefficients with "
                                   "coefficients = \"j = a..b\" or [y^j](…)")
            _keep(value.num, decl.expr.at, st)
            out.append((_label(decl.label, env, st, number), value.num))
        else:
            out += _coefficient_relations(decl, env, st, number)
        if len(out) > MAX_RELATIONS:
            fail(at, f"more than {MAX_RELATIONS} relations")
    if not out:
        fail(spec.at.get("relations", spec.at[""]),
             f"empty relation list: the relations expand to nothing for {st.flag.name}")
    return out


def _coefficient_relations(decl: RelationDecl, env: dict, st: _State, number: int):
    binding = decl.coefficients
    _check_new_variable(binding.var, binding.at, env, st)
    low = _integer(binding.low, env, st, "a range bound")
    high = _integer(binding.high, env, st, "a range bound")
    _check_range(low, high, binding.at, st)
    value = _as_frac(_eval(decl.expr, {**env, binding.var: _Blocked}, st), st, decl.expr.at)
    by_power = _split_by_y(value.num, st, decl.expr.at)
    out = []
    for power in range(low, high + 1):
        _step(st, binding.at)
        bound = {**env, binding.var: power}
        poly = by_power.get(power, st.ctx.constant(0))
        _keep(poly, decl.expr.at, st)
        out.append((_label(decl.label, bound, st, number), poly))
    return out


def _label(template: Optional[Template], env: dict, st: _State, number: int) -> str:
    if template is not None:
        return _render(template, env, st)
    values = ", ".join(f"{k}={v}" for k, v in env.items() if isinstance(v, int))
    return f"relation {number}" + (f" ({values})" if values else "")


def _render(template: Template, env: dict, st: _State) -> str:
    return "".join(part if isinstance(part, str) else str(_shown_integer(part, env, st))
                   for part in template.parts)


def _shown_integer(node: Node, env: dict, st: _State) -> int:
    value = _integer(node, env, st, "a hole {…}")
    if abs(value) > MAX_SHOWN_INTEGER:
        fail(node.at, f"a hole {{…}} evaluates to a number larger than {MAX_SHOWN_INTEGER:.0e}")
    return value


def _expected_colength(spec: FileSpec, st: _State) -> int:
    raw = spec.expected_colength
    if raw is None:
        return st.flag.rank
    at = spec.at.get("expected_colength", spec.at[""])
    value = raw if isinstance(raw, int) else _integer(raw, {}, st, "expected_colength")
    if value < 1:
        fail(at, f"expected_colength must be positive, got {value}")
    if value > MAX_SHOWN_INTEGER:
        fail(at, f"expected_colength is larger than {MAX_SHOWN_INTEGER:.0e}")
    return value


# ---------------------------------------------------------------------------------------
# Evaluation

def _integer(node: Node, env: dict, st: _State, what: str) -> int:
    value = _eval(node, env, st)
    if not isinstance(value, int):
        fail(node.at, f"{what} must be an integer, but this is a polynomial or a fraction")
    return value


def _eval(node: Node, env: dict, st: _State) -> Value:
    _step(st, node.at)
    kind = type(node)
    if kind is Num:
        return node.value
    if kind is Symbol:
        return _symbol(node, env, st)
    if kind is Chain:
        return _chain(node, env, st)
    if kind is Negate:
        return _negate(_eval(node.arg, env, st), node.at, st)
    if kind is Power:
        base = _eval(node.base, env, st)
        return _power(base, _integer(node.exponent, env, st, "an exponent"), node.at, st)
    if kind is Equation:
        return _add(_eval(node.left, env, st), _eval(node.right, env, st), -1, node.at, st)
    if kind is Coefficient:
        return _coefficient(node, env, st)
    if kind is Loop:
        return _loop(node, env, st)
    if kind is Apply:
        return _apply(node, env, st)
    if kind is Extremum:
        numbers = [_integer(arg, env, st, f"an argument of {node.func}") for arg in node.args]
        return max(numbers) if node.func == "max" else min(numbers)
    if kind is Toda:
        i = _integer(node.index, env, st, "an index")
        _in_range(i, 1, st.flag.m + 1, f"L_{i} needs 1 ≤ i ≤ m+1 = {st.flag.m + 1}", node.at)
        return _generator_with_meaning(Meaning("toda_L", i), node.at, st)
    raise AssertionError(f"unknown syntax node {kind.__name__}")


def _chain(node: Chain, env: dict, st: _State) -> Value:
    acc = _eval(node.items[0], env, st)
    for op, item, at in zip(node.ops[1:], node.items[1:], node.op_ats[1:]):
        value = _eval(item, env, st)
        if op == "+":
            acc = _add(acc, value, 1, at, st)
        elif op == "-":
            acc = _add(acc, value, -1, at, st)
        elif op == "*":
            acc = _multiply(acc, value, at, st)
        else:
            acc = _divide(acc, value, at, st)
    return acc


def _symbol(node: Symbol, env: dict, st: _State) -> Value:
    name, subs, flag = node.name, node.subs, st.flag
    if not subs:
        if name in env:
            if env[name] is _Blocked:
                fail(node.at, f"{name} numbers the coefficients of y taken from this expression; "
                              "it can only be used in the label")
            return env[name]
        if name in ("n", "m", "rank"):
            return {"n": flag.n, "m": flag.m, "rank": flag.rank}[name]
        if name in st.params:
            if st.params[name].per_step:
                fail(node.at, f"parameter {name} has a value per step: write {name}_i")
            return st.values[name]
        if name == "y":
            return _gen(st.y_index, node.at, st)
        match = PARAMETER_NAME.fullmatch(name)
        if match:
            return _parameter(match.group(1), int(match.group(2)), node.at, st)
    elif name in ("k", "d", "T", "q") and len(subs) == 1:
        index = _integer(subs[0], env, st, "an index")
        if name == "k":
            _in_range(index, 0, flag.m + 1, f"k_{index} does not exist: k_i needs 0 ≤ i ≤ m+1 "
                                            f"= {flag.m + 1}", node.at)
            return flag.k(index)
        if name == "d":
            _in_range(index, 0, flag.m, f"d_{index} does not exist: d_i needs 0 ≤ i ≤ m "
                                        f"= {flag.m}", node.at)
            return flag.d(index)
        return _parameter(name, index, node.at, st)
    if name in st.params and name not in env:
        if not st.params[name].per_step or len(subs) != 1:
            fail(node.at, f"parameter {name} takes " + ("exactly one subscript, the step, as "
                          f"in {name}_i" if st.params[name].per_step else "no subscript"))
        step = _integer(subs[0], env, st, "a step")
        _in_range(step, 1, flag.m, f"{name}_{step} does not exist: steps are 1..m = 1..{flag.m}",
                  node.at)
        return st.values[f"{name}_{step}"]
    if name in ("k", "d", "T", "q"):
        fail(node.at, f"{name} takes exactly one subscript, as in {name}_i")
    if name in ("n", "m", "rank", "y") or name in env:
        fail(node.at, f"{name} takes no subscript")
    parts = [name]
    for sub in subs:
        index = _integer(sub, env, st, "a subscript")
        if index < 0:
            fail(sub.at, f"a subscript of a generator name must be a natural number, got {index}")
        parts.append(str(index))
    canonical = "_".join(parts)
    if st.ctx is not None and canonical in st.gen_index:
        return _gen(st.gen_index[canonical], node.at, st)
    if st.ctx is None:
        fail(node.at, f"unknown symbol {canonical!r} (only indices can be used here)")
    fail(node.at, f"unknown symbol {canonical!r}")


def _parameter(name: str, index: int, at: Loc, st: _State) -> Value:
    flag = st.flag
    if name == "T":
        _in_range(index, 1, flag.n, f"T_{index} does not exist: T_j needs 1 ≤ j ≤ n = {flag.n}",
                  at)
        return _gen(len(st.gen_index) + index - 1, at, st)
    _in_range(index, 1, flag.m, f"q_{index} does not exist: q_i needs 1 ≤ i ≤ m = {flag.m}", at)
    return _gen(len(st.gen_index) + flag.n + index - 1, at, st)


def _in_range(value: int, low: int, high: int, message: str, at: Loc) -> None:
    if not low <= value <= high:
        fail(at, f"index out of range: {message}")


def _context(st: _State, at: Loc):
    if st.ctx is None:
        fail(at, "only integer index expressions can be used here")
    return st.ctx


def _gen(index: int, at: Loc, st: _State) -> Frac:
    ctx = _context(st, at)
    return Frac(ctx.gen(index), ctx.constant(1), 1)


def _generator_with_meaning(meaning: Meaning, at: Loc, st: _State) -> Frac:
    name = st.by_meaning.get(meaning)
    if name is None:
        _context(st, at)
        fail(at, f"no generator means {meaning.text}; declare one with that meaning")
    return _gen(st.gen_index[name], at, st)


def _coefficient(node: Coefficient, env: dict, st: _State) -> Value:
    power = _integer(node.power, env, st, "the power of y")
    value = _eval(node.arg, env, st)
    if isinstance(value, int):
        return value if power == 0 else 0
    if power < 0:
        return 0
    return Frac(_split_by_y(value.num, st, node.at, power).get(power, st.ctx.constant(0)),
                value.den, value.bits)


def _split_by_y(poly, st: _State, at: Loc, upto: Optional[int] = None) -> Dict[int, object]:
    """{j: coefficient of y^j} for j up to `upto` (all without it), the zero ones left out.

    By FLINT alone: the coefficient of y^0 is the value at y = 0, and what is left is
    divided by y.  Reading the terms into Python instead cost microseconds per term and
    variable (16 µs a term with 200 variables)."""
    if poly.is_zero():
        return {}
    degree = int(poly.degrees()[st.y_index])
    if degree <= 0:
        return {0: poly}
    y = st.ctx.gen(st.y_index)
    out: Dict[int, object] = {}
    rest = poly
    for power in range(min(degree, degree if upto is None else upto) + 1):
        _spend(st, 3 * len(rest) * st.term_weight, at)
        constant = rest.subs({st.y_index: 0})
        if not constant.is_zero():
            out[power] = constant
        if power < degree:
            rest = (rest - constant) / y
    return out


def _loop(node: Loop, env: dict, st: _State) -> Value:
    _check_new_variable(node.var, node.at, env, st)
    low = _integer(node.low, env, st, "a range bound")
    high = _integer(node.high, env, st, "a range bound")
    _check_range(low, high, node.at, st)
    acc: Value = 0 if node.kind == "sum" else 1
    for value in range(low, high + 1):
        term = _eval(node.body, {**env, node.var: value}, st)
        acc = _add(acc, term, 1, node.at, st) if node.kind == "sum" else \
            _multiply(acc, term, node.at, st)
    return acc


# Bundles: ("S", i) for 1 ≤ i ≤ m, ("Q", i), ("Y", i), ("C", 0) for C^n = S_{m+1}, ("0", 0) = S_0.

def _bundle(node, env: dict, st: _State) -> Tuple[str, int]:
    flag = st.flag
    if node.kind == "C":
        return ("C", 0)
    i = _integer(node.index, env, st, "a bundle index")
    if node.kind == "S":
        _in_range(i, 0, flag.m + 1, f"S_{i} does not exist: S_i needs 0 ≤ i ≤ m+1 = "
                                    f"{flag.m + 1}", node.at)
        return ("0", 0) if i == 0 else ("C", 0) if i == flag.m + 1 else ("S", i)
    if node.kind == "Q":
        _in_range(i, 0, flag.m, f"Q_{i} does not exist: Q_i needs 0 ≤ i ≤ m = {flag.m}", node.at)
        return ("S", 1) if i == 0 else ("Q", i)
    _in_range(i, 1, flag.m, f"Y_{i} does not exist: Y_i needs 1 ≤ i ≤ m = {flag.m}", node.at)
    return ("Y", i)


def _bundle_rank(bundle: Tuple[str, int], flag: FlagType) -> int:
    kind, i = bundle
    if kind == "0":
        return 0
    if kind == "C":
        return flag.n
    return flag.k(i) if kind == "S" else flag.d(i)


def _apply(node: Apply, env: dict, st: _State) -> Value:
    bundle = _bundle(node.bundle, env, st)
    rank = _bundle_rank(bundle, st.flag)
    if node.func == "det":
        return _elementary(bundle, rank, node.at, st)
    if node.func == "x":
        return _root(bundle, _integer(node.sub, env, st, "a root index"), node.at, st)
    if node.sub == "y":
        y = _gen(st.y_index, node.at, st)
        total: Value = 0
        for j in range(rank + 1):
            term = _multiply(_elementary(bundle, j, node.at, st), _power(y, j, node.at, st),
                             node.at, st)
            total = _add(total, term, 1, node.at, st)
        return total
    j = _integer(node.sub, env, st, "an index")
    if node.func in ("lambda", "e"):
        return _elementary(bundle, j, node.at, st)
    return _complete(bundle, j, node.at, st)


def _elementary(bundle: Tuple[str, int], j: int, at: Loc, st: _State) -> Value:
    kind, i = bundle
    if j < 0 or j > _bundle_rank(bundle, st.flag):
        return 0
    if j == 0:
        return 1
    if kind == "C":
        weights = [_parameter("T", a, at, st) for a in range(1, st.flag.n + 1)]
        return _symmetric_of(("T",), weights, at, st)[j]
    meaning = Meaning({"S": "lambda_S", "Q": "lambda_Q", "Y": "vieta_aux"}[kind], i, j)
    if meaning in st.by_meaning:
        return _generator_with_meaning(meaning, at, st)
    if kind == "S":
        roots = [Meaning("root", i, a) for a in range(1, st.flag.k(i) + 1)]
        if all(r in st.by_meaning for r in roots):
            values = [_generator_with_meaning(r, at, st) for r in roots]
            return _symmetric_of(("S", i), values, at, st)[j]
    _context(st, at)
    fail(at, f"no generator means {meaning.text}; declare one" +
             (" (or declare the Chern roots x_a(S_i))" if kind == "S" else ""))


def _symmetric_of(key: tuple, values: List[Frac], at: Loc, st: _State) -> List[Value]:
    """[e_0, e_1, …] of the given values, computed once per flag type (e.g. the e_j(T))."""
    if key not in st.cache:
        coefficients: List[Value] = [1]
        for v in values:
            coefficients.append(0)
            for t in range(len(coefficients) - 1, 0, -1):
                coefficients[t] = _add(coefficients[t], _multiply(v, coefficients[t - 1], at, st),
                                       1, at, st)
        st.cache[key] = coefficients
    return st.cache[key]


def _complete(bundle: Tuple[str, int], j: int, at: Loc, st: _State) -> Value:
    """h_j = Σ_{r≥1} (−1)^{r−1} e_r h_{j−r} (the identity Σ (−1)^r e_r h_{j−r} = 0, j ≥ 1)."""
    if j < 0:
        return 0
    if j > MAX_DEGREE:
        fail(at, f"degree exceeds {MAX_DEGREE}")
    rank = _bundle_rank(bundle, st.flag)
    h: List[Value] = [1]
    for t in range(1, j + 1):
        total: Value = 0
        for r in range(1, min(t, rank) + 1):
            term = _multiply(_elementary(bundle, r, at, st), h[t - r], at, st)
            total = _add(total, term, 1 if r % 2 else -1, at, st)
        h.append(total)
    return h[j]


def _root(bundle: Tuple[str, int], a: int, at: Loc, st: _State) -> Value:
    kind, i = bundle
    if kind == "C":
        _in_range(a, 1, st.flag.n, f"x_{a}(C^n) needs 1 ≤ a ≤ n = {st.flag.n}", at)
        return _parameter("T", a, at, st)
    if kind != "S":
        fail(at, "x_a(…) takes S_i or C^n")
    _in_range(a, 1, st.flag.k(i), f"x_{a}(S_{i}) needs 1 ≤ a ≤ k_{i} = {st.flag.k(i)}", at)
    return _generator_with_meaning(Meaning("root", i, a), at, st)


# ---------------------------------------------------------------------------------------
# Arithmetic with limits

def _int_checked(value: int, at: Loc) -> int:
    if value.bit_length() > MAX_COEFFICIENT_BITS:
        fail(at, f"a number exceeds {MAX_COEFFICIENT_BITS} bits")
    return value


def _as_frac(value: Value, st: _State, at: Loc) -> Frac:
    if isinstance(value, Frac):
        return value
    ctx = _context(st, at)
    return Frac(ctx.constant(value), ctx.constant(1), value.bit_length())


def _rational(numerator: int, denominator: int, st: _State, at: Loc) -> Frac:
    ctx = _context(st, at)
    return Frac(ctx.constant(flint.fmpq(numerator, denominator)), ctx.constant(1),
                numerator.bit_length() + denominator.bit_length())


def _height(poly, st: Optional[_State] = None, at: Optional[Loc] = None) -> int:
    if st is not None:
        _spend(st, len(poly) * PYTHON_TERM_WORK, at)
    return max((int(c.p).bit_length() + int(c.q).bit_length() for c in poly.coeffs()), default=0)


def _keep(poly, at: Loc, st: _State) -> None:
    """Count a finished relation or unit against what one expansion may keep."""
    st.kept += len(poly) * (_height(poly, st, at) // 64 + st.term_weight)
    if st.kept > MAX_KEPT_WORDS:
        fail(at, f"the relations and units take more than {MAX_KEPT_WORDS} terms together "
                 "(a term counting once more per 64 bits of coefficient and per 64 variables)")


def _checked(value: Frac, at: Loc, st: Optional[_State] = None) -> Frac:
    for poly in (value.num, value.den):
        if len(poly) > MAX_TERMS:
            fail(at, f"expansion exceeds {MAX_TERMS} terms")
        if int(poly.total_degree()) > MAX_DEGREE:
            fail(at, f"degree exceeds {MAX_DEGREE}")
    if value.bits > MAX_COEFFICIENT_BITS:
        actual = max(_height(value.num, st, at), _height(value.den, st, at))
        if actual > MAX_COEFFICIENT_BITS:
            fail(at, f"coefficients exceed {MAX_COEFFICIENT_BITS} bits")
        value = replace(value, bits=actual)
    return value


def _work(a, b, at: Loc, st: Optional[_State] = None, bits: int = 0) -> None:
    if len(a) * len(b) > MAX_PRODUCT_WORK:
        fail(at, f"expansion too large: a product of {len(a)} by {len(b)} terms (at most "
                 f"{MAX_PRODUCT_WORK} term products per multiplication)")
    if st is not None:
        _spend(st, len(a) * len(b) * (1 + bits // 64) * st.term_weight, at)


def _spend(st: _State, amount: int, at: Loc) -> None:
    st.work += amount
    if st.work > MAX_TOTAL_WORK:
        fail(at, f"expanding the file takes too much arithmetic (more than {MAX_TOTAL_WORK} "
                 "weighted term operations for one flag type)")


def _negate(value: Value, at: Loc, st: _State) -> Value:
    if isinstance(value, int):
        return -value
    return Frac(-value.num, value.den, value.bits)


def _add(a: Value, b: Value, sign: int, at: Loc, st: _State) -> Value:
    if isinstance(a, int) and isinstance(b, int):
        return _int_checked(a + sign * b, at)
    a, b = _as_frac(a, st, at), _as_frac(b, st, at)
    _spend(st, (len(a.num) + len(b.num)) * st.term_weight + OPERATION_WORK, at)
    if a.den == b.den:
        num = a.num + b.num if sign > 0 else a.num - b.num
        return _checked(Frac(num, a.den, max(a.bits, b.bits) + 1), at, st)
    common = a.den.gcd(b.den)
    scale_a, scale_b = b.den / common, a.den / common
    _work(a.num, scale_a, at, st, a.bits)
    _work(b.num, scale_b, at, st, b.bits)
    num = a.num * scale_a + (b.num * scale_b if sign > 0 else -(b.num * scale_b))
    den = a.den * scale_a
    bound = _checked(Frac(num, den, 0), at, st)
    return replace(bound, bits=max(_height(num, st, at), _height(den, st, at)))


def _multiply(a: Value, b: Value, at: Loc, st: _State) -> Value:
    if isinstance(a, int) and isinstance(b, int):
        if a.bit_length() + b.bit_length() > MAX_COEFFICIENT_BITS + 1:
            fail(at, f"a number exceeds {MAX_COEFFICIENT_BITS} bits")
        return _int_checked(a * b, at)
    a, b = _as_frac(a, st, at), _as_frac(b, st, at)
    _spend(st, OPERATION_WORK, at)
    _work(a.num, b.num, at, st, a.bits + b.bits)
    if int(a.num.total_degree()) + int(b.num.total_degree()) > MAX_DEGREE:
        fail(at, f"degree exceeds {MAX_DEGREE}")
    num = a.num * b.num
    den = a.den if b.den.is_one() else b.den if a.den.is_one() else a.den * b.den
    bits = a.bits + b.bits + min(len(a.num), len(b.num)).bit_length()
    return _checked(Frac(num, den, bits), at, st)


def _divide(a: Value, b: Value, at: Loc, st: _State) -> Value:
    if isinstance(b, int):
        if b == 0:
            fail(at, "division by zero")
        if isinstance(a, int):
            return a // b if a % b == 0 else _rational(a, b, st, at)
        return _checked(Frac(a.num * flint.fmpq(1, b), a.den, a.bits + b.bit_length()), at, st)
    if b.num.is_zero():
        fail(at, "division by zero")
    a = _as_frac(a, st, at)
    if b.num.is_constant():
        c = b.num.leading_coefficient()
        bits = int(c.p).bit_length() + int(c.q).bit_length()
        return _multiply(a, Frac(b.den * (1 / c), st.ctx.constant(1), b.bits + bits), at, st)
    _require_unit(b.num, at, st)
    return _multiply(a, Frac(b.den, b.num, b.bits), at, st)


def _power(base: Value, exponent: int, at: Loc, st: _State) -> Value:
    if isinstance(base, int):
        if exponent < 0:
            if base == 0:
                fail(at, "division by zero")
            return _divide(1, _power(base, -exponent, at, st), at, st)
        if base not in (0, 1, -1) and (abs(base).bit_length() - 1) * exponent > MAX_COEFFICIENT_BITS:
            fail(at, f"a number exceeds {MAX_COEFFICIENT_BITS} bits")
        # bit_length − 1 only bounds the size from below (10^4300 passed it): check the result,
        # at most twice the limit, so that every integer stays printable
        return _int_checked(base ** exponent, at)
    if exponent == 0:
        return 1
    if exponent < 0:
        if base.num.is_zero():
            fail(at, "division by zero")
        base = _divide(1, base, at, st)
        exponent = -exponent
        if isinstance(base, int):
            return _power(base, exponent, at, st)
    degree = max(int(base.num.total_degree()), int(base.den.total_degree()))
    if degree * exponent > MAX_DEGREE:
        fail(at, f"degree exceeds {MAX_DEGREE}")
    result: Value = 1
    square: Value = base
    while True:
        if exponent & 1:
            result = _multiply(result, square, at, st)
        exponent >>= 1
        if not exponent:
            return result
        square = _multiply(square, square, at, st)


def _add_unit(poly, at: Loc, st: _State) -> None:
    """A declared unit: the variables dividing it are units, and so is the rest."""
    content = poly.term_content()
    for index, e in enumerate(content.monoms()[0]):
        if e:
            st.unit_vars.add(index)
    rest = poly / content
    if not rest.is_constant():
        st.unit_polys.append((rest, _height(rest, st, at) // 64))


def _require_unit(poly, at: Loc, st: _State) -> None:
    if poly.degrees()[st.y_index] > 0:
        fail(at, "division by an expression that contains y")
    if len(poly) > MAX_DIVISOR_TERMS:
        fail(at, f"division by a non-unit: a divisor of more than {MAX_DIVISOR_TERMS} terms is "
                 "not recognised as a unit")
    # the text of the divisor is the key of what is known: writing it costs about a tenth
    # of a pass in Python per term, and is paid at every division (a loop of divisions by one
    # 330-term unit took seconds uncounted)
    _spend(st, len(poly) * (PYTHON_TERM_WORK // 10), at)
    key = str(poly)
    if key not in st.unit_cache:
        st.unit_cache[key] = _non_unit_factor(poly, at, st)
    bad_factor = st.unit_cache[key]
    if bad_factor is not None:
        fail(at, f"division by a non-unit: the factor {bad_factor} is not among T_j, 1 - q_i, "
                 "the declared units (and their factors) and nonzero numbers")


def _non_unit_factor(poly, at: Loc, st: _State) -> Optional[str]:
    """None when `poly` is a unit, else a factor of it that is not one.

    Every irreducible factor of a unit divides T_j, 1 − q_i or a declared unit, so dividing
    out gcds with those until none is left ends in a number exactly for units.  Unlike a
    factorisation (which took seconds to minutes for some 400-term divisors of degree 60,
    and could not be stopped), a gcd is cheap and its cost is counted like a product."""
    content = poly.term_content()
    names = st.ctx.names()
    for index, e in enumerate(content.monoms()[0]):
        if e and index not in st.unit_vars:
            return names[index]
    rest = poly / content
    words = _height(rest, st, at) // 64
    for unit, unit_words in st.unit_polys:
        while not rest.is_constant():
            _spend(st, len(rest) * len(unit) * (1 + words + unit_words) * st.term_weight, at)
            common = rest.gcd(unit)
            if common.is_constant():
                break
            rest = rest / common
    if rest.is_constant():
        return None
    text = str(rest * (1 / rest.leading_coefficient()))
    return text if len(text) <= 80 else f"{text[:40]}… ({len(rest)} terms)"


# ---------------------------------------------------------------------------------------
# Into a caller's ring

class _PrimeDividesCoefficient(ValueError):
    pass


def written_integers(expanded: Expanded) -> Tuple[int, ...]:
    """Every numerator and denominator (above 1 in size) of a coefficient of the relations
    and units: a prime dividing one of them would drop a term or a whole relation mod p."""
    out = set()
    for poly in [p for _, p in expanded.relations] + list(expanded.units):
        for c in poly.coeffs():
            out.update(x for x in (abs(int(c.p)), int(c.q)) if x > 1)
    return tuple(sorted(out))


def transport(poly, expanded: Expanded, ring) -> object:
    """The image of a canonical polynomial (without y) in `ring` (a compare.algebra.Ring).
    Mod a prime dividing a coefficient's numerator or denominator this refuses, rather than
    give a polynomial that silently lost terms (the engine picks primes that avoid
    `written_integers`; this is the guard for every other route)."""
    try:
        return _transport(poly, expanded, ring)
    except _PrimeDividesCoefficient as error:
        raise PresentationFileError(f"{error}; choose another prime", expanded.file) from None


def _transport(poly, expanded: Expanded, ring) -> object:
    values = [ring.gen[g.name] for g in expanded.generators] + list(ring.T) + list(ring.q) + \
             [ring.zero]
    ctx = ring.ctx
    if isinstance(ctx, flint.nmod_mpoly_ctx):
        images = _monomial_images(values)
        if images is not None:
            return _substitute_monomials(poly, images, ctx, ctx.modulus())
        p = ctx.modulus()
        mod_ctx = flint.nmod_mpoly_ctx.get(expanded.ctx.names(), p, "degrevlex")
        reduced = mod_ctx.from_dict({e: _residue(c, p) for e, c in zip(poly.monoms(), poly.coeffs())})
        return reduced.compose(*values, ctx=ctx)
    if isinstance(ctx, flint.fmpq_mpoly_ctx):
        images = _monomial_images(values)
        if images is not None:
            return _substitute_monomials(poly, images, ctx, None)
        return poly.compose(*values, ctx=ctx)
    total = ring.zero
    for exponents, c in zip(poly.monoms(), poly.coeffs()):
        term = ring.const(int(c.p)) * _inverse_constant(ring, int(c.q))
        for value, e in zip(values, exponents):
            if e:
                term = term * value ** int(e)
        total = total + term
    return total


def _monomial_images(values) -> Optional[list]:
    """(coefficient, [(variable, exponent), …]) for each value, None for zero — or None when
    some value is not a single term (then the general composition is used)."""
    images = []
    for v in values:
        if v.is_zero():
            images.append(None)
        elif len(v) == 1:
            exponents = v.monoms()[0]
            images.append((v.coeffs()[0], [(t, x) for t, x in enumerate(exponents) if x]))
        else:
            return None
    return images


def _substitute_monomials(poly, images: list, ctx, p: Optional[int]):
    """Every variable goes to a constant times a monomial (generators to generators, T and
    q to residues, variables or c·s): a term-by-term rewrite, much faster than FLINT's general
    composition.  Coefficients are ints mod p, or fmpq when p is None."""
    nvars = ctx.nvars()
    factors = [None if image is None else (int(image[0]) if p is not None else image[0])
               for image in images]
    out: dict = {}
    for exponents, c in zip(poly.monoms(), poly.coeffs()):
        coefficient = _residue(c, p) if p is not None else c
        target = [0] * nvars
        for k, e in enumerate(exponents):
            if not e:
                continue
            factor = factors[k]
            if factor is None:
                break
            if factor != 1:
                coefficient = coefficient * (factor if e == 1 else factor ** e)
                if p is not None:
                    coefficient %= p
            for t, x in images[k][1]:
                target[t] += x * e
        else:
            key = tuple(target)
            out[key] = out.get(key, 0) + coefficient
    return ctx.from_dict({k: v for k, v in out.items() if v})


def _residue(c, p: int) -> int:
    numerator = int(c.p) % p
    if numerator == 0 and c != 0:
        raise _PrimeDividesCoefficient(f"the coefficient {c} is divisible by the prime {p}")
    if c.q == 1:
        return numerator
    denominator = int(c.q) % p
    if denominator == 0:
        raise _PrimeDividesCoefficient(f"the denominator of the coefficient {c} is divisible by "
                                       f"the prime {p}")
    return numerator * pow(denominator, -1, p) % p


def _inverse_constant(ring, q: int):
    return ring.one if q == 1 else ring.const(flint.fmpq(1, q))
