"""The `ringmatch sweep` subcommand: its options, the cases they name, and the run.

It sits with the command line, above the sweep machinery (compare/sweep.py) and the report
text (reports/sweeps.py), so that neither of those imports the command line.
"""
from __future__ import annotations

import sqlite3
import sys
from typing import List

from ringmatch.errors import UsageError
from ringmatch.presentations.flagtype import FlagType
from ringmatch.reports.sweeps import summary_text

from . import store
from .cases import KINDS, MAX_SWEEP_N, enumerate_cases, parse_case_list
from .sweep import DEFAULT_STORE, outcome_json, plan_sweep, run_sweep, sweep_progress
from .workers import Limits, available_cores


def add_case_selection(parser, positive_int) -> None:
    """The options that name the cases (`flags_from_arguments` reads them), shared by
    `sweep` and `scan`."""
    parser.add_argument("--max-n", type=positive_int, metavar="N",
                        help="largest ambient dimension n")
    parser.add_argument("--min-n", type=positive_int, default=2, metavar="N",
                        help="smallest ambient dimension n; default 2")
    parser.add_argument("--max-rank", type=positive_int, metavar="R",
                        help="only flag types of rank (number of fixed points) ≤ R")
    parser.add_argument("--kind", choices=CLI_KINDS,
                        help="all (every flag type; default), grassmannian, complete, or "
                             "partial (neither a Grassmannian nor a complete flag variety)")
    parser.add_argument("--cases", metavar="'CASE;CASE;…'",
                        help="explicit cases instead of --kind/--max-n, e.g. 'Gr(2,4);Fl(3)'")


def add_run_options(parser, positive_int, *, store: str, unit: str) -> None:
    """The store, the workers and the per-`unit` limits, shared by `sweep` and `scan`."""
    parser.add_argument("--store", default=store, metavar="FILE",
                        help=f"SQLite results store (resumed when run again); default "
                             f"./{store}")
    parser.add_argument("--workers", type=positive_int, default=available_cores(),
                        help=f"{unit}s computed at once; default the number of cores")
    parser.add_argument("--case-timeout", type=_positive_float, metavar="SECONDS",
                        help=f"a {unit} running longer is stored as inconclusive (limit)")
    parser.add_argument("--case-memory", type=positive_int, metavar="MiB",
                        help=f"memory a {unit} may allocate; beyond it, inconclusive (limit)")


def add_arguments(parser, *, presentation_list, prime_argument, positive_int) -> None:
    from . import algebra, parameters
    parameters.add_argument(parser)
    add_case_selection(parser, positive_int)
    parser.add_argument("--presentations", type=presentation_list,
                        default=["whitney", "vieta"],
                        help="comma-separated names or files; default whitney,vieta")
    add_run_options(parser, positive_int, store=DEFAULT_STORE, unit="case")
    parser.add_argument("--cluster", metavar="ADDRESS", type=cluster_address,
                        help="run the cases on a Dask distributed cluster, e.g. "
                             "tcp://127.0.0.1:8786 (the store stays here)")
    parser.add_argument("--stop-at-first", action="store_true",
                        help="stop at the smallest disagreeing case and print its witness")
    parser.add_argument("--seed", type=int, default=0,
                        help="sweep seed; each case's seed derives from it (default 0)")
    parser.add_argument("--prime", type=prime_argument, default=algebra.DEFAULT_PRIME)
    parser.add_argument("--plain", action="store_true", help="non-equivariant: all T_j = 1")
    parser.add_argument("--order", type=positive_int, default=None,
                        help="truncation order N of the Bethe points (default: at least 6 and "
                             "2 + the largest q-degree among the relations)")
    parser.add_argument("--trials", type=positive_int, default=1)
    from .engine import METHODS
    parser.add_argument("--method", choices=METHODS, default="auto",
                        help="as for check (default auto: the exact route up to rank 5040)")
    from .sizes import OVERRIDE
    parser.add_argument(OVERRIDE, dest="no_size_limit", action="store_true",
                        help="start even a case the size estimate says cannot finish")
    from .sweep import FAILED_ATTEMPTS, RETRY_OPTION
    parser.add_argument(RETRY_OPTION, dest="retry_failed", action="store_true",
                        help=f"compute again the cases that crashed or failed "
                             f"{FAILED_ATTEMPTS} times (otherwise left as stored)")
    parser.add_argument("--json", action="store_true",
                        help="one JSON object at the end: cases, first_counterexample, counts")


