"""Speed of scans (compare/scan.py): the 7×7 level grid of `coulomb-levels` over Grassmannians.

    python benchmarks/scan.py [--max-n 6] [--workers 2] [--kind grassmannian] [--colengths]
                              [--cases 'Gr(2,4);P3']

Runs the scan once into a fresh results store and prints

  * a summary table: checks, wall time, the sum of the per-check times, how many grid points
    the Bethe points refuted (those cost no Gröbner basis: their colength is not computed),
    how many went on to the full check, and the verdict counts;
  * per case: checks, seconds, refuted, agreeing values;
  * the slowest checks.

Target (issue 16): the 7×7 grid for every Grassmannian with n ≤ 6 (15 cases, 735 checks) in
at most 2 minutes wall on two cores.  Wall-clock times on a shared machine include the other
jobs running there.

Measured (two workers, machine shared with other jobs): n ≤ 6, 735 checks in 58 s wall, 690
refuted at the Bethe points (no Gröbner basis), 45 full checks (all agree: a + b = 0 on the
projective spaces, a = b = 0 elsewhere); with --colengths (a Gröbner basis for every point)
also 58 s; every flag type with n ≤ 4 with --colengths, 539 checks, 3 min 12 s.
"""
from __future__ import annotations

import argparse
import sys
import tempfile
import time
from collections import Counter
from pathlib import Path

from tabulate import tabulate

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from ringmatch.compare import scan, sweep  # noqa: E402
from ringmatch.compare.cases import KINDS, enumerate_cases, parse_case_list  # noqa: E402


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--max-n", type=int, default=6)
    parser.add_argument("--kind", default="grassmannian", choices=KINDS)
    parser.add_argument("--cases", help="explicit cases instead of --kind/--max-n")
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--colengths", action="store_true",
                        help="colengths for every grid point (a Gröbner basis each)")
    parser.add_argument("--presentation", default="coulomb-levels")
    parser.add_argument("--slowest", type=int, default=8)
    args = parser.parse_args()
    flags = parse_case_list(args.cases) if args.cases else \
        enumerate_cases(args.kind, args.max_n)
    plan = scan.plan_scan(args.presentation, flags, colengths=args.colengths, max_grid=10**6)
    with tempfile.TemporaryDirectory() as folder:
        started = time.perf_counter()
        outcome = scan.run_scan(plan, Path(folder) / "scan.db", workers=args.workers,
                                progress=sweep.terminal_progress())
        wall = time.perf_counter() - started
    records = list(outcome.results.values())
    refuted = sum(1 for r in records if r["refuted_by_points"])
    verdicts = Counter(r["verdict"] for r in records)
    print(f"{args.presentation} over {len(plan.flags)} case(s) × {len(plan.points)} grid "
          f"point(s), {args.workers} worker(s)" + (", colengths everywhere" if args.colengths
                                                    else ""))
    print(tabulate([[len(records), f"{wall:.1f}", f"{sum(r['seconds'] for r in records):.1f}",
                     refuted, len(records) - refuted,
                     ", ".join(f"{verdicts[v]} {v}" for v in sorted(verdicts))]],
                   headers=["checks", "wall s", "sum of check s", "refuted by points",
                            "full checks", "verdicts"], disable_numparse=True))
    print()
    rows = []
    for flag in plan.flags:
        mine = [outcome.record(flag, p) for p in plan.points]
        mine = [r for r in mine if r is not None]
        rows.append([flag.name, flag.rank, len(mine), f"{sum(r['seconds'] for r in mine):.1f}",
                     sum(1 for r in mine if r["refuted_by_points"]),
                     "; ".join(scan.point_text(p) for p in outcome.agreeing(flag)) or "none"])
    print(tabulate(rows, headers=["case", "rank", "checks", "seconds", "refuted", "agree"],
                   disable_numparse=True))
    print()
    slowest = sorted(records, key=lambda r: -r["seconds"])[:args.slowest]
    print(tabulate([[r["case"], scan.point_text(tuple(r["values"].items())), r["seconds"],
                     r["verdict"], r["colength"]] for r in slowest],
                   headers=["slowest checks", "values", "seconds", "verdict", "colength"],
                   disable_numparse=True))


if __name__ == "__main__":
    main()
