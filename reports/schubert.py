"""Schubert structure constants for people: text, JSON and LaTeX multiplication tables.

JSON (one object per presentation run): `case`, `presentation`, `basis`, `labels`,
`constants` — every nonzero N as {u, v, w: partitions, q_polynomial: {degree: integer}} (for
several q parameters the keys are exponent tuples written "d1,d2") — `checks` ({name:
true|false}), `check_details` (detail and source of each), `certificate` and `notes`.
"""
from __future__ import annotations

import re
from typing import Dict, List, Optional, Sequence, Tuple

from ringmatch.presentations.schubert_bases import label_text

QMonomial = Tuple[int, ...]


def _degree_key(mono: QMonomial) -> str:
    return str(mono[0]) if len(mono) == 1 else ",".join(map(str, mono))


def as_json(result) -> dict:
    return {
        "case": result.case,
        "presentation": result.presentation,
        "basis": result.basis.name,
        "basis_source": result.basis.source,
        "labels": [list(lam) for lam in result.basis.labels],
        "constants": [{"u": list(u), "v": list(v), "w": list(w),
                       "q_polynomial": {_degree_key(mono): c for mono, c in sorted(poly.items())}}
                      for (u, v, w), poly in result.constants.items()],
        "checks": {c["name"]: c["passed"] for c in result.checks},
        "check_details": result.checks,
        "passed": result.passed,
        "certificate": result.certificate,
        "notes": list(result.notes),
    }


def _q_text(mono: QMonomial, latex: bool) -> str:
    parts = []
    for i, e in enumerate(mono, start=1):
        if not e:
            continue
        name = "q" if len(mono) == 1 else (f"q_{i}" if latex else f"q{i}")
        parts.append(name if e == 1 else (f"{name}^{{{e}}}" if latex else f"{name}^{e}"))
    return ("" if latex else "*").join(parts) if not latex else " ".join(parts)


def polynomial_text(poly: Dict[QMonomial, int], latex: bool = False) -> str:
    """1 - q, -2 q^2, … (ascending degree)."""
    out = ""
    for mono, c in sorted(poly.items(), key=lambda item: (sum(item[0]), item[0])):
        q = _q_text(mono, latex)
        magnitude = abs(c)
        body = q if magnitude == 1 and q else (f"{magnitude}{' ' if latex else '*'}{q}"
                                               if q else str(magnitude))
        if not out:
            out = ("-" if c < 0 else "") + body
        else:
            out += (" - " if c < 0 else " + ") + body
    return out or "0"


def _class(label, latex: bool) -> str:
    if latex:
        inner = ",".join(map(str, label)) if label else "\\emptyset"
        return f"\\mathcal{{O}}_{{{inner}}}"
    return f"O{label_text(label)}"


def _product_terms(result, u, v, latex: bool) -> str:
    terms = []
    for w in result.basis.labels:
        poly = result.constants.get((u, v, w))
        if not poly:
            continue
        text = polynomial_text(poly, latex)
        if text == "1":
            terms.append((1, _class(w, latex)))
        elif text == "-1":
            terms.append((-1, _class(w, latex)))
        elif len(poly) == 1:
            sign = -1 if text.startswith("-") else 1
            terms.append((sign, f"{text.lstrip('-')}{' ' if latex else '*'}{_class(w, latex)}"))
        else:
            open_, close = ("\\left(", "\\right)") if latex else ("(", ")")
            terms.append((1, f"{open_}{text}{close}{' ' if latex else '*'}{_class(w, latex)}"))
    if not terms:
        return "0"
    out = ("-" if terms[0][0] < 0 else "") + terms[0][1]
    for sign, body in terms[1:]:
        out += (" - " if sign < 0 else " + ") + body
    return out


def _pairs(labels: Sequence) -> List[tuple]:
    return [(u, v) for i, u in enumerate(labels) for v in labels[i:]]


def _check_lines(checks, mark=("pass", "FAIL")) -> List[str]:
    lines = []
    for c in checks:
        lines.append(f"  [{mark[0] if c['passed'] else mark[1]}] {c['name']}: {c['detail']}")
        if c.get("source"):
            lines.append(f"         source: {c['source']}")
    return lines


