"""Presentations supplied by users as files (the format: docs/presentation-files.md).

A file is read (`container`), parsed (`syntax`) and, for each flag type it
is asked about, expanded (`expand`); the result is an ordinary `Family` record, so
display, Gröbner bases, Bethe points and comparisons treat it like a built-in family.

Public functions:

* `load_family(path, values)`    → Family          (errors: PresentationFileError)
* `family_from_text(text, label, values)` → Family
* `family_from_spec(spec, values)` → Family
* `load_spec(name)`              → FileSpec of a file or shipped file, None for other names
* `bind_values(spec, given)`     → every declared parameter's value (given, else default)
* `bound_name(spec, values)`     → the name results carry: name[a=1,b=-2]

Integer parameters (`[[parameters]]`): `values` maps a parameter's name (or `name_i` for one
step of a per-step parameter) to an integer; names the file does not declare are ignored
here (the command line refuses names no file declares).  Every family of a parameterised
file carries its values in its name, so results and stores never mix two settings.
* `case_file_text(family, flag)` → str: any family for one flag type, written as a case file
* `shipped_files()`              → {name: path} of the files shipped in presentations/files
* `looks_like_path(name)`        → whether a presentation name on the command line is a file
"""
from __future__ import annotations

import json
import os
import re
from functools import lru_cache
from pathlib import Path
from typing import Dict, List, Mapping, Optional, Tuple

from ..flagtype import FlagType
from ..interface import Family, PresentationError, Relation, build_symbolic
from .container import FileSpec, read_file, read_text
from .expand import Expanded, expand, transport, unsupported_reason, written_integers
from .syntax import PresentationFileError, fail

__all__ = ["PresentationFileError", "ParameterValuesMissing", "load_family", "load_spec",
           "spec_of", "bind_values", "bound_name", "accepts", "family_from_text", "family_from_spec",
           "case_file_text", "shipped_files", "looks_like_path", "polynomial_text"]

FILES_DIRECTORY = Path(__file__).resolve().parent.parent / "files"


def looks_like_path(name: str) -> bool:
    return name.endswith(".toml") or "/" in name or os.sep in name


class ParameterValuesMissing(PresentationFileError):
    """A parameterised file read without values for parameters that have no default."""

    def __init__(self, spec: FileSpec, names: List[str]):
        self.family_name = spec.name
        self.names = names
        first = next(p for p in spec.parameters if p.name == names[0])
        line, column = first.at.source.where(first.at.offset)
        super().__init__(f"parameter{'s' if len(names) > 1 else ''} {', '.join(names)} of "
                         f"{spec.name} need{'' if len(names) > 1 else 's'} a value (no default "
                         f"declared): give {' '.join(f'--set {n}=…' for n in names)}",
                         spec.file, line, column)


Values = Optional[Mapping[str, int]]


def _values_key(values: Values) -> Tuple[Tuple[str, int], ...]:
    return tuple(sorted((values or {}).items()))


def _file_key(path: str) -> tuple:
    try:
        stat = os.stat(path)
    except OSError as error:
        raise PresentationFileError(f"cannot read the file: {error.strerror or error}", str(path))
    return str(path), os.path.realpath(path), stat.st_mtime_ns, stat.st_size


def load_spec(path: str) -> FileSpec:
    return _spec_cached(*_file_key(path))


@lru_cache(maxsize=64)
def _spec_cached(label: str, real_path: str, mtime: int, size: int) -> FileSpec:
    # Keyed on the real path and modification time, so an edited file is read again; errors
    # name the file as the user wrote it.
    return read_file(label)


def spec_of(name: str) -> Optional[FileSpec]:
    """The FileSpec behind a presentation name (a path or a shipped file), None otherwise."""
    from .. import presentation_file
    file = presentation_file(name)
    return None if file is None else load_spec(file)


def load_family(path: str, values: Values = None) -> Family:
    return _family_cached(_file_key(path), _values_key(values))


