"""Benchmark: the reference ideal of the exact route, q-Whitney at one specialisation.

The engine reduces every presentation modulo the q-Whitney ideal moved into the ring of the
λ_j(S_i) (each λ_j(Q_i) eliminated by the linear relation it appears in: docs/mathematics.md
§3).  This prints, per case, CPU seconds of that Gröbner basis (`moved`) and, as the
reference measured in the same run, of the basis of the same ideal in all its own
generators (`own`: what the engine computed before), with the ratio own / moved.

Targets for `moved` (CPU s, two-core development machine): Gr(5,10) ≤ 0.3,
Fl(1,3,5;7) ≤ 0.8, Fl(7) ≤ 30, Fl(2,4,6;8) ≤ 45.

    python benchmarks/exact_route.py [--quick] [--no-reference] [--seed N]
"""
from __future__ import annotations

import argparse
import time

from tabulate import tabulate

from ringmatch.compare import algebra, groebner, transport
from ringmatch.presentations import get_family
from ringmatch.presentations.flagtype import parse_flag
from ringmatch.presentations.interface import build_specialised

TARGETS = {"Gr(5,10)": 0.3, "Fl(6)": None, "Fl(1,3,5;7)": 0.8, "Fl(7)": 30,
           "Fl(2,4,6;8)": 45}
QUICK = ["Gr(5,10)", "Fl(6)", "Fl(1,3,5;7)"]


def cpu(work):
    started = time.process_time()
    value = work()
    return time.process_time() - started, value


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help=", ".join(QUICK))
    parser.add_argument("--no-reference", action="store_true",
                        help="skip the own-generator basis (slow on the largest cases)")
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args()
    rows = []
    for name in QUICK if args.quick else list(TARGETS):
        flag = parse_flag(name)
        spec = algebra.draw_specialisation(flag.n, flag.m, seed=args.seed)
        whitney = build_specialised(get_family("whitney"), flag, spec)
        C = transport.common_ring(flag, spec)
        moved_relations = [r.poly for r in transport.transport(whitney, C, spec)]
        moved, basis = cpu(lambda: groebner.groebner_basis(moved_relations))
        assert groebner.colength(basis) == flag.rank
        own = None
        if not args.no_reference:
            own, own_basis = cpu(lambda: groebner.groebner_basis(
                [r.poly for r in whitney.relations]))
            assert groebner.colength(own_basis) == flag.rank
        target = TARGETS.get(name)
        rows.append([flag.name, flag.rank, len(C.ctx.names()), f"{moved:.2f}",
                     "–" if own is None else f"{own:.2f}",
                     "–" if own is None else f"{own / moved:.1f}",
                     "–" if target is None else ("yes" if moved <= target else "NO")])
        print(tabulate([rows[-1]], tablefmt="plain"), flush=True)
    print()
    print(tabulate(rows, headers=["case", "rank", "variables", "moved CPU s", "own CPU s",
                                  "own / moved", "target met"]))


if __name__ == "__main__":
    main()
