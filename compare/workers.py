"""Workers of a sweep: each case in a process of its own under the sweep's limits, and what
a case that ended without a comparison is stored as (compare/sweep.py plans and stores).

Each case runs in a process of its own that the sweep can kill: past `--case-timeout`
seconds, or when it runs out of the `--case-memory` allowance (an address-space limit set
inside the process; a worker that sits at that limit for CEILING_SECONDS is stopped too, see
CeilingWatch), the case is stored as inconclusive with a reason that starts "limit:",
and the sweep goes on.  A fresh process per case also keeps one case's caches and memory from
slowing the next.  A worker that dies without a result is stored as "crashed: …" (the signal
or exit status, and what FLINT or Python last said), an exception in it as "error: …".  With
`--cluster`, cases run as Dask tasks; each task again runs its case in a child process with
the same limits where the worker allows that, and the store stays on this machine.
"""
from __future__ import annotations

import multiprocessing
import os
import resource
import signal
import sys
import time
from collections import deque
from dataclasses import dataclass
from multiprocessing.connection import wait as wait_for
from typing import Callable, Dict, Optional, Sequence, Tuple

from .cases import CaseTask, family_of
from .records import CaseResult, Certificate


# ---------------------------------------------------------------------------------------
# One case

@dataclass(frozen=True)
class Limits:
    seconds: Optional[float] = None
    memory_mib: Optional[int] = None

    def record(self) -> dict:
        return {"seconds": self.seconds, "memory_mib": self.memory_mib}



def run_case(task: CaseTask) -> CaseResult:
    """The result of one case (compare.engine.check_case), seeds recorded."""
    from .engine import check_case
    families = [family_of(source) for source in task.sources]
    result = check_case(task.flag, families, seed=task.seed, prime=task.prime,
                        equivariant=task.equivariant, order=task.order, trials=task.trials,
                        method=task.method)
    result.certificate.sweep_seed = task.sweep_seed
    return result


def undecided_result(task: CaseTask, reason: str, limits: Limits) -> CaseResult:
    """A case that produced no comparison (limit, worker failure): a CaseResult like any
    other, so that stores, tables and reports treat it alike."""
    flag = task.flag
    return CaseResult.undecided(flag.name, flag.rank, task.equivariant, reason, Certificate(
        prime=task.prime, seed=task.seed, sweep_seed=task.sweep_seed, order=task.order,
        method=task.method, limits=limits.record()))


def set_memory_limit(memory_mib: int) -> None:
    # The allowance is on top of what the worker already maps (interpreter, FLINT, the
    # forked parent), so the same --case-memory means the same on every machine.
    try:
        with open("/proc/self/statm") as handle:
            base = int(handle.read().split()[0]) * os.sysconf("SC_PAGE_SIZE")
    except (OSError, ValueError):
        base = 0
    limit = base + memory_mib * 1024 * 1024
    resource.setrlimit(resource.RLIMIT_AS, (limit, limit))


# A worker that runs out of address space usually gets a MemoryError or, inside FLINT, aborts.
# But CPython 3.11 can also spin for ever: when the exception it is unwinding needs one more
# small object and that allocation fails, it retries the same handler without end, using
# CPU and never returning.  So the parent also watches: a worker that stays within
# CEILING_MARGIN of its limit for CEILING_SECONDS is out of memory, and is stopped as such.
CEILING_SECONDS = 10.0
CEILING_MARGIN = 2 * 1024 * 1024
WATCH_INTERVAL = 0.5


def address_space(pid: int) -> Optional[Tuple[int, int]]:
    """(size of the address space, its limit) of a live process, in bytes; None where
    /proc does not say, or while the process has no limit yet."""
    try:
        with open(f"/proc/{pid}/statm") as handle:
            size = int(handle.read().split()[0]) * os.sysconf("SC_PAGE_SIZE")
        with open(f"/proc/{pid}/limits") as handle:
            line = next(line for line in handle if line.startswith("Max address space"))
        limit = line.split()[3]
    except (OSError, ValueError, IndexError, StopIteration):
        return None
    return None if limit == "unlimited" else (size, int(limit))


@dataclass
class CeilingWatch:
    """Whether a process has sat at its address-space limit for `seconds` (see above)."""
    pid: int
    seconds: Optional[float] = None     # None: CEILING_SECONDS
    since: Optional[float] = None

    def patience(self) -> float:
        return CEILING_SECONDS if self.seconds is None else self.seconds

    def stuck(self, now: float) -> bool:
        usage = address_space(self.pid)
        if usage is None or usage[0] < usage[1] - CEILING_MARGIN:
            self.since = None
            return False
        if self.since is None:
            self.since = now
        return now - self.since >= self.patience()


def ceiling_reason(memory_mib: Optional[int], watch: CeilingWatch) -> str:
    return (f"limit: out of memory under --case-memory {memory_mib} MiB (stopped after "
            f"{watch.patience():g} s at its address-space limit)")


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
    die_with_parent()
    _silence_output(output)
    import faulthandler
    if faulthandler.is_enabled():    # into the output file too, not into the sweep's stderr
        # by descriptor: sys.stderr may be an object without one (a notebook's, or a
        # redirection in the calling program), and enabling on it would end the worker
        faulthandler.enable(file=2)
    if memory_mib:
        set_memory_limit(memory_mib)
    try:
        message = ("ok", run_case(task))
    except MemoryError:
        message = ("memory", None)
    except (PresentationError, PresentationFileError) as error:
        message = ("presentation", str(error))
    except Exception as error:   # a bug must not stop the sweep; it is stored and retried
        message = ("memory", None) if memory_mib and _caused_by_memory(error) else \
            ("error", f"{type(error).__name__}: {error}")
    try:
        writer.send(message)
    except MemoryError:
        writer.send(("memory", None))
    writer.close()


