"""What a generator stands for, so that any presentation can be evaluated and compared.

Kinds of meaning (i is a level 1…m, or 1…n for Toda; j, a are 1-based indices):

  lambda_S   λ_j(S_i)                 ASCII text  lambda_j(S_i)
  lambda_Q   λ_j(Q_i), Q_i = S_{i+1}/S_i           lambda_j(Q_i)
  vieta_aux  e_j(Y^(i)), the auxiliary Vieta roots e_j(Y_i)
  toda_L     det S_i / det S_{i-1}                 L_i
  root       the Chern root X^(i)_a                x_a(S_i)
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Optional

from .flagtype import FlagType

KINDS = ("lambda_S", "lambda_Q", "vieta_aux", "toda_L", "root")


@dataclass(frozen=True)
class Meaning:
    kind: str
    level: int
    index: int = 0

    def __post_init__(self):
        if self.kind not in KINDS:
            raise ValueError(f"unknown meaning kind {self.kind!r}")

    @property
    def text(self) -> str:
        i, j = self.level, self.index
        return {"lambda_S": f"lambda_{j}(S_{i})", "lambda_Q": f"lambda_{j}(Q_{i})",
                "vieta_aux": f"e_{j}(Y_{i})", "toda_L": f"L_{i}",
                "root": f"x_{j}(S_{i})"}[self.kind]

    @property
    def pretty(self) -> str:
        i, j = self.level, self.index
        return {"lambda_S": f"λ_{j}(S_{i})", "lambda_Q": f"λ_{j}(Q_{i})",
                "vieta_aux": f"e_{j}(Y^({i}))", "toda_L": f"det S_{i} / det S_{i - 1}",
                "root": f"X^({i})_{j}"}[self.kind]


_TEXT = [
    ("lambda_S", re.compile(r"lambda_(\d+)\(S_(\d+)\)"), (2, 1)),
    ("lambda_Q", re.compile(r"lambda_(\d+)\(Q_(\d+)\)"), (2, 1)),
    ("vieta_aux", re.compile(r"e_(\d+)\(Y_(\d+)\)"), (2, 1)),
    ("toda_L", re.compile(r"L_(\d+)"), (1, None)),
    ("root", re.compile(r"x_(\d+)\(S_(\d+)\)"), (2, 1)),
]


def parse_meaning(text: str) -> Meaning:
    """Inverse of `Meaning.text`; raises ValueError naming the accepted forms."""
    s = text.replace(" ", "")
    for kind, pattern, (level_group, index_group) in _TEXT:
        match = pattern.fullmatch(s)
        if match:
            index = int(match.group(index_group)) if index_group else 0
            return Meaning(kind, int(match.group(level_group)), index)
    raise ValueError(f"unknown meaning {text!r}; expected one of lambda_j(S_i), lambda_j(Q_i), "
                     "e_j(Y_i), L_i, x_a(S_i)")


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
    i, j, kind = meaning.level, meaning.index, meaning.kind
    top = flag.m + 1 if kind == "toda_L" else flag.m
    if not 1 <= i <= top:
        return f"{meaning.text}: level {i} outside 1…{top}"
    if kind == "toda_L":
        return None
    bound = flag.k(i) if kind in ("lambda_S", "root") else flag.d(i)
    if not 1 <= j <= bound:
        return f"{meaning.text}: index {j} outside 1…{bound}"
    return None
