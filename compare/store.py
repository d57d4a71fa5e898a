"""The results store of sweeps: one SQLite file, one row per (case, settings), full results.

Public functions (reports read the store through them):

* `open_store(path)`                         → sqlite3.Connection (schema created, WAL journal)
* `sweep_settings(presentations, ...)`       → dict: what makes two results comparable
* `settings_key(settings)`                   → str: the hash that identifies those settings
* `finished_cases(conn, settings)`           → set of case names already stored for them
* `save_result(conn, settings, result, seconds)` → None, one transaction
* `load_results(path)`                       → every row as a dict, in sweep order

A row's `result` is the case's `compare.records.CaseResult`: saved as its `to_json()`, read
with `CaseResult.from_json` (which reads the results of earlier schema versions too).

A row is written in a single transaction after its case has finished, so a sweep killed at
any moment (SIGKILL included) leaves every finished case stored and no half-written row:
SQLite's journal rolls an interrupted transaction back when the file is next opened.
"""
from __future__ import annotations

import datetime
import hashlib
import json
import sqlite3
import sys
from pathlib import Path
from typing import List, Optional, Sequence, Tuple

from ringmatch.errors import InputError
from ringmatch.presentations.flagtype import FlagType, parse_flag

from .records import CaseResult, RecordError

SCHEMA_VERSION = 1

SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS results (
    case_name     TEXT NOT NULL,
    settings_key  TEXT NOT NULL,
    n             INTEGER NOT NULL,
    rank          INTEGER NOT NULL,
    kind          TEXT NOT NULL,
    dims          TEXT NOT NULL,
    presentations TEXT NOT NULL,
    verdict       TEXT NOT NULL,
    reason        TEXT NOT NULL,
    seconds       REAL NOT NULL,
    settings      TEXT NOT NULL,
    result        TEXT NOT NULL,
    finished_at   TEXT NOT NULL,
    run           TEXT NOT NULL,
    PRIMARY KEY (case_name, settings_key)
);
"""


class StoreError(InputError, sqlite3.DatabaseError):
    """The file is not a results store this version can read, or cannot be opened."""


def open_store(path) -> sqlite3.Connection:
    folder = Path(path).parent
    if not folder.is_dir():
        raise StoreError(f"{path}: the folder {folder} does not exist")
    try:
        conn = sqlite3.connect(str(path), timeout=30)
        conn.execute("PRAGMA journal_mode=WAL")
        # FULL: a row reported as saved survives even a machine crash, not only SIGKILL.
        conn.execute("PRAGMA synchronous=FULL")
        with conn:
            conn.executescript(SCHEMA)
            conn.execute("INSERT OR IGNORE INTO meta VALUES ('schema_version', ?)",
                         (str(SCHEMA_VERSION),))
        version = conn.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()
    except sqlite3.OperationalError as error:
        if _cannot_write(error):
            raise StoreError(f"{path}: a sweep cannot write there ({error})") from None
        raise StoreError(f"{path}: not a ringmatch results store ({error})") from None
    except sqlite3.DatabaseError as error:
        raise StoreError(f"{path}: not a ringmatch results store ({error})") from None
    if version is None or not str(version[0]).isdigit() or int(version[0]) != SCHEMA_VERSION:
        conn.close()
        raise StoreError(f"{path}: results store of schema version {version and version[0]}, "
                         f"this ringmatch reads version {SCHEMA_VERSION}")
    return conn


# ---------------------------------------------------------------------------------------
# Settings

def presentation_record(name: str) -> dict:
    """A presentation as the settings know it: built-in/plug-in names as such; files (paths
    and shipped file names) with the SHA-256 of their content, so an edited file never
    resumes from results of its earlier version."""
    from ringmatch.presentations import presentation_file
    file = presentation_file(name)
    if file is None:
        return {"name": name}
    digest = hashlib.sha256(Path(file).read_bytes()).hexdigest()
    return {"name": name, "sha256": digest}


def sweep_settings(presentations: Sequence, *, equivariant: bool = True, seed: int = 0,
                   prime: Optional[int] = None, order: Optional[int] = None, trials: int = 1,
                   method: str = "auto") -> dict:
    """`presentations`: names or paths (strings), or records from `presentation_record`."""
    from . import algebra
    records = [p if isinstance(p, dict) else presentation_record(p) for p in presentations]
    return {"presentations": records, "equivariant": bool(equivariant), "seed": int(seed),
            "prime": int(prime if prime is not None else algebra.DEFAULT_PRIME),
            "order": None if order is None else int(order), "trials": int(trials),
            "method": method}


def settings_key(settings: dict) -> str:
    # A file is identified by its content, not by the path it was reached through.
    comparable = dict(settings)
    # A parameterised file's values are part of what it presents.
    comparable["presentations"] = [p.get("sha256", p["name"]) if "values" not in p
                                   else [p.get("sha256", p["name"]), p["values"]]
                                   for p in settings["presentations"]]
    text = json.dumps(comparable, sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode()).hexdigest()[:32]


# ---------------------------------------------------------------------------------------
# Rows

def case_kind(flag: FlagType) -> str:
    if flag.is_grassmannian:
        return "grassmannian"
    return "complete" if flag.is_complete else "partial"


def run_record(command: Optional[str] = None) -> dict:
    from importlib import metadata
    versions = {"python": sys.version.split()[0]}
    for package in ("ringmatch", "python-flint"):
        try:
            versions[package] = metadata.version(package)
        except metadata.PackageNotFoundError:
            versions[package] = None
    return {"command": command if command is not None else " ".join(sys.argv),
            "versions": versions}


# ---------------------------------------------------------------------------------------
# One sweep at a time per store: otherwise two sweeps compute every case twice

_CLAIM_KEY = "sweep_in_progress"


def claim(conn: sqlite3.Connection, command: Optional[str] = None) -> None:
    """Mark the store as used by this process's sweep; StoreError when another sweep that
    is still alive uses it.  A mark left by a sweep that was killed is taken over."""
    import os
    import socket
    mine = {"host": socket.gethostname(), "pid": os.getpid(),
            "started": datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds"),
            "command": run_record(command)["command"]}
    path = _database_path(conn)
    conn.execute("BEGIN IMMEDIATE")      # check and mark in one step: two sweeps may race
    try:
        row = conn.execute("SELECT value FROM meta WHERE key = ?", (_CLAIM_KEY,)).fetchone()
        other = _claim_record(row[0]) if row else None
        if other is not None and _alive(other, mine):
            raise StoreError(
                f"{path}: in use by another sweep (pid {other.get('pid')} on "
                f"{other.get('host')}, started {other.get('started')}); wait for it to end or "
                "use another --store")
        conn.execute("INSERT OR REPLACE INTO meta VALUES (?, ?)", (_CLAIM_KEY, json.dumps(mine)))
        conn.execute("COMMIT")
    except BaseException:
        conn.execute("ROLLBACK")
        raise


def release(conn: sqlite3.Connection) -> None:
    import os
    try:
        with conn:
            row = conn.execute("SELECT value FROM meta WHERE key = ?", (_CLAIM_KEY,)).fetchone()
            record = _claim_record(row[0]) if row else None
            if record is not None and record.get("pid") == os.getpid():
                conn.execute("DELETE FROM meta WHERE key = ?", (_CLAIM_KEY,))
    except sqlite3.Error:
        pass     # a mark left behind is taken over by the next sweep once this one is gone


def _claim_record(text) -> Optional[dict]:
    try:
        record = json.loads(text)
    except (TypeError, ValueError):
        return None
    return record if isinstance(record, dict) else None


def _alive(other: dict, mine: dict) -> bool:
    import os
    if other.get("host") != mine["host"]:
        return True      # cannot be checked from here; assume it runs
    pid = other.get("pid")
    if not isinstance(pid, int) or pid == mine["pid"]:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def finished_cases(conn: sqlite3.Connection, settings: dict) -> set:
    rows = conn.execute("SELECT case_name FROM results WHERE settings_key = ?",
                        (settings_key(settings),))
    return {row[0] for row in rows}


def stored_rows(conn: sqlite3.Connection, settings: dict) -> dict:
    """{case name: row dict} for these settings (StoreError naming a damaged row)."""
    rows = conn.execute(f"SELECT rowid, {', '.join(COLUMNS)} FROM results "
                        "WHERE settings_key = ?", (settings_key(settings),))
    path = _database_path(conn)
    return {row[1]: _checked_row(path, row) for row in rows}


def _database_path(conn: sqlite3.Connection) -> str:
    for _, name, file in conn.execute("PRAGMA database_list"):
        if name == "main":
            return file
    return "results store"


def save_result(conn: sqlite3.Connection, settings: dict, result: CaseResult, seconds: float,
                *, run: Optional[dict] = None) -> None:
    flag = parse_flag(result.case)
    names = [p["name"] for p in settings["presentations"]]
    finished = datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="microseconds")
    # SQLite integers have 64 bits; a larger rank (Fl(21) and up) is stored as text and
    # read back from the flag type
    rank = flag.rank if flag.rank < 2**63 else str(flag.rank)
    values = (flag.name, settings_key(settings), flag.n, rank, case_kind(flag),
              json.dumps(list(flag.dims)), json.dumps(names), result.verdict,
              result.reason, float(seconds), json.dumps(settings, sort_keys=True),
              json.dumps(result.to_json()), finished, json.dumps(run or run_record()))
    with conn:   # one transaction: the row is there completely or not at all
        conn.execute(f"INSERT OR REPLACE INTO results ({', '.join(COLUMNS)}) "
                     f"VALUES ({', '.join('?' * len(COLUMNS))})", values)


COLUMNS = ("case_name", "settings_key", "n", "rank", "kind", "dims", "presentations",
           "verdict", "reason", "seconds", "settings", "result", "finished_at", "run")


def _checked_row(path, row) -> dict:
    """The row dict of (rowid, *COLUMNS), or StoreError naming the file, row and fault."""
    rowid, values = row[0], row[1:]
    where = f"{path}: row {rowid} (case {values[0]!r})"
    try:
        record = _row_dict(values)
    except (ValueError, TypeError, KeyError) as error:
        raise StoreError(f"{where} is damaged ({type(error).__name__}: {error}); delete that "
                         "row or use another store") from None
    result = record["result"]
    problem = None
    if not isinstance(result, dict) or not isinstance(result.get("certificate"), dict):
        problem = "its result has no certificate"
    elif not isinstance(record["reason"], str) or not isinstance(record["verdict"], str):
        problem = "its verdict or reason is not text"
    elif isinstance(record["seconds"], bool) or \
            not isinstance(record["seconds"], (int, float)):
        problem = f"its seconds column holds {record['seconds']!r}, not a number"
    else:
        try:
            record["result"] = CaseResult.from_json(result)
        except RecordError as error:
            problem = f"its result is not readable: {error}"
        else:
            if record["verdict"] != record["result"].verdict:
                problem = (f"its verdict column says {record['verdict']!r} but its result "
                           f"says {record['result'].verdict!r}")
    if problem:
        raise StoreError(f"{where} is damaged ({problem}); delete that row or use another "
                         "store")
    return record


def _row_dict(row) -> dict:
    record = dict(zip(COLUMNS, row))
    rank = record["rank"]
    if not isinstance(rank, int):     # stored as text: beyond SQLite's 64-bit integers
        rank = FlagType(tuple(json.loads(record["dims"])), int(record["n"])).rank
    return {"case": record["case_name"], "n": record["n"], "rank": rank,
            "kind": record["kind"], "dims": json.loads(record["dims"]),
            "presentations": json.loads(record["presentations"]),
            "verdict": record["verdict"], "reason": record["reason"],
            "seconds": record["seconds"], "settings": json.loads(record["settings"]),
            "settings_key": record["settings_key"], "result": json.loads(record["result"]),
            "finished_at": record["finished_at"], "run": json.loads(record["run"])}


def sweep_order(row: dict) -> tuple:
    return (row["n"], row["rank"], tuple(row["dims"]))


def load_results(path) -> List[dict]:
    """Every stored row, in sweep order (n, then rank, then the dims tuple)."""
    conn, tables = _open_for_reading(path)
    try:
        if not {"meta", "results"} <= tables:
            raise StoreError(f"{path}: an SQLite file, but not a ringmatch results store")
        rows = [_checked_row(path, row) for row in conn.execute(
            f"SELECT rowid, {', '.join(COLUMNS)} FROM results")]
    except StoreError:
        raise
    except sqlite3.DatabaseError as error:
        raise StoreError(f"{path}: not a ringmatch results store ({error})") from None
    finally:
        conn.close()
    return sorted(rows, key=lambda row: (sweep_order(row), row["settings_key"]))


def _open_for_reading(path) -> Tuple[sqlite3.Connection, set]:
    """A connection to an existing store and the names of its tables.

    No schema is created here: a reader must never turn some other SQLite file into a
    store.  (Not mode=ro first: a read-only reader of a WAL file leaves -wal/-shm files
    behind; only where nothing can be written, archived results, is it needed.)"""
    if not Path(path).is_file():
        raise StoreError(f"{path}: no such results store")
    conn = sqlite3.connect(str(path), timeout=30)
    try:
        try:
            tables = {row[0] for row in conn.execute("SELECT name FROM sqlite_master")}
        except sqlite3.OperationalError as error:
            if not _cannot_write(error):
                raise
            conn.close()
            conn = _read_only_connection(path)
            tables = {row[0] for row in conn.execute("SELECT name FROM sqlite_master")}
    except sqlite3.DatabaseError as error:
        conn.close()
        raise StoreError(f"{path}: not a ringmatch results store ({error})") from None
    return conn, tables


def _cannot_write(error: sqlite3.OperationalError) -> bool:
    text = str(error).lower()
    return "readonly" in text or "read-only" in text or "unable to open" in text


def _read_only_connection(path) -> sqlite3.Connection:
    """A store in a folder nobody may write: immutable, so that SQLite needs no -shm file
    (true there: no sweep can be writing to it).  Immutable readers ignore a -wal file,
    though, and a store archived while a sweep ran keeps its last rows there: then the file
    and its log are copied to a temporary folder, where SQLite replays the log, and read
    into memory from the copy."""
    path = Path(path)
    log = Path(str(path) + "-wal")
    if log.is_file() and log.stat().st_size > 0:
        import shutil
        import tempfile
        with tempfile.TemporaryDirectory(prefix="ringmatch-store-") as folder:
            copy = Path(folder) / path.name
            shutil.copyfile(path, copy)
            shutil.copyfile(log, Path(str(copy) + "-wal"))
            source = sqlite3.connect(str(copy), timeout=30)
            try:
                memory = sqlite3.connect(":memory:")
                source.backup(memory)
            finally:
                source.close()
        return memory
    uri = path.resolve().as_uri() + "?mode=ro&immutable=1"
    return sqlite3.connect(uri, uri=True, timeout=30)


# ---------------------------------------------------------------------------------------
# Schubert multiplication tables (`ringmatch schubert --store`): a table of their own in the
# same file, so that sweeps, `table` and `figure` never meet these rows and stores written
# before it stay readable both ways (the table is created only when Schubert rows are saved;
# the schema version is unchanged).

SCHUBERT_SCHEMA = """
CREATE TABLE IF NOT EXISTS schubert_results (
    case_name     TEXT NOT NULL,
    settings_key  TEXT NOT NULL,
    n             INTEGER NOT NULL,
    dims          TEXT NOT NULL,
    presentations TEXT NOT NULL,
    passed        INTEGER NOT NULL,
    seconds       REAL NOT NULL,
    settings      TEXT NOT NULL,
    result        TEXT NOT NULL,
    finished_at   TEXT NOT NULL,
    run           TEXT NOT NULL,
    PRIMARY KEY (case_name, settings_key)
);
"""

SCHUBERT_COLUMNS = ("case_name", "settings_key", "n", "dims", "presentations", "passed",
                    "seconds", "settings", "result", "finished_at", "run")


def open_schubert_store(path) -> sqlite3.Connection:
    """`open_store` plus the table of Schubert rows."""
    conn = open_store(path)
    with conn:
        conn.executescript(SCHUBERT_SCHEMA)
    return conn


def schubert_settings(presentations: Sequence, *, basis: Optional[str], seed: Optional[int],
                      prime: int, q_degree: Optional[int], equivariant: bool,
                      values: Optional[dict] = None) -> dict:
    """What makes two Schubert tables comparable; a basis file enters by its content."""
    records = [p if isinstance(p, dict) else presentation_record(p) for p in presentations]
    if values:
        records = [dict(r, values=dict(sorted(values.items()))) for r in records]
    basis_record = {"name": basis}
    if basis is not None and basis.endswith(".toml") and Path(basis).is_file():
        basis_record["sha256"] = hashlib.sha256(Path(basis).read_bytes()).hexdigest()
    return {"kind": "schubert", "presentations": records, "basis": basis_record,
            "seed": seed, "prime": int(prime), "q_degree": q_degree,
            "equivariant": bool(equivariant)}


def schubert_key(settings: dict) -> str:
    comparable = dict(settings)
    basis = settings.get("basis") or {}
    comparable["basis"] = basis.get("sha256", basis.get("name"))
    return settings_key(comparable)


def stored_schubert(conn: sqlite3.Connection, settings: dict) -> dict:
    """{case name: row dict} of the Schubert rows stored under these settings."""
    rows = conn.execute(f"SELECT {', '.join(SCHUBERT_COLUMNS)} FROM schubert_results "
                        "WHERE settings_key = ?", (schubert_key(settings),))
    return {row[0]: _schubert_row(row) for row in rows}


def save_schubert(conn: sqlite3.Connection, settings: dict, case: str, result: dict,
                  passed: bool, seconds: float, *, run: Optional[dict] = None) -> None:
    """One case's Schubert result (the `schubert --json` object), in one transaction."""
    flag = parse_flag(case)
    names = [p["name"] for p in settings["presentations"]]
    finished = datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="microseconds")
    values = (flag.name, schubert_key(settings), flag.n, json.dumps(list(flag.dims)),
              json.dumps(names), int(bool(passed)), float(seconds),
              json.dumps(settings, sort_keys=True), json.dumps(result), finished,
              json.dumps(run or run_record()))
    with conn:
        conn.execute(f"INSERT OR REPLACE INTO schubert_results ({', '.join(SCHUBERT_COLUMNS)}) "
                     f"VALUES ({', '.join('?' * len(SCHUBERT_COLUMNS))})", values)


