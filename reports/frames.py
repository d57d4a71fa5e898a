"""Sweep results as rows and as a pandas DataFrame.

Sources accepted everywhere in `reports` (tables, figures, notebooks):

* a store file written by the sweeps (`compare.store`, SQLite): read with `load_results`;
* a `.json` file written by `ringmatch check --json`, by `check --report` (its JSON file) or
  by `sweep --json` (the cases under "cases"), or a list of check results or store rows: all
  in the one case schema of `compare.records` (older schema versions are read too);
* rows already in memory: store rows or `compare.records.CaseResult`s (`check_case`).

Every source becomes a list of *rows* in the store's shape, each with its `result` a
CaseResult (`row_from_result` makes the row of a bare result), and `results_frame` turns
rows into a DataFrame.

DataFrame columns (one row per stored case, in sweep order):

    case            trade notation, e.g. "Fl(1,3;5)", "Gr(2;5)", "Fl(4)", "P3"
    n               ambient dimension
    dims            tuple (k_1, …, k_m)
    steps           tuple (d_0, …, d_m) of step sizes, d_i = k_{i+1} − k_i
    m               number of subspaces in the flag
    kind            "grassmannian" | "complete" | "partial"
    rank            number of torus-fixed points (multinomial coefficient)
    equivariant     bool
    presentations   tuple of presentation names as compared
    verdict         "agree" | "consistent" | "disagree" | "inconclusive"
    reason          why, in words ("limit: …" for a case stopped by a resource limit)
    method          groebner | points | both | none (the routes that ran)
    order           truncation order N of the Bethe points (None without points)
    trials          number of independent trials
    exact           bool: the verdict was decided exactly at a random specialisation mod p
                    (docs/verdicts.md §2-3; wrong only through that random choice)
    certificate     one word for the evidence (`certificate_word`): "exact" (exact at a
                    random specialisation), "not proven" (the Bethe points to order s^N
                    only), "none" (not decided); rows stored before the exact verdicts
                    keep their word ("probabilistic")
    prime           prime of the first trial
    primes          tuple of the primes of all trials
    seed            seed of the first trial
    seconds         wall-clock time of the case
    finished_at     ISO time the case was stored (None for rows made here)
    command         command line that produced the row (None if unknown)
    sweep           the first 8 hex digits of the store's settings key: rows with the same
                    value come from one sweep's settings (None for rows made here)

A store may hold several sweeps (other presentations, plain and equivariant runs, other
orders); `select_rows` keeps the rows of one, and `sweeps_in` lists them.

Verdict words (`VERDICTS`): agree, consistent (every relation vanishes at every Bethe point
to the stated order: evidence, not a proof, and never counted as agreement), disagree,
inconclusive.
"""
from __future__ import annotations

import json
from pathlib import Path
from typing import Iterable, List, Optional, Sequence, Union

from ringmatch.compare.records import CaseResult, Certificate, RecordError, as_case_result
from ringmatch.errors import InputError
from ringmatch.presentations.flagtype import FlagType, FlagTypeError, parse_flag

Source = Union[str, Path, Sequence[Union[dict, CaseResult]]]

FRAME_COLUMNS = ("case", "n", "dims", "steps", "m", "kind", "rank", "equivariant",
                 "presentations", "verdict", "reason", "method", "order", "trials", "exact",
                 "certificate", "prime", "primes", "seed", "seconds", "finished_at", "command",
                 "sweep")
# Every verdict word, in the order tables and figures list them.  Only "agree" is agreement.
VERDICTS = ("agree", "consistent", "disagree", "inconclusive")
SWEEP_KEY_DIGITS = 8


class SourceError(InputError):
    """A results source that cannot be read: one line naming the file and the problem."""


# The certificate's kind (compare.engine) in one word for tables and frames.  The engine's
# own text says the same at length; a table cell cannot.
CERTIFICATE_WORDS = ("exact", "not proven", "none")


def certificate_word(certificate: Certificate) -> str:
    """"exact" when the verdict was decided exactly at a random specialisation (agree, or
    disagree with a witness), "not proven" when only the Bethe points to order s^N speak for
    it (consistent), "none" when nothing was decided; the old words of earlier stores
    ("probabilistic", "exact") are kept as they are."""
    kind = certificate.kind or ""
    if kind in ("probabilistic", "exact"):
        return kind
    if certificate.exact:
        return "exact"
    if kind.startswith("Bethe points"):
        return "not proven"
    if kind == "not decided":
        return "none"
    return "probabilistic" if not kind else kind


