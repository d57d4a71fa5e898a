"""Benchmark: the full four-way check (whitney, vieta, vieta-eliminated, bethe) per case.

Prints, for Gr(k;n) with n ≤ 9 and Fl(n) with n ≤ 6 (Fl(n) also with toda), the wall time of
`ringmatch check` with the default method, split into Gröbner and Bethe-point time, and as
a reference measured in the same run the points-only check of the same case (ratio = full /
points only).  Project target: every case with rank ≤ 720 in under 30 s.

    python benchmarks/check.py [--quick] [--max-grassmannian-n 9] [--max-complete-n 6]
"""
from __future__ import annotations

import argparse
import time

from tabulate import tabulate

from ringmatch.compare.engine import check_case
from ringmatch.presentations import get_family
from ringmatch.presentations.flagtype import FlagType

FOUR_WAY = ("whitney", "vieta", "vieta-eliminated", "bethe")


def cases(max_gr: int, max_fl: int):
    out = [FlagType((k,), n) for n in range(2, max_gr + 1) for k in range(1, n)]
    out += [FlagType(tuple(range(1, n)), n) for n in range(3, max_fl + 1)]
    return sorted(set(out), key=lambda f: (f.rank, f.n, f.dims))


def timed_check(flag: FlagType, method: str):
    names = FOUR_WAY + (("toda",) if flag.is_complete else ())
    started = time.perf_counter()
    result = check_case(flag, [get_family(n) for n in names], seed=1, method=method)
    return time.perf_counter() - started, result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="n ≤ 6 Grassmannians, Fl(n ≤ 4)")
    parser.add_argument("--max-grassmannian-n", type=int, default=9)
    parser.add_argument("--max-complete-n", type=int, default=6)
    args = parser.parse_args()
    max_gr, max_fl = (6, 4) if args.quick else (args.max_grassmannian_n, args.max_complete_n)
    rows = []
    for flag in cases(max_gr, max_fl):
        full, result = timed_check(flag, "auto")
        points_only, _ = timed_check(flag, "points")
        rows.append([flag.name, flag.rank, result["verdict"], f"{full:.2f}",
                     f"{result['timings']['groebner']:.2f}", f"{result['timings']['points']:.2f}",
                     f"{points_only:.2f}", f"{full / points_only:.1f}",
                     "yes" if flag.rank > 720 or full < 30 else "NO"])
        print(tabulate([rows[-1]], tablefmt="plain"), flush=True)
    print()
    print(tabulate(rows, headers=["case", "rank", "verdict", "check s", "Gröbner s", "points s",
                                  "points-only s", "ratio", "≤ 30 s"]))


if __name__ == "__main__":
    main()