def as_text(result, *, table: bool = True) -> str:
    cert = result.certificate
    lines = [f"{result.case} in {result.presentation}, basis {result.basis.name}",
             f"  {result.basis.source}" if result.basis.source else "",
             f"  prime {cert['prime']}, seed {cert['seed']}, q-degree bound "
             f"{cert['degree_bound']}, {len(cert['q_values'])} interpolation values + 1 extra",
             "checks:"]
    lines = [line for line in lines if line]
    lines += _check_lines(result.checks)
    lines += [f"note: {note}" for note in result.notes]
    if table and result.constants:
        lines.append("products (u <= v):")
        for u, v in _pairs(result.basis.labels):
            lines.append(f"  {_class(u, False)} * {_class(v, False)} = "
                         f"{_product_terms(result, u, v, False)}")
    lines.append("all checks pass" if result.passed else "a check FAILS")
    return "\n".join(lines)


def as_latex(result) -> str:
    """An appendix fragment: the checks as a list, the products in an align* environment."""
    cert = result.certificate
    basis = result.basis.name if result.basis.candidate is not None and \
        result.basis.name.startswith("groth:") else result.basis.source
    lines = [f"% ringmatch schubert '{result.case}' --presentation {result.presentation} "
             f"--basis {basis} --seed {cert['seed']} --prime {cert['prime']}",
             f"\\paragraph{{Quantum $K$ products in ${_latex_case(result.case)}$.}}",
             f"Basis \\texttt{{{_latex_escape(result.basis.name)}}} in the presentation "
             f"\\texttt{{{_latex_escape(result.presentation)}}}.",
             "\\begin{itemize}"]
    for c in result.checks:
        lines.append(f"  \\item {_latex_escape(c['name'])}: "
                     f"{'passed' if c['passed'] else 'failed'} --- {_latex_escape(c['detail'])}")
    lines.append("\\end{itemize}")
    if result.constants:
        lines.append("\\begin{align*}")
        rows = [f"  {_class(u, True)} \\star {_class(v, True)} &= "
                f"{_product_terms(result, u, v, True)}"
                for u, v in _pairs(result.basis.labels)]
        lines.append(" \\\\\n".join(rows))
        lines.append("\\end{align*}")
    return "\n".join(lines)


def _latex_case(case: str) -> str:
    """Gr(2;4) → \\mathrm{Gr}(2;4), P3 → \\mathbb{P}^{3}."""
    projective = re.fullmatch(r"P(\d+)", case)
    if projective:
        return f"\\mathbb{{P}}^{{{projective.group(1)}}}"
    return case.replace("Gr", "\\mathrm{Gr}").replace("Fl", "\\mathrm{Fl}")


def _latex_escape(text: str) -> str:
    out = []
    for ch in str(text):
        if ch in "\\":
            out.append("\\textbackslash{}")
        elif ch in "&%$#_{}":
            out.append("\\" + ch)
        elif ch == "^":
            out.append("\\^{}")
        elif ch == "~":
            out.append("\\~{}")
        else:
            out.append(ch)
    return "".join(out).replace("≤", "$\\le$").replace("≥", "$\\ge$")


def comparison_text(first, second, difference: Optional[dict],
                    classes: Optional[dict] = None) -> str:
    head = (f"{first.case}: basis {first.basis.name} in {first.presentation} and basis "
            f"{second.basis.name} in {second.presentation}")
    if difference is None:
        text = f"{head}: the same multiplication table"
    elif "reason" in difference:
        text = f"{head}: not comparable ({difference['reason']})"
    else:
        text = (f"{head}: first difference at O{label_text(difference['u'])} * "
                f"O{label_text(difference['v'])}, coefficient of "
                f"O{label_text(difference['w'])}: {difference['first']} in "
                f"{first.presentation}, {difference['second']} in {second.presentation}")
    if classes is None:
        return text + "; the classes themselves were not compared (a presentation cannot be " \
                      "moved into the common λ-class ring)"
    if classes["same"]:
        return text + "; the same classes in the common λ-class ring"
    where = f" (first at O{label_text(classes['label'])})" if "label" in classes else \
        f" ({classes['reason']})"
    return text + "; but NOT the same classes in the common λ-class ring" + where


