"""The results of a check as records: plain data with a JSON form, computing nothing.

    CaseResult          one case: verdict, reason, certificate, presentations, pairs, timings
    PresentationResult  what one presentation did (relations hold, colengths, failures)
    PairResult          the verdict on two presentations, with its witnesses
    Witness             why two presentations differ: one shape for every witness
    PointFailure        a relation (or a declared unit) that fails at the Bethe points
    Certificate         what repeats the verdict: prime, seeds, specialisation, order, method

`compare.engine.check_case` returns a CaseResult; a sweep's cases that ended without a
comparison (a limit, a crash) are CaseResults too (`CaseResult.undecided`).  The store saves
`to_json()` and reads `from_json()`; `check --json`, the JSON file of `check --report` and
the cases of `sweep --json` are `to_json()`; tables, figures, reports and the command line
read the attributes.  Reports may import this module (tests/test_layers.py).

JSON schema, version SCHEMA_VERSION (written as "schema" in every case):

* version 3: every witness has the keys kind, relation_of, relation, not_in, normal_form,
  fails_at_points (null where a kind has no such evidence); every failure at the Bethe
  points the keys relation, fixed_point, failing_points, lowest_power, classical, unit;
  every certificate all of its keys; a case always has schema, exact and scan.
* version 2 (read, never written): witnesses either {relation_of, not_in, relation,
  normal_form} or {relation_of, relation, fails_at_points}; failures of relations without
  `unit`, of units without lowest_power and classical; undecided cases without schema and
  exact.  Results stored before the schema had a number read as version 2; so do the JSON
  files of `check --report` of format 1 (presentations as a list of named records, failures
  flattened into the witness).
"""
from __future__ import annotations

import re
from dataclasses import dataclass, field, fields
from typing import Any, Dict, List, Optional, Union

from ringmatch.errors import InputError

SCHEMA_VERSION = 3
OLDEST_SCHEMA = 2     # results without a "schema" key are of this version

VERDICTS = ("agree", "consistent", "disagree", "inconclusive")

# Witness kinds (`Witness.kind`)
NOT_IN_IDEAL = "not in the ideal"
FAILS_AT_POINTS = "fails at the Bethe points"

Colength = Union[int, str, None]     # a number, "infinite", or None (not computed)


class RecordError(InputError):
    """JSON that is not a result of this schema (one line; the reader names the file)."""


def _known(cls, data: dict) -> dict:
    names = {f.name for f in fields(cls)}
    return {key: value for key, value in data.items() if key in names}


def _need_dict(data, what: str) -> dict:
    if not isinstance(data, dict):
        raise RecordError(f"{what} is not a JSON object")
    return data


def _need_list(data, what: str) -> list:
    if data is None:
        return []
    if not isinstance(data, list):
        raise RecordError(f"{what} is not a JSON list")
    return data


def _need_text(data: dict, key: str, what: str) -> str:
    value = data.get(key)
    if not isinstance(value, str):
        raise RecordError(f"{what} has no {key!r} text" if value is None else
                          f"{what}: {key!r} is not text")
    return value


# ---------------------------------------------------------------------------------------
# Evidence

