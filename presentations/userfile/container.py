"""Presentation files, part 2: the TOML container.

Reads the file (size-limited), parses TOML with the standard library, checks the keys and
types of every table, and parses each string field with the expression grammar of
`syntax`.  The result is a `FileSpec`: plain records, independent of any flag type.

TOML parsers do not report where a value came from, so `StringLocator` re-scans the file for
its string literals (decoding escapes itself) and hands out, for each string value, the file
offset of each of its characters; errors inside an expression then point at the exact line
and column in the file.
"""
from __future__ import annotations

import bisect
import re
import sys
from dataclasses import dataclass
from typing import Dict, List, Optional, Tuple, Union

if sys.version_info >= (3, 11):
    import tomllib
else:                                              # pragma: no cover - older Pythons
    import tomli as tomllib

from ..flagtype import FlagType, FlagTypeError, parse_flag
from .syntax import (Binding, LineIndex, Loc, Node, PresentationFileError, SourceText,
                              Template, fail, parse_bindings, parse_expression, parse_meaning,
                              parse_relation, parse_single_binding, parse_template)

MAX_FILE_BYTES = 256 * 1024
MAX_GROUP_DEPTH = 6
MAX_PARAMETERS = 8
MAX_PARAMETER_VALUES = 1000      # values one parameter may take
MAX_PARAMETER_MAGNITUDE = 10**6  # |value| of a parameter
FORMAT_VERSION = 1
NAME_PATTERN = re.compile(r"[A-Za-z][A-Za-z0-9_.+-]{0,63}")
APPLIES_TO_WORDS = ("all", "grassmannians", "projective", "complete")


# ---------------------------------------------------------------------------------------
# Records

@dataclass(frozen=True)
class GeneratorDecl:
    name: Template
    meaning: Node
    weight: Union[int, Node]
    weight_at: Loc


@dataclass(frozen=True)
class RelationDecl:
    expr: Node
    coefficients: Optional[Binding]
    label: Optional[Template]


@dataclass(frozen=True)
class UnitDecl:
    expr: Node


@dataclass(frozen=True)
class ClassDecl:
    """One Schubert class of a family basis: its label (a template such as "[{a}]") and the
    polynomial (an expression in the presentation's generators)."""
    label: Template
    expr: Node


Decl = Union[GeneratorDecl, RelationDecl, UnitDecl, ClassDecl]


@dataclass(frozen=True)
class SchubertFamily:
    """A [[schubert.family]] table: Schubert classes written once for every flag type it
    applies to, with the loops and holes of presentation files."""
    applies_to: Tuple[str, ...]
    classes: Tuple["Entry", ...]
    at: Loc


@dataclass(frozen=True)
class ParameterDecl:
    """An integer the file leaves open: its allowed values, in the order declared."""
    name: str
    values: Tuple[int, ...]
    default: Optional[int]
    per_step: bool             # a_i for each step i, rather than one a
    at: Loc

    def describe_values(self) -> str:
        v = self.values
        if len(v) > 2 and list(v) == list(range(v[0], v[-1] + 1)):
            return f"{v[0]}..{v[-1]}"
        return ", ".join(map(str, v))


@dataclass(frozen=True)
class Entry:
    """One table of `generators`, `relations` or `units`: loops, then a declaration or a group."""
    loops: Tuple[Binding, ...]
    decl: Optional[Decl]
    group: Tuple["Entry", ...]
    at: Loc


@dataclass(frozen=True)
class FileSpec:
    file: str
    flavour: str                   # "case" or "family"
    name: str
    description: str
    case: Optional[FlagType]       # case files
    applies_to: Tuple[str, ...]    # family files: words of APPLIES_TO_WORDS or flag names
    expected_colength: Optional[Union[int, Node]]
    generators: Tuple[Entry, ...]
    relations: Tuple[Entry, ...]
    units: Tuple[Entry, ...]
    at: Dict[str, Loc]             # where each top-level key is, for errors about it
    parameters: Tuple[ParameterDecl, ...] = ()


# ---------------------------------------------------------------------------------------
# Locating string values in the file