def flag_kind(flag: FlagType) -> str:
    if flag.is_grassmannian:
        return "grassmannian"
    return "complete" if flag.is_complete else "partial"


def row_from_result(result: CaseResult, *, seconds: Optional[float] = None,
                    presentations: Optional[Sequence[str]] = None,
                    command: Optional[str] = None) -> dict:
    """A store-shaped row for one `check_case` result (the fields a sweep would store)."""
    flag = parse_flag(result.case)
    if seconds is None:
        seconds = float(sum(v for v in result.timings.values()
                            if isinstance(v, (int, float))))
    return {"case": result.case, "n": flag.n, "rank": flag.rank, "kind": flag_kind(flag),
            "dims": list(flag.dims), "presentations": list(presentations or result.names),
            "verdict": result.verdict, "reason": result.reason, "seconds": seconds,
            "settings": {}, "result": result, "finished_at": None,
            "run": {"command": command, "versions": {}}}


def _is_row(item) -> bool:
    return isinstance(item, dict) and "result" in item and "verdict" in item


def _row(item) -> dict:
    """A row from a stored row (its result read into a CaseResult), a CaseResult or the JSON
    of one (RecordError, ValueError when it is neither)."""
    if isinstance(item, CaseResult):
        return row_from_result(item)
    if _is_row(item):
        return dict(item, result=as_case_result(item["result"]))
    return row_from_result(CaseResult.from_json(item))


def _rows_from_json(path: Path) -> List[dict]:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except UnicodeDecodeError:
        raise SourceError(f"{path}: not a JSON text file") from None
    except json.JSONDecodeError as error:
        raise SourceError(f"{path}:{error.lineno}:{error.colno}: not valid JSON "
                          f"({error.msg})") from None
    # `sweep --json` wraps its cases in {"cases": [...]}; `check --json` and the JSON of
    # `check --report` are one case (the report with fields of its own besides).
    if isinstance(data, dict) and isinstance(data.get("cases"), list) and "verdict" not in data:
        data = data["cases"]
    items = data if isinstance(data, list) else [data]
    rows = []
    for index, item in enumerate(items):
        where = f"{path}: item {index}" if isinstance(data, list) else f"{path}"
        if not isinstance(item, dict) or not ("case" in item and "verdict" in item):
            raise SourceError(f"{where} is neither a check result nor a stored row (needs "
                              "'case' and 'verdict')")
        try:
            rows.append(_row(item))
        except (RecordError, FlagTypeError) as error:
            raise SourceError(f"{where} is not a readable check result: {error}") from None
    return rows


def _rows_from_store(path: Path) -> List[dict]:
    import sqlite3
    try:
        with path.open("rb") as handle:
            header = handle.read(16)
    except OSError as error:
        raise SourceError(f"{path}: {error.strerror or error}") from None
    if header != b"SQLite format 3\x00":
        raise SourceError(f"{path}: neither a results store (SQLite) nor a .json file")
    try:
        from ringmatch.compare.store import load_results
    except ImportError:
        raise SourceError(f"{path}: reading a results store needs compare.store, which "
                          "this installation lacks") from None
    try:
        return list(load_results(path))
    except ValueError as error:   # the store's own one-line errors (damaged row, schema, …)
        raise SourceError(str(error)) from None
    except sqlite3.DatabaseError as error:
        raise SourceError(f"{path}: unreadable results store ({error})") from None


def load_rows(source: Source) -> List[dict]:
    """Rows in the store's shape from a store file, a .json file, or rows/results in memory."""
    if isinstance(source, (str, Path)):
        path = Path(source)
        if not path.exists():
            raise SourceError(f"{path}: no such file")
        if path.is_dir():
            raise SourceError(f"{path}: is a directory, not a results store")
        if path.suffix.lower() == ".json":
            return _rows_from_json(path)
        return _rows_from_store(path)
    return [_row(item) for item in source]


def _versions_command(row: dict) -> Optional[str]:
    run = row.get("run") or {}
    return run.get("command")