@dataclass
class PointFailure:
    """A relation that does not vanish at the Bethe points (its first failing point, the
    lowest power of s with a nonzero coefficient, 0 meaning already at q = 0), or a declared
    unit that vanishes at a fixed point (`unit`: its position; no power)."""
    relation: str                         # the relation's label, or "unit k vanishes"
    fixed_point: List[List[int]]          # chain I_1 ⊂ … ⊂ I_m of the first failing point
    failing_points: Optional[int] = None  # how many points fail in all
    lowest_power: Optional[int] = None
    classical: Optional[bool] = None      # already wrong at q = 0
    unit: Optional[int] = None

    def to_json(self) -> dict:
        return {"relation": self.relation, "fixed_point": [list(s) for s in self.fixed_point],
                "failing_points": self.failing_points, "lowest_power": self.lowest_power,
                "classical": self.classical, "unit": self.unit}

    @classmethod
    def from_json(cls, data: dict) -> "PointFailure":
        data = _need_dict(data, "a failure at the Bethe points")
        values = _known(cls, data)
        if "relation" not in values and data.get("unit") is not None:
            values["relation"] = f"unit {data['unit']} vanishes"
        values.setdefault("relation", "?")
        chain = data.get("fixed_point")
        if isinstance(chain, str):        # report format 1: the chain as text, {1} ⊂ {1,2}
            chain = [[int(k) for k in subset.split(",") if k.strip()]
                     for subset in re.findall(r"\{([^}]*)\}", chain)]
        values["fixed_point"] = [list(s) for s in _need_list(chain, "a failure's fixed point")]
        return cls(**values)


@dataclass
class Witness:
    """Why a presentation differs, in one shape for every kind of evidence: the relation
    (`relation`, a label of presentation `relation_of`) and what shows it wrong — it is not
    in the ideal of `not_in` (its `normal_form` modulo that ideal's Gröbner basis at the
    certificate's specialisation), or it fails at the Bethe points (`fails_at_points`)."""
    relation_of: str
    relation: str
    not_in: Optional[str] = None
    normal_form: Optional[str] = None
    fails_at_points: Optional[PointFailure] = None

    @property
    def kind(self) -> str:
        return FAILS_AT_POINTS if self.fails_at_points is not None else NOT_IN_IDEAL

    def to_json(self) -> dict:
        return {"kind": self.kind, "relation_of": self.relation_of, "relation": self.relation,
                "not_in": self.not_in, "normal_form": self.normal_form,
                "fails_at_points": None if self.fails_at_points is None
                else self.fails_at_points.to_json()}

    @classmethod
    def from_json(cls, data: dict) -> "Witness":
        data = _need_dict(data, "a witness")
        failure = data.get("fails_at_points")
        if failure is None and "fixed_point" in data:     # version 2 / report format 1: flat
            failure = data
        failure = None if failure is None else PointFailure.from_json(failure)
        relation = data.get("relation")
        if relation is None and failure is not None:
            relation = failure.relation
        return cls(relation_of=str(data.get("relation_of", "?")),
                   relation=str(relation if relation is not None else "?"),
                   not_in=data.get("not_in"), normal_form=data.get("normal_form"),
                   fails_at_points=failure)


# ---------------------------------------------------------------------------------------
# Presentations and pairs

@dataclass
class PresentationResult:
    name: str
    generators: int
    relations: int
    expected_colength: int
    colength: Colength = None
    classical_colength: Colength = None
    holds: Optional[bool] = None          # True only when exact; False: refuted (exactly)
    holds_evidence: Optional[str] = None  # how `holds` (or its absence) was established
    holds_to_order: Optional[int] = None  # relations vanish at the Bethe points mod s^N
    separates: Optional[bool] = None
    complete: Optional[bool] = None       # equals the quantum K ring at the specialisation
    exact: bool = False                   # `complete` was decided by exact evidence
    colength_method: Optional[str] = None
    classical_method: Optional[str] = None
    fixed_points_ok: Optional[bool] = None   # at q = 0: relations vanish, units do not,
                                             # generators separate the fixed points
    decided_by: Optional[str] = None      # why `complete` is what it is
    failures: List[PointFailure] = field(default_factory=list)
    notes: List[str] = field(default_factory=list)

    def to_json(self) -> dict:
        out = {f.name: getattr(self, f.name) for f in fields(self)}
        out["failures"] = [f.to_json() for f in self.failures]
        out["notes"] = list(self.notes)
        return out

    @classmethod
    def from_json(cls, data: dict, name: Optional[str] = None) -> "PresentationResult":
        data = _need_dict(data, f"presentation {name!r}" if name else "a presentation")
        values = _known(cls, data)
        values.setdefault("name", name if name is not None else "?")
        for key in ("generators", "relations", "expected_colength"):
            values.setdefault(key, None)
        values["failures"] = [PointFailure.from_json(f)
                              for f in _need_list(data.get("failures"), "failures")]
        values["notes"] = [str(n) for n in _need_list(data.get("notes"), "notes")]
        return cls(**values)