_ESCAPES = {"b": "\b", "t": "\t", "n": "\n", "f": "\f", "r": "\r", '"': '"', "\\": "\\"}


@dataclass
class StringLocator:
    file: str
    text: str
    lines: LineIndex
    literals: List[Tuple[str, Tuple[int, ...], int]]   # decoded value, offset of each char,
                                                       # offset where the content starts
    used: List[bool]
    whole: SourceText
    # value -> indices of the literals with it, and how many of those are used: a lookup is
    # then constant time (a file of many identical strings must not parse in quadratic time)
    by_value: Dict[str, List[int]] = None
    next_unused: Dict[str, int] = None
    # where each table opens ('[[' or '{'), and where each key searched for so far stands
    # followed by '=': sorted offsets, searched by bisection (not by scanning the text again
    # for every entry, which made many entries parse in quadratic time)
    openings: Tuple[List[int], List[int]] = None
    key_offsets: Dict[str, List[int]] = None

    @staticmethod
    def scan(file: str, text: str) -> "StringLocator":
        literals = _scan_strings(text)
        lines = LineIndex.of(text)
        whole = SourceText(file, text, lines)
        by_value: Dict[str, List[int]] = {}
        for index, (decoded, _, _) in enumerate(literals):
            by_value.setdefault(decoded, []).append(index)
        openings = ([m.start() for m in re.finditer(r"(?=\[\[)", text)],
                    [m.start() for m in re.finditer(r"\{", text)])
        return StringLocator(file, text, lines, literals, [False] * len(literals), whole,
                             by_value, {}, openings, {})

    def _first_unused(self, value: str) -> Optional[int]:
        indices = self.by_value.get(value)
        if not indices:
            return None
        position = self.next_unused.get(value, 0)
        return indices[position] if position < len(indices) else None

    def source(self, value: str, fallback: Loc) -> SourceText:
        """The first unused literal with this decoded value; else positions at `fallback`."""
        index = self._first_unused(value)
        if index is not None:
            self.used[index] = True
            self.next_unused[value] = self.next_unused.get(value, 0) + 1
            decoded, offsets, start = self.literals[index]
            return SourceText(self.file, value, self.lines, offsets, self.lines.line_col(start))
        return SourceText(self.file, value, None, None, fallback.source.where(fallback.offset))

    def table_start(self, item: dict) -> Optional[int]:
        """Where the table holding `item` starts ('[[' or '{'), found from its first string
        value (TOML keeps the keys of a table in file order)."""
        for value in item.values():
            if isinstance(value, str):
                index = self._first_unused(value)
                if index is None:
                    return None
                start = self.literals[index][2]
                # the last '[[' or '{' that ends before the value
                brackets, braces = self.openings
                last = bisect.bisect_right(brackets, start - 2)
                last_brace = bisect.bisect_right(braces, start - 1)
                return max(brackets[last - 1] if last else -1,
                           braces[last_brace - 1] if last_brace else -1)
        return None

    def key_in_table(self, key: str, start: Optional[int], fallback: Loc) -> Loc:
        if start is None or start < 0:
            return fallback
        offsets = self.key_offsets.get(key)
        if offsets is None:
            pattern = re.compile(rf"(?<![A-Za-z0-9_\-\"']){re.escape(key)}[ \t]*=")
            offsets = self.key_offsets[key] = [m.start() for m in pattern.finditer(self.text)]
        index = bisect.bisect_left(offsets, start)
        return Loc(self.whole, offsets[index]) if index < len(offsets) else fallback

    def key(self, path: str) -> Loc:
        """Where a key (the last part of a dotted path) or table header first appears."""
        last = path.split(".")[-1]
        if not last:
            return Loc(self.whole, 0)
        pattern = re.compile(rf"^[ \t]*(\[\[?[ \t]*)?({re.escape(last)})[ \t]*[\]=.]",
                             re.MULTILINE)
        match = pattern.search(self.text)
        return Loc(self.whole, match.start(2) if match else 0)