def _caused_by_memory(error: BaseException) -> bool:
    """Whether an exception came from running out of memory under the limit: a MemoryError
    somewhere in its chain (an import or a library can wrap one in its own error)."""
    seen = set()
    while error is not None and id(error) not in seen:
        if isinstance(error, MemoryError):
            return True
        seen.add(id(error))
        error = error.__cause__ or error.__context__
    return False


CRASHED = "crashed:"


def outcome_result(task: CaseTask, limits: Limits, message, exitcode,
                   output: str = "") -> CaseResult:
    """The stored result for what a worker sent back (or for its death; `output` is the
    end of what it printed, where FLINT says why it aborted)."""
    if message is not None and message[0] == "ok":
        message[1].certificate.limits = limits.record()
        return message[1]
    flint_out_of_memory = message is None and "allocate" in output.lower()
    if message is not None and message[0] == "memory" or \
            flint_out_of_memory and limits.memory_mib:
        reason = f"limit: out of memory under --case-memory {limits.memory_mib} MiB"
        if message is None:
            reason += f" (FLINT could not allocate; worker ended with {exit_text(exitcode)})"
        return undecided_result(task, reason, limits)
    if message is None:      # a crash or an outside kill: said as such, and computed again
        last = _crash_line(output)
        return undecided_result(task, f"{CRASHED} worker ended with {exit_text(exitcode)} "
                                      "without a result" + (f" ({last})" if last else ""),
                                limits)
    if message is not None and message[0] == "presentation":
        return undecided_result(task, f"presentation error: {message[1]}", limits)
    if message is not None:
        return undecided_result(task, f"error: {message[1]}", limits)
    return undecided_result(task, f"error: worker ended with {exit_text(exitcode)} "
                                  "without a result", limits)


def _crash_line(output: str) -> str:
    """What FLINT or Python said about a crash, if anything (not a stack dump)."""
    lines = [line.strip() for line in output.splitlines() if line.strip()]
    said = [line for line in lines if line.startswith("Fatal Python error") or "FLINT" in line]
    if not said and any(line.startswith("Traceback") for line in lines):
        said = lines[-1:]          # the exception that ended it
    return said[-1][:200] if said else ""


def exit_text(exitcode) -> str:
    if exitcode is not None and exitcode < 0:
        try:
            return f"signal {signal.Signals(-exitcode).name}"
        except ValueError:
            return f"signal {-exitcode}"
    return f"exit status {exitcode}"


def timeout_result(task: CaseTask, limits: Limits) -> CaseResult:
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
    watch: Optional[CeilingWatch] = None


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
    watch = CeilingWatch(process.pid) if limits.memory_mib else None
    return Running(index, task, process, reader, started, deadline, output, watch)


def next_wakeup(jobs, now: float) -> Optional[float]:
    """How long the sweep may wait for the running jobs: until the first deadline, and no
    longer than WATCH_INTERVAL while a memory limit is watched (None: no limit to watch)."""
    waits = [max(0.0, job.deadline - now) for job in jobs if job.deadline is not None]
    if any(job.watch is not None for job in jobs):
        waits.append(WATCH_INTERVAL)
    return min(waits) if waits else None


def stopped_by_limit(job: Running, limits: Limits, now: float) -> Optional[Tuple[dict, float]]:
    """The result of a job that a limit ends now (it is killed), or None to let it run."""
    if job.deadline is not None and now >= job.deadline:
        return timeout_result(job.task, limits), kill_case(job)
    if job.watch is not None and job.watch.stuck(now):
        seconds = kill_case(job)
        return undecided_result(job.task, ceiling_reason(limits.memory_mib, job.watch),
                                limits), seconds


def finish_case(running: Running, limits: Limits) -> Tuple[CaseResult, float]:
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


def die_with_parent() -> None:
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
              finished: Callable[[int, CaseResult, float], Optional[int]]) -> None:
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
            timeout = next_wakeup(running.values(), time.monotonic())
            handles = [r.reader for r in running.values()] + \
                [r.process.sentinel for r in running.values()]
            ready = set(wait_for(handles, timeout))
            now = time.monotonic()
            for index, job in sorted(running.items()):
                if job.reader in ready or job.process.sentinel in ready:
                    result, seconds = finish_case(job, limits)
                else:
                    stopped = stopped_by_limit(job, limits, now)
                    if stopped is None:
                        continue
                    result, seconds = stopped
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

def run_isolated(task: CaseTask, limits: Limits) -> Tuple[CaseResult, float]:
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
        result.certificate.limits = dict(
            limits.record(), enforced="by the cluster (daemonic Dask worker)")
        return result, time.monotonic() - started
    # forkserver, not fork: Dask runs tasks in threads, and forking a threaded process is
    # unsafe; the server process is started once and forks cleanly.
    context = multiprocessing.get_context("forkserver")
    context.set_forkserver_preload(["ringmatch.compare.workers", *PRELOAD])
    job = start_case(context, 0, task, limits)
    while True:
        if wait_for([job.reader, job.process.sentinel], next_wakeup([job], time.monotonic())):
            return finish_case(job, limits)
        stopped = stopped_by_limit(job, limits, time.monotonic())
        if stopped is not None:
            return stopped


def run_dask(address: str, tasks: Sequence[Tuple[int, CaseTask]], limits: Limits,
             finished: Callable[[int, CaseResult, float], Optional[int]],
             key_prefix: str) -> None:
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
