"""Per-case discrepancy reports: a Markdown file for people and a JSON file for programs.

Both files are rendered from one record (`DiscrepancyReport`, made by `report_record`), so
they carry the same content: the case, the verdict and why, what each presentation did,
every pair with its witnesses, the relations that failed written out as formulas, and the
certificate with the command that repeats the computation.  The JSON file is the case in the
schema of `check --json` (`compare.records.CaseResult.to_json`), so that `ringmatch table`
and `figure` read it like any result, with the report's own fields besides: `format`
(REPORT_FORMAT), `command`, `notes` and `formulas` ({presentation: {relation label:
{"text", "latex"}}}, the failing and witnessing relations written out).

File names come from the case name with the punctuation of the trade notation replaced
(`case_file_stem`): Fl(1,3;5) → Fl_1_3__5, Gr(2;5) → Gr_2__5, Fl(4) → Fl_4, P3 → P3; a
non-equivariant check gets the suffix `-plain`.
"""
from __future__ import annotations

import json
import re
import shlex
from dataclasses import dataclass, field
from pathlib import Path
from typing import Dict, Iterable, List, Mapping, Optional, Tuple

from tabulate import tabulate

from ringmatch.compare.records import (NOT_IN_IDEAL, CaseResult, PointFailure,
                                       PresentationResult, Witness)

REPORT_FORMAT = "ringmatch-discrepancy-report/2"

_STEM_REPLACEMENTS = (("(", "_"), (";", "__"), (",", "_"), (")", ""), ("^", ""))


def case_file_stem(case: str, equivariant: bool = True) -> str:
    stem = case.replace(" ", "")
    for old, new in _STEM_REPLACEMENTS:
        stem = stem.replace(old, new)
    # Anything else a plug-in might put into a case name must not reach the file system.
    stem = re.sub(r"[^A-Za-z0-9_.-]", "_", stem).strip("._") or "case"
    return stem if equivariant else stem + "-plain"


# ---------------------------------------------------------------------------------------
# Reproduction

def _method_option(result: CaseResult) -> str:
    """The --method that repeats the certificate's method label.  "none" (neither route
    ran: a plain check has no Bethe points, or the points could not be lifted) is what
    --method points gives in those cases; "none" itself is no option of the check."""
    label = result.certificate.method or "groebner"
    return "points" if label == "none" else label


def reproduce_command(result: CaseResult, presentation_args: Optional[Iterable[str]] = None,
                      method: Optional[str] = None) -> str:
    """The `ringmatch check` command that repeats this result (seed and prime made explicit).

    `presentation_args` are the names or file paths to pass to --presentations; by default
    the presentation names in the result (right for built-in and shipped presentations).
    `method` is the --method given to the check; by default read off the certificate."""
    certificate = result.certificate
    names = list(presentation_args) if presentation_args is not None else result.names
    words = ["ringmatch", "check", result.case, "--presentations", ",".join(names),
             "--seed", str(certificate.seed), "--prime", str(certificate.prime),
             "--method", method or _method_option(result)]
    if certificate.order:
        words += ["--order", str(certificate.order)]
    trials = len(certificate.all_trials)
    if trials > 1:
        words += ["--trials", str(trials)]
    if not result.equivariant:
        words.append("--plain")
    return shlex.join(words)


# ---------------------------------------------------------------------------------------
# Formulas of the relations involved (written out by compare/report_command.py, which
# rebuilds the presentations: reports never compute)

def failing_labels(result: CaseResult) -> Dict[str, set]:
    """Relation labels worth writing out, per presentation."""
    labels: Dict[str, set] = {}
    for name, p in result.presentations.items():
        for failure in p.failures:
            labels.setdefault(name, set()).add(failure.relation)
    for pair in result.pairs:
        for w in pair.witnesses:
            labels.setdefault(w.relation_of, set()).add(w.relation)
    return labels


# ---------------------------------------------------------------------------------------
# The record

def fixed_point_text(chain) -> str:
    return " ⊂ ".join("{" + ",".join(map(str, subset)) + "}" for subset in chain)


