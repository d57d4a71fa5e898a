"""Human-readable summaries of a `check` result (a `compare.records.CaseResult`)."""
from __future__ import annotations

from tabulate import tabulate

from ringmatch.compare.records import (CaseResult, Certificate, PairResult, PresentationResult,
                                       Witness)


def _mark(value) -> str:
    return {True: "yes", False: "NO", None: "–"}.get(value, str(value))


def _holds(p: PresentationResult) -> str:
    """yes / NO when exact (or refuted); "to s^N" when only the points were checked."""
    if p.holds is None and p.holds_to_order:
        return f"to s^{p.holds_to_order}"
    return _mark(p.holds)


def presentation_rows(result: CaseResult) -> list:
    return [[name, p.generators, p.relations, p.expected_colength, _mark(p.colength),
             _mark(p.classical_colength), _holds(p), _mark(p.complete)]
            for name, p in result.presentations.items()]


PRESENTATION_HEADERS = ["presentation", "gens", "rels", "expected", "colength",
                        "colength q=0", "holds", "complete"]


def certificate_line(certificate: Certificate) -> str:
    parts = [f"prime {certificate.prime}", f"seed {certificate.seed}",
             f"method {certificate.method or 'groebner'}"]
    if certificate.order:
        parts.append(f"order s^{certificate.order}")
    if len(certificate.trials) > 1:
        parts.append(f"{len(certificate.trials)} trials")
    parts.append(certificate.kind or "probabilistic")
    if certificate.prime_note:
        parts.append(certificate.prime_note)
    return ", ".join(parts)


def check_text(result: CaseResult) -> str:
    lines = [f"{result.case}: rank {result.rank}, "
             f"{'equivariant' if result.equivariant else 'non-equivariant'}", ""]
    lines.append(tabulate(presentation_rows(result), headers=PRESENTATION_HEADERS))
    if result.pairs:
        lines.append("")
        lines.append(tabulate([[p.a, p.b, p.verdict, p.method, p.reason] for p in result.pairs],
                              headers=["first", "second", "verdict", "method", "why"]))
        for pair in result.pairs:
            for w in pair.witnesses:
                lines.append("  " + witness_text(pair, w))
    lines += ["", f"verdict: {result.verdict} ({result.reason})",
              f"certificate: {certificate_line(result.certificate)}"]
    return "\n".join(lines)


def witness_text(pair: PairResult, w: Witness) -> str:
    if w.fails_at_points is None:
        return (f"{pair.a}–{pair.b}: relation [{w.relation}] of {w.relation_of} "
                f"is not in {w.not_in}; its normal form is {w.normal_form}")
    failure = w.fails_at_points
    return (f"{pair.a}–{pair.b}: relation [{w.relation}] of {w.relation_of} fails at fixed "
            f"point {failure.fixed_point} from order s^{failure.lowest_power}")