def _scan_strings(text: str) -> List[Tuple[str, Tuple[int, ...], int]]:
    """All string literals of a TOML text, decoded, with the file offset of every character.

    A best-effort scanner: where it disagrees with the real parser the only consequence is a
    less precise error position."""
    out = []
    i, size = 0, len(text)
    while i < size:
        char = text[i]
        if char == "#":
            end = text.find("\n", i)
            i = size if end < 0 else end
            continue
        if char not in "\"'":
            i += 1
            continue
        delimiter = char * 3 if text.startswith(char * 3, i) else char
        start = i + len(delimiter)
        if len(delimiter) == 3 and text.startswith("\r\n", start):
            start += 2
        elif len(delimiter) == 3 and text.startswith("\n", start):
            start += 1
        decoded, offsets, i = _read_string(text, start, delimiter)
        out.append(("".join(decoded), tuple(offsets), start))
    return out


def _read_string(text: str, i: int, delimiter: str):
    decoded: List[str] = []
    offsets: List[int] = []
    basic = delimiter[0] == '"'
    multiline = len(delimiter) == 3
    size = len(text)
    while i < size:
        if text.startswith(delimiter, i):
            if multiline:                  # up to two quotes may precede the closing three
                extra = 0
                while extra < 2 and text.startswith(delimiter[0], i + 3 + extra):
                    extra += 1
                for _ in range(extra):
                    decoded.append(delimiter[0])
                    offsets.append(i)
                    i += 1
            return decoded, offsets, i + len(delimiter)
        char = text[i]
        if char == "\n" and not multiline:
            return decoded, offsets, i
        if basic and char == "\\":
            nxt = text[i + 1:i + 2]
            if nxt in _ESCAPES:
                decoded.append(_ESCAPES[nxt])
                offsets.append(i)
                i += 2
                continue
            if nxt in ("u", "U"):
                width = 4 if nxt == "u" else 8
                try:
                    decoded.append(chr(int(text[i + 2:i + 2 + width], 16)))
                except (ValueError, OverflowError):
                    decoded.append("\ufffd")
                offsets.append(i)
                i += 2 + width
                continue
            if multiline:                  # line-ending backslash: drop the following space
                j = i + 1
                while j < size and text[j] in " \t":
                    j += 1
                if j < size and text[j] in "\r\n":
                    while j < size and text[j] in " \t\r\n":
                        j += 1
                    i = j
                    continue
        if char == "\r" and text.startswith("\r\n", i):
            i += 1
            continue
        decoded.append(char)
        offsets.append(i)
        i += 1
    return decoded, offsets, i


# ---------------------------------------------------------------------------------------
# Reading

def read_file(path: str) -> FileSpec:
    label = str(path)
    try:
        with open(path, "rb") as handle:
            raw = handle.read(MAX_FILE_BYTES + 1)
    except OSError as error:
        raise PresentationFileError(f"cannot read the file: {error.strerror or error}", label)
    return read_bytes(raw, label)


def read_bytes(raw: bytes, label: str) -> FileSpec:
    if len(raw) > MAX_FILE_BYTES:
        raise PresentationFileError(f"file larger than {MAX_FILE_BYTES} bytes", label)
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as error:
        line = raw[:error.start].count(b"\n") + 1
        column = error.start - (raw.rfind(b"\n", 0, error.start) + 1) + 1
        raise PresentationFileError("not UTF-8 text", label, line, column) from None
    return read_text(text, label)


def read_text(text: str, label: str = "<text>") -> FileSpec:
    if len(text.encode("utf-8", "surrogatepass")) > MAX_FILE_BYTES:
        raise PresentationFileError(f"file larger than {MAX_FILE_BYTES} bytes", label)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise _toml_error(error, text, label) from None
    except RecursionError:
        raise PresentationFileError("TOML nested too deeply", label) from None
    except ValueError:
        # Python refuses to convert integers of more than 4300 digits (and the TOML parser
        # lets that through); name where the literal is.
        raise _long_integer_error(text, label) from None
    return _read_spec(data, StringLocator.scan(label, text))


MAX_TOML_INTEGER_DIGITS = 40


