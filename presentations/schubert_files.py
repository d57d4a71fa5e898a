"""User-supplied Schubert bases: a `[schubert]` table in a TOML file.

The table may stand alone in its own file or sit in a presentation file next to the
presentation (whose loader leaves it alone).  Three forms, which may be combined:

    [schubert]
    name = "my-basis"                  # optional; default: the file name
    grothendieck = "S:1-x"             # a built-in candidate for every Grassmannian (a family)

    [[schubert.case]]                  # one polynomial per Schubert label, for one case
    case = "Gr(2,4)"
    classes = { "[]" = "1", "[1]" = "1 - S1_2", "[2]" = "...", ... }

    [[schubert.family]]                # written once, expanded for every case it applies to
    applies_to = "projective"
    classes = [ { for = "a = 0..n-1", label = "[{a}]", expr = "(1 - lambda_1(S_1))^a" } ]

Per-case polynomials use the generator names of the presentation they are evaluated in (e.g.
S1_1, Q1_2 for whitney), integers, + - * ( ) and ^ (or **) with a non-negative integer
exponent; family classes use the expression language of presentation files (loops, holes,
λ-classes by meaning: docs/presentation-files.md, docs/schubert-bases.md).  Everything is
parsed, never evaluated as code.  A per-case entry wins over a family, a family over
`grothendieck`.
"""
from __future__ import annotations

import os
import re
import tomllib
from dataclasses import dataclass
from typing import Dict, List, Optional, Sequence, Tuple

from .flagtype import FlagType, FlagTypeError, parse_flag
from .interface import Generator
from .userfile.container import read_schubert_families
from .userfile.expand import applies, expand_classes
from .userfile.syntax import fail
from . import schubert_bases as sb
from .schubert_bases import SchubertInputError

MAX_FILE_BYTES = 1 << 20
MAX_EXPONENT = 64
MAX_TERMS = 20000

Monomial = Tuple[Tuple[str, int], ...]
Polynomial = Dict[Monomial, int]


@dataclass(frozen=True)
class FileBasis:
    name: str
    labels: Tuple[Tuple[int, ...], ...] = ()
    polynomials: Tuple[Polynomial, ...] = ()
    candidate: Optional[sb.Candidate] = None
    source: str = ""
    classical: Optional[Dict[Tuple[Tuple[int, ...], Tuple[int, ...]], Dict[Tuple[int, ...], int]]] = None


def has_schubert_table(path: str) -> bool:
    try:
        return "schubert" in _read(path)[0]
    except SchubertInputError:
        return False


def _text(path: str) -> str:
    try:
        with open(path, "rb") as handle:
            raw = handle.read(MAX_FILE_BYTES + 1)
    except OSError as error:
        raise SchubertInputError(f"{path}: {error.strerror or error}") from None
    if len(raw) > MAX_FILE_BYTES:
        raise SchubertInputError(f"{path}: file larger than {MAX_FILE_BYTES} bytes")
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError:
        raise SchubertInputError(f"{path}: not UTF-8 text") from None


def _read(path: str) -> Tuple[dict, str]:
    """The file parsed, and its text."""
    text = _text(path)
    try:
        return tomllib.loads(text), text
    except tomllib.TOMLDecodeError as error:
        raise SchubertInputError(f"{path}: not valid TOML: {error}") from None
    except (RecursionError, ValueError):
        raise SchubertInputError(f"{path}: not readable as TOML (nested too deeply, or an "
                                 "integer too long)") from None


_KEYS = ("name", "description", "grothendieck", "case", "family")
_CASE_KEYS = ("case", "classes", "classical")
_PRODUCT_KEYS = ("u", "v", "product")


