"""Speed of `ringmatch schubert`: full non-equivariant multiplication tables.

    python benchmarks/schubert.py [--quick] [--seed S] [--candidates] [--bethe]

For every case the table of all products O_λ ⋆ O_μ of the built-in basis groth:S:1-x in the
whitney presentation is computed (every N_{λμ}^ν(q) exactly) with all checks.  The K-theoretic
Littlewood–Richardson reference (SymPy) is timed on its own first, so "constants" is the
presentation side alone (Gröbner bases at the interpolation values, linear algebra,
interpolation, lifting, checks) and "total" is both.  The issue's budgets on two cores are
30 s for Gr(3,6) (400 products) and 5 min for Gr(4,8) (4,900 products); "total/budget" is
the fraction used.  Times are CPU seconds of this process (the machine is shared); the
wall-clock time of the whole run is printed at the end.

--candidates also prints, for Gr(k;n) with n ≤ 6, which built-in candidates pass every check.
--bethe also times the table in `bethe`, whose quotient in the Chern roots is ∏k_i! times
larger, against the former way of building the multiplication matrices (normal forms of every
standard monomial times the polynomial; full matrices of every monomial) as the reference.
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

from ringmatch.compare import schubert, schubert_reference  # noqa: E402
from ringmatch.presentations import get_family  # noqa: E402
from ringmatch.presentations import schubert_bases as sb  # noqa: E402
from ringmatch.presentations.flagtype import parse_flag  # noqa: E402

CASES = ["Gr(2;4)", "Gr(2;5)", "Gr(3;6)", "Gr(3;7)", "Gr(4;8)"]
QUICK_CASES = ["Gr(2;4)", "Gr(3;6)"]
BUDGET = {"Gr(3;6)": 30.0, "Gr(4;8)": 300.0}


def reference_table(flag) -> float:
    k, n = flag.k(1), flag.n
    labels = sb.partitions_in_box(k, n - k)
    start = time.process_time()
    for i, lam in enumerate(labels):
        for mu in labels[i:]:
            schubert_reference.k_littlewood_richardson(lam, mu, k, n)
    return time.process_time() - start


def run(case: str, seed: int) -> list:
    flag = parse_flag(case)
    reference = reference_table(flag)
    basis = schubert.candidate_basis(flag, sb.candidate_named("groth:S:1-x"))
    start = time.process_time()
    result = schubert.structure_constants(flag, get_family("whitney"), basis, seed=seed)
    constants = time.process_time() - start
    total = reference + constants
    budget = BUDGET.get(flag.name)
    r = len(basis.labels)
    return [flag.name, r * r, len(result.constants), f"{constants:.2f}", f"{reference:.2f}",
            f"{total:.2f}", f"{total / budget:.3f}" if budget else "",
            "pass" if result.passed else "FAIL"]


def candidates(seed: int) -> None:
    rows = []
    for n in range(2, 7):
        for k in range(1, n):
            flag = parse_flag(f"Gr({k};{n})")
            passing = [c.name for c in sb.CANDIDATES
                       if schubert.structure_constants(flag, get_family("whitney"),
                                                       schubert.candidate_basis(flag, c),
                                                       seed=seed).passed]
            rows.append([flag.name, ", ".join(passing) or "none"])
    print(tabulate(rows, headers=["case", "candidates passing every check"]))


# The multiplication matrices as they were built before: one normal form per standard
# monomial for every matrix, and every monomial's full D×D matrix before multiplying by B.
# Kept here as the reference that --bethe measures against in the same run.

def _matrix_by_normal_forms(self, poly):
    columns = self.vectors([poly * self.monomial(m) for m in self.monomials])
    return flint.nmod_mat(self.dim, self.dim,
                          [columns[c][r] for r in range(self.dim) for c in range(self.dim)],
                          self.prime)


def _images_by_full_matrices(self, B):
    nvars = len(self.ctx.names())
    generators = [None] * nvars
    out = {tuple([0] * nvars): schubert._identity(self.dim, self.prime)}
    for b in sorted(self.monomials, key=sum):
        if sum(b) == 0:
            continue
        g = next(i for i, e in enumerate(b) if e)
        if generators[g] is None:
            generators[g] = _matrix_by_normal_forms(self, self.ctx.gens()[g])
        smaller = list(b)
        smaller[g] -= 1
        out[b] = generators[g] * out[tuple(smaller)]
    return [out[b] * B for b in self.monomials]


def bethe_table(case: str, seed: int, reference: bool) -> float:
    flag = parse_flag(case)
    basis = schubert.candidate_basis(flag, sb.candidate_named("groth:S:1-x"))
    saved = schubert.Quotient.matrix, schubert.Quotient.monomial_images
    if reference:
        schubert.Quotient.matrix = _matrix_by_normal_forms
        schubert.Quotient.monomial_images = _images_by_full_matrices
    try:
        start = time.process_time()
        result = schubert.structure_constants(flag, get_family("bethe"), basis, seed=seed)
        assert result.passed
        return time.process_time() - start
    finally:
        schubert.Quotient.matrix, schubert.Quotient.monomial_images = saved


def bethe(seed: int, quick: bool) -> None:
    rows = []
    for case in (["Gr(2;5)", "Gr(3;6)"] if quick else ["Gr(2;5)", "Gr(3;6)", "Gr(4;6)"]):
        ours = bethe_table(case, seed, reference=False)
        before = bethe_table(case, seed, reference=True)
        rows.append([case, f"{ours:.2f}", f"{before:.2f}", f"{before / ours:.1f}"])
    print(tabulate(rows, headers=["case (bethe)", "CPU s", "reference CPU s",
                                  "reference / ours"]))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help=f"only {', '.join(QUICK_CASES)}")
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--candidates", action="store_true")
    parser.add_argument("--bethe", action="store_true",
                        help="also the table in bethe (Chern roots), against the former "
                             "linear algebra as the reference")
    args = parser.parse_args()
    wall = time.perf_counter()
    rows = [run(case, args.seed) for case in (QUICK_CASES if args.quick else CASES)]
    print(tabulate(rows, headers=["case", "products", "nonzero N", "constants s", "K-LR s",
                                  "total s", "total/budget", "checks"]))
    if args.candidates:
        print()
        candidates(args.seed)
    if args.bethe:
        print()
        bethe(args.seed, args.quick)
    print(f"\nwall clock {time.perf_counter() - wall:.1f} s")


if __name__ == "__main__":
    main()
