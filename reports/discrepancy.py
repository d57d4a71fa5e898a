"""Per-case discrepancy reports: a Markdown file for people and a JSON file for programs.

Both files are rendered from one record (`report_record`), so they carry the same content:
the case, the verdict and why, what each presentation did, every pair with its witnesses,
the relations that failed written out as formulas, and the certificate with the command that
repeats the computation.

File names come from the case name with the punctuation of the trade notation replaced
(`case_file_stem`): Fl(1,3;5) → Fl_1_3__5, Gr(2;5) → Gr_2__5, Fl(4) → Fl_4, P3 → P3; a
non-equivariant check gets the suffix `-plain`.
"""
from __future__ import annotations

import json
import re
import shlex
from pathlib import Path
from typing import Dict, Iterable, Mapping, Optional, Tuple

from tabulate import tabulate

REPORT_FORMAT = "ringmatch-discrepancy-report/1"

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

def _method_option(result: dict) -> str:
    """The --method that repeats the certificate's method label.  "none" (neither route
    ran: a plain check has no Bethe points, or the points could not be lifted) is what
    --method points gives in those cases; "none" itself is no option of the check."""
    label = result["certificate"].get("method", "groebner")
    return "points" if label == "none" else label


def reproduce_command(result: dict, presentation_args: Optional[Iterable[str]] = None,
                      method: Optional[str] = None) -> str:
    """The `ringmatch check` command that repeats this result (seed and prime made explicit).

    `presentation_args` are the names or file paths to pass to --presentations; by default
    the presentation names in the result (right for built-in and shipped presentations).
    `method` is the --method given to the check; by default read off the certificate."""
    certificate = result["certificate"]
    names = list(presentation_args) if presentation_args is not None \
        else list(result["presentations"])
    words = ["ringmatch", "check", result["case"], "--presentations", ",".join(names),
             "--seed", str(certificate["seed"]), "--prime", str(certificate["prime"]),
             "--method", method or _method_option(result)]
    if certificate.get("order"):
        words += ["--order", str(certificate["order"])]
    trials = len(certificate.get("trials") or [certificate])
    if trials > 1:
        words += ["--trials", str(trials)]
    if not result["equivariant"]:
        words.append("--plain")
    return shlex.join(words)


# ---------------------------------------------------------------------------------------
# Formulas of the relations involved (written out by compare/report_command.py, which
# rebuilds the presentations: reports never compute)

def failing_labels(result: dict) -> Dict[str, set]:
    """Relation labels worth writing out, per presentation."""
    labels: Dict[str, set] = {}
    for name, p in result["presentations"].items():
        for failure in p.get("failures", []):
            labels.setdefault(name, set()).add(failure["relation"])
    for pair in result["pairs"]:
        for w in pair["witnesses"]:
            failure = w.get("fails_at_points", w)
            if "relation_of" in w and "relation" in failure:
                labels.setdefault(w["relation_of"], set()).add(failure["relation"])
    return labels


# ---------------------------------------------------------------------------------------
# The record

def fixed_point_text(chain) -> str:
    return " ⊂ ".join("{" + ",".join(map(str, subset)) + "}" for subset in chain)


def _failure_entry(presentation: str, failure: dict, formulas: Mapping) -> dict:
    label = failure["relation"]
    entry = {"presentation": presentation, "relation": label,
             "formula": formulas.get(presentation, {}).get(label, {}).get("text"),
             "latex": formulas.get(presentation, {}).get(label, {}).get("latex"),
             "fixed_point": fixed_point_text(failure["fixed_point"]),
             "failing_points": failure.get("failing_points")}
    if "lowest_power" in failure:
        entry["lowest_power"] = failure["lowest_power"]
        entry["classical"] = failure["classical"]
    return entry


def _witness_entry(w: dict, formulas: Mapping) -> dict:
    if "normal_form" in w:
        relation = formulas.get(w["relation_of"], {}).get(w["relation"], {})
        return {"kind": "not in the other ideal", "relation_of": w["relation_of"],
                "not_in": w["not_in"], "relation": w["relation"],
                "formula": relation.get("text"), "normal_form": w["normal_form"]}
    failure = w.get("fails_at_points", w)
    entry = _failure_entry(w.get("relation_of", "?"), failure, formulas)
    entry["kind"] = "fails at the Bethe points"
    entry["relation_of"] = entry.pop("presentation")
    return entry


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