@dataclass
class DiscrepancyReport:
    """Everything the report says: the result, the command that repeats it, notes, and the
    formulas of the failing and witnessing relations ({presentation: {label: {"text",
    "latex"}}}); the JSON file is `to_json()`."""
    result: CaseResult
    command: str
    notes: List[str] = field(default_factory=list)
    formulas: Dict[str, Dict[str, dict]] = field(default_factory=dict)

    def formula(self, presentation: str, label: str, form: str = "text") -> Optional[str]:
        return self.formulas.get(presentation, {}).get(label, {}).get(form)

    def failed_relations(self) -> List[Tuple[str, PointFailure]]:
        """(presentation, failure) for every relation that fails at the Bethe points."""
        return [(name, failure) for name, p in self.result.presentations.items()
                for failure in p.failures]

    def to_json(self) -> dict:
        return {**self.result.to_json(), "format": REPORT_FORMAT, "command": self.command,
                "notes": list(self.notes),
                "formulas": {name: {label: dict(forms) for label, forms in labels.items()}
                             for name, labels in self.formulas.items()}}


SYMBOL_NOTES = (
    "Generators: S{i}_{j} = λ_j(S_i), Q{i}_{j} = λ_j(Q_i) (other families: their own names, "
    "see `ringmatch relations CASE --presentation NAME`); T1…Tn are the equivariant "
    "parameters and q1…qm the Novikov variables.",
    "Normal forms are computed at the certificate's specialisation (T and q replaced by "
    "the residues listed there), in the presentations' common generators or else in the "
    "common λ-class ring: coefficients are residues mod the prime, written as the small "
    "fraction they reduce from where there is one (numerator and denominator at most "
    "(p/2)^(1/4)), else in (−p/2, p/2]; u1, u2, … are adjoined inverses of units (in the "
    "common λ-class ring: det S_1, …, det S_m, then any further unit a presentation "
    "declares).",
    "Formulas are written in the expression grammar of presentation files "
    "(docs/presentation-files.md), so they can be pasted into one. In their LaTeX (the "
    "JSON's `latex` fields), generators are written as the classes they stand for, a factor "
    "1 − q_i is taken out, and e_j(T) is the j-th elementary symmetric polynomial of the "
    "weights.",
    "A relation that fails at the Bethe points is nonzero at the named torus-fixed point "
    "(chain I_1 ⊂ … ⊂ I_m) from the power s^k on, where q_i = c_i·s is the certificate's "
    "q line; k = 0 means it is already wrong classically (q = 0).",
)


def report_record(result: CaseResult, *, command: Optional[str] = None,
                  formulas: Optional[Mapping[str, Mapping[str, dict]]] = None,
                  unresolvable: Iterable[str] = ()) -> DiscrepancyReport:
    """Everything the report says (the JSON file is its `to_json()`).

    `formulas` are the failing and witnessing relations written out,
    {presentation: {label: {"text", "latex"}}}, and `unresolvable` the presentation names the
    command line cannot resolve; both come from `compare.report_command`, which rebuilds the
    presentations (a presentation left out of `formulas` gets a note)."""
    formulas = {name: {label: dict(forms) for label, forms in labels.items()}
                for name, labels in (formulas or {}).items()}
    notes = []
    unbuilt = sorted(set(failing_labels(result)) - set(formulas))
    if unbuilt:
        notes.append("not rebuilt symbolically (unknown by name; pass its family): "
                     + ", ".join(unbuilt))
    if command is None:
        command = reproduce_command(result)
        missing = [name for name in result.names if name in set(unresolvable)]
        if missing:
            notes.append("the command line knows no presentation called "
                         + ", ".join(missing) + ": give its file path or plug-in instead")
    return DiscrepancyReport(result, command, notes, formulas)


# ---------------------------------------------------------------------------------------
# Markdown

def _cell(value) -> str:
    text = {True: "yes", False: "**no**", None: "–"}.get(value, value) \
        if isinstance(value, (bool, type(None))) else str(value)
    return text.replace("|", "\\|")


def _holds_cell(p: PresentationResult) -> str:
    """`holds` is yes/no only on exact evidence; relations that merely vanish at the Bethe
    points say to which order, and that this is not proven (docs/verdicts.md §3)."""
    if p.holds is None and p.holds_to_order:
        return f"to s^{p.holds_to_order} at the points (not proven)"
    return _cell(p.holds)


def _values(values) -> str:
    return "–" if values is None else ", ".join(map(str, values))


def _code(text: Optional[str]) -> str:
    return "(formula unavailable)" if text is None else f"`{text}`"


def _witness_lines(w: Witness, report: DiscrepancyReport) -> list:
    formula = report.formula(w.relation_of, w.relation)
    if w.kind == NOT_IN_IDEAL:
        lines = [f"- relation [{w.relation}] of **{w.relation_of}** is not in the ideal "
                 f"of **{w.not_in}**"]
        if formula:
            lines.append(f"  - relation: {_code(formula)}")
        lines.append(f"  - normal form modulo {w.not_in}: {_code(w.normal_form)}")
        return lines
    return [f"- relation [{w.relation}] of **{w.relation_of}** fails at the Bethe "
            f"points: {_failure_summary(w.fails_at_points)}"] + \
        ([f"  - relation: {_code(formula)}"] if formula else [])


