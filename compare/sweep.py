"""Sweeps: one comparison for every flag type up to a given size, stored as each case ends.

Order.  Cases are reported and stored in sweep order (compare/cases.py: n, then rank, then
dims).  With --stop-at-first cases also start in that order; otherwise the expensive ones
start first (`schedule`), which shortens the tail of a parallel sweep.

Workers.  Each case runs in a process of its own under the sweep's limits, or as a Dask task
(compare/workers.py).

Resuming.  Finished cases are stored one transaction each (compare/store.py); a sweep run
again with the same settings takes them from the store.  Rows stored as "error: …" (an
exception in the worker) or "crashed: …" (it died without a result: the signal or exit
status, and what FLINT or Python last said) are computed again, up to FAILED_ATTEMPTS times
in all unless --retry-failed; rows stored as "limit: …" are computed again only under
different limits.  One sweep at a time uses a store (`store.claim`).
"""
from __future__ import annotations

import sys
import time
from collections import Counter
from dataclasses import dataclass, field
from typing import Callable, Dict, List, Optional, Sequence, Tuple

from ringmatch.presentations.flagtype import FlagType, parse_flag

from . import store
from .cases import CaseTask, Source, case_order, load_sources, unsupported_reasons
from .records import CaseResult
from .workers import CRASHED, Limits, run_dask, run_local

DEFAULT_STORE = "ringmatch-sweeps.db"
FAILED_ATTEMPTS = 3        # crashes or errors of one case before it is no longer retried
RETRY_OPTION = "--retry-failed"


# ---------------------------------------------------------------------------------------
# The sweep

@dataclass
class SweepPlan:
    flags: List[FlagType]                 # every case of the sweep, in order
    skipped: List[Tuple[str, str]]        # (case, why) – a presentation has nothing for it
    settings: dict
    sources: List[Source]


@dataclass
class SweepOutcome:
    plan: SweepPlan
    results: Dict[str, CaseResult] = field(default_factory=dict)     # case → its result
    seconds: Dict[str, float] = field(default_factory=dict)
    from_store: List[str] = field(default_factory=list)
    computed: List[str] = field(default_factory=list)
    not_run: List[str] = field(default_factory=list)           # after the first counterexample
    wall: float = 0.0

    def ordered_results(self) -> List[CaseResult]:
        return [self.results[f.name] for f in self.plan.flags if f.name in self.results]

    @property
    def first_counterexample(self) -> Optional[str]:
        for flag in self.plan.flags:
            result = self.results.get(flag.name)
            if result is not None and result.verdict == "disagree":
                return flag.name
        return None

    def counts(self) -> Dict[str, int]:
        return dict(Counter(r.verdict for r in self.ordered_results()))


def plan_sweep(flags: Sequence[FlagType], names: Sequence[str], *, seed: int, prime: int,
               equivariant: bool, order: int, trials: int, method: str,
               values: Optional[Dict[str, int]] = None) -> SweepPlan:
    sources = load_sources(names, values)
    settings = store.sweep_settings([s.record() for s in sources], equivariant=equivariant,
                                    seed=seed, prime=prime, order=order, trials=trials,
                                    method=method)
    kept, skipped = [], []
    for flag in sorted(flags, key=case_order):
        reasons = unsupported_reasons(flag, sources)
        if reasons:
            skipped.append((flag.name, "; ".join(reasons)))
        else:
            kept.append(flag)
    return SweepPlan(kept, skipped, settings, sources)


def needs_computing(row: dict, limits: Limits, retry_failed: bool = False) -> bool:
    reason = row["reason"]
    if reason.startswith(("error:", CRASHED)):
        return retry_failed or failed_attempts(row["result"]) < FAILED_ATTEMPTS
    if reason.startswith("limit:"):
        return row["result"].certificate.limits != limits.record()
    return False


def failed_attempts(result: CaseResult) -> int:
    attempts = result.certificate.failed_attempts
    return 1 if attempts is None else int(attempts)


def count_failure(result: CaseResult, previous: Optional[dict]) -> CaseResult:
    """A crash or error result, with how often this case has failed so far; at the bound,
    the reason says that it is not retried and how to retry it (`previous`: the stored row)."""
    if not result.reason.startswith(("error:", CRASHED)):
        return result
    attempts = 1
    if previous is not None and previous["reason"].startswith(("error:", CRASHED)):
        attempts = failed_attempts(previous["result"]) + 1
    result.certificate.failed_attempts = attempts
    if attempts >= FAILED_ATTEMPTS:
        result.reason += (f"; failed {attempts} times, not computed again (run the sweep "
                             f"with {RETRY_OPTION} to try again)")
    return result


