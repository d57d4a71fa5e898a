"""Speed of sweeps (compare/sweep.py): every partial flag type up to n, several workers.

    python benchmarks/sweep.py [--max-n 6] [--workers 2] [--presentations whitney,vieta,bethe]
                               [--no-reference] [--slowest 10]

Runs the sweep twice in this process, each time into a fresh results store: with
`--workers` worker processes, and as the reference with one worker.  Prints

  * a summary table: cases, wall time, the sum of the per-case times, the slowest case, and
    the ratio of the reference's wall time to each run's (the speed-up from parallelism);
  * the slowest cases: seconds with each setting, and the engine's split of the case's time
    between Gröbner bases and Bethe points (from the result's `timings`), so a slow case
    shows why it is slow.

Targets (issue 7): n ≤ 6 (57 flag types) under 30 s wall with 2 workers; n ≤ 7 (120) under
5 minutes.  Wall-clock times on a shared machine include the other jobs running there.
"""
from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

from tabulate import tabulate

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from ringmatch.compare import algebra, sweep  # noqa: E402
from ringmatch.compare.cases import enumerate_cases  # noqa: E402


def timed_sweep(flags, names, workers, folder: Path, label: str):
    plan = sweep.plan_sweep(flags, names, seed=0, prime=algebra.DEFAULT_PRIME,
                            equivariant=True, order=6, trials=1, method="auto")
    started = time.perf_counter()
    outcome = sweep.run_sweep(plan, folder / f"{label}.db", workers=workers,
                              progress=sweep.terminal_progress())
    return outcome, time.perf_counter() - started


def summary_row(label, workers, outcome, wall, reference_wall):
    seconds = outcome.seconds
    slowest = max(seconds, key=seconds.get)
    counts = outcome.counts()
    return [label, workers, len(outcome.results), f"{wall:.1f}", f"{sum(seconds.values()):.1f}",
            f"{slowest} {seconds[slowest]:.1f}",
            ", ".join(f"{counts[v]} {v}" for v in sorted(counts)),
            f"{reference_wall / wall:.2f}" if reference_wall else "–"]


def slowest_rows(runs, count):
    main = runs[0][1]
    names = sorted(main.seconds, key=main.seconds.get, reverse=True)[:count]
    rows = []
    for name in names:
        result = main.results[name]
        timings = result.timings
        row = [name, result.rank, result.verdict]
        row += [f"{outcome.seconds.get(name, float('nan')):.2f}" for _, outcome, _ in runs]
        row += [f"{timings.get('groebner', 0.0):.2f}", f"{timings.get('points', 0.0):.2f}"]
        notes = [note for p in result.presentations.values()
                 for note in p.notes if note.startswith("no Gröbner")]
        row.append("Gröbner skipped for some" if notes else "")
        rows.append(row)
    return rows


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--max-n", type=int, default=6)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--presentations", default="whitney,vieta,bethe")
    parser.add_argument("--no-reference", action="store_true",
                        help="skip the one-worker reference run")
    parser.add_argument("--slowest", type=int, default=10)
    args = parser.parse_args(argv)
    names = args.presentations.split(",")
    flags = enumerate_cases("partial", args.max_n)
    print(f"sweep benchmark: {len(flags)} flag types with n ≤ {args.max_n}, "
          f"presentations {', '.join(names)}", flush=True)
    with tempfile.TemporaryDirectory(prefix="ringmatch-bench-") as folder:
        folder = Path(folder)
        runs = [(f"{args.workers} workers", *timed_sweep(flags, names, args.workers, folder,
                                                          "main"), args.workers)]
        if not args.no_reference and args.workers != 1:
            runs.append(("reference", *timed_sweep(flags, names, 1, folder, "reference"), 1))
        reference_wall = runs[-1][2] if len(runs) > 1 else None
        for (_, a, _, _), (_, b, _, _) in zip(runs, runs[1:]):
            differing = [c for c in a.results
                         if a.results[c].verdict != b.results[c].verdict]
            if differing:
                print(f"WARNING: verdicts differ between runs for {', '.join(differing)}")
    print()
    print(tabulate([summary_row(label, workers, outcome, wall, reference_wall)
                    for label, outcome, wall, workers in runs],
                   headers=["run", "workers", "cases", "wall s", "Σ case s", "slowest case",
                            "verdicts", "ref/this"], disable_numparse=True))
    print()
    print(f"slowest {args.slowest} cases (seconds per case in each run; engine split of the "
          f"first run's time):")
    print(tabulate(slowest_rows([(label, outcome, wall) for label, outcome, wall, _ in runs],
                                args.slowest),
                   headers=["case", "rank", "verdict", *[label for label, *_ in runs],
                            "Gröbner s", "points s", "note"], disable_numparse=True))
    return 0


if __name__ == "__main__":
    sys.exit(main())