@dataclass
class PairResult:
    a: str
    b: str
    verdict: str                 # agree | disagree | consistent | inconclusive
    method: str                  # what decided it (see docs/verdicts.md)
    reason: str
    witnesses: List[Witness] = field(default_factory=list)
    exact: bool = False
    order: Optional[int] = None  # the truncation order, when the points decided it

    def to_json(self) -> dict:
        return {"a": self.a, "b": self.b, "verdict": self.verdict, "method": self.method,
                "reason": self.reason, "witnesses": [w.to_json() for w in self.witnesses],
                "exact": self.exact, "order": self.order}

    @classmethod
    def from_json(cls, data: dict) -> "PairResult":
        data = _need_dict(data, "a pair")
        values = _known(cls, data)
        for key in ("a", "b", "verdict"):
            values[key] = _need_text(data, key, "a pair")
        values.setdefault("method", "none")
        values.setdefault("reason", "")
        values["witnesses"] = [Witness.from_json(w)
                               for w in _need_list(data.get("witnesses"), "witnesses")]
        return cls(**values)


# ---------------------------------------------------------------------------------------
# Certificate

@dataclass
class Certificate:
    """Everything that repeats a verdict (docs/verdicts.md): the first trial's prime, seed
    and specialisation, the truncation order and where it came from, the routes that ran
    (`method`), whether the verdict is exact and on what basis (`kind`); `trials` holds one
    certificate per trial; a sweep adds its seed, the limits and failed attempts."""
    prime: Optional[int] = None
    seed: Optional[int] = None
    weights: Optional[List[int]] = None
    q_values: Optional[List[int]] = None
    q_line: Optional[List[int]] = None
    order: Optional[int] = None
    order_source: Optional[str] = None
    method: Optional[str] = None
    exact: bool = False
    kind: str = ""
    probability: Optional[str] = None
    budget_seconds: Optional[float] = None
    trials: List["Certificate"] = field(default_factory=list)
    sweep_seed: Optional[int] = None
    limits: Optional[dict] = None         # {"seconds", "memory_mib"[, "enforced"]}
    failed_attempts: Optional[int] = None
    prime_note: Optional[str] = None      # primes passed over (they divide a written integer)
    extra: Dict[str, Any] = field(default_factory=dict)   # keys of no field, kept as read

    def to_json(self) -> dict:
        out = {f.name: getattr(self, f.name) for f in fields(self) if f.name != "extra"}
        out["trials"] = [t.to_json() for t in self.trials]
        out.update(self.extra)
        return out

    @classmethod
    def from_json(cls, data: dict) -> "Certificate":
        data = _need_dict(data, "the certificate")
        values = _known(cls, data)
        values.pop("extra", None)
        values["trials"] = [cls.from_json(t) for t in _need_list(data.get("trials"), "trials")]
        values["exact"] = bool(values.get("exact", False))
        values["kind"] = values.get("kind") or ""
        names = {f.name for f in fields(cls)}
        values["extra"] = {k: v for k, v in data.items() if k not in names}
        return cls(**values)

    @property
    def all_trials(self) -> List["Certificate"]:
        """The certificate of every trial (itself when it lists none)."""
        return list(self.trials) or [self]


# ---------------------------------------------------------------------------------------
# One case

