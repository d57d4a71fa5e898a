"""The cases of a sweep: which flag types, in which order, with which seeds, and the task a
worker gets for one case (compare/workers.py runs it, compare/sweep.py plans and stores).

Order.  Cases are reported and stored by n, then by rank, then by the dims tuple
(`case_order`), so "the first counterexample" is the smallest case where the presentations
disagree.  An explicit case list is put into the same order.

Seeds.  Every case gets its own seed from the sweep seed and the case name (`case_seed`), so
a case gives the same result whichever worker, process or cluster computes it and in
whatever order; the certificate records both seeds.

Presentations travel with a task as names or file contents (`Source`), so that a remote
worker needs no shared disk.
"""
from __future__ import annotations

import hashlib
import itertools
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Dict, List, Optional, Sequence, Tuple

from ringmatch.presentations.flagtype import FlagType, parse_flag

KINDS = ("grassmannian", "partial", "complete")
MAX_SWEEP_N = 20


# ---------------------------------------------------------------------------------------
# Cases

def case_order(flag: FlagType) -> tuple:
    return (flag.n, flag.rank, flag.dims)


def flags_of_size(n: int) -> List[FlagType]:
    return [FlagType(dims, n) for size in range(1, n)
            for dims in itertools.combinations(range(1, n), size)]


def enumerate_cases(kind: str, max_n: int, min_n: int = 2,
                    max_rank: Optional[int] = None) -> List[FlagType]:
    """All flag types of the kind with min_n ≤ n ≤ max_n (and rank ≤ max_rank), in sweep
    order.  `partial` means every flag type; P^1 = Fl(2) counts as Grassmannian and as
    complete."""
    if kind not in KINDS:
        raise ValueError(f"unknown kind {kind!r}; expected one of {', '.join(KINDS)}")
    wanted = {"grassmannian": lambda f: f.is_grassmannian,
              "complete": lambda f: f.is_complete,
              "partial": lambda f: True}[kind]
    flags = [f for n in range(max(min_n, 2), max_n + 1) for f in flags_of_size(n)
             if wanted(f) and (max_rank is None or f.rank <= max_rank)]
    return sorted(flags, key=case_order)


def split_case_list(text: str) -> List[str]:
    """Split at the semicolons outside parentheses: 'Gr(2;4);Fl(1,3;5)' has two items."""
    items, depth, current = [], 0, []
    for char in text:
        depth += {"(": 1, ")": -1}.get(char, 0)
        if char == ";" and depth <= 0:
            items.append("".join(current))
            current = []
        else:
            current.append(char)
    items.append("".join(current))
    return [item.strip() for item in items if item.strip()]


def parse_case_list(text: str) -> List[FlagType]:
    """'Gr(2,4);Fl(3)' → flag types in sweep order, each once (FlagTypeError if malformed)."""
    return sorted({parse_flag(item) for item in split_case_list(text)}, key=case_order)


def case_seed(sweep_seed: int, flag: FlagType) -> int:
    digest = hashlib.sha256(f"{sweep_seed}:{flag.name}".encode()).digest()
    return int.from_bytes(digest[:4], "big")


# ---------------------------------------------------------------------------------------
# Presentations travel as names or file contents, so a remote worker needs no shared disk

@dataclass(frozen=True)
class Source:
    name: str                      # as the user gave it
    raw: Optional[bytes] = None    # file content; None for built-in and plug-in families
    values: Tuple[Tuple[str, int], ...] = ()   # a parameterised file's values (all of them)

    def record(self) -> dict:
        if self.raw is None:
            return {"name": self.name}
        record = {"name": self.name, "sha256": hashlib.sha256(self.raw).hexdigest()}
        if self.values:
            # The name with its values, as results carry it (and get_family resolves it),
            # so that tables and reports of a store tell the grid points apart.
            record["name"] = self.name + "[" + ",".join(f"{k}={v}" for k, v in self.values) + "]"
            record["values"] = dict(self.values)
        return record


def load_sources(names: Sequence[str], values: Optional[Dict[str, int]] = None) -> List[Source]:
    """`values`: the --set values; each file keeps those it declares (defaults for the rest)."""
    from ringmatch.presentations import presentation_file, userfile
    from ringmatch.presentations.userfile.container import read_bytes
    sources = []
    for name in names:
        file = presentation_file(name)
        if file is None:
            sources.append(Source(name))
            continue
        path = Path(file)
        try:
            raw = path.read_bytes()
        except OSError as error:
            raise userfile.PresentationFileError(
                f"cannot read the file: {error.strerror or error}", name) from None
        bound = userfile.bind_values(read_bytes(raw, name), values)
        sources.append(Source(name, raw, tuple(bound.items())))
    return sources


@lru_cache(maxsize=32)
def family_of(source: Source):
    from ringmatch.presentations import get_family
    from ringmatch.presentations.userfile import family_from_spec
    from ringmatch.presentations.userfile.container import read_bytes
    if source.raw is None:
        return get_family(source.name)
    return family_from_spec(read_bytes(source.raw, source.name), dict(source.values))


def unsupported_reasons(flag: FlagType, sources: Sequence[Source]) -> List[str]:
    reasons = []
    for source in sources:
        family = family_of(source)
        reason = family.unsupported(flag)
        if reason:
            reasons.append(f"{family.name}: {reason}")
    return reasons



# ---------------------------------------------------------------------------------------
# One case, as a worker gets it

@dataclass(frozen=True)
class CaseTask:
    case: str
    sources: Tuple[Source, ...]
    sweep_seed: int
    prime: int
    equivariant: bool
    order: int
    trials: int
    method: str

    @property
    def flag(self) -> FlagType:
        return parse_flag(self.case)

    @property
    def seed(self) -> int:
        return case_seed(self.sweep_seed, self.flag)