def frame_record(row: dict) -> dict:
    """One DataFrame row (see the module docstring) from one store row."""
    flag = FlagType(tuple(row["dims"]), row["n"])
    result = row.get("result")
    certificate = result.certificate if result is not None else Certificate()
    # an undecided case (a limit, a crash) ran no trial
    trials = certificate.trials or ([certificate] if certificate.prime is not None else [])
    return {
        "case": row["case"], "n": flag.n, "dims": flag.dims,
        "steps": tuple(flag.d(i) for i in range(flag.m + 1)), "m": flag.m,
        "kind": row.get("kind") or flag_kind(flag), "rank": row.get("rank", flag.rank),
        "equivariant": None if result is None else result.equivariant,
        "presentations": tuple(row.get("presentations") or (result.names if result else ())),
        "verdict": row["verdict"], "reason": row.get("reason", ""),
        "method": certificate.method, "order": certificate.order,
        "trials": len(trials), "exact": bool(certificate.exact),
        "certificate": certificate_word(certificate),
        "prime": certificate.prime,
        "primes": tuple(t.prime for t in trials),
        "seed": certificate.seed, "seconds": row.get("seconds"),
        "finished_at": row.get("finished_at"), "command": _versions_command(row),
        "sweep": sweep_key(row),
    }


def sweep_key(row: dict) -> Optional[str]:
    key = row.get("settings_key")
    return key[:SWEEP_KEY_DIGITS] if key else None


def is_equivariant(row: dict) -> bool:
    result = row.get("result")
    if result is not None:
        return bool(result.equivariant)
    return bool((row.get("settings") or {}).get("equivariant", True))


def select_rows(rows: Sequence[dict], *, sweep: Optional[str] = None,
                presentations: Optional[Sequence[str]] = None,
                equivariant: Optional[bool] = None) -> List[dict]:
    """The rows of one sweep (a prefix of its key, as `sweeps_in` shows it), of exactly these
    presentations (in any order), and/or equivariant (True) or plain (False) only."""
    if sweep is not None and not any((sweep_key(r) or "").startswith(sweep) for r in rows):
        known = ", ".join(s["sweep"] for s in sweeps_in(rows)) or "none (rows without a store)"
        raise SourceError(f"no sweep {sweep!r} in these results; sweeps: {known}")
    wanted = None if presentations is None else sorted(presentations)
    out = []
    for row in rows:
        if sweep is not None and not (sweep_key(row) or "").startswith(sweep):
            continue
        if wanted is not None and sorted(row.get("presentations") or []) != wanted:
            continue
        if equivariant is not None and is_equivariant(row) != equivariant:
            continue
        out.append(row)
    return out


def sweeps_in(rows: Sequence[dict]) -> List[dict]:
    """One entry per sweep (settings) among the rows, in first-seen order: its key prefix,
    presentations, equivariant or plain, and number of cases."""
    found: dict = {}
    for row in rows:
        key = sweep_key(row) or "-"
        entry = found.setdefault(key, {"sweep": key,
                                       "presentations": list(row.get("presentations") or []),
                                       "equivariant": is_equivariant(row), "cases": 0})
        entry["cases"] += 1
    return list(found.values())


def sweep_description(entry: dict) -> str:
    kind = "equivariant" if entry["equivariant"] else "plain"
    return (f"{entry['sweep']} ({','.join(entry['presentations'])}; {kind}; "
            f"{entry['cases']} case{'s' if entry['cases'] != 1 else ''})")


def results_frame(path_or_rows: Source):
    """A pandas DataFrame with the columns listed in this module's docstring.

    `path_or_rows`: a store file, a .json file of check results, or a list of store rows /
    check results.  The DataFrame keeps the source's order (the sweep order)."""
    import pandas
    records = [frame_record(row) for row in load_rows(path_or_rows)]
    return pandas.DataFrame.from_records(records, columns=list(FRAME_COLUMNS))


def distinct(values: Iterable) -> list:
    """Values in first-seen order without repeats (None dropped)."""
    seen, out = set(), []
    for value in values:
        if value is not None and value not in seen:
            seen.add(value)
            out.append(value)
    return out


def load_schubert_rows(source: Source) -> List[dict]:
    """The Schubert multiplication tables of a store (`ringmatch schubert --store`), in sweep
    order; [] for a store without any.  Rows already in memory pass through."""
    if not isinstance(source, (str, Path)):
        return list(source)
    path = Path(source)
    if not path.is_file():
        raise SourceError(f"{path}: no such file")
    from ringmatch.compare.store import load_schubert_results
    try:
        return list(load_schubert_results(path))
    except ValueError as error:
        raise SourceError(str(error)) from None