def _long_integer_error(text: str, label: str) -> PresentationFileError:
    match = re.search(r"[0-9_]{%d,}" % (MAX_TOML_INTEGER_DIGITS + 1), text)
    offset = match.start() if match else 0
    line, column = LineIndex.of(text).line_col(offset)
    return PresentationFileError(f"integer with more than {MAX_TOML_INTEGER_DIGITS} digits",
                                 label, line, column)


def _toml_error(error: Exception, text: str, label: str) -> PresentationFileError:
    message = str(error)
    match = re.search(r"\s*\(at line (\d+), column (\d+)\)\s*$", message)
    if match:
        return PresentationFileError(f"not valid TOML: {message[:match.start()]}", label,
                                     int(match.group(1)), int(match.group(2)))
    match = re.search(r"\s*\(at end of document\)\s*$", message)
    if match:
        lines = LineIndex.of(text)
        line, column = lines.line_col(len(text))
        return PresentationFileError(f"not valid TOML: {message[:match.start()]}", label,
                                     line, column)
    return PresentationFileError(f"not valid TOML: {message}", label)


# "schubert": a Schubert basis beside the presentation, read by presentations/schubert_files.py.
_TOP_KEYS = {
    "case": ("format", "flavour", "name", "description", "case", "expected_colength",
             "parameters", "generators", "relations", "units", "schubert"),
    "family": ("format", "flavour", "name", "description", "applies_to", "expected_colength",
               "parameters", "generators", "relations", "units", "schubert"),
}
_PARAMETER_KEYS = ("name", "values", "default", "per_step")
_ENTRY_KEYS = {
    "generators": ("for", "name", "meaning", "weight", "group"),
    "relations": ("for", "coefficients", "label", "expr", "group"),
    "units": ("for", "expr", "group"),
    "classes": ("for", "label", "expr", "group"),
}


def _read_spec(data: dict, locator: StringLocator) -> FileSpec:
    top = locator.key("")
    flavour = data.get("flavour")
    if flavour is None and set(data) == {"schubert"}:
        fail(top, "this file holds only a Schubert basis ([schubert] table), not a "
                  "presentation: give it to `ringmatch schubert --basis`")
    if flavour is None:
        fail(top, "missing key 'flavour' (\"case\" or \"family\")")
    if flavour not in _TOP_KEYS:
        fail(locator.key("flavour"), f"flavour must be \"case\" or \"family\", got {flavour!r}")
    for key in data:
        if key not in _TOP_KEYS[flavour]:
            fail(locator.key(key), f"unknown key {key!r} in a {flavour} file (expected one of "
                                   f"{', '.join(_TOP_KEYS[flavour])})")
    version = data.get("format", FORMAT_VERSION)
    if version != FORMAT_VERSION or isinstance(version, bool):
        fail(locator.key("format"), f"format must be {FORMAT_VERSION}, got {version!r}")
    name = _required_string(data, "name", locator)
    if not NAME_PATTERN.fullmatch(name) or name.endswith(".toml"):
        fail(locator.key("name"), f"name {name!r} must start with a letter and use only "
                                  "letters, digits and _ . + - (at most 64 characters)")
    description = data.get("description", "")
    if not isinstance(description, str) or "\n" in description.strip():
        fail(locator.key("description"), "description must be a one-line string")
    case, applies_to = None, ()
    if flavour == "case":
        case_text = _required_string(data, "case", locator)
        try:
            case = parse_flag(case_text)
        except FlagTypeError as error:
            fail(locator.key("case"), str(error))
    else:
        applies_to = _applies_to(data, locator)
    parameters = _parameters(data.get("parameters", []), locator)
    colength = data.get("expected_colength")
    if colength is not None:
        colength = _integer_or_expression(colength, "expected_colength", locator,
                                          locator.key("expected_colength"))
    sections = {}
    for section in ("generators", "relations", "units"):
        sections[section] = _entries(data.get(section, []), section, locator,
                                     locator.key(section), 0)
    if not sections["generators"]:
        fail(locator.key("generators") if "generators" in data else top,
             "no generators declared ([[generators]] tables)")
    if not sections["relations"]:
        fail(locator.key("relations") if "relations" in data else top,
             "empty relation list ([[relations]] tables)")
    at = {key: locator.key(key) for key in data}
    at[""] = top
    return FileSpec(locator.file, flavour, name, description.strip(), case, applies_to, colength,
                    sections["generators"], sections["relations"], sections["units"], at,
                    parameters)


