"""Sweeps: one comparison for every flag type up to a given size, stored as each case ends.

Order.  Cases are reported and stored by n, then by rank, then by the dims tuple
(`case_order`), so "the first counterexample" is the smallest case where the presentations
disagree.  An explicit case list is put into the same order.  With --stop-at-first cases also
start in that order; otherwise the expensive ones start first (`schedule`), which shortens
the tail of a parallel sweep.

Seeds.  Every case gets its own seed from the sweep seed and the case name (`case_seed`), so
a case gives the same result whichever worker, process or cluster computes it and in
whatever order; the certificate records both seeds.

Workers.  Each case runs in a process of its own that the sweep can kill: past
`--case-timeout` seconds, or when it runs out of the `--case-memory` allowance (an address-
space limit set inside the process), the case is stored as inconclusive with a reason that
starts "limit:", and the sweep goes on.  A fresh process per case also keeps one case's
caches and memory from slowing the next.  With `--cluster`, cases run as Dask tasks; each
task again runs its case in a child process with the same limits where the worker allows
that, and the store stays on this machine.

Resuming.  Finished cases are stored one transaction each (compare/store.py); a sweep run
again with the same settings takes them from the store.  Rows stored as "error: …" (an
exception in the worker) or "crashed: …" (it died without a result: the signal or exit
status, and what FLINT or Python last said) are computed again, up to FAILED_ATTEMPTS times
in all unless --retry-failed; rows stored as "limit: …" are computed again only under
different limits.  One sweep at a time uses a store (`store.claim`).
"""
from __future__ import annotations

import hashlib
import itertools
import multiprocessing
import os
import resource
import signal
import sys
import time
from collections import Counter, deque
from dataclasses import dataclass, field
from functools import lru_cache
from multiprocessing.connection import wait as wait_for
from pathlib import Path
from typing import Callable, Dict, List, Optional, Sequence, Tuple

from ringmatch.presentations.flagtype import FlagType, parse_flag

from . import store

KINDS = ("grassmannian", "partial", "complete")
MAX_SWEEP_N = 20
DEFAULT_STORE = "ringmatch-sweeps.db"


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
    from ringmatch.presentations.userfile_container import read_bytes
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
    from ringmatch.presentations.userfile_container import read_bytes
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
# One case

@dataclass(frozen=True)
class Limits:
    seconds: Optional[float] = None
    memory_mib: Optional[int] = None

    def record(self) -> dict:
        return {"seconds": self.seconds, "memory_mib": self.memory_mib}


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


def run_case(task: CaseTask) -> dict:
    """The `check --json` result of one case (compare.engine.check_case), seeds recorded."""
    from .engine import check_case
    families = [family_of(source) for source in task.sources]
    result = check_case(task.flag, families, seed=task.seed, prime=task.prime,
                        equivariant=task.equivariant, order=task.order, trials=task.trials,
                        method=task.method)
    result["certificate"]["sweep_seed"] = task.sweep_seed
    return result


def undecided_result(task: CaseTask, reason: str, limits: Limits) -> dict:
    """A case that produced no comparison (limit, worker failure), in the shape of a
    check result so that stores, tables and reports treat it like any other."""
    flag = task.flag
    return {"case": flag.name, "rank": flag.rank, "equivariant": task.equivariant,
            "verdict": "inconclusive", "reason": reason,
            "certificate": {"prime": task.prime, "seed": task.seed,
                            "sweep_seed": task.sweep_seed, "order": task.order,
                            "method": task.method, "trials": [], "exact": False,
                            "kind": "not computed", "limits": limits.record()},
            "presentations": {}, "pairs": [], "timings": {}}


def _set_memory_limit(memory_mib: int) -> None:
    # The allowance is on top of what the worker already maps (interpreter, FLINT, the
    # forked parent), so the same --case-memory means the same on every machine.
    try:
        with open("/proc/self/statm") as handle:
            base = int(handle.read().split()[0]) * os.sysconf("SC_PAGE_SIZE")
    except (OSError, ValueError):
        base = 0
    limit = base + memory_mib * 1024 * 1024
    resource.setrlimit(resource.RLIMIT_AS, (limit, limit))