def candidates_text(case: str, outcomes: Dict[str, List[str]]) -> str:
    """One line per built-in candidate: pass, or the checks it fails."""
    width = max(map(len, outcomes))
    lines = [f"{case}: built-in candidates"]
    for name, failed in outcomes.items():
        lines.append(f"  {name:<{width}}  " + ("passes every check" if not failed else
                                                "fails " + ", ".join(failed)))
    return "\n".join(lines)


# ---------------------------------------------------------------------------------------
# Stored tables (`ringmatch schubert --store FILE`, rendered by `ringmatch table FILE
# --schubert`): read back from the JSON above, never recomputed

class _Stored:
    """A run read back from `as_json`, with the attributes the renderers above read."""

    def __init__(self, run: dict):
        from types import SimpleNamespace
        self.case, self.presentation = run["case"], run["presentation"]
        labels = tuple(tuple(lam) for lam in run["labels"])
        self.basis = SimpleNamespace(name=run["basis"], source=run.get("basis_source", ""),
                                     labels=labels,
                                     candidate=run["basis"] if str(run["basis"]).startswith(
                                         "groth:") else None)
        self.constants = {
            (tuple(c["u"]), tuple(c["v"]), tuple(c["w"])):
                {tuple(int(d) for d in str(key).split(",")): int(value)
                 for key, value in c["q_polynomial"].items()}
            for c in run["constants"]}
        self.checks = list(run.get("check_details") or [
            {"name": name, "passed": passed, "detail": "", "source": ""}
            for name, passed in run.get("checks", {}).items()])
        self.certificate = run.get("certificate") or {}
        self.notes = list(run.get("notes") or [])
        self.passed = bool(run.get("passed", all(c["passed"] for c in self.checks)))


def stored_runs(row: dict) -> List[_Stored]:
    """The runs of one stored case: one per presentation (`schubert --json` wraps several in
    {"runs": [...], "comparisons": [...]})."""
    result = row["result"]
    return [_Stored(run) for run in (result["runs"] if "runs" in result else [result])]


def _heading(run: _Stored) -> str:
    return (f"{run.case} in {run.presentation}, basis {run.basis.name}: "
            + ("all checks pass" if run.passed else "fails " + ", ".join(
                c["name"] for c in run.checks if not c["passed"])))


def stored_markdown(rows: Sequence[dict]) -> str:
    """One section per stored case and presentation: the checks, then a table u, v, O_u ⋆ O_v
    (u ≤ v in label order)."""
    out = []
    for row in rows:
        for run in stored_runs(row):
            out += [f"### {_heading(run)}", ""]
            out += ["| u | v | O_u ⋆ O_v |", "|---|---|---|"]
            out += [f"| {_class(u, False)} | {_class(v, False)} | "
                    f"{_product_terms(run, u, v, False)} |" for u, v in _pairs(run.basis.labels)]
            out.append("")
    return "\n".join(out)


def stored_csv(rows: Sequence[dict]) -> str:
    """One line per nonzero structure constant: case, presentation, basis, u, v, w, N(q)."""
    import csv
    import io
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(["case", "presentation", "basis", "passed", "u", "v", "w", "q_polynomial"])
    for row in rows:
        for run in stored_runs(row):
            for (u, v, w), poly in run.constants.items():
                writer.writerow([run.case, run.presentation, run.basis.name, run.passed,
                                 label_text(u), label_text(v), label_text(w),
                                 polynomial_text(poly)])
    return buffer.getvalue()


def stored_latex(rows: Sequence[dict], *, command: str = "") -> str:
    """The appendix fragments of `as_latex`, one per stored case and presentation."""
    head = [f"% {command}"] if command else []
    return "\n\n".join(head + [as_latex(run) for row in rows for run in stored_runs(row)]) + "\n"