def _schubert_row(row) -> dict:
    record = dict(zip(SCHUBERT_COLUMNS, row))
    return {"case": record["case_name"], "settings_key": record["settings_key"],
            "n": record["n"], "dims": json.loads(record["dims"]),
            "presentations": json.loads(record["presentations"]),
            "passed": bool(record["passed"]), "seconds": record["seconds"],
            "settings": json.loads(record["settings"]), "result": json.loads(record["result"]),
            "finished_at": record["finished_at"], "run": json.loads(record["run"])}


def load_schubert_results(path) -> List[dict]:
    """Every stored Schubert row, in sweep order (n, then rank, then dims); [] for a store
    without any."""
    conn, tables = _open_for_reading(path)
    try:
        if "schubert_results" not in tables:
            return []
        rows = []
        for row in conn.execute(f"SELECT rowid, {', '.join(SCHUBERT_COLUMNS)} "
                                "FROM schubert_results"):
            try:
                rows.append(_schubert_row(row[1:]))
            except (ValueError, TypeError) as error:
                raise StoreError(f"{path}: Schubert row {row[0]} (case {row[1]!r}) is damaged "
                                 f"({error}); delete that row or use another store") from None
    except sqlite3.DatabaseError as error:
        raise StoreError(f"{path}: not a ringmatch results store ({error})") from None
    finally:
        conn.close()

    def order(row):
        flag = FlagType(tuple(row["dims"]), int(row["n"]))
        return (flag.n, flag.rank, tuple(flag.dims), row["settings_key"])
    return sorted(rows, key=order)