def _failure_summary(f: PointFailure) -> str:
    where = f"at the point over {fixed_point_text(f.fixed_point)}"
    if f.lowest_power is None:
        return f"{where} ({f.failing_points} points in all)"
    when = "already at q = 0" if f.classical else f"from s^{f.lowest_power} on"
    return f"{where}, {when} ({f.failing_points} points in all)"


def certificate_kind(report: DiscrepancyReport) -> str:
    c = report.result.certificate
    return c.kind or ("exact" if c.exact else "probabilistic")


def markdown_text(report: DiscrepancyReport) -> str:
    result = report.result
    kind = "equivariant" if result.equivariant else "non-equivariant (T = 1)"
    lines = [f"# {result.case}: {result.verdict}", "",
             f"- case: {result.case}, rank {result.rank}, {kind}",
             f"- verdict: **{result.verdict}** — {result.reason}", "",
             "## Presentations", ""]
    rows = [[name, p.generators, p.relations, p.expected_colength,
             _cell(p.colength), _cell(p.classical_colength), _holds_cell(p),
             _cell(p.complete), "; ".join(p.notes) or "–"]
            for name, p in result.presentations.items()]
    lines.append(tabulate(rows, headers=["presentation", "generators", "relations",
                                         "expected colength", "colength", "colength at q = 0",
                                         "holds", "complete", "notes"], tablefmt="github"))
    if result.pairs:
        lines += ["", "## Pairs", ""]
        lines.append(tabulate([[p.a, p.b, p.verdict, p.method,
                                p.reason.replace("|", "\\|")] for p in result.pairs],
                              headers=["first", "second", "verdict", "method", "reason"],
                              tablefmt="github"))
        for pair in result.pairs:
            if pair.witnesses:
                lines += ["", f"### Witnesses: {pair.a} against {pair.b}", ""]
                for w in pair.witnesses:
                    lines += _witness_lines(w, report)
    failed = report.failed_relations()
    if failed:
        lines += ["", "## Relations that fail at the Bethe points", ""]
        for name, f in failed:
            lines.append(f"- **{name}** [{f.relation}] {_failure_summary(f)}")
            formula = report.formula(name, f.relation)
            if formula:
                lines += ["", "  ```", f"  {formula}", "  ```", ""]
    c = result.certificate
    trials = c.all_trials
    lines += ["", "## Certificate", "",
              f"- prime: {c.prime}", f"- seed: {c.seed}",
              f"- weights T: {_values(c.weights)}",
              f"- q values (Gröbner route): {_values(c.q_values)}",
              f"- q line q_i = c_i·s (points route): {_values(c.q_line)}",
              f"- order: {'s^' + str(c.order) if c.order else '–'}",
              f"- method: {c.method}",
              f"- {certificate_kind(report)}, "
              f"{len(trials)} trial(s): "
              + "; ".join(f"prime {t.prime}, seed {t.seed}" for t in trials),
              "", "Reproduce with:", "", "```sh", report.command, "```"]
    if report.notes:
        lines += [""] + [f"- note: {note}" for note in report.notes]
    lines += ["", "## Reading the formulas", ""] + [f"- {note}" for note in SYMBOL_NOTES]
    return "\n".join(lines) + "\n"


def write_report(result: CaseResult, directory, *, command: Optional[str] = None,
                 formulas: Optional[Mapping[str, Mapping[str, dict]]] = None,
                 unresolvable: Iterable[str] = ()) -> Tuple[Path, Path]:
    """Write `<stem>.md` and `<stem>.json` for one `check_case` result into `directory`
    (created if needed) and return their paths.  `command` is the command line to show
    for reproduction (by default one rebuilt from the certificate); `formulas` and
    `unresolvable` as for `report_record` (`compare.report_command.write_report` computes
    them)."""
    report = report_record(result, command=command, formulas=formulas,
                           unresolvable=unresolvable)
    directory = Path(directory)
    directory.mkdir(parents=True, exist_ok=True)
    stem = case_file_stem(result.case, result.equivariant)
    markdown_path, json_path = directory / f"{stem}.md", directory / f"{stem}.json"
    markdown_path.write_text(markdown_text(report), encoding="utf-8")
    json_path.write_text(json.dumps(report.to_json(), indent=2, ensure_ascii=False) + "\n",
                         encoding="utf-8")
    return markdown_path, json_path
