"""What a generator stands for, so that any presentation can be evaluated and compared.

Kinds of meaning (i is a level 1…m, or 1…m+1 for Toda; j, a are 1-based indices), one
`MeaningKind` record each in `KIND_RECORDS`:

  lambda_S   λ_j(S_i)                 ASCII text  lambda_j(S_i)
  lambda_Q   λ_j(Q_i), Q_i = S_{i+1}/S_i           lambda_j(Q_i)
  vieta_aux  e_j(Y^(i)), the auxiliary Vieta roots e_j(Y_i)
  toda_L     det S_i / det S_{i-1}                 L_i
  root       the Chern root X^(i)_a                x_a(S_i)

A `Meaning` stores its kind by name (the names above are what presentation files, plug-ins
and JSON use); `Meaning.kind_record` is the record, which holds the text, pretty and LaTeX
forms, the parse pattern and the bounds of level and index for a flag type.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Callable, Dict, Optional, Tuple

from .flagtype import FlagType


@dataclass(frozen=True)
class MeaningKind:
    """One kind of meaning.  The forms are `str.format` templates in i (the level), j (the
    index) and prev (i − 1)."""
    name: str                               # as stored: "lambda_S", …
    text: str                               # ASCII, the presentation-file form
    pretty: str                             # for people (Unicode)
    latex: str                              # the class's LaTeX (reports.formulas)
    pattern: "re.Pattern[str]"              # parses `text` (spaces removed)
    groups: Tuple[int, Optional[int]]       # (level group, index group or None) of pattern
    file_syntax: Optional[Tuple[str, str]]  # (function, bundle) in the file grammar: λ_j(S_i)
    top_level: Callable[[FlagType], int]    # levels 1…top_level(flag)
    index_bound: Optional[Callable[[FlagType, int], int]]   # indices 1…bound(flag, i); None:
                                                            # no index
    degree_is_index: bool                   # degree under T → tT is j (else 1)
    symmetric: bool = True                  # symmetric in the Chern roots of each S_i (a
                                            # root is not: no formula rational in T and q)
    index_letter: str = "j"                 # how the accepted forms write the index

    def form(self, template: str, i: int, j: int) -> str:
        return template.format(i=i, j=j, prev=i - 1)


def _levels(flag: FlagType) -> int:
    return flag.m


KIND_RECORDS: Tuple[MeaningKind, ...] = (
    MeaningKind("lambda_S", "lambda_{j}(S_{i})", "λ_{j}(S_{i})",
                r"\lambda_{{{j}}}(S_{{{i}}})", re.compile(r"lambda_(\d+)\(S_(\d+)\)"), (2, 1),
                ("lambda", "S"), _levels, lambda flag, i: flag.k(i), True),
    MeaningKind("lambda_Q", "lambda_{j}(Q_{i})", "λ_{j}(Q_{i})",
                r"\lambda_{{{j}}}(Q_{{{i}}})", re.compile(r"lambda_(\d+)\(Q_(\d+)\)"), (2, 1),
                ("lambda", "Q"), _levels, lambda flag, i: flag.d(i), True),
    MeaningKind("vieta_aux", "e_{j}(Y_{i})", "e_{j}(Y^({i}))",
                r"e_{{{j}}}(Y^{{({i})}})", re.compile(r"e_(\d+)\(Y_(\d+)\)"), (2, 1),
                ("e", "Y"), _levels, lambda flag, i: flag.d(i), True),
    MeaningKind("toda_L", "L_{i}", "det S_{i} / det S_{prev}",
                r"L_{{{i}}}", re.compile(r"L_(\d+)"), (1, None),
                None, lambda flag: flag.m + 1, None, False),
    MeaningKind("root", "x_{j}(S_{i})", "X^({i})_{j}",
                r"X^{{({i})}}_{{{j}}}", re.compile(r"x_(\d+)\(S_(\d+)\)"), (2, 1),
                ("x", "S"), _levels, lambda flag, i: flag.k(i), False, symmetric=False,
                index_letter="a"),
)
KIND_BY_NAME: Dict[str, MeaningKind] = {k.name: k for k in KIND_RECORDS}
KIND_BY_SYNTAX: Dict[Tuple[str, str], MeaningKind] = {
    k.file_syntax: k for k in KIND_RECORDS if k.file_syntax}
KINDS = tuple(KIND_BY_NAME)


@dataclass(frozen=True)
class Meaning:
    kind: str
    level: int
    index: int = 0

    def __post_init__(self):
        if self.kind not in KIND_BY_NAME:
            raise ValueError(f"unknown meaning kind {self.kind!r}")

    @property
    def kind_record(self) -> MeaningKind:
        return KIND_BY_NAME[self.kind]

    @property
    def text(self) -> str:
        record = self.kind_record
        return record.form(record.text, self.level, self.index)

    @property
    def pretty(self) -> str:
        record = self.kind_record
        return record.form(record.pretty, self.level, self.index)

    @property
    def latex(self) -> str:
        record = self.kind_record
        return record.form(record.latex, self.level, self.index)

    @property
    def degree(self) -> int:
        """Degree under T → tT (every Chern root scales by t, q fixed): λ_j and e_j have
        degree j, L_i and Chern roots degree 1."""
        return self.index if self.kind_record.degree_is_index else 1


def parse_meaning(text: str) -> Meaning:
    """Inverse of `Meaning.text`; raises ValueError naming the accepted forms."""
    s = text.replace(" ", "")
    for kind in KIND_RECORDS:
        match = kind.pattern.fullmatch(s)
        if match:
            level_group, index_group = kind.groups
            index = int(match.group(index_group)) if index_group else 0
            return Meaning(kind.name, int(match.group(level_group)), index)
    forms = ", ".join(k.text.format(i="i", j=k.index_letter, prev="i-1") for k in KIND_RECORDS)
    raise ValueError(f"unknown meaning {text!r}; expected one of {forms}")


def lambda_S(i: int, j: int) -> Meaning:
    return Meaning("lambda_S", i, j)


def lambda_Q(i: int, j: int) -> Meaning:
    return Meaning("lambda_Q", i, j)


def lambda_S_name(i: int, j: int) -> str:
    """Generator name used by every built-in family for λ_j(S_i)."""
    return f"S{i}_{j}"


def lambda_Q_name(i: int, j: int) -> str:
    return f"Q{i}_{j}"


def meaning_problem(meaning: Meaning, flag: FlagType) -> Optional[str]:
    """Why a meaning makes no sense for this flag type, or None."""
    i, j, kind = meaning.level, meaning.index, meaning.kind_record
    top = kind.top_level(flag)
    if not 1 <= i <= top:
        return f"{meaning.text}: level {i} outside 1…{top}"
    if kind.index_bound is None:
        return None
    bound = kind.index_bound(flag, i)
    if not 1 <= j <= bound:
        return f"{meaning.text}: index {j} outside 1…{bound}"
    return None