_PARAMETER_NAME = re.compile(r"[A-Za-z][A-Za-z0-9]{0,31}")
_RANGE = re.compile(r"\s*([+-]?[0-9]{1,40})\s*\.\.\s*([+-]?[0-9]{1,40})\s*")


def _parameters(raw, locator: StringLocator) -> Tuple[ParameterDecl, ...]:
    from .syntax import RESERVED
    at = locator.key("parameters")
    if isinstance(raw, dict):
        raw = [raw]
    if not isinstance(raw, list):
        fail(at, "parameters must be a list of tables ([[parameters]])")
    if len(raw) > MAX_PARAMETERS:
        fail(at, f"more than {MAX_PARAMETERS} parameters")
    out: List[ParameterDecl] = []
    for item in raw:
        if not isinstance(item, dict):
            fail(at, "each entry of parameters must be a table with name, values, default")
        start = locator.table_start(item)
        where = Loc(locator.whole, start) if start is not None and start >= 0 else at
        for key in item:
            if key not in _PARAMETER_KEYS:
                fail(locator.key_in_table(key, start, where), f"unknown key {key!r} in "
                     f"parameters (expected one of {', '.join(_PARAMETER_KEYS)})")
        name = item.get("name")
        if not isinstance(name, str):
            fail(where, "a parameter needs a name (a string)")
        name_at = locator.source(name, where)
        if not _PARAMETER_NAME.fullmatch(name):
            fail(Loc(name_at, 0), f"parameter name {name!r} must be a letter followed by "
                                  "letters and digits (at most 32 characters)")
        if name in RESERVED or re.fullmatch(r"[Tq][0-9]+", name):
            fail(Loc(name_at, 0), f"parameter name {name!r} is reserved for a built-in symbol")
        if any(p.name == name for p in out):
            fail(Loc(name_at, 0), f"parameter {name!r} is declared twice")
        values_at = locator.key_in_table("values", start, where)
        values = _parameter_values(item.get("values"), name, values_at, locator)
        default = item.get("default")
        default_at = locator.key_in_table("default", start, where)
        if default is not None:
            if isinstance(default, bool) or not isinstance(default, int):
                fail(default_at, f"the default of {name} must be an integer")
            if default not in values:
                fail(default_at, f"the default {default} of {name} is not among its values "
                                 f"{_shown(values)}")
        per_step = item.get("per_step", False)
        if not isinstance(per_step, bool):
            fail(locator.key_in_table("per_step", start, where), "per_step must be true or false")
        out.append(ParameterDecl(name, values, default, per_step, Loc(name_at, 0)))
    return tuple(out)


def _shown(values: Tuple[int, ...]) -> str:
    return ParameterDecl("", values, None, False, None).describe_values()


def _parameter_values(raw, name: str, at: Loc, locator: StringLocator) -> Tuple[int, ...]:
    if raw is None:
        fail(at, f"parameter {name} needs values: a range \"low..high\" or a list of integers")
    if isinstance(raw, str):
        match = _RANGE.fullmatch(raw)
        if not match:
            fail(at, f"values of {name}: expected a range such as \"-3..3\" or a list of "
                     f"integers, got {raw!r}")
        low, high = int(match.group(1)), int(match.group(2))
        for bound in (low, high):
            if abs(bound) > MAX_PARAMETER_MAGNITUDE:
                fail(at, f"values of {name}: {bound} is larger than {MAX_PARAMETER_MAGNITUDE} "
                         "in absolute value")
        if high < low:
            fail(at, f"values of {name}: empty range {low}..{high}")
        if high - low + 1 > MAX_PARAMETER_VALUES:
            fail(at, f"values of {name}: {high - low + 1} values, more than the limit "
                     f"{MAX_PARAMETER_VALUES}")
        return tuple(range(low, high + 1))
    if not isinstance(raw, list) or not raw:
        fail(at, f"values of {name} must be a range \"low..high\" or a non-empty list of "
                 "integers")
    if len(raw) > MAX_PARAMETER_VALUES:
        fail(at, f"values of {name}: {len(raw)} values, more than the limit "
                 f"{MAX_PARAMETER_VALUES}")
    for value in raw:
        if isinstance(value, bool) or not isinstance(value, int):
            fail(at, f"values of {name} must be integers, got {value!r}")
        if abs(value) > MAX_PARAMETER_MAGNITUDE:
            fail(at, f"values of {name}: {value} is larger than {MAX_PARAMETER_MAGNITUDE} in "
                     "absolute value")
    if len(set(raw)) != len(raw):
        fail(at, f"values of {name}: a value is listed twice")
    return tuple(raw)