def load_basis(path: str, flag: FlagType, generators: Sequence[Generator] = ()) -> FileBasis:
    """The basis the file gives for `flag`: a [[schubert.case]] for it, else the first
    [[schubert.family]] that applies to it (expanded against the presentation's
    `generators`), else the `grothendieck` candidate.  One-line errors naming the file and
    the key (file:line:col inside a family)."""
    data, text = _read(path)
    table = data.get("schubert")
    if not isinstance(table, dict):
        raise SchubertInputError(f"{path}: no [schubert] table")
    for key in table:
        if key not in _KEYS:
            raise SchubertInputError(f"{path}: unknown key {key!r} in [schubert] (expected one "
                                     f"of {', '.join(_KEYS)})")
    name = table.get("name", os.path.splitext(os.path.basename(path))[0])
    if not isinstance(name, str) or not name:
        raise SchubertInputError(f"{path}: [schubert] name must be a non-empty string")
    cases = table.get("case", [])
    if not isinstance(cases, list):
        raise SchubertInputError(f"{path}: write the per-case bases as [[schubert.case]] tables")
    for number, entry in enumerate(cases, start=1):
        where = f"{path}: [[schubert.case]] number {number}"
        if not isinstance(entry, dict):
            raise SchubertInputError(f"{where} is not a table")
        for key in entry:
            if key not in _CASE_KEYS:
                raise SchubertInputError(f"{where}: unknown key {key!r} (expected "
                                         f"{', '.join(_CASE_KEYS)})")
        try:
            entry_flag = parse_flag(str(entry.get("case", "")))
        except FlagTypeError as error:
            raise SchubertInputError(f"{where}: {error}") from None
        if entry_flag != flag:
            continue
        classes = entry.get("classes")
        if not isinstance(classes, dict) or not classes:
            raise SchubertInputError(f"{where}: classes must be a table of label = polynomial")
        labels, polys = [], []
        for label_text, text in classes.items():
            if not isinstance(text, str):
                raise SchubertInputError(f"{where}, {label_text}: the polynomial must be a string")
            labels.append(sb.parse_label(label_text))
            try:
                polys.append(parse_polynomial(text))
            except SchubertInputError as error:
                raise SchubertInputError(f"{where}, {label_text}: {error}") from None
        classical = _classical_products(entry.get("classical", []), labels, where)
        return FileBasis(name, tuple(labels), tuple(polys), source=path,
                         classical=classical or None)
    if "family" in table:
        basis = _family_basis(path, text, table["family"], name, flag, generators)
        if basis is not None:
            return basis
    if "grothendieck" in table:
        spec = table["grothendieck"]
        candidate = sb.candidate_named(f"groth:{spec}") if isinstance(spec, str) else None
        if candidate is None:
            raise SchubertInputError(f"{path}: grothendieck must be a string such as \"S:1-x\"")
        return FileBasis(name, candidate=candidate, source=path)
    raise SchubertInputError(f"{path}: no Schubert basis for {flag.name} (neither a "
                             "[[schubert.case]] for it, nor a [[schubert.family]] that applies "
                             "to it, nor a grothendieck family)")


def _family_basis(path: str, text: str, raw, name: str, flag: FlagType,
                  generators: Sequence[Generator]) -> Optional[FileBasis]:
    """The first [[schubert.family]] of the file that applies to flag, expanded; None when
    none applies."""
    families = read_schubert_families(raw, text, path)
    family = next((f for f in families if applies(f.applies_to, flag)), None)
    if family is None:
        return None
    if not generators:
        fail(family.at, "a [[schubert.family]] is written in a presentation's generators; "
                        "none was given")
    labels, polys, seen = [], [], {}
    for text, at, polynomial in expand_classes(family, flag, generators):
        try:
            label = sb.parse_label(text)
        except SchubertInputError as error:
            fail(at, str(error))
        if label in seen:
            spelled = "" if seen[label] == text else f" (written {seen[label]!r} and {text!r})"
            fail(at, f"two classes have the label {sb.label_text(label)}{spelled}")
        seen[label] = text
        labels.append(label)
        polys.append(polynomial)
    return FileBasis(name, tuple(labels), tuple(polys), source=path)


def _classical_products(entries, labels, where: str) -> dict:
    """[[schubert.case.classical]] u = [1], v = [1], product = { "[2]" = 1, … }: the
    products at q = 0 that the basis' definition gives (all coefficients of each listed
    product; a label not named has coefficient 0)."""
    if not isinstance(entries, list):
        raise SchubertInputError(f"{where}: write stated products as [[schubert.case.classical]]")
    out = {}
    for number, entry in enumerate(entries, start=1):
        here = f"{where}, classical product number {number}"
        if not isinstance(entry, dict) or set(entry) - set(_PRODUCT_KEYS) or \
                not isinstance(entry.get("product"), dict):
            raise SchubertInputError(f"{here}: expected u = [..], v = [..], product = {{ label = "
                                     "integer, … }")
        try:
            u, v = (tuple(int(x) for x in entry[key] if x) for key in ("u", "v"))
        except (KeyError, TypeError, ValueError):
            raise SchubertInputError(f"{here}: u and v must be lists of integers") from None
        product = {}
        for label_text, c in entry["product"].items():
            if not isinstance(c, int) or isinstance(c, bool):
                raise SchubertInputError(f"{here}: coefficient of {label_text} is not an integer")
            product[sb.parse_label(label_text)] = c
        for label in (u, v, *product):
            if label not in labels:
                raise SchubertInputError(f"{here}: {sb.label_text(label)} is not a label of the "
                                         "basis")
        out[(u, v)] = product
    return out