def report_record(result: dict, *, command: Optional[str] = None,
                  formulas: Optional[Mapping[str, Mapping[str, dict]]] = None,
                  unresolvable: Iterable[str] = ()) -> dict:
    """Everything the report says, as JSON-able data (the JSON file is exactly this).

    `formulas` are the failing and witnessing relations written out,
    {presentation: {label: {"text", "latex"}}}, and `unresolvable` the presentation names the
    command line cannot resolve; both come from `compare.report_command`, which rebuilds the
    presentations (a presentation left out of `formulas` gets a note)."""
    formulas = formulas or {}
    presentations = []
    for name, p in result["presentations"].items():
        presentations.append({key: p.get(key) for key in (
            "name", "generators", "relations", "expected_colength", "colength",
            "classical_colength", "holds", "holds_evidence", "holds_to_order", "complete",
            "exact", "decided_by")} | {"notes": list(p.get("notes", []))})
    failed = [_failure_entry(name, failure, formulas)
              for name, p in result["presentations"].items()
              for failure in p.get("failures", [])]
    pairs = [{"a": pair["a"], "b": pair["b"], "verdict": pair["verdict"],
              "method": pair["method"], "reason": pair["reason"],
              "witnesses": [_witness_entry(w, formulas) for w in pair["witnesses"]]}
             for pair in result["pairs"]]
    notes = []
    unbuilt = sorted(set(failing_labels(result)) - set(formulas))
    if unbuilt:
        notes.append("not rebuilt symbolically (unknown by name; pass its family): "
                     + ", ".join(unbuilt))
    if command is None:
        command = reproduce_command(result)
        missing = [name for name in result["presentations"] if name in set(unresolvable)]
        if missing:
            notes.append("the command line knows no presentation called "
                         + ", ".join(missing) + ": give its file path or plug-in instead")
    certificate = result["certificate"]
    return {
        "format": REPORT_FORMAT,
        "case": result["case"],
        "rank": result["rank"],
        "equivariant": result["equivariant"],
        "verdict": result["verdict"],
        "reason": result["reason"],
        "presentations": presentations,
        "pairs": pairs,
        "failed_relations": failed,
        "certificate": {
            "prime": certificate["prime"], "seed": certificate["seed"],
            "weights": certificate.get("weights"), "q_values": certificate.get("q_values"),
            "q_line": certificate.get("q_line"), "order": certificate.get("order"),
            "method": certificate.get("method"),
            "exact": certificate.get("exact", False),
            "kind": certificate.get("kind") or ("exact" if certificate.get("exact")
                                                else "probabilistic"),
            "trials": [{"prime": t["prime"], "seed": t["seed"]}
                       for t in certificate.get("trials") or [certificate]],
        },
        "command": command,
        "notes": notes,
        "timings": result.get("timings"),
    }


# ---------------------------------------------------------------------------------------
# Markdown

def _cell(value) -> str:
    text = {True: "yes", False: "**no**", None: "–"}.get(value, value) \
        if isinstance(value, (bool, type(None))) else str(value)
    return text.replace("|", "\\|")


def _holds_cell(p: dict) -> str:
    """`holds` is yes/no only on exact evidence; relations that merely vanish at the Bethe
    points say to which order, and that this is not proven (docs/verdicts.md §3)."""
    if p.get("holds") is None and p.get("holds_to_order"):
        return f"to s^{p['holds_to_order']} at the points (not proven)"
    return _cell(p.get("holds"))


def _values(values) -> str:
    return "–" if values is None else ", ".join(map(str, values))


def _code(text: Optional[str]) -> str:
    return "(formula unavailable)" if text is None else f"`{text}`"


def _witness_lines(w: dict) -> list:
    if w["kind"] == "not in the other ideal":
        lines = [f"- relation [{w['relation']}] of **{w['relation_of']}** is not in the ideal "
                 f"of **{w['not_in']}**"]
        if w.get("formula"):
            lines.append(f"  - relation: {_code(w['formula'])}")
        lines.append(f"  - normal form modulo {w['not_in']}: {_code(w['normal_form'])}")
        return lines
    return [f"- relation [{w['relation']}] of **{w['relation_of']}** fails at the Bethe "
            f"points: {_failure_summary(w)}"] + \
        ([f"  - relation: {_code(w['formula'])}"] if w.get("formula") else [])