def _required_string(data: dict, key: str, locator: StringLocator) -> str:
    if key not in data:
        fail(locator.key(""), f"missing key {key!r}")
    value = data[key]
    if not isinstance(value, str):
        fail(locator.key(key), f"{key} must be a string")
    return value


def _applies_to(data: dict, locator: StringLocator) -> Tuple[str, ...]:
    at = locator.key("applies_to")
    if "applies_to" not in data:
        fail(locator.key(""), "missing key 'applies_to' (e.g. \"all\", \"grassmannians\", "
                              "\"complete\", or a list of those and flag types)")
    return _applies_to_words(data["applies_to"], at)


def _applies_to_words(raw, at: Loc) -> Tuple[str, ...]:
    """An `applies_to` value (a string or a list of them): words of APPLIES_TO_WORDS and
    canonical flag names."""
    items = [raw] if isinstance(raw, str) else raw
    if not isinstance(items, list) or not items or not all(isinstance(x, str) for x in items):
        fail(at, "applies_to must be a string or a non-empty list of strings")
    out = []
    for item in items:
        word = item.strip()
        if word in APPLIES_TO_WORDS:
            out.append(word)
            continue
        try:
            out.append(parse_flag(word).name)
        except FlagTypeError:
            fail(at, f"applies_to: {item!r} is neither one of {', '.join(APPLIES_TO_WORDS)} "
                     "nor a flag type such as Fl(1,3;5)")
    return tuple(out)


def _integer_or_expression(value, key: str, locator: StringLocator, at: Loc):
    if isinstance(value, bool) or not isinstance(value, (int, str)):
        fail(at, f"{key} must be an integer or an expression in a string")
    if isinstance(value, int):
        if abs(value) >= 10 ** MAX_TOML_INTEGER_DIGITS:
            fail(at, f"{key}: integer with more than {MAX_TOML_INTEGER_DIGITS} digits")
        return value
    return parse_expression(locator.source(value, at))


def _entries(raw, section: str, locator: StringLocator, at: Loc, depth: int) -> Tuple[Entry, ...]:
    if depth > MAX_GROUP_DEPTH:
        fail(at, f"groups nested more than {MAX_GROUP_DEPTH} levels deep")
    if isinstance(raw, dict):
        raw = [raw]
    if not isinstance(raw, list):
        fail(at, f"{section} must be a list of tables ([[{section}]])")
    return tuple(_entry(item, section, locator, at, depth) for item in raw)


def _entry(item, section: str, locator: StringLocator, at: Loc, depth: int) -> Entry:
    bare = isinstance(item, str) and section in ("relations", "units")
    if bare:
        item = {"expr": item}
    if not isinstance(item, dict):
        fail(at, f"each entry of {section} must be a table" +
             (" or an expression string" if section != "generators" else ""))
    # A bare string has no table of its own; searching backwards for one would make a long
    # list of strings parse in quadratic time.
    start = None if bare else locator.table_start(item)
    for key in item:
        if key not in _ENTRY_KEYS[section]:
            fail(locator.key_in_table(key, start, at),
                 f"unknown key {key!r} in {section} (expected one of "
                 f"{', '.join(_ENTRY_KEYS[section])})")
    where = Loc(locator.whole, start) if start is not None and start >= 0 else at
    loops: Tuple[Binding, ...] = ()
    if "for" in item:
        loops = parse_bindings(_string_source(item, "for", section, locator, where))
    if "group" in item:
        others = [k for k in item if k not in ("for", "group")]
        if others:
            fail(where, f"a {section} entry with a group cannot also have {others[0]!r}")
        group = _entries(item["group"], section, locator, where, depth + 1)
        if not group:
            fail(where, f"empty group in {section}")
        return Entry(loops, None, group, where)
    return Entry(loops, _declaration(item, section, locator, where, start), (), where)