def _silence_output(output: Optional[str] = None) -> None:
    # The sweep's stdout carries its report (e.g. --json); a worker must not write into it.
    # FLINT prints its allocation failures to stdout before aborting, so redirect the file
    # descriptors, not only sys.stdout — into a file the sweep reads when the worker dies
    # without a result, to say what happened.
    try:
        devnull = os.open(output, os.O_WRONLY | os.O_APPEND) if output else -1
    except OSError:
        devnull = -1
    if devnull < 0:
        devnull = os.open(os.devnull, os.O_WRONLY)
    for fd in (1, 2):
        try:
            os.dup2(devnull, fd)
        except OSError:
            pass
    os.close(devnull)


def child_main(writer, task: CaseTask, memory_mib: Optional[int],
               output: Optional[str] = None) -> None:
    from ringmatch.presentations.interface import PresentationError
    from ringmatch.presentations.userfile import PresentationFileError
    signal.signal(signal.SIGINT, signal.SIG_IGN)   # the parent handles Ctrl-C and kills us
    _die_with_parent()
    _silence_output(output)
    import faulthandler
    if faulthandler.is_enabled():    # into the output file too, not into the sweep's stderr
        faulthandler.enable(file=sys.stderr)
    if memory_mib:
        _set_memory_limit(memory_mib)
    try:
        message = ("ok", run_case(task))
    except MemoryError:
        message = ("memory", None)
    except (PresentationError, PresentationFileError) as error:
        message = ("presentation", str(error))
    except Exception as error:   # a bug must not stop the sweep; it is stored and retried
        message = ("error", f"{type(error).__name__}: {error}")
    try:
        writer.send(message)
    except MemoryError:
        writer.send(("memory", None))
    writer.close()


CRASHED = "crashed:"
FAILED_ATTEMPTS = 3        # crashes or errors of one case before it is no longer retried
RETRY_OPTION = "--retry-failed"


def outcome_result(task: CaseTask, limits: Limits, message, exitcode,
                   output: str = "") -> dict:
    """The stored result for what a worker sent back (or for its death; `output` is the
    end of what it printed, where FLINT says why it aborted)."""
    if message is not None and message[0] == "ok":
        message[1]["certificate"]["limits"] = limits.record()
        return message[1]
    flint_out_of_memory = message is None and "allocate" in output.lower()
    if message is not None and message[0] == "memory" or \
            flint_out_of_memory and limits.memory_mib:
        reason = f"limit: out of memory under --case-memory {limits.memory_mib} MiB"
        if message is None:
            reason += f" (FLINT could not allocate; worker ended with {_exit_text(exitcode)})"
        return undecided_result(task, reason, limits)
    if message is None:      # a crash or an outside kill: said as such, and computed again
        last = _crash_line(output)
        return undecided_result(task, f"{CRASHED} worker ended with {_exit_text(exitcode)} "
                                      "without a result" + (f" ({last})" if last else ""),
                                limits)
    if message is not None and message[0] == "presentation":
        return undecided_result(task, f"presentation error: {message[1]}", limits)
    if message is not None:
        return undecided_result(task, f"error: {message[1]}", limits)
    return undecided_result(task, f"error: worker ended with {_exit_text(exitcode)} "
                                  "without a result", limits)


def _crash_line(output: str) -> str:
    """What FLINT or Python said about a crash, if anything (not a stack dump)."""
    lines = [line.strip() for line in output.splitlines()]
    said = [line for line in lines if line.startswith("Fatal Python error") or "FLINT" in line]
    return said[-1][:200] if said else ""


def _exit_text(exitcode) -> str:
    if exitcode is not None and exitcode < 0:
        try:
            return f"signal {signal.Signals(-exitcode).name}"
        except ValueError:
            return f"signal {-exitcode}"
    return f"exit status {exitcode}"


def timeout_result(task: CaseTask, limits: Limits) -> dict:
    return undecided_result(task, f"limit: took longer than --case-timeout {limits.seconds:g} s",
                            limits)


# ---------------------------------------------------------------------------------------
# Worker processes

@dataclass
class Running:
    index: int
    task: CaseTask
    process: object
    reader: object
    started: float
    deadline: Optional[float]
    output: Optional[str] = None       # file of the worker's stdout and stderr


def _output_file() -> Optional[str]:
    import tempfile
    try:
        handle, path = tempfile.mkstemp(prefix="ringmatch-case-", suffix=".out")
    except OSError:
        return None
    os.close(handle)
    return path


def _read_and_remove(path: Optional[str]) -> str:
    if path is None:
        return ""
    try:
        with open(path, "rb") as handle:
            handle.seek(0, os.SEEK_END)
            handle.seek(max(0, handle.tell() - 4096))
            text = handle.read().decode("utf-8", "replace")
    except OSError:
        text = ""
    try:
        os.unlink(path)
    except OSError:
        pass
    return text


