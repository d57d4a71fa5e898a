"""`ringmatch demo`: an invented scenario, run end to end in well under a minute.

The Kestrel Lake working group (fictional) conjectures a presentation of QK_T of every
partial flag variety (presentations/files/demo/kestrel-conjecture.toml).  The demo

1. sweeps the established presentations (q-Whitney, Vieta, Bethe) over every flag type with
   n ≤ 5 and confirms that they agree;
2. sweeps the conjecture against q-Whitney in sweep order (n, rank, dims) and stops at the
   first counterexample;
3. writes, into the output folder, the discrepancy report of that counterexample, a table
   of each sweep, and both results stores (so `ringmatch table` can read them again);
4. scans the group's next conjecture, which has an unknown exponent, over the cases of step 1
   and shows the one value that survives (compare/demo_scan.py);
5. prints what it found.
"""
from __future__ import annotations

import json
import os
from pathlib import Path

from ringmatch.presentations.flagtype import parse_flag
from ringmatch.reports import sweeps as sweep_text

from . import sweep
from .cases import enumerate_cases
from .workers import available_cores

ESTABLISHED = ["whitney", "vieta", "bethe"]
CONJECTURE = "kestrel-conjecture"
CONFIRM_MAX_N = 5
# The five flag types with n = 5 and rank 60 or 120 take most of a minute on two cores by
# themselves (Gröbner bases of three presentations); the demo leaves them to a real sweep.
CONFIRM_MAX_RANK = 30
SEARCH_MAX_N = 6
DEFAULT_FOLDER = "ringmatch-demo"


def _fresh_store(path: Path) -> Path:
    # The demo shows a computation, not a lookup: its own stores start empty each time.
    for suffix in ("", "-wal", "-shm"):
        candidate = Path(str(path) + suffix)
        if candidate.exists():
            candidate.unlink()
    return path


def write_table(store_path: Path, target: Path, command: str = "ringmatch demo") -> Path:
    """The Markdown table of one store; its provenance names the demo command and the
    `ringmatch table` command that prints the same table again from the written store."""
    from ringmatch.reports.tables import TableOptions, render
    again = f"ringmatch table {store_path.parent.name}/{store_path.name} --format markdown"
    options = TableOptions(command=f"{command} (the same table again: {again})")
    target.write_text(render(str(store_path), "markdown", options), encoding="utf-8")
    return target


def write_counterexample(result, folder: Path) -> list:
    """The discrepancy report when reports/discrepancy.py provides one, else the JSON."""
    try:
        from .report_command import write_report
    except ImportError:
        path = folder / "counterexample.json"
        path.write_text(json.dumps(result.to_json(), indent=2) + "\n", encoding="utf-8")
        return [path]
    command = (f"ringmatch check \"{result.case}\" --presentations whitney,{CONJECTURE} "
               f"--seed {result.certificate.seed}")
    return list(write_report(result, folder, command=command))


