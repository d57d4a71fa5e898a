"""Speed of the Bethe-point engine (compare/lifting.py, compare/points.py): lifting and the
Whitney "holds" test.

    python benchmarks/points.py [--quick] [--order N] [--seed S] [--sample K]

For every case, all torus-fixed points are lifted to order N (default 8) by Newton's
iteration with precision doubling, then every q-Whitney relation is evaluated at every
point.  Two references are measured in the same run, on the first K points (default 100):

  * "linear lift": the same equations lifted one order of s at a time with the inverse
    Jacobian frozen at s = 0 (its result must agree with Newton's, which is checked);
  * "compose holds": each relation evaluated by FLINT's general `nmod_mpoly.compose` with
    the generator values as polynomials in s, instead of the compiled evaluation.

The ratio columns are reference time over engine time, per point.  "µs/pt" is the whole
engine time (lift, its final check, holds) per point, and "vs first" compares it with the
first case, to show how the cost per point grows with the size of the flag.  All times are
CPU times of this process (the machine is shared, so wall-clock times mostly measure the
other jobs); the wall-clock time of the largest case is printed at the end for comparison.
"""
from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import flint
from tabulate import tabulate

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from ringmatch.compare import algebra, lifting, points  # noqa: E402
from ringmatch.compare import series as ps  # noqa: E402
from ringmatch.presentations import whitney  # noqa: E402
from ringmatch.presentations.flagtype import parse_flag  # noqa: E402
from ringmatch.presentations.interface import build_series  # noqa: E402

CASES = ["Gr(2;4)", "Gr(2;5)", "Gr(3;6)", "Gr(3;7)", "Gr(4;8)", "Gr(4;9)", "Gr(5;10)",
         "Fl(3)", "Fl(4)", "Fl(5)", "Fl(6)", "Fl(7)"]
QUICK_CASES = ["Gr(2;4)", "Gr(3;6)", "Gr(4;8)", "Fl(4)", "Fl(5)", "Fl(6)"]


def linear_lift(setup, fixed_point, order):
    """Reference: one order of s per step, with the inverse Jacobian at s = 0 only."""
    inverse = [lifting._initial_inverse(setup, fixed_point)]
    roots = [[setup.top[j - 1] for j in I] for I in fixed_point]
    for precision in range(1, order):
        values, _ = lifting._sweep(setup, roots, precision + 1, 0, [])
        correction = lifting._newton_correction(setup, inverse, values, precision, 1)
        flat = [x for level in roots for x in level]
        roots = lifting._split_levels(setup, [x - c.left_shift(precision)
                                             for x, c in zip(flat, correction)])
    return roots


def compose_holds(presentation, values_per_point, order):
    """Reference: FLINT's general composition, then truncation mod s^order."""
    p = presentation.ring.ctx.modulus()
    line = flint.nmod_mpoly_ctx.get(("s",), p, "lex")
    s = line.gens()[0]
    names = presentation.generator_names
    failures = 0
    for values in values_per_point:
        images = [line.from_dict({(t,): int(c) for t, c in enumerate(values[name].coeffs())})
                  for name in names] + [s]
        for relation in presentation.relations:
            image = relation.poly.compose(*images, ctx=line)
            if any(e < order and int(c) for (e,), c in zip(image.monoms(), image.coeffs())):
                failures += 1
    return failures


def run_case(case, order, seed, sample):
    flag = parse_flag(case)
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=seed, q_on_line=True)
    wall = time.perf_counter()
    started = time.process_time()
    lifted = lifting.lift_points(flag, spec, order)
    lift_time = time.process_time() - started
    started = time.process_time()
    result = points.check_holds_family(whitney.FAMILY, flag, lifted)
    holds_time = time.process_time() - started
    wall = time.perf_counter() - wall
    if not result.holds:
        raise SystemExit(f"{case}: the Whitney relations do not hold: {result.failures[:1]}")

    few = lifted.points[:sample]
    setup = lifting.make_setup(flag, spec)
    started = time.process_time()
    for point in few:
        reference = linear_lift(setup, point.fixed_point, order)
        if [[ps.coefficients(x, order) for x in level] for level in reference] != \
                [[ps.coefficients(x, order) for x in level] for level in point.roots]:
            raise SystemExit(f"{case}: linear and Newton lifts differ at {point.fixed_point}")
    linear_time = (time.process_time() - started) / len(few)

    presentation = build_series(whitney.FAMILY, flag, spec)
    subset = lifting.BethePoints(flag, spec, order, few)
    started = time.process_time()
    points.check_holds(presentation, subset)
    our_holds_sample = (time.process_time() - started) / len(few)
    values = points.generator_values(subset, presentation.generators)
    started = time.process_time()
    if compose_holds(presentation, values, order):
        raise SystemExit(f"{case}: the compose reference finds a failing relation")
    compose_time = (time.process_time() - started) / len(few)

    rank = len(lifted.points)
    return {"case": case, "points": rank, "unknowns": sum(flag.dims),
            "lift s": lift_time, "holds s": holds_time,
            "points/s": rank / (lift_time + holds_time),
            "µs/pt": 1e6 * (lift_time + holds_time) / rank,
            "linear lift ×": linear_time / (lift_time / rank),
            "compose holds ×": compose_time / our_holds_sample, "wall s": wall}


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="smaller cases only")
    parser.add_argument("--order", type=int, default=8)
    parser.add_argument("--seed", type=int, default=2024)
    parser.add_argument("--sample", type=int, default=100,
                        help="points on which the references are timed")
    args = parser.parse_args()
    cpu = time.process_time()
    run_case("P2", args.order, args.seed, 1)      # warm-up: imports and first-call costs
    rows = []
    for case in (QUICK_CASES if args.quick else CASES):
        row = run_case(case, args.order, args.seed, args.sample)
        row["vs first"] = row["µs/pt"] / (rows[0]["µs/pt"] if rows else row["µs/pt"])
        rows.append(row)
        print(f"  {case}: {row['points']} points, {row['lift s'] + row['holds s']:.2f} s CPU, "
              f"{row['wall s']:.2f} s wall", file=sys.stderr, flush=True)
    print(f"order {args.order}, prime {algebra.DEFAULT_PRIME}, seed {args.seed}; "
          f"references timed on the first {args.sample} points of each case")
    largest = rows[-1]
    print(tabulate([{k: v for k, v in row.items() if k != "wall s"} for row in rows],
                   headers="keys", floatfmt=".3g"))
    print(f"{largest['case']}: lift + holds {largest['lift s'] + largest['holds s']:.1f} s CPU, "
          f"{largest['wall s']:.1f} s wall-clock; CPU time of the whole run "
          f"{time.process_time() - cpu:.1f} s")


if __name__ == "__main__":
    main()