def start_case(context, index: int, task: CaseTask, limits: Limits) -> Running:
    reader, writer = context.Pipe(duplex=False)
    output = _output_file()
    process = context.Process(target=child_main, args=(writer, task, limits.memory_mib, output),
                              daemon=True)
    started = time.monotonic()
    process.start()
    writer.close()
    deadline = started + limits.seconds if limits.seconds else None
    return Running(index, task, process, reader, started, deadline, output)


def finish_case(running: Running, limits: Limits) -> Tuple[dict, float]:
    """Read the worker's message (it is there, or the worker is gone) and reap it."""
    message = None
    try:
        if running.reader.poll():
            message = running.reader.recv()
    except (EOFError, OSError):
        message = None
    running.process.join()
    running.reader.close()
    seconds = time.monotonic() - running.started
    output = _read_and_remove(running.output)
    return outcome_result(running.task, limits, message, running.process.exitcode,
                          output), seconds


def kill_case(running: Running) -> float:
    running.process.kill()
    running.process.join()
    running.reader.close()
    _read_and_remove(running.output)
    return time.monotonic() - running.started


def available_cores() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:
        return os.cpu_count() or 1


def _die_with_parent() -> None:
    # A sweep killed with SIGKILL cannot kill its workers; on Linux the kernel does it.
    try:
        import ctypes
        libc = ctypes.CDLL(None, use_errno=True)
        PR_SET_PDEATHSIG = 1
        libc.prctl(PR_SET_PDEATHSIG, signal.SIGKILL)
    except (OSError, AttributeError):
        pass


# Imported once in the sweep's process so that forked workers start with them: otherwise
# every case would pay for importing SymPy (used to print witnesses), about a second.
PRELOAD = ("ringmatch.compare.engine", "ringmatch.reports.formulas", "ringmatch.reports.summary")


def local_context():
    # fork: a worker starts in milliseconds with everything imported.  The sweep's own
    # process has no threads, so forking it is safe.
    import importlib
    methods = multiprocessing.get_all_start_methods()
    if "fork" not in methods:
        return multiprocessing.get_context("spawn")
    for module in PRELOAD:
        importlib.import_module(module)
    return multiprocessing.get_context("fork")


def run_local(tasks: Sequence[Tuple[int, CaseTask]], limits: Limits, workers: int,
              finished: Callable[[int, dict, float], Optional[int]]) -> None:
    """Run the tasks on `workers` processes.  `finished(index, result, seconds)` is called
    as each case ends and returns a cutoff index (or None): cases after it are dropped,
    running ones killed — how --stop-at-first stops without losing a smaller case."""
    context = local_context()
    pending = deque(tasks)
    running: Dict[int, Running] = {}
    cutoff: Optional[int] = None
    try:
        while pending or running:
            while pending and len(running) < workers:
                index, task = pending.popleft()
                running[index] = start_case(context, index, task, limits)
            deadlines = [r.deadline for r in running.values() if r.deadline is not None]
            timeout = max(0.0, min(deadlines) - time.monotonic()) if deadlines else None
            handles = [r.reader for r in running.values()] + \
                [r.process.sentinel for r in running.values()]
            ready = set(wait_for(handles, timeout))
            now = time.monotonic()
            for index, job in sorted(running.items()):
                if job.reader in ready or job.process.sentinel in ready:
                    result, seconds = finish_case(job, limits)
                elif job.deadline is not None and now >= job.deadline:
                    seconds = kill_case(job)
                    result = timeout_result(job.task, limits)
                else:
                    continue
                del running[index]
                new_cutoff = finished(index, result, seconds)
                if new_cutoff is not None:
                    cutoff = new_cutoff if cutoff is None else min(cutoff, new_cutoff)
            if cutoff is not None:
                pending = deque(item for item in pending if item[0] < cutoff)
                for index in [i for i in running if i > cutoff]:
                    kill_case(running.pop(index))
    finally:
        for job in running.values():   # interrupted: leave no worker behind
            kill_case(job)


# ---------------------------------------------------------------------------------------
# Dask