CLI_KINDS = ("all", *KINDS)


def cluster_address(text: str) -> str:
    """A Dask scheduler address, [PROTOCOL://]HOST:PORT, checked here so that a typo is one
    line rather than an error from inside the cluster library."""
    import argparse
    import re
    match = re.fullmatch(r"(?:([a-z][a-z0-9+.-]*)://)?(\[[0-9a-fA-F:.]+\]|[A-Za-z0-9._-]+):(\d+)",
                         text.strip())
    host = match.group(2) if match else ""
    # a host name of labels longer than DNS allows ends in a UnicodeError from the idna codec
    # inside the cluster library (and after the store was created)
    bad_name = not host.startswith("[") and (
        len(host) > 253 or any(not 0 < len(label) <= 63 for label in host.rstrip(".").split(".")))
    if not match or not 0 < int(match.group(3)) < 65536 or bad_name:
        shown = text if len(text) <= 60 else text[:30] + "…" + text[-30:]
        raise argparse.ArgumentTypeError(
            f"{shown!r} is not a scheduler address; expected HOST:PORT or "
            "PROTOCOL://HOST:PORT (host name labels of at most 63 characters), e.g. "
            "tcp://127.0.0.1:8786")
    return text.strip()


def _positive_float(text: str) -> float:
    import argparse
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
    if not value > 0 or value == float("inf"):
        raise argparse.ArgumentTypeError(f"{text} must be a positive number of seconds")
    return value


def flags_from_arguments(args) -> List[FlagType]:
    if args.cases is not None:
        if args.max_n is not None or args.kind is not None or args.min_n != 2 or \
                args.max_rank is not None:
            raise UsageError("--cases lists the cases itself; leave out --kind, --max-n, "
                             "--min-n, --max-rank")
        flags = parse_case_list(args.cases)
        if not flags:
            raise UsageError(f"--cases {args.cases!r}: no case in the list")
        return flags
    if args.max_n is None:
        raise UsageError("say which cases: --max-n N (with --kind) or --cases 'CASE;…'")
    if args.max_n > MAX_SWEEP_N:
        raise UsageError(f"--max-n {args.max_n}: at most {MAX_SWEEP_N}")
    if args.min_n > args.max_n:
        raise UsageError(f"--min-n {args.min_n} is larger than --max-n {args.max_n}")
    kind = args.kind or "all"
    # the sweep machinery's "partial" is every flag type; on the command line that is "all"
    flags = enumerate_cases("partial" if kind in ("all", "partial") else kind, args.max_n,
                            args.min_n, args.max_rank)
    if kind == "partial":
        flags = [f for f in flags if not f.is_grassmannian and not f.is_complete]
    if not flags:
        raise UsageError(f"no flag type with {args.min_n} ≤ n ≤ {args.max_n}"
                         + (f" and rank ≤ {args.max_rank}" if args.max_rank else ""))
    return flags