def _failure_summary(f: dict) -> str:
    where = f"at the point over {f['fixed_point']}"
    if "lowest_power" not in f:
        return f"{where} ({f.get('failing_points')} points in all)"
    when = "already at q = 0" if f["classical"] else f"from s^{f['lowest_power']} on"
    return f"{where}, {when} ({f.get('failing_points')} points in all)"


def markdown_text(record: dict) -> str:
    kind = "equivariant" if record["equivariant"] else "non-equivariant (T = 1)"
    lines = [f"# {record['case']}: {record['verdict']}", "",
             f"- case: {record['case']}, rank {record['rank']}, {kind}",
             f"- verdict: **{record['verdict']}** — {record['reason']}", "",
             "## Presentations", ""]
    rows = [[p["name"], p["generators"], p["relations"], p["expected_colength"],
             _cell(p["colength"]), _cell(p["classical_colength"]), _holds_cell(p),
             _cell(p["complete"]), "; ".join(p["notes"]) or "–"]
            for p in record["presentations"]]
    lines.append(tabulate(rows, headers=["presentation", "generators", "relations",
                                         "expected colength", "colength", "colength at q = 0",
                                         "holds", "complete", "notes"], tablefmt="github"))
    if record["pairs"]:
        lines += ["", "## Pairs", ""]
        lines.append(tabulate([[p["a"], p["b"], p["verdict"], p["method"],
                                p["reason"].replace("|", "\\|")] for p in record["pairs"]],
                              headers=["first", "second", "verdict", "method", "reason"],
                              tablefmt="github"))
        for pair in record["pairs"]:
            if pair["witnesses"]:
                lines += ["", f"### Witnesses: {pair['a']} against {pair['b']}", ""]
                for w in pair["witnesses"]:
                    lines += _witness_lines(w)
    if record["failed_relations"]:
        lines += ["", "## Relations that fail at the Bethe points", ""]
        for f in record["failed_relations"]:
            lines.append(f"- **{f['presentation']}** [{f['relation']}] "
                         f"{_failure_summary(f)}")
            if f.get("formula"):
                lines += ["", "  ```", f"  {f['formula']}", "  ```", ""]
    c = record["certificate"]
    lines += ["", "## Certificate", "",
              f"- prime: {c['prime']}", f"- seed: {c['seed']}",
              f"- weights T: {_values(c['weights'])}",
              f"- q values (Gröbner route): {_values(c['q_values'])}",
              f"- q line q_i = c_i·s (points route): {_values(c['q_line'])}",
              f"- order: {'s^' + str(c['order']) if c['order'] else '–'}",
              f"- method: {c['method']}",
              f"- {c['kind']}, "
              f"{len(c['trials'])} trial(s): "
              + "; ".join(f"prime {t['prime']}, seed {t['seed']}" for t in c["trials"]),
              "", "Reproduce with:", "", "```sh", record["command"], "```"]
    if record["notes"]:
        lines += [""] + [f"- note: {note}" for note in record["notes"]]
    lines += ["", "## Reading the formulas", ""] + [f"- {note}" for note in SYMBOL_NOTES]
    return "\n".join(lines) + "\n"


def write_report(result: dict, directory, *, command: Optional[str] = None,
                 formulas: Optional[Mapping[str, Mapping[str, dict]]] = None,
                 unresolvable: Iterable[str] = ()) -> Tuple[Path, Path]:
    """Write `<stem>.md` and `<stem>.json` for one `check_case` result into `directory`
    (created if needed) and return their paths.  `command` is the command line to show
    for reproduction (by default one rebuilt from the certificate); `formulas` and
    `unresolvable` as for `report_record` (`compare.report_command.write_report` computes
    them)."""
    record = report_record(result, command=command, formulas=formulas,
                           unresolvable=unresolvable)
    directory = Path(directory)
    directory.mkdir(parents=True, exist_ok=True)
    stem = case_file_stem(record["case"], record["equivariant"])
    markdown_path, json_path = directory / f"{stem}.md", directory / f"{stem}.json"
    markdown_path.write_text(markdown_text(record), encoding="utf-8")
    json_path.write_text(json.dumps(record, indent=2, ensure_ascii=False) + "\n",
                         encoding="utf-8")
    return markdown_path, json_path
