"""Human-readable text of a sweep: the table of cases, the counts, the first counterexample
with its witnesses (rendered from a `compare.sweep.SweepOutcome`, never computed here)."""
from __future__ import annotations

from typing import Dict, List, Optional, Sequence, Tuple

from ringmatch.compare.records import CaseResult

from .frames import VERDICTS
from .summary import witness_text

# `SweepOutcome` in the annotations is compare.sweep.SweepOutcome, named but not imported:
# reports import no computing module, not even for type checking (tests/test_layers.py).


def table_rows(outcome: SweepOutcome) -> List[list]:
    rows = []
    for flag in outcome.plan.flags:
        result = outcome.results.get(flag.name)
        if result is None:
            continue
        rows.append([flag.name, flag.n, flag.rank, result.verdict,
                     f"{outcome.seconds.get(flag.name, 0.0):.2f}", result.reason])
    return rows


TABLE_HEADERS = ["case", "n", "rank", "verdict", "seconds", "reason"]


def sweep_table(outcome: SweepOutcome, tablefmt: str = "simple") -> str:
    from tabulate import tabulate
    return tabulate(table_rows(outcome), headers=TABLE_HEADERS, tablefmt=tablefmt,
                    disable_numparse=True)


def witness_lines(result: CaseResult) -> List[str]:
    lines = [f"{pair.a} vs {pair.b}: {pair.reason}"
             for pair in result.pairs if pair.verdict == "disagree"]
    for pair in result.pairs:
        if pair.verdict == "disagree":
            lines += ["  " + witness_text(pair, w) for w in pair.witnesses]
    for name, report in result.presentations.items():
        if report.complete is False and not any(
                pair.verdict == "disagree" for pair in result.pairs):
            lines.append(f"{name} does not present the ring (holds: {report.holds}, "
                         f"classical colength {report.classical_colength}, expected "
                         f"{report.expected_colength})")
    return lines


def summary_text(outcome: SweepOutcome, *, store_path, cluster: Optional[str] = None,
                 workers: int = 1) -> str:
    plan = outcome.plan
    names = ", ".join(p["name"] for p in plan.settings["presentations"])
    where = f"Dask cluster {cluster}" if cluster else f"{workers} worker(s)"
    lines = [f"sweep of {len(plan.flags)} case(s): {names}; store {store_path}",
             f"{len(outcome.from_store)} from the store, {len(outcome.computed)} computed on "
             f"{where} in {outcome.wall:.1f} s", ""]
    if outcome.results:
        lines += [sweep_table(outcome), ""]
    counts = outcome.counts()
    lines.append("counts: " + (", ".join(f"{v} {counts[v]}" for v in VERDICTS if v in counts)
                               or "no cases"))
    up_to = exact_agreement_rank(outcome)
    if up_to:
        lines.append(f"agree exactly on every case up to rank {up_to} "
                     "(consistent cases do not count)")
    if plan.skipped:
        lines.append(f"skipped {len(plan.skipped)} case(s) a presentation has nothing for: "
                     + skipped_text(plan.skipped))
    first = outcome.first_counterexample
    lines.append(f"first counterexample: {first or 'none'}")
    if first:
        lines += ["  " + line for line in witness_lines(outcome.results[first])]
    if outcome.not_run:
        lines.append(f"not run after the first counterexample: {len(outcome.not_run)} case(s)")
    return "\n".join(lines)


def exact_agreement_rank(outcome: SweepOutcome) -> Optional[int]:
    """The largest rank R such that every case of rank ≤ R in the results agrees (`agree`
    is exact; `consistent` is not agreement), or None."""
    results = [(outcome.results[f.name].rank or f.rank, outcome.results[f.name].verdict)
               for f in outcome.plan.flags if f.name in outcome.results]
    failing = [rank for rank, verdict in results if verdict != "agree"]
    bound = min(failing) if failing else None
    agreeing = [rank for rank, verdict in results
                if verdict == "agree" and (bound is None or rank < bound)]
    return max(agreeing) if agreeing else None


def skipped_text(skipped: Sequence[Tuple[str, str]]) -> str:
    by_reason: Dict[str, List[str]] = {}
    for case, reason in skipped:
        by_reason.setdefault(reason, []).append(case)
    parts = []
    for reason, cases in by_reason.items():
        shown = ", ".join(cases[:6]) + (f", … ({len(cases)} in all)" if len(cases) > 6 else "")
        parts.append(f"{shown} ({reason})")
    return "; ".join(parts)