def run_isolated(task: CaseTask, limits: Limits) -> Tuple[dict, float]:
    """One case in a killable child process with the limits (a Dask task's body).  Inside a
    daemonic worker process, which may not have children, the case runs in the task itself
    and the limits are those of the cluster; the certificate says so."""
    if multiprocessing.current_process().daemon:
        started = time.monotonic()
        try:
            result = run_case(task)
        except MemoryError:
            return undecided_result(task, "limit: out of memory in the Dask worker",
                                    limits), time.monotonic() - started
        result["certificate"]["limits"] = dict(
            limits.record(), enforced="by the cluster (daemonic Dask worker)")
        return result, time.monotonic() - started
    # forkserver, not fork: Dask runs tasks in threads, and forking a threaded process is
    # unsafe; the server process is started once and forks cleanly.
    context = multiprocessing.get_context("forkserver")
    context.set_forkserver_preload(["ringmatch.compare.sweep", *PRELOAD])
    job = start_case(context, 0, task, limits)
    remaining = None if job.deadline is None else max(0.0, job.deadline - time.monotonic())
    if wait_for([job.reader, job.process.sentinel], remaining):
        return finish_case(job, limits)
    seconds = kill_case(job)
    return timeout_result(task, limits), seconds


def run_dask(address: str, tasks: Sequence[Tuple[int, CaseTask]], limits: Limits,
             finished: Callable[[int, dict, float], Optional[int]], key_prefix: str) -> None:
    from distributed import Client, as_completed
    with Client(address, timeout="20s") as client:
        futures = {client.submit(run_isolated, task, limits, pure=False,
                                 key=f"ringmatch-{key_prefix}-{index}"): index
                   for index, task in tasks}
        tasks_by_index = dict(tasks)
        cutoff = None
        for future in as_completed(list(futures)):
            index = futures[future]
            if cutoff is not None and index > cutoff:
                continue
            try:
                result, seconds = future.result()
            except Exception as error:   # e.g. the worker died; stored, and retried next time
                result, seconds = undecided_result(
                    tasks_by_index[index], f"error: Dask task failed: "
                    f"{type(error).__name__}: {error}", limits), 0.0
            new_cutoff = finished(index, result, seconds)
            if new_cutoff is not None:
                cutoff = new_cutoff if cutoff is None else min(cutoff, new_cutoff)
                for other, other_index in futures.items():
                    if other_index > cutoff:
                        other.cancel()


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
    results: Dict[str, dict] = field(default_factory=dict)     # case → check result
    seconds: Dict[str, float] = field(default_factory=dict)
    from_store: List[str] = field(default_factory=list)
    computed: List[str] = field(default_factory=list)
    not_run: List[str] = field(default_factory=list)           # after the first counterexample
    wall: float = 0.0

    def ordered_results(self) -> List[dict]:
        return [self.results[f.name] for f in self.plan.flags if f.name in self.results]

    @property
    def first_counterexample(self) -> Optional[str]:
        for flag in self.plan.flags:
            result = self.results.get(flag.name)
            if result is not None and result["verdict"] == "disagree":
                return flag.name
        return None

    def counts(self) -> Dict[str, int]:
        return dict(Counter(r["verdict"] for r in self.ordered_results()))


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
        return row["result"]["certificate"].get("limits") != limits.record()
    return False


def failed_attempts(result: dict) -> int:
    return int(result.get("certificate", {}).get("failed_attempts", 1))


def count_failure(result: dict, previous: Optional[dict]) -> dict:
    """A crash or error result, with how often this case has failed so far; at the bound,
    the reason says that it is not retried and how to retry it."""
    if not result["reason"].startswith(("error:", CRASHED)):
        return result
    attempts = 1
    if previous is not None and previous["reason"].startswith(("error:", CRASHED)):
        attempts = failed_attempts(previous["result"]) + 1
    result["certificate"]["failed_attempts"] = attempts
    if attempts >= FAILED_ATTEMPTS:
        result["reason"] += (f"; failed {attempts} times, not computed again (run the sweep "
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

        def finished(index: int, result: dict, seconds: float) -> Optional[int]:
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
                         f"{name} {result['verdict']}")
            if stop_at_first and result["verdict"] == "disagree":
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
        if result is not None and result["verdict"] == "disagree":
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
    return {"cases": outcome.ordered_results(),
            "first_counterexample": outcome.first_counterexample,
            "counts": outcome.counts(),
            "skipped": [{"case": c, "reason": r} for c, r in outcome.plan.skipped],
            "not_run": list(outcome.not_run),
            "from_store": list(outcome.from_store),
            "settings": outcome.plan.settings,
            "store": str(store_path)}