def run_sweep(plan: SweepPlan, store_path, *, workers: int = 1, limits: Limits = Limits(),
              stop_at_first: bool = False, cluster: Optional[str] = None,
              progress: Optional[Callable[[int, int, float, str], None]] = None,
              command: Optional[str] = None, retry_failed: bool = False) -> SweepOutcome:
    """Take finished cases from the store, compute the others, store each as it ends."""
    settings = plan.settings
    outcome = SweepOutcome(plan)
    started = time.monotonic()
    conn = store.open_store(store_path)
    claimed = False
    try:
        # a damaged row is refused before the store is marked as in use (nothing written);
        # read again after claiming, as another sweep may have finished cases meanwhile
        store.stored_rows(conn, settings)
        store.claim(conn, command)
        claimed = True
        stored = store.stored_rows(conn, settings)
        todo: List[Tuple[int, CaseTask]] = []
        for index, flag in enumerate(plan.flags):
            row = stored.get(flag.name)
            if row is not None and not needs_computing(row, limits, retry_failed):
                outcome.results[flag.name] = row["result"]
                outcome.seconds[flag.name] = row["seconds"]
                outcome.from_store.append(flag.name)
            else:
                todo.append((index, task_for(flag, plan)))
        cutoff = first_disagreement(plan, outcome) if stop_at_first else None
        todo = schedule([(i, t) for i, t in todo if cutoff is None or i < cutoff],
                        stop_at_first)
        run = store.run_record(command)
        total, done = len(todo), 0

        def finished(index: int, result: CaseResult, seconds: float) -> Optional[int]:
            nonlocal done
            name = plan.flags[index].name
            result = count_failure(result, stored.get(name))
            store.save_result(conn, settings, result, seconds, run=run)
            outcome.results[name] = result
            outcome.seconds[name] = seconds
            outcome.computed.append(name)
            done += 1
            if progress:
                progress(done, total, time.monotonic() - started,
                         f"{name} {result.verdict}")
            if stop_at_first and result.verdict == "disagree":
                return index
            return None

        if progress and total:
            progress(0, total, 0.0, "")
        if todo:
            if cluster:
                run_dask(cluster, todo, limits, finished, store.settings_key(settings)[:12])
            else:
                run_local(todo, limits, max(1, workers), finished)
    finally:
        if claimed:
            store.release(conn)
        conn.close()
    if stop_at_first and outcome.first_counterexample is not None:
        last = plan.flags.index(parse_flag(outcome.first_counterexample))
        for flag in plan.flags[last + 1:]:
            outcome.results.pop(flag.name, None)   # beyond the first: not part of the answer
            outcome.not_run.append(flag.name)
    outcome.wall = time.monotonic() - started
    return outcome


def first_disagreement(plan: SweepPlan, outcome: SweepOutcome) -> Optional[int]:
    for index, flag in enumerate(plan.flags):
        result = outcome.results.get(flag.name)
        if result is not None and result.verdict == "disagree":
            return index
    return None


def expected_cost(flag: FlagType) -> float:
    """A rough guess of a case's time for scheduling: Gröbner bases, which dominate, grow
    with the rank up to the automatic limit; above it a case goes by the Bethe points,
    whose cost is linear in the rank and small (docs/verdicts.md §8)."""
    from .engine import EXACT_RANK_LIMIT
    return float(flag.rank) ** 2 if flag.rank <= EXACT_RANK_LIMIT else flag.rank / 20.0


def schedule(todo: List[Tuple[int, CaseTask]], stop_at_first: bool) -> List[Tuple[int, CaseTask]]:
    """The order cases are started in.  Looking for the first counterexample: sweep order,
    smallest first.  Otherwise the expensive cases first, so that the sweep does not end
    with one worker busy on a big case while the others idle (results are still reported
    and stored per case, in sweep order when read)."""
    if stop_at_first:
        return todo
    return sorted(todo, key=lambda item: (-expected_cost(item[1].flag), item[0]))


def task_for(flag: FlagType, plan: SweepPlan) -> CaseTask:
    s = plan.settings
    return CaseTask(flag.name, tuple(plan.sources), s["seed"], s["prime"], s["equivariant"],
                    s["order"], s["trials"], s["method"])


# ---------------------------------------------------------------------------------------
# What the user sees

@dataclass
class Progress:
    """A one-line progress display: cases done/total, elapsed time, an estimate."""
    stream: object
    open_line: bool = False

    def __call__(self, done: int, total: int, elapsed: float, last: str) -> None:
        width = 24
        filled = width * done // total if total else width
        estimate = f", ~{_clock(elapsed / done * (total - done))} left" if done else ""
        text = (f"\r[{'#' * filled}{'.' * (width - filled)}] {done}/{total} cases, "
                f"{_clock(elapsed)} elapsed{estimate}" + (f"  {last}" if last else ""))
        self.stream.write(text.ljust(100)[:120])
        self.open_line = done < total
        if not self.open_line:
            self.stream.write("\n")
        self.stream.flush()

    def close(self) -> None:
        """End the line when the sweep stopped early (first counterexample, interrupt)."""
        if self.open_line:
            self.stream.write("\n")
            self.stream.flush()
            self.open_line = False


@dataclass
class LineProgress:
    """One line per finished case, for a log file or a pipe, where a redrawn bar is noise."""
    stream: object

    def __call__(self, done: int, total: int, elapsed: float, last: str) -> None:
        if done:
            self.stream.write(f"[{done}/{total}] {last} ({_clock(elapsed)} elapsed)\n")
            self.stream.flush()

    def close(self) -> None:
        pass


def sweep_progress(stream=None):
    """The bar on a terminal, one line per finished case elsewhere."""
    stream = stream if stream is not None else sys.stderr
    return Progress(stream) if stream.isatty() else LineProgress(stream)


def terminal_progress(stream=None) -> Optional[Progress]:
    """A progress display on a terminal; None (quiet) otherwise."""
    stream = stream if stream is not None else sys.stderr
    return Progress(stream) if stream.isatty() else None


def _clock(seconds: float) -> str:
    seconds = int(round(seconds))
    return f"{seconds // 3600}:{seconds // 60 % 60:02d}:{seconds % 60:02d}" if seconds >= 3600 \
        else f"{seconds // 60}:{seconds % 60:02d}"


def outcome_json(outcome: SweepOutcome, store_path) -> dict:
    """`sweep --json`: the cases in the schema of `check --json` (compare/records.py), and
    the sweep's own fields."""
    return {"cases": [result.to_json() for result in outcome.ordered_results()],
            "first_counterexample": outcome.first_counterexample,
            "counts": outcome.counts(),
            "skipped": [{"case": c, "reason": r} for c, r in outcome.plan.skipped],
            "not_run": list(outcome.not_run),
            "from_store": list(outcome.from_store),
            "settings": outcome.plan.settings,
            "store": str(store_path)}
