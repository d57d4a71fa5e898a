"""Speed of the isomorphism finder (compare/iso.py): search, exact reconstruction, verification.

    python benchmarks/iso.py [--quick] [--seed S]

For every case the whole `find_isomorphism` runs (both directions: the map and its inverse),
and its phases are timed.  Two references are measured in the same run, on the same case:

  * "lift": lifting all Bethe points once to the search order s^16 (the least any search
    at the points must do);
  * "GB": the reduced Gröbner basis of the source presentation at one specialisation, units
    inverted (what a single Gröbner-based comparison would cost).

The ratio columns are the finder's total over each reference.  Target: the vieta → whitney
maps of Fl(1,3;6) and Gr(3,7) found, reconstructed exactly and verified in under 60 s each.
The last rows sweep every flag type with n = 5 (the suite's sweep of the same, as a time).
All times are CPU seconds of this process (the machine is shared with other jobs).
"""
from __future__ import annotations

import argparse
import itertools
import sys
import time
from pathlib import Path

from tabulate import tabulate

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from ringmatch.compare import algebra, iso, lifting  # noqa: E402
from ringmatch.compare.engine import own_ideal  # noqa: E402
from ringmatch.presentations import FAMILIES  # noqa: E402
from ringmatch.presentations.flagtype import FlagType, parse_flag  # noqa: E402

TARGET_CASES = [("Fl(1,3;6)", "vieta", "whitney"), ("Gr(3,7)", "vieta", "whitney")]
MORE_CASES = [("Fl(4)", "toda", "whitney"), ("Gr(2,5)", "vieta-eliminated", "whitney"),
              ("Fl(5)", "vieta", "whitney"), ("Fl(1,2,4;6)", "vieta", "whitney")]
TARGET_SECONDS = 60.0


def cpu(f, *args, **kwargs):
    start = time.process_time()
    value = f(*args, **kwargs)
    return value, time.process_time() - start


def measure(case, source, target, seed):
    flag = parse_flag(case)
    result, total = cpu(iso.find_isomorphism, flag, FAMILIES[source], FAMILIES[target], seed=seed)
    line = algebra.draw_specialisation(flag.n, flag.m, seed=seed, q_on_line=True)
    _, lift = cpu(lifting.lift_points, flag, line, iso.Bounds().order)
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=seed)
    _, basis = cpu(own_ideal, FAMILIES[source], flag, spec)
    t = result.timings
    verify = t.get("verification at points", 0) + t.get("verification by Gröbner bases", 0)
    return [f"{source} → {target}", case, flag.rank,
            "verified" if result.verified else result.status,
            f"{t.get('search', 0):.2f}", f"{t.get('reconstruction', 0):.2f}", f"{verify:.2f}",
            f"{total:.2f}", f"{lift:.3f}", f"{total / lift:.0f}", f"{basis:.3f}",
            f"{total / basis:.1f}"], total, result.verified


def sweep(n, seed):
    start = time.process_time()
    verified = 0
    count = 0
    for size in range(1, n):
        for dims in itertools.combinations(range(1, n), size):
            flag = FlagType(dims, n)
            count += 1
            result = iso.find_isomorphism(flag, FAMILIES["vieta"], FAMILIES["whitney"], seed=seed)
            verified += result.verified
    return count, verified, time.process_time() - start


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="only the two target cases")
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args(argv)
    cases = TARGET_CASES + ([] if args.quick else MORE_CASES)
    rows, failures = [], []
    for case, source, target in cases:
        row, total, verified = measure(case, source, target, args.seed)
        rows.append(row)
        if (case, source, target) in TARGET_CASES and (total > TARGET_SECONDS or not verified):
            failures.append(case)
        print(f"  {case}: {row[3]} in {total:.2f} s", file=sys.stderr, flush=True)
    print(tabulate(rows, headers=["map", "case", "rank", "result", "search s", "rebuild s",
                                  "verify s", "total s", "lift s", "×lift", "GB s", "×GB"],
                   colalign=("left", "left") + ("right",) * 10))
    if not args.quick:
        count, verified, seconds = sweep(5, args.seed)
        print(f"\nvieta → whitney for all {count} flag types with n = 5: {verified} verified, "
              f"{seconds:.1f} s in total")
    print(f"\ntarget: the two maps {', '.join(c for c, _, _ in TARGET_CASES)} verified in under "
          f"{TARGET_SECONDS:.0f} s each: " + ("met" if not failures else
                                              "NOT met for " + ", ".join(failures)))
    return 0 if not failures else 1


if __name__ == "__main__":
    sys.exit(main())