def run_demo(folder, *, workers: int, confirm_max_n: int = CONFIRM_MAX_N,
             confirm_max_rank: int = CONFIRM_MAX_RANK, search_max_n: int = SEARCH_MAX_N,
             say=print, command: str = "ringmatch demo") -> dict:
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    progress = sweep.terminal_progress()

    say(f"The Kestrel Lake working group (an invented scenario) conjectures a presentation of "
        f"QK_T(Fl) for every flag variety:\n  {CONJECTURE} "
        f"(presentations/files/demo/{CONJECTURE}.toml).\n")
    cases = enumerate_cases("partial", confirm_max_n)
    kept = [f for f in cases if f.rank <= confirm_max_rank]
    scope = f"n ≤ {confirm_max_n}" + ("" if len(kept) == len(cases) else
                                      f" and rank ≤ {confirm_max_rank} ({len(kept)} of "
                                      f"{len(cases)})")
    say(f"Step 1: do the established presentations {', '.join(ESTABLISHED)} agree for every "
        f"flag type with {scope}?")
    if len(kept) < len(cases):
        say(f"  (all of them: ringmatch sweep --max-n {confirm_max_n} --presentations "
            f"{','.join(ESTABLISHED)})")
    confirm_store = _fresh_store(folder / "established.db")
    plan = sweep.plan_sweep(kept, ESTABLISHED,
                            seed=0, prime=_prime(), equivariant=True, order=6, trials=1,
                            method="auto")
    confirmed = sweep.run_sweep(plan, confirm_store, workers=workers, progress=progress,
                                command=command)
    plan_flags_confirmed = list(plan.flags)
    if progress:
        progress.close()
    counts = confirmed.counts()
    say(f"  {len(plan.flags)} flag types in {confirmed.wall:.1f} s: "
        + ", ".join(f"{counts[v]} {v}" for v in sweep_text.VERDICTS
                    if v in counts))
    if counts.get("agree") != len(plan.flags):
        say("  not every case agrees; see the table below")
        say(sweep_text.sweep_table(confirmed))

    say(f"\nStep 2: where does {CONJECTURE} first differ from whitney (n ≤ {search_max_n}, "
        "smallest case first)?")
    search_store = _fresh_store(folder / "conjecture.db")
    plan = sweep.plan_sweep(enumerate_cases("partial", search_max_n),
                            ["whitney", CONJECTURE], seed=0, prime=_prime(), equivariant=True,
                            order=6, trials=1, method="auto")
    searched = sweep.run_sweep(plan, search_store, workers=workers, stop_at_first=True,
                               progress=progress, command=command)
    if progress:
        progress.close()
    first = searched.first_counterexample
    written = [write_table(confirm_store, folder / "established-table.md", command),
               write_table(search_store, folder / "conjecture-table.md", command)]
    if first is None:
        say(f"  no counterexample with n ≤ {search_max_n} "
            f"({len(searched.results)} cases in {searched.wall:.1f} s)")
    else:
        agreed = [f.name for f in plan.flags[:plan.flags.index(parse_flag(first))]
                  if searched.results[f.name].verdict == "agree"]
        say(f"  it agrees with whitney on the {len(agreed)} cases before it in sweep order "
            f"({agreed[0]} … {agreed[-1]}) and first fails at {first} "
            f"({searched.wall:.1f} s):" if agreed else f"  it first fails at {first}:")
        for line in sweep_text.witness_lines(searched.results[first]):
            say("    " + line)
        written = write_counterexample(searched.results[first], folder) + written
    written += [confirm_store, search_store]
    from .demo_scan import run_scene
    scanned = run_scene(folder, plan_flags_confirmed, workers=workers, say=say, command=command)
    written += scanned["written"]
    say(f"\nWritten to {folder}{os.sep}: " + ", ".join(p.name for p in written))
    return {"confirmed": confirmed, "searched": searched, "first_counterexample": first,
            "scanned": scanned["scan"], "written": written}


def _prime() -> int:
    from . import algebra
    return algebra.DEFAULT_PRIME


def add_arguments(parser, *, positive_int) -> None:
    parser.add_argument("--out", default=DEFAULT_FOLDER, metavar="FOLDER",
                        help=f"folder for the report, tables and stores; default "
                             f"./{DEFAULT_FOLDER}/")
    parser.add_argument("--workers", type=positive_int, default=available_cores(),
                        help="cases computed at once; default the number of cores")
    parser.add_argument("--confirm-max-n", type=positive_int, default=CONFIRM_MAX_N,
                        metavar="N", help=f"step 1 up to this n; default {CONFIRM_MAX_N}")
    parser.add_argument("--confirm-max-rank", type=positive_int, default=CONFIRM_MAX_RANK,
                        metavar="R", help=f"step 1 only up to this rank; default "
                                          f"{CONFIRM_MAX_RANK}")


def demo_command(args) -> str:
    """The command line that repeats this demo (options left at their defaults omitted;
    the number of workers changes no result)."""
    import shlex
    words = ["ringmatch", "demo"]
    if str(args.out) != DEFAULT_FOLDER:
        words += ["--out", str(args.out)]
    if args.confirm_max_n != CONFIRM_MAX_N:
        words += ["--confirm-max-n", str(args.confirm_max_n)]
    if args.confirm_max_rank != CONFIRM_MAX_RANK:
        words += ["--confirm-max-rank", str(args.confirm_max_rank)]
    return shlex.join(words)


def command(args) -> int:
    from ringmatch.errors import UsageError
    if args.confirm_max_n < 2:
        raise UsageError(f"--confirm-max-n {args.confirm_max_n}: must be at least 2")
    try:
        run_demo(args.out, workers=args.workers, confirm_max_n=args.confirm_max_n,
                 confirm_max_rank=args.confirm_max_rank, command=demo_command(args))
    except OSError as error:
        raise UsageError(f"--out {args.out}: {error.strerror or error}") from None
    return 0