def _string_source(item: dict, key: str, section: str, locator: StringLocator,
                   where: Loc) -> SourceText:
    if key not in item:
        fail(where, f"a {section} entry needs the field {key!r}")
    value = item[key]
    if not isinstance(value, str):
        fail(where, f"{key!r} in {section} must be a string")
    return locator.source(value, where)


def _declaration(item: dict, section: str, locator: StringLocator, where: Loc,
                 start: Optional[int]) -> Decl:
    if section == "generators":
        name = parse_template(_string_source(item, "name", section, locator, where))
        meaning = parse_meaning(_string_source(item, "meaning", section, locator, where))
        if "weight" not in item:
            fail(where, "a generators entry needs a 'weight' (an integer or index expression)")
        weight_at = locator.key_in_table("weight", start, where)
        weight = _integer_or_expression(item["weight"], "weight", locator, weight_at)
        return GeneratorDecl(name, meaning, weight, weight_at)
    expr_source = _string_source(item, "expr", section, locator, where)
    if section == "classes":
        label = parse_template(_string_source(item, "label", section, locator, where))
        return ClassDecl(label, parse_expression(expr_source))
    if section == "units":
        return UnitDecl(parse_expression(expr_source))
    expr = parse_relation(expr_source)
    coefficients = label = None
    if "coefficients" in item:
        coefficients = parse_single_binding(
            _string_source(item, "coefficients", section, locator, where))
    if "label" in item:
        label = parse_template(_string_source(item, "label", section, locator, where))
    return RelationDecl(expr, coefficients, label)


# ---------------------------------------------------------------------------------------
# Schubert bases written as families ([[schubert.family]] in a [schubert] table)

_SCHUBERT_FAMILY_KEYS = ("applies_to", "classes")


def read_schubert_families(raw, text: str, label: str) -> Tuple[SchubertFamily, ...]:
    """The [[schubert.family]] tables (`raw`, the `family` value of the file's parsed
    [schubert] table; `text`, the file's text, for positions), parsed but not yet expanded;
    errors name file:line:col.  The rest of the [schubert] table is read elsewhere."""
    locator = StringLocator.scan(label, text)
    top = locator.key("family")
    if isinstance(raw, dict):
        raw = [raw]
    if not isinstance(raw, list):
        fail(top, "write Schubert families as [[schubert.family]] tables")
    out = []
    for number, item in enumerate(raw, start=1):
        if not isinstance(item, dict):
            fail(top, f"[[schubert.family]] number {number} is not a table")
        start = locator.table_start(item)
        where = Loc(locator.whole, start) if start is not None and start >= 0 else top
        for key in item:
            if key not in _SCHUBERT_FAMILY_KEYS:
                fail(locator.key_in_table(key, start, where),
                     f"unknown key {key!r} in [[schubert.family]] (expected one of "
                     f"{', '.join(_SCHUBERT_FAMILY_KEYS)})")
        if "applies_to" not in item:
            fail(where, "a [[schubert.family]] needs 'applies_to' (\"grassmannians\", "
                        "\"projective\", \"complete\", \"all\", or flag types)")
        applies_to = _applies_to_words(item["applies_to"],
                                       locator.key_in_table("applies_to", start, where))
        if "classes" not in item:
            fail(where, "a [[schubert.family]] needs 'classes', a list of { for = …, label = …, "
                        "expr = … } entries")
        classes = _entries(item["classes"], "classes", locator,
                           locator.key_in_table("classes", start, where), 0)
        if not classes:
            fail(where, "empty classes list in [[schubert.family]]")
        out.append(SchubertFamily(applies_to, classes, where))
    return tuple(out)