@lru_cache(maxsize=256)
def _family_cached(file_key: tuple, values: Tuple[Tuple[str, int], ...]) -> Family:
    return family_from_spec(_spec_cached(*file_key), dict(values))


def family_from_text(text: str, label: str = "<text>", values: Values = None) -> Family:
    return family_from_spec(read_text(text, label), values)


def _check_value(p, key: str, value) -> int:
    if isinstance(value, bool) or not isinstance(value, int):
        fail(p.at, f"parameter {key}: the value {value!r} is not an integer")
    if value not in p.values:
        fail(p.at, f"parameter {key}: the value {value} is not among the declared values "
                   f"{p.describe_values()}")
    return value


def bind_values(spec: FileSpec, given: Values = None) -> Dict[str, int]:
    """The value of every declared parameter (given, else its default), checked against the
    declaration; per-step parameters may also be given per step (`a_2`).  Names the file
    does not declare are ignored.  Missing values raise ParameterValuesMissing."""
    given = dict(given or {})
    out: Dict[str, int] = {}
    missing = []
    for p in spec.parameters:
        steps = {}
        if p.per_step:
            for key, value in given.items():
                head, _, step = key.rpartition("_")
                if head == p.name and step.isdigit() and int(step) >= 1:
                    steps[f"{p.name}_{int(step)}"] = _check_value(p, key, value)
        value = given.get(p.name, p.default)
        if value is None and not steps:
            missing.append(p.name)
            continue
        if value is not None:
            out[p.name] = _check_value(p, p.name, value)
        out.update(sorted(steps.items()))
    if missing:
        raise ParameterValuesMissing(spec, missing)
    return out


def declared_names(spec: FileSpec) -> List[str]:
    return [p.name for p in spec.parameters]


def accepts(spec: FileSpec, key: str) -> bool:
    """Whether `--set key=…` means something for this file."""
    for p in spec.parameters:
        if key == p.name:
            return True
        head, _, step = key.rpartition("_")
        if p.per_step and head == p.name and step.isdigit() and int(step) >= 1:
            return True
    return False


_BOUND = re.compile(r"(.+)\[((?:[A-Za-z][A-Za-z0-9]*(?:_[0-9]+)?=[+-]?[0-9]{1,40},?)*)\]")


def split_bound_name(name: str) -> Optional[Tuple[str, Dict[str, int]]]:
    """'whitney-unknowns[sign=1,power=1]' → ('whitney-unknowns', {'sign': 1, 'power': 1}),
    so the names results carry can be resolved again; None for other names."""
    match = _BOUND.fullmatch(name)
    if not match:
        return None
    values = {}
    for item in filter(None, match.group(2).split(",")):
        key, _, value = item.partition("=")
        values[key] = int(value)
    return match.group(1), values


def bound_name(spec: FileSpec, values: Mapping[str, int]) -> str:
    if not spec.parameters:
        return spec.name
    return f"{spec.name}[{','.join(f'{k}={v}' for k, v in values.items())}]"


def family_from_spec(spec: FileSpec, values: Values = None) -> Family:
    bound = bind_values(spec, values)
    name = bound_name(spec, bound)

    @lru_cache(maxsize=16)
    def expanded(flag: FlagType) -> Expanded:
        reason = unsupported_reason(spec, flag)
        if reason:
            raise PresentationError(f"{name} has no presentation for {flag.name}: {reason}")
        return expand(spec, flag, bound)

    def generators(flag):
        return list(expanded(flag).generators)

    def relations(flag, ring):
        result = expanded(flag)
        return [Relation(label, transport(poly, result, ring)) for label, poly in result.relations]

    def units(flag, ring):
        result = expanded(flag)
        return [transport(poly, result, ring) for poly in result.units]

    def expected_colength(flag):
        return expanded(flag).expected_colength

    def unsupported(flag):
        return unsupported_reason(spec, flag)

    @lru_cache(maxsize=16)
    def integers(flag):
        return written_integers(expanded(flag))

    description = spec.description or f"{spec.flavour} file {spec.file}"
    return Family(name, description, generators, relations, units, expected_colength,
                  unsupported, integers=integers)