@dataclass
class CaseResult:
    case: str
    rank: Optional[int]
    equivariant: bool
    verdict: str                  # agree | disagree | consistent | inconclusive
    reason: str
    certificate: Certificate = field(default_factory=Certificate)
    exact: bool = False
    presentations: Dict[str, PresentationResult] = field(default_factory=dict)
    pairs: List[PairResult] = field(default_factory=list)
    timings: Dict[str, float] = field(default_factory=dict)
    scan: Optional[dict] = None   # what a scan adds (compare/scan.py): refuted_by_points, …

    schema = SCHEMA_VERSION       # the version `to_json` writes (not a field)

    @property
    def names(self) -> List[str]:
        """The presentations compared, in order."""
        return list(self.presentations)

    @property
    def decided(self) -> bool:
        """Whether a comparison ran (an undecided case compared nothing)."""
        return bool(self.presentations)

    def to_json(self) -> dict:
        return {"schema": SCHEMA_VERSION, "case": self.case, "rank": self.rank,
                "equivariant": self.equivariant, "verdict": self.verdict,
                "reason": self.reason, "exact": self.exact,
                "certificate": self.certificate.to_json(),
                "presentations": {name: p.to_json() for name, p in self.presentations.items()},
                "pairs": [p.to_json() for p in self.pairs],
                "timings": dict(self.timings), "scan": self.scan}

    @classmethod
    def from_json(cls, data: dict) -> "CaseResult":
        """The record of a result of this schema version or an older one (module notes);
        RecordError (one line) for anything else."""
        data = _need_dict(data, "a check result")
        try:
            return cls._from_json(data)
        except RecordError:
            raise
        except (TypeError, ValueError, AttributeError) as error:   # a value of the wrong kind
            raise RecordError(f"the result of {data.get('case')!r} is malformed "
                              f"({type(error).__name__}: {error})") from None

    @classmethod
    def _from_json(cls, data: dict) -> "CaseResult":
        version = data.get("schema", OLDEST_SCHEMA)
        if not isinstance(version, int) or isinstance(version, bool):
            raise RecordError(f"schema version {version!r} is not a number")
        if version > SCHEMA_VERSION:
            raise RecordError(f"written with schema version {version}; this ringmatch reads "
                              f"up to version {SCHEMA_VERSION} (a newer ringmatch wrote it)")
        case = _need_text(data, "case", "a check result")
        verdict = _need_text(data, "verdict", f"the result of {case}")
        rank = data.get("rank")
        if rank is not None and (not isinstance(rank, int) or isinstance(rank, bool)):
            raise RecordError(f"the result of {case}: 'rank' is not an integer")
        presentations = data.get("presentations") or {}
        if isinstance(presentations, list):        # a report of format 1: named records
            presentations = {p.get("name") if isinstance(p, dict) else None: p
                             for p in presentations}
        presentations = _need_dict(presentations, f"the presentations of {case}")
        timings = data.get("timings") or {}
        certificate = data.get("certificate")
        certificate = Certificate() if certificate is None else Certificate.from_json(certificate)
        return cls(case=case, rank=rank, equivariant=bool(data.get("equivariant", True)),
                   verdict=verdict, reason=str(data.get("reason", "")),
                   certificate=certificate, exact=bool(data.get("exact", certificate.exact)),
                   presentations={str(name): PresentationResult.from_json(p, str(name))
                                  for name, p in presentations.items()},
                   pairs=[PairResult.from_json(p)
                          for p in _need_list(data.get("pairs"), f"the pairs of {case}")],
                   timings=dict(_need_dict(timings, f"the timings of {case}")),
                   scan=data.get("scan"))

    @classmethod
    def undecided(cls, case: str, rank: Optional[int], equivariant: bool, reason: str,
                  certificate: Certificate) -> "CaseResult":
        """A case that produced no comparison (a limit, a worker's failure): inconclusive,
        with the reason and what the certificate can say (its kind "not computed")."""
        certificate.exact, certificate.kind = False, "not computed"
        return cls(case, rank, equivariant, "inconclusive", reason, certificate)


def as_case_result(item) -> CaseResult:
    """A CaseResult from itself or its JSON form."""
    return item if isinstance(item, CaseResult) else CaseResult.from_json(item)
