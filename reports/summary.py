"""Human-readable summaries of a `check` result (the JSON-able dict from compare.engine)."""
from __future__ import annotations

from tabulate import tabulate


def _mark(value) -> str:
    return {True: "yes", False: "NO", None: "–"}.get(value, str(value))


def _holds(p: dict) -> str:
    """yes / NO when exact (or refuted); "to s^N" when only the points were checked."""
    if p.get("holds") is None and p.get("holds_to_order"):
        return f"to s^{p['holds_to_order']}"
    return _mark(p.get("holds"))


def presentation_rows(result: dict) -> list:
    rows = []
    for name, p in result["presentations"].items():
        rows.append([name, p["generators"], p["relations"], p["expected_colength"],
                     _mark(p["colength"]), _mark(p["classical_colength"]), _holds(p),
                     _mark(p["complete"])])
    return rows


PRESENTATION_HEADERS = ["presentation", "gens", "rels", "expected", "colength",
                        "colength q=0", "holds", "complete"]


def certificate_line(certificate: dict) -> str:
    parts = [f"prime {certificate['prime']}", f"seed {certificate['seed']}",
             f"method {certificate.get('method', 'groebner')}"]
    if certificate.get("order"):
        parts.append(f"order s^{certificate['order']}")
    trials = certificate.get("trials")
    if trials and len(trials) > 1:
        parts.append(f"{len(trials)} trials")
    parts.append(certificate.get("kind", "probabilistic"))
    return ", ".join(parts)


def check_text(result: dict) -> str:
    lines = [f"{result['case']}: rank {result['rank']}, "
             f"{'equivariant' if result['equivariant'] else 'non-equivariant'}", ""]
    lines.append(tabulate(presentation_rows(result), headers=PRESENTATION_HEADERS))
    if result["pairs"]:
        lines.append("")
        lines.append(tabulate([[p["a"], p["b"], p["verdict"], p["method"], p["reason"]]
                               for p in result["pairs"]],
                              headers=["first", "second", "verdict", "method", "why"]))
        for pair in result["pairs"]:
            for w in pair["witnesses"]:
                lines.append("  " + witness_text(pair, w))
    lines += ["", f"verdict: {result['verdict']} ({result['reason']})",
              f"certificate: {certificate_line(result['certificate'])}"]
    return "\n".join(lines)


def witness_text(pair: dict, w: dict) -> str:
    if "normal_form" in w:
        return (f"{pair['a']}–{pair['b']}: relation [{w['relation']}] of {w['relation_of']} "
                f"is not in {w['not_in']}; its normal form is {w['normal_form']}")
    failure = w.get("fails_at_points", w)
    return (f"{pair['a']}–{pair['b']}: relation [{failure.get('relation')}] of "
            f"{w.get('relation_of', '?')} fails at fixed point {failure.get('fixed_point')} "
            f"from order s^{failure.get('lowest_power')}")