# ---------------------------------------------------------------------------------------
# Polynomials: a small recursive-descent parser over integer polynomials

_TOKEN = re.compile(r"\s*(?:(\d+)|([A-Za-z_][A-Za-z0-9_]*)|(\*\*|[-+*^()]))")


def _tokens(text: str) -> List[Tuple[str, str, int]]:
    out, position = [], 0
    text = text.rstrip()
    while position < len(text):
        match = _TOKEN.match(text, position)
        if not match:
            column = len(text) - len(text[position:].lstrip()) + 1
            raise SchubertInputError(f"unexpected character {text[column - 1]!r} at column "
                                     f"{column}")
        kind = "int" if match.group(1) else "name" if match.group(2) else "op"
        value = match.group(1) or match.group(2) or match.group(3)
        out.append((kind, "^" if value == "**" else value, match.start(match.lastindex) + 1))
        position = match.end()
    return out


def parse_polynomial(text: str) -> Polynomial:
    tokens = _tokens(text)
    if not tokens:
        raise SchubertInputError("empty polynomial")
    cursor = [0]

    def peek():
        return tokens[cursor[0]] if cursor[0] < len(tokens) else ("end", "", len(text) + 1)

    def take():
        token = peek()
        cursor[0] += 1
        return token

    def total() -> Polynomial:
        value = product()
        while peek()[1] in ("+", "-") and peek()[0] == "op":
            sign = take()[1]
            right = product()
            value = _add(value, right if sign == "+" else _scale(right, -1))
        return value

    def product() -> Polynomial:
        value = signed()
        while peek() == ("op", "*", peek()[2]):
            take()
            value = _mul(value, signed())
        return value

    def signed() -> Polynomial:
        if peek()[0] == "op" and peek()[1] in ("+", "-"):
            sign = take()[1]
            value = signed()
            return value if sign == "+" else _scale(value, -1)
        return power()

    def power() -> Polynomial:
        base = atom()
        if peek()[0] == "op" and peek()[1] == "^":
            take()
            kind, value, column = take()
            if kind != "int":
                raise SchubertInputError(f"expected a non-negative integer exponent at column "
                                         f"{column}")
            exponent = int(value)
            if exponent > MAX_EXPONENT:
                raise SchubertInputError(f"exponent {exponent} above {MAX_EXPONENT} at column "
                                         f"{column}")
            result: Polynomial = {(): 1}
            for _ in range(exponent):
                result = _mul(result, base)
            return result
        return base

    def atom() -> Polynomial:
        kind, value, column = take()
        if kind == "int":
            return {(): int(value)} if int(value) else {}
        if kind == "name":
            return {((value, 1),): 1}
        if value == "(":
            inner = total()
            if take()[1] != ")":
                raise SchubertInputError(f"missing ')' for the '(' at column {column}")
            return inner
        found = "the end" if kind == "end" else repr(value)
        raise SchubertInputError(f"expected a number, a generator or '(' at column {column}, "
                                 f"found {found}")

    result = total()
    if peek()[0] != "end":
        kind, value, column = peek()
        raise SchubertInputError(f"unexpected {value!r} at column {column}")
    return result


def _add(a: Polynomial, b: Polynomial) -> Polynomial:
    out = dict(a)
    for mono, c in b.items():
        value = out.get(mono, 0) + c
        if value:
            out[mono] = value
        else:
            out.pop(mono, None)
    return out


def _scale(a: Polynomial, c: int) -> Polynomial:
    return {mono: c * v for mono, v in a.items()} if c else {}


def _mul(a: Polynomial, b: Polynomial) -> Polynomial:
    out: Polynomial = {}
    for ma, ca in a.items():
        for mb, cb in b.items():
            powers: Dict[str, int] = dict(ma)
            for name, e in mb:
                powers[name] = powers.get(name, 0) + e
            mono = tuple(sorted(powers.items()))
            value = out.get(mono, 0) + ca * cb
            if value:
                out[mono] = value
            else:
                out.pop(mono, None)
    if len(out) > MAX_TERMS:
        raise SchubertInputError(f"more than {MAX_TERMS} terms after expansion")
    return out