# ---------------------------------------------------------------------------------------
# Shipped files

def shipped_files() -> Dict[str, Path]:
    """Files under presentations/files (examples included), by their file name stem."""
    if not FILES_DIRECTORY.is_dir():
        return {}
    return {path.stem: path for path in sorted(FILES_DIRECTORY.rglob("*.toml"))}


def shipped_family(name: str, values: Values = None) -> Optional[Family]:
    path = shipped_files().get(name)
    return None if path is None else load_family(str(path), values)


# ---------------------------------------------------------------------------------------
# Writing a case file

_VALID_NAME = re.compile(r"[A-Za-z][A-Za-z0-9]*(?:_[0-9]+)*")


def polynomial_text(poly, names) -> str:
    """A polynomial over Q in the file syntax (+ - * / ^, integers), terms in ring order."""
    pieces: List[Tuple[bool, str]] = []
    for exponents, c in zip(poly.monoms(), poly.coeffs()):
        factors = [name if e == 1 else f"{name}^{e}" for name, e in zip(names, exponents) if e]
        magnitude = abs(c)
        if not factors:
            body = str(magnitude)
        elif magnitude == 1:
            body = "*".join(factors)
        else:
            body = "*".join([str(magnitude)] + factors)
        pieces.append((c < 0, body))
    if not pieces:
        return "0"
    text = ("-" if pieces[0][0] else "") + pieces[0][1]
    for negative, body in pieces[1:]:
        text += (" - " if negative else " + ") + body
    return text


def _toml_string(text: str) -> str:
    return json.dumps(text, ensure_ascii=False).replace("\x7f", "\\u007f")


def _template_literal(text: str) -> str:
    return text.replace("{", "{{").replace("}", "}}")


def _expression_field(key: str, expression: str, width: int = 96) -> str:
    if len(expression) <= width:
        return f'{key} = "{expression}"'
    lines, current = [], ""
    for piece in re.split(r"(?= [+-] )", expression):
        if current and len(current) + len(piece) > width:
            lines.append(current)
            current = " " + piece.lstrip()
        else:
            current += piece
    lines.append(current)
    return f'{key} = """\n' + "\n".join("  " + line.strip() for line in lines) + '\n"""'


def case_file_text(family: Family, flag: FlagType, *, equivariant: bool = True) -> str:
    """`family` for `flag`, written out as a case file that this module reads back."""
    presentation = build_symbolic(family, flag, equivariant=equivariant)
    names = presentation.ring.ctx.names()
    for g in presentation.generators:
        if not _VALID_NAME.fullmatch(g.name):
            raise PresentationFileError(f"generator name {g.name!r} of {family.name} cannot be "
                                        "written in a presentation file", "<case file>")
    plain = "" if equivariant else " (non-equivariant: T_j = 1)"
    name = re.sub(r"[^A-Za-z0-9_.+-]+", "-", f"{family.name}-{flag.name}").strip("-")
    out = [f"# The {family.name} presentation of QK_T({flag.name}){plain}, written out by "
           "ringmatch.",
           "format = 1",
           'flavour = "case"',
           f"name = {_toml_string(name)}",
           f"description = {_toml_string(f'{family.name} presentation of {flag.name}{plain}')}",
           f"case = {_toml_string(flag.name)}"]
    if presentation.expected_colength != flag.rank:
        out.append(f"expected_colength = {presentation.expected_colength}")
    for g in presentation.generators:
        out += ["", "[[generators]]", f"name = {_toml_string(g.name)}",
                f"meaning = {_toml_string(g.meaning.text)}", f"weight = {g.weight}"]
    for relation in presentation.relations:
        out += ["", "[[relations]]", f"label = {_toml_string(_template_literal(relation.label))}",
                _expression_field("expr", polynomial_text(relation.poly, names))]
    for unit in presentation.units:
        out += ["", "[[units]]", _expression_field("expr", polynomial_text(unit, names))]
    return "\n".join(out) + "\n"