def command(args) -> int:
    import json
    flags = flags_from_arguments(args)
    largest = max(f.n for f in flags)
    if not args.plain and args.prime - 2 < largest:
        raise UsageError(f"--prime {args.prime} is too small for {largest} distinct weights")
    if args.cluster:
        try:
            import distributed   # noqa: F401
        except ImportError:
            raise UsageError("--cluster needs Dask: pip install 'ringmatch[cluster]'") from None
    _store_path_usable(args.store)
    store_existed = _exists(args.store)
    _size_check(args, flags)
    from . import parameters
    values = parameters.resolved(args, args.presentations)
    plan = plan_sweep(flags, args.presentations, seed=args.seed, prime=args.prime,
                      equivariant=not args.plain, order=args.order, trials=args.trials,
                      method=args.method, values=values)
    limits = Limits(args.case_timeout, args.case_memory)
    progress = sweep_progress()
    try:
        outcome = run_sweep(plan, args.store, workers=args.workers, limits=limits,
                            stop_at_first=args.stop_at_first, cluster=args.cluster,
                            progress=progress, retry_failed=args.retry_failed)
    except KeyboardInterrupt:
        if progress is not None:
            progress.close()
        print(f"ringmatch: interrupted; {_stored_count(plan, args.store)} of {len(plan.flags)} "
              f"case(s) of this sweep are stored in {args.store}; resume with: "
              f"{_resume_command()}", file=sys.stderr)
        return 130
    except store.StoreError as error:
        raise UsageError(f"--store {error}") from None
    except Exception as error:
        if args.cluster and _is_connection_error(error):
            if not store_existed:
                _remove_empty_store(args.store)
            raise UsageError(f"--cluster {args.cluster}: cannot use the cluster "
                             f"({type(error).__name__}: {error})") from None
        if isinstance(error, (OSError, sqlite3.Error)):
            raise UsageError(f"--store {args.store}: {error}") from None
        raise
    finally:
        if progress is not None:
            progress.close()
    if args.json:
        print(json.dumps(outcome_json(outcome, args.store), indent=2))
    else:
        print(summary_text(outcome, store_path=args.store, cluster=args.cluster,
                           workers=args.workers))
    return sweep_status(outcome.ordered_results())


def sweep_status(results) -> int:
    """1 when any case disagrees, 0 when every case agrees (exactly), otherwise 3."""
    verdicts = {r.verdict for r in results}
    if "disagree" in verdicts:
        return 1
    return 0 if verdicts == {"agree"} else 3


def _store_path_usable(path: str) -> None:
    import os
    try:
        os.stat(path)
    except FileNotFoundError:
        pass
    except OSError as error:
        text = path if len(path) <= 60 else path[:30] + "…" + path[-30:]
        raise UsageError(f"--store {text!r}: {error.strerror or error}") from None


def _exists(path: str) -> bool:
    import os
    return os.path.lexists(path)


def _remove_empty_store(path: str) -> None:
    """A store this sweep created and left without a single result (the cluster could not be
    reached) is removed again, so that the refused sweep leaves nothing behind."""
    import os
    try:
        conn = sqlite3.connect(path, timeout=5)
        try:
            rows = conn.execute("SELECT count(*) FROM results").fetchone()[0]
        finally:
            conn.close()
    except sqlite3.Error:
        return
    if rows == 0:
        for name in (path, path + "-wal", path + "-shm", path + "-journal"):
            try:
                os.remove(name)
            except OSError:
                pass


def _size_check(args, flags) -> None:
    """Refuse a sweep whose largest case cannot finish, unless each case is bounded
    (--case-timeout, --case-memory: a worker past them is stopped and stored as a limit)."""
    from .sizes import SizeError, check_estimate, guard
    if args.no_size_limit or args.case_timeout is not None:
        return
    count = len(args.presentations)
    worst = max(flags, key=lambda f: check_estimate(f, args.method, args.order, args.trials,
                                                    count).seconds)
    try:
        guard(f"sweep case {worst.name}",
              check_estimate(worst, args.method, args.order, args.trials, count),
              allow_large=False)
    except SizeError as error:
        if args.case_memory is not None and "not attempted" in str(error):
            return      # beyond the machine's memory: the worker stops at its allowance
        raise SizeError(f"{error}; a sweep may still include it when each case is bounded "
                        "by --case-timeout") from None


def _stored_count(plan, store_path) -> int:
    try:
        conn = store.open_store(store_path)
        try:
            return len(store.finished_cases(conn, plan.settings) & {f.name for f in plan.flags})
        finally:
            conn.close()
    except (sqlite3.Error, OSError):
        return 0


def _resume_command() -> str:
    """The command as given: run again, it takes the stored cases and computes the rest."""
    import shlex
    return shlex.join(["ringmatch", *sys.argv[1:]])


def _is_connection_error(error: Exception) -> bool:
    return isinstance(error, (OSError, TimeoutError)) or \
        type(error).__module__.startswith(("distributed", "tornado", "asyncio"))
