"""Benchmark: whole checks of whitney, vieta and bethe in the default (exact) mode.

Prints, per case, CPU and wall seconds of `check_case` with the default method (the points
first, then the exact route on every presentation), its split into the exact route and the
points, whether every pair was decided exactly, and, as the reference measured in the same
run, the points-only check of the same case (ratio = default / points only).  A last row
times a disagreement the points find on the largest case (a perturbed Whitney family): it
must come without any Gröbner basis.

Targets (CPU s on the two-core development machine): Fl(6) ≤ 10, Fl(1,3,5;7) ≤ 15,
Fl(7) ≤ 180, Fl(2,4,6;8) ≤ 180; the points' disagreement on Fl(7) ≤ 60.

    python benchmarks/check.py [--quick] [--cases "Fl(6) Fl(2,4,6;8)"]
"""
from __future__ import annotations

import argparse
import time
from pathlib import Path

from tabulate import tabulate

from ringmatch.compare.engine import check_case
from ringmatch.presentations import get_family
from ringmatch.presentations.flagtype import parse_flag

NAMES = ("whitney", "vieta", "bethe")
TARGETS = {"Fl(6)": 10, "Fl(1,3,5;7)": 15, "Fl(7)": 180, "Fl(2,4,6;8)": 180}
PERTURBED = Path(__file__).resolve().parent.parent / "tests" / "perturbations" / \
    "truncated-geometric.toml"


def timed(flag, names, method):
    wall, cpu = time.perf_counter(), time.process_time()
    result = check_case(flag, [get_family(n) for n in names], seed=1, method=method)
    return time.perf_counter() - wall, time.process_time() - cpu, result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="Fl(5), Fl(6), Fl(1,3,5;7) only")
    parser.add_argument("--cases", default=None, help="case names separated by spaces")
    args = parser.parse_args()
    names = args.cases.split() if args.cases else (
        ["Fl(5)", "Fl(6)", "Fl(1,3,5;7)"] if args.quick else list(TARGETS))
    rows = []
    for name in names:
        flag = parse_flag(name)
        wall, cpu, result = timed(flag, NAMES, "auto")
        points_wall, _, _ = timed(flag, NAMES, "points")
        exact = all(p.exact for p in result.pairs)
        target = TARGETS.get(name)
        rows.append([flag.name, flag.rank, result.verdict, "yes" if exact else "NO",
                     f"{cpu:.1f}", f"{wall:.1f}", f"{result.timings['groebner']:.1f}",
                     f"{result.timings['points']:.1f}", f"{points_wall:.1f}",
                     f"{wall / points_wall:.1f}",
                     "–" if target is None else ("yes" if cpu <= target else "NO")])
        print(tabulate([rows[-1]], tablefmt="plain"), flush=True)
    largest = parse_flag(names[-1])
    wall, cpu, result = timed(largest, ("whitney", str(PERTURBED)), "auto")
    rows.append([f"{largest.name} perturbed", largest.rank, result.verdict,
                 result.pairs[0].method, f"{cpu:.1f}", f"{wall:.1f}",
                 f"{result.timings['groebner']:.1f}", f"{result.timings['points']:.1f}",
                 "", "", "yes" if result.timings["groebner"] < 1 and cpu <= 60 else "NO"])
    print()
    print(tabulate(rows, headers=["case", "rank", "verdict", "exact", "CPU s", "wall s",
                                  "exact route s", "points s", "points-only s", "ratio",
                                  "target met"]))


if __name__ == "__main__":
    main()
