"""One computation under the limits a sweep gives each case (`check --case-timeout`,
`--case-memory`), and progress lines for the stages of a check.

The computation runs in a forked child: past the time limit it is killed, and the memory
allowance is an address-space limit set inside the child only (compare/workers.py sets it the
same way), so that neither a hang nor an allocation FLINT cannot satisfy (it aborts the
process) takes this process down.  What ran out is returned as a `Stopped`, for the caller
to report like any undecided case.
"""
from __future__ import annotations

import contextlib
import multiprocessing
import signal
import sys
import time
from dataclasses import dataclass
from multiprocessing.connection import wait as wait_for
from typing import Callable, Optional


@dataclass(frozen=True)
class Stopped:
    reason: str          # starts "limit:" or "crashed:", as in a sweep's store


def run_limited(work: Callable[[], dict], *, seconds: Optional[float] = None,
                memory_mib: Optional[int] = None):
    """work() (its result must pickle), or a Stopped saying which limit ended it."""
    if seconds is None and memory_mib is None:
        return work()
    if "fork" not in multiprocessing.get_all_start_methods():
        raise OSError("--case-timeout and --case-memory need fork(), which this platform lacks")
    context = multiprocessing.get_context("fork")
    reader, writer = context.Pipe(duplex=False)
    child = context.Process(target=_child, args=(writer, work, memory_mib), daemon=True)
    started = time.monotonic()
    child.start()
    writer.close()
    try:
        stopped = _wait(reader, child, started, seconds, memory_mib)
        if stopped is not None:
            return stopped
        message = None
        try:
            if reader.poll():
                message = reader.recv()
        except (EOFError, OSError):
            message = None
        child.join()
    finally:
        if child.is_alive():      # interrupted or stopped: leave no child behind
            child.kill()
            child.join()
        reader.close()
    if message is None:
        from .workers import exit_text
        ended = exit_text(child.exitcode)
        if memory_mib and child.exitcode == -signal.SIGABRT:
            return Stopped(f"limit: out of memory under --case-memory {memory_mib} MiB "
                           f"(FLINT could not allocate; the computation ended with {ended})")
        return Stopped(f"crashed: the computation ended with {ended} without a result "
                       f"after {time.monotonic() - started:.1f} s")
    kind, payload = message
    if kind == "ok":
        return payload
    if kind == "memory":
        return Stopped(f"limit: out of memory under --case-memory {memory_mib} MiB")
    if kind == "user":
        raise payload
    raise RuntimeError(f"the computation failed: {payload}")


def _wait(reader, child, started: float, seconds, memory_mib) -> Optional[Stopped]:
    """Wait for the child's answer or its end; a Stopped when a limit ends it first (the
    caller kills it).  The memory watch is the sweep's (compare/workers.py, CeilingWatch)."""
    from .workers import WATCH_INTERVAL, CeilingWatch, ceiling_reason
    watch = CeilingWatch(child.pid) if memory_mib else None
    deadline = None if seconds is None else started + seconds
    while True:
        now = time.monotonic()
        waits = ([max(0.0, deadline - now)] if deadline is not None else []) + \
            ([WATCH_INTERVAL] if watch is not None else [])
        if wait_for([reader, child.sentinel], min(waits) if waits else None):
            return None
        now = time.monotonic()
        if deadline is not None and now >= deadline:
            return Stopped(f"limit: took longer than --case-timeout {seconds:g} s")
        if watch is not None and watch.stuck(now):
            return Stopped(ceiling_reason(memory_mib, watch))


def _child(writer, work, memory_mib) -> None:
    from ringmatch.errors import RingmatchError
    from .workers import die_with_parent, set_memory_limit
    signal.signal(signal.SIGINT, signal.SIG_IGN)     # the parent handles Ctrl-C
    die_with_parent()
    # stdout carries the parent's report (--json); FLINT prints why it aborts to stdout
    import os
    sys.stdout.flush()
    os.dup2(2, 1)
    if memory_mib:
        set_memory_limit(memory_mib)
    try:
        message = ("ok", work())
    except MemoryError:
        message = ("memory", None)
    except RingmatchError as error:
        message = ("user", error)
    except Exception as error:
        import traceback
        message = ("error", "".join(traceback.format_exception_only(type(error), error)).strip())
    try:
        writer.send(message)
    except MemoryError:
        writer.send(("memory", None))
    except Exception as error:     # e.g. an exception that does not pickle
        writer.send(("error", f"{type(error).__name__}: {error}"))
    writer.close()


@contextlib.contextmanager
def stage_lines(subject: str, stream=None, enabled: bool = True):
    """Print a line on stderr as each stage of a check starts and ends (the Bethe points,
    the exact route), by wrapping the engine's stage functions for the duration."""
    from . import engine
    stream = stream if stream is not None else sys.stderr
    stages = {"points_reports": "Bethe points",
              "exact_reports": "exact route (Gröbner bases at a specialisation)"}
    saved = {name: getattr(engine, name) for name in stages if hasattr(engine, name)}
    if not enabled:
        yield
        return

    def wrap(name, original):
        def staged(*args, **kwargs):
            started = time.monotonic()
            print(f"ringmatch: {subject}: {stages[name]}…", file=stream, flush=True)
            value = original(*args, **kwargs)
            print(f"ringmatch: {subject}: {stages[name]} done in "
                  f"{time.monotonic() - started:.1f} s", file=stream, flush=True)
            return value
        return staged

    try:
        for name, original in saved.items():
            setattr(engine, name, wrap(name, original))
        yield
    finally:
        for name, original in saved.items():
            setattr(engine, name, original)
