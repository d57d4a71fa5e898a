"""Appendix tables of sweep results: LaTeX (booktabs; longtable when long), CSV, Markdown.

One row per case.  Columns are chosen by key (`COLUMNS`); rows can be grouped by n; small
cases can be followed by their relations and by an explicit change of generators between two
of their presentations, both in display math (LaTeX and Markdown).  Nothing is computed here:
the presentations (`CaseRelations`) and the isomorphisms (`CaseIsomorphism`) are built by the
command line (`compare/table_command.py`) and handed to `build_table`.  Every table ends with
the reproducibility block of `reports.provenance`, plus the seeds of the isomorphisms when there
are any.
"""
from __future__ import annotations

import csv
import io
import re
from pathlib import Path
from dataclasses import dataclass, field, replace
from typing import Callable, Dict, List, Optional, Sequence, Tuple

from ringmatch.errors import InputError

from . import provenance as prov
from .formulas import (COLUMN_UNITS, break_lines, generator_latex, latex_width,
                       relation_latex_pieces)
from .frames import VERDICTS, Source, frame_record, load_rows, select_rows

FORMATS = ("latex", "csv", "markdown")
# Above this many rows a LaTeX table no longer fits on one page: it becomes a longtable.
LONGTABLE_ROWS = 30
# Relations are printed only for cases this small; larger ones fill pages with formulas.
RELATIONS_MAX_RANK = 6
# Widest presentation entry (characters) a LaTeX table prints by name; wider ones get letters.
PRESENTATIONS_WIDTH = 12
# The same bound for isomorphisms: up to this rank a search takes about a second per case.
ISOMORPHISMS_MAX_RANK = 6


@dataclass(frozen=True)
class Column:
    key: str
    heading: str
    latex_heading: str
    align: str                         # LaTeX column alignment
    value: Callable[[dict], str]       # from a frame record (reports.frames.frame_record)


def _certificate_summary(r: dict) -> str:
    parts = []
    if r["order"]:
        parts.append(f"s^{r['order']}")
    parts.append(f"{r['trials']} trial" + ("s" if r["trials"] != 1 else ""))
    parts.append(r["certificate"])
    return ", ".join(parts)


def _seconds(r: dict) -> str:
    s = r["seconds"]
    if s is None:
        return ""
    return f"{s:.2f}" if s < 10 else f"{s:.1f}" if s < 100 else f"{s:.0f}"


COLUMNS: Dict[str, Column] = {c.key: c for c in (
    Column("case", "flag type", "$X$", "l", lambda r: r["case"]),
    Column("kind", "kind", "kind", "l", lambda r: r["kind"]),
    Column("n", "n", "$n$", "r", lambda r: str(r["n"])),
    Column("rank", "rank", "rank", "r", lambda r: str(r["rank"])),
    Column("presentations", "presentations", "presentations", "l",
           lambda r: ", ".join(r["presentations"])),
    Column("verdict", "verdict", "verdict", "l", lambda r: r["verdict"]),
    Column("reason", "reason", "reason", "l", lambda r: r["reason"]),
    Column("method", "method", "method", "l", lambda r: r["method"] or ""),
    Column("order", "order", "order", "r", lambda r: str(r["order"] or "")),
    Column("trials", "trials", "trials", "r", lambda r: str(r["trials"])),
    Column("exactness", "exactness", "exactness", "l", lambda r: r["certificate"]),
    Column("certificate", "certificate", "certificate", "l", _certificate_summary),
    Column("prime", "prime", "prime", "r", lambda r: str(r["prime"] or "")),
    Column("seed", "seed", "seed", "r", lambda r: str(r["seed"] if r["seed"] is not None else "")),
    Column("seconds", "time (s)", "time", "r", _seconds),
    Column("equivariant", "equivariant/plain", "equiv.", "l",
           lambda r: "equivariant" if r["equivariant"] in (True, None) else "plain"),
    Column("sweep", "sweep", "sweep", "l", lambda r: r["sweep"] or ""),
)}
DEFAULT_COLUMNS = ("case", "rank", "presentations", "equivariant", "verdict", "certificate",
                   "seconds")


class TableError(InputError):
    """A table option that makes no sense (e.g. an unknown column)."""


@dataclass(frozen=True)
class TableOptions:
    columns: Tuple[str, ...] = DEFAULT_COLUMNS
    group_by_n: bool = False
    relations: bool = False               # print relations of cases up to relations_max_rank
    relations_max_rank: int = RELATIONS_MAX_RANK
    isomorphisms: bool = False            # LaTeX/Markdown: change of generators of small cases
    isomorphisms_max_rank: int = ISOMORPHISMS_MAX_RANK
    standalone: bool = False              # LaTeX: a whole document instead of a fragment
    command: Optional[str] = None         # for the reproducibility block
    caption: Optional[str] = None         # first sentence; None: says what was compared
    label: Optional[str] = None           # LaTeX \label; None: tab:ringmatch[-<store name>]
    sweep: Optional[str] = None           # only rows of this sweep (prefix of its key)
    presentations: Optional[Tuple[str, ...]] = None   # only rows comparing exactly these
    equivariant: Optional[bool] = None    # only equivariant (True) or plain (False) rows
    longtable: bool = False               # LaTeX, many rows: one longtable, not floats


def parse_columns(text: str) -> Tuple[str, ...]:
    keys = tuple(k.strip() for k in text.split(","))
    unknown = [k for k in keys if k not in COLUMNS]
    if unknown or not all(keys):
        bad = ", ".join(repr(k) for k in unknown) or "an empty name"
        raise TableError(f"unknown column {bad}; choose from {', '.join(COLUMNS)}")
    return keys


@dataclass
class Table:
    """Rows of display strings, grouped (one group unless grouped by n), plus provenance."""
    headings: List[Column]
    groups: List[Tuple[Optional[int], List[List[str]]]]
    records: List[dict]
    rows: List[dict]                      # the store rows, for provenance
    provenance: dict = field(default_factory=dict)
    relations: List["CaseRelations"] = field(default_factory=list)
    isomorphisms: List["CaseIsomorphism"] = field(default_factory=list)
    name: Optional[str] = None            # the source file's stem, for the default label


def build_table(source: Source, options: TableOptions = TableOptions(), *,
                relations: Sequence["CaseRelations"] = (),
                isomorphisms: Sequence["CaseIsomorphism"] = ()) -> Table:
    """The table of the selected rows; `relations` and `isomorphisms` are what the command
    line computed for them (compare/table_command.py), printed when the options ask."""
    rows = select_rows(load_rows(source), sweep=options.sweep,
                       presentations=options.presentations, equivariant=options.equivariant)
    if not rows and (options.presentations or options.equivariant is not None):
        raise TableError("no rows match the selection (--presentations, --equivariant/--plain)")
    for key in options.columns:
        if key not in COLUMNS:
            raise TableError(f"unknown column {key!r}; choose from {', '.join(COLUMNS)}")
    columns = [COLUMNS[k] for k in options.columns]
    records = [frame_record(row) for row in rows]
    groups: List[Tuple[Optional[int], List[List[str]]]] = []
    if options.group_by_n:
        for n in sorted({r["n"] for r in records}):
            groups.append((n, [[c.value(r) for c in columns] for r in records if r["n"] == n]))
    else:
        groups.append((None, [[c.value(r) for c in columns] for r in records]))
    table = Table(columns, groups, records, rows, prov.provenance(rows, options.command))
    if isinstance(source, (str, Path)):
        table.name = Path(source).stem
    table.relations = list(relations)
    table.isomorphisms = list(isomorphisms)
    return table


def block_lines(table: Table) -> List[str]:
    """The reproducibility block, with how each isomorphism was computed."""
    return prov.provenance_lines(table.provenance) + isomorphism_block_lines(table.isomorphisms)


# ---------------------------------------------------------------------------------------
# LaTeX

_LATEX_SPECIALS = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#",
                   "_": r"\_", "{": r"\{", "}": r"\}", "~": r"\textasciitilde{}",
                   "^": r"\textasciicircum{}"}
# Text from results (reasons, notes) may contain these; pdflatex needs them spelled out.
_LATEX_UNICODE = {"–": "--", "—": "---", "≠": r"$\neq$", "≤": r"$\leq$", "≥": r"$\geq$",
                  "λ": r"$\lambda$", "·": r"$\cdot$", "…": r"\ldots{}", "→": r"$\to$",
                  "⊂": r"$\subset$", "ö": r"\"o", "′": "'", "−": "-", "×": r"$\times$"}


def latex_escape(text: str) -> str:
    out = []
    for ch in str(text):
        if ch in _LATEX_SPECIALS:
            out.append(_LATEX_SPECIALS[ch])
        elif ch in _LATEX_UNICODE:
            out.append(_LATEX_UNICODE[ch])
        elif ord(ch) > 127:
            out.append("?")     # no glyph in the default fonts; never break compilation
        else:
            out.append(ch)
    return "".join(out)


def case_latex(case: str) -> str:
    r"""A case name in math mode: $\mathrm{Fl}(1,3;5)$, $\mathrm{Gr}(2,5)$, $\mathbb{P}^{4}$."""
    match = re.fullmatch(r"P(\d+)", case)
    if match:
        return rf"$\mathbb{{P}}^{{{match.group(1)}}}$"
    match = re.fullmatch(r"Gr\((\d+)[;,](\d+)\)", case)
    if match:
        return rf"$\mathrm{{Gr}}({match.group(1)},{match.group(2)})$"
    match = re.fullmatch(r"Fl\(([\d,;]+)\)", case)
    if match:
        return rf"$\mathrm{{Fl}}({match.group(1)})$"
    return latex_escape(case)


def _names_latex(names: Sequence[str]) -> str:
    quoted = [rf"\texttt{{{latex_escape(name)}}}" for name in names]
    if len(quoted) <= 2:
        return " and ".join(quoted)
    return ", ".join(quoted[:-1]) + " and " + quoted[-1]


# Parts of the certificate and other facts that, when every row has the same value, leave
# the body of a LaTeX table for its caption: a column repeating one value only costs width.
_CERTIFICATE_PARTS = ("method", "order", "trials", "exactness")
_CAPTION_COLUMNS = ("presentations", "equivariant", "kind", "n", "method", "order", "trials",
                    "exactness", "prime")


def _certificate_part(key: str, r: dict) -> str:
    """One part of the certificate cell, in LaTeX."""
    if key == "method":
        return latex_escape(r["method"] or "")
    if key == "order":
        return f"$s^{{{r['order']}}}$" if r["order"] else ""
    if key == "trials":
        return f"{r['trials']} trial" + ("s" if r["trials"] != 1 else "")
    return latex_escape(r["certificate"])


# What the certificate words (reports.frames.certificate_word) mean, for captions
# (docs/verdicts.md §2-3).  "exact" does not speak for itself: it is said once per table.
EXACT_MEANING = (r"decided exactly at a random specialisation mod $p$, so wrong only with "
                 r"probability at most degree$/p$")
_CERTIFICATE_FACTS = {"exact": "exact certificates", "not proven": "not proven (Bethe points "
                      "only)", "none": "nothing decided"}
# The fact "exactness" stated per verdict in the caption instead of in every row.
BY_VERDICT = "exactness by verdict"


def _exactness_by_verdict(records: Sequence[dict]) -> Optional[Dict[str, str]]:
    """{verdict: certificate word} when the word is the same for every row of a verdict (as
    the engine makes it: agree and disagree exact, consistent not proven, inconclusive
    none), else None."""
    words: Dict[str, str] = {}
    for r in records:
        if words.setdefault(r["verdict"], r["certificate"]) != r["certificate"]:
            return None
    return words


def _verdict_list(verdicts: Sequence[str]) -> str:
    quoted = [rf"\emph{{{latex_escape(v)}}}" for v in verdicts]
    return " and ".join(quoted) if len(quoted) <= 2 else \
        ", ".join(quoted[:-1]) + " and " + quoted[-1]


def _certificate_sentences(records: Sequence[dict], facts: Sequence[str],
                           shown: bool) -> List[str]:
    """What the caption says about the certificates: per verdict when that decides them
    (BY_VERDICT), and what "exact" means wherever it appears (`shown`: in the rows)."""
    if BY_VERDICT in facts:
        by_word: Dict[str, List[str]] = {}
        for verdict, word in (_exactness_by_verdict(records) or {}).items():
            by_word.setdefault(word, []).append(verdict)
        sentences = []
        for word, verdicts in by_word.items():
            verdicts = [v for v in VERDICTS if v in verdicts] + \
                sorted(set(verdicts) - set(VERDICTS))
            if word == "exact":
                sentences.append(f"{_verdict_list(verdicts)}: {EXACT_MEANING}.")
            elif (word, verdicts) in (("not proven", ["consistent"]),
                                      ("none", ["inconclusive"])):
                continue      # the verdict says it (consistent is explained above)
            else:
                phrase = _CERTIFICATE_FACTS.get(word) or f"{latex_escape(word)} certificates"
                sentences.append(f"{_verdict_list(verdicts)}: {phrase}.")
        return sentences
    exact_stated = "exactness" in facts and records and records[0]["certificate"] == "exact"
    if exact_stated or shown and any(r["certificate"] == "exact" for r in records):
        return [rf"\emph{{exact}}: {EXACT_MEANING}."]
    return []


def _same(values) -> bool:
    return len(set(values)) <= 1


@dataclass
class LatexLayout:
    """What a LaTeX table shows per row, and what its caption states once for all rows."""
    keys: List[str]                        # column keys shown, in order
    headings: List[str]
    align: str
    cells: List[List[str]]                 # per record, LaTeX
    caption: str
    common: Tuple[str, ...] = ()           # presentations in every row, when not all equal


def _presentations_in_every_row(records: Sequence[dict]) -> Tuple[str, ...]:
    first = list(records[0]["presentations"]) if records else []
    return tuple(name for name in first if all(name in r["presentations"] for r in records))


def _verdict_counts(records: Sequence[dict]) -> str:
    counts = {}
    for r in records:
        counts[r["verdict"]] = counts.get(r["verdict"], 0) + 1
    order = [v for v in VERDICTS if v in counts] + sorted(set(counts) - set(VERDICTS))
    total = len(records)
    parts = ", ".join(f"{counts[v]} {latex_escape(v)}" for v in order)
    return f"{total} case{'s' if total != 1 else ''}: {parts}." if total else "No cases."


def latex_layout(table: Table, options: TableOptions) -> LatexLayout:
    records = table.records
    keys: List[str] = []
    facts: List[str] = []
    certificate_shown: List[str] = []
    common: Tuple[str, ...] = ()
    shown_keys = [c.key for c in table.headings]
    for key in shown_keys:
        if key == "certificate":
            for part in _CERTIFICATE_PARTS:
                values = [_certificate_part(part, r) for r in records]
                if _same(values):
                    if values and values[0]:
                        facts.append(part)
                elif part == "exactness" and "verdict" in shown_keys and \
                        _exactness_by_verdict(records) is not None:
                    facts.append(BY_VERDICT)      # the verdict column already says it
                else:
                    certificate_shown.append(part)
            if certificate_shown:
                keys.append(key)
            continue
        if key in _CAPTION_COLUMNS and _same(COLUMNS[key].value(r) for r in records):
            facts.append(key)
            continue
        if key == "presentations":
            common = _presentations_in_every_row(records)
        keys.append(key)

    def shown_presentations(r: dict) -> Tuple[str, ...]:
        return tuple(name for name in r["presentations"] if name not in common)

    # Long names would set the width of the whole table: letters then stand for the
    # presentation sets, spelled out once in the caption.
    sets = distinct_in_order(shown_presentations(r) for r in records)
    lettered = "presentations" in keys and (
        max((len(", ".join(names)) for names in sets), default=0) > PRESENTATIONS_WIDTH)
    letters = {names: _letter(index) for index, names in enumerate(sets)} if lettered else {}

    def cell(key: str, r: dict) -> str:
        if key == "case":
            return case_latex(r["case"])
        if key == "certificate":
            return ", ".join(_certificate_part(part, r) for part in certificate_shown)
        if key == "presentations":
            names = shown_presentations(r)
            if lettered:
                return f"({letters[names]})"
            return ", ".join(latex_escape(name) for name in names) or "--"
        if key == "order" and r["order"]:
            return f"$s^{{{r['order']}}}$"
        if key == "equivariant":
            return "yes" if r["equivariant"] in (True, None) else "no"
        return latex_escape(COLUMNS[key].value(r))

    headings = []
    for key in keys:
        if key == "presentations" and common:
            headings.append("with")
        elif key == "certificate":
            headings.append(", ".join({"method": "method", "order": "order",
                                       "trials": "trials", "exactness": "certificate"}[part]
                                      for part in certificate_shown))
        else:
            headings.append(COLUMNS[key].latex_heading)
    align = "".join(COLUMNS[key].align for key in keys)
    cells = [[cell(key, r) for key in keys] for r in records]
    caption = _latex_caption(table, options, facts, common, keys,
                             "exactness" in certificate_shown)
    if lettered:
        column = r"\emph{with}" if common else r"\emph{presentations}"
        caption += f" Column {column}: " + "; ".join(
            f"({letters[names]}) {_names_latex(names)}" for names in sets) + "."
    if "seconds" in keys:
        caption += " Times in seconds (wall clock)."
    return LatexLayout(keys, headings, align, cells, caption, common)


def _letter(index: int) -> str:
    return "abcdefghijklmnopqrstuvwxyz"[index] if index < 26 else str(index + 1)


def distinct_in_order(values) -> list:
    seen, out = set(), []
    for value in values:
        if value not in seen:
            seen.add(value)
            out.append(value)
    return out


def _latex_caption(table: Table, options: TableOptions, facts: Sequence[str],
                   common: Tuple[str, ...], keys: Sequence[str] = (),
                   exactness_in_rows: bool = False) -> str:
    records = table.records
    first = records[0] if records else None
    if options.caption:
        sentences = [latex_escape(options.caption).rstrip(".") + "."]
    elif first is None:
        sentences = ["No cases."]
    else:
        ring = r"$QK_T(X)$ or $QK(X)$ " + (r"(column \emph{equiv.})" if "equivariant" in keys
                                            else "(equivariant and plain rows)")
        if _same(r["equivariant"] in (True, None) for r in records):
            ring = ("$QK_T(X)$ (equivariant)" if first["equivariant"] in (True, None)
                    else "$QK(X)$ (plain: every $T_j = 1$)")
        what = f"Comparison of presentations of {ring}, one row per flag variety $X$"
        if "presentations" in facts or _same(tuple(r["presentations"]) for r in records):
            what += ": " + _names_latex(first["presentations"])
        elif common:
            what += (f": {_names_latex(common)} against the presentations in column "
                     r"\emph{with}")
        sentences = [what + "."]
    settled = []
    if first is not None:
        if "method" in facts:
            settled.append(f"method {latex_escape(first['method'])}")
        if "order" in facts:
            settled.append(f"Bethe points to order $s^{{{first['order']}}}$")
        if "trials" in facts:
            settled.append(f"{first['trials']} trial{'s' if first['trials'] != 1 else ''} "
                           "per case")
        if "exactness" in facts:
            settled.append(_CERTIFICATE_FACTS.get(first["certificate"]) or
                           f"{latex_escape(first['certificate'])} certificates")
        if "kind" in facts and len(records) > 1:
            settled.append(f"all {latex_escape(first['kind'])}")
        if "n" in facts and len(records) > 1:
            settled.append(f"all with $n = {first['n']}$")
        if "prime" in facts and first["prime"]:
            settled.append(f"prime {first['prime']}")
    if settled:
        sentences.append(settled[0][0].upper() + settled[0][1:] + "".join(
            "; " + fact for fact in settled[1:]) + ".")
    if first is not None:
        sentences.append(_verdict_counts(records))
    if any(r["verdict"] == "consistent" for r in records):
        sentences.append(r"\emph{consistent}: every relation vanishes at every Bethe point "
                         "to the stated order; evidence, not a proof.")
    sentences += _certificate_sentences(records, facts,
                                        exactness_in_rows or "exactness" in keys)
    return " ".join(sentences)


def plain_caption(table: Table, options: TableOptions) -> str:
    """The caption's first sentence and the verdict counts, for Markdown."""
    if options.caption:
        return options.caption
    records = table.records
    if not records:
        return "No cases."
    ring = "QK_T(X) or QK(X)"
    if _same(r["equivariant"] in (True, None) for r in records):
        ring = "QK_T(X) (equivariant)" if records[0]["equivariant"] in (True, None) \
            else "QK(X) (plain: every T_j = 1)"
    what = f"Comparison of presentations of {ring}, one row per flag variety X"
    if _same(tuple(r["presentations"]) for r in records):
        what += ": " + ", ".join(records[0]["presentations"])
    return f"{what}. {_verdict_counts(records)}"


def table_label(table: Table, options: TableOptions) -> str:
    if options.label:
        return options.label
    stem = re.sub(r"[^A-Za-z0-9]+", "-", table.name or "").strip("-").lower()
    return "tab:ringmatch" + (f"-{stem}" if stem else "")


# Type one size down and narrower gaps between columns (local to the table): the usual
# setting of tables in papers, and what lets the default table fit one column of two.
_COMPACT = (r"\small", r"\setlength{\tabcolsep}{4pt}")


def latex_table(table: Table, options: TableOptions = TableOptions()) -> str:
    layout = latex_layout(table, options)
    spec = layout.align
    width = len(layout.keys)
    header = " & ".join(layout.headings) + r" \\"
    count = len(table.records)
    long = count > LONGTABLE_ROWS
    body: List[str] = []
    by_n: List[Tuple[Optional[int], List[List[str]]]] = []
    if options.group_by_n:
        for n in sorted({r["n"] for r in table.records}):
            by_n.append((n, [c for c, r in zip(layout.cells, table.records) if r["n"] == n]))
    else:
        by_n.append((None, layout.cells))
    for n, rows in by_n:
        if n is not None:
            if body:
                body.append(r"\midrule")
            body.append(rf"\multicolumn{{{width}}}{{l}}{{\emph{{$n = {n}$}}}} \\")
            body.append(r"\addlinespace[2pt]")
        body += [" & ".join(row) + r" \\" for row in rows]
    caption = layout.caption
    label = rf"\label{{{table_label(table, options)}}}"
    use_longtable = long and options.longtable
    lines = ["% ringmatch results table; needs \\usepackage{booktabs}, \\usepackage{amssymb}"
             + (", \\usepackage{longtable} (one-column pages only)" if use_longtable else "")
             + (", \\usepackage{amsmath} (and \\allowdisplaybreaks for long relation lists)"
                if _display_math(options) else "")]
    if long and not use_longtable:
        # Floats of LONGTABLE_ROWS rows, numbered as one table: unlike a longtable they
        # also work on two-column pages.
        for index, chunk in enumerate(_chunks(body, LONGTABLE_ROWS)):
            title = [rf"\caption{{{caption}}}", label] if index == 0 else \
                [r"\addtocounter{table}{-1}",
                 rf"\caption[]{{(continued from the previous page)}}"]
            lines += [r"\begin{table}[htbp]", r"\centering", *title, *_COMPACT,
                      rf"\begin{{tabular}}{{{spec}}}", r"\toprule", header, r"\midrule",
                      *chunk, r"\bottomrule", r"\end{tabular}", r"\end{table}"]
    elif use_longtable:
        lines += ["{" + " ".join(_COMPACT), rf"\begin{{longtable}}{{{spec}}}",
                  rf"\caption{{{caption}}}{label}\\",
                  r"\toprule", header, r"\midrule", r"\endfirsthead",
                  rf"\multicolumn{{{width}}}{{l}}{{\emph{{(continued)}}}} \\",
                  r"\toprule", header, r"\midrule", r"\endhead",
                  r"\bottomrule", r"\endfoot", *body, r"\end{longtable}", "}"]
    else:
        lines += [r"\begin{table}[htbp]", r"\centering", rf"\caption{{{caption}}}", label,
                  *_COMPACT, rf"\begin{{tabular}}{{{spec}}}", r"\toprule", header, r"\midrule",
                  *body, r"\bottomrule", r"\end{tabular}", r"\end{table}"]
    if options.relations:
        lines += relations_latex(table.relations)
    if options.isomorphisms:
        lines += isomorphisms_latex(table.isomorphisms)
    lines += [f"% {line}" for line in block_lines(table)]
    text = "\n".join(lines) + "\n"
    if options.standalone:
        return latex_document(text, long=use_longtable, relations=_display_math(options))
    return text


def _chunks(body: Sequence[str], rows: int) -> List[List[str]]:
    """The body lines in pieces of at most `rows` table rows; a piece never starts with a
    rule, and a group heading (n = …) moves on with the rows it heads."""
    chunks: List[List[str]] = [[]]
    count = 0
    pending: List[str] = []
    for line in body:
        if line == r"\midrule" or line.startswith(r"\multicolumn") or \
                line.startswith(r"\addlinespace"):
            pending.append(line)
            continue
        if count == rows:
            chunks.append([])
            count = 0
            pending = [x for x in pending if x != r"\midrule"]
        chunks[-1] += pending + [line]
        pending = []
        count += 1
    return chunks


def _display_math(options: TableOptions) -> bool:
    return options.relations or options.isomorphisms


def latex_document(fragment: str, *, long: bool, relations: bool) -> str:
    packages = ["booktabs", "amssymb"] + (["longtable"] if long else []) + \
        (["amsmath"] if relations else [])
    # long lists of relations are one align* per presentation: let them break across pages
    breaks = [r"\allowdisplaybreaks"] if relations else []
    return "\n".join([r"\documentclass[10pt]{article}",
                      *[rf"\usepackage{{{p}}}" for p in packages], *breaks,
                      r"\begin{document}", fragment.rstrip("\n"), r"\end{document}", ""])


# ---------------------------------------------------------------------------------------
# Relations of small cases

# Display lines are set in one column of a two-column article (reports.formulas.COLUMN_UNITS
# of reports.formulas.latex_width); the left column of the align (a label, a generator)
# takes its share, and continuation lines lose 4 more to their \qquad.
LINE_UNITS = COLUMN_UNITS
CONTINUATION_INDENT = 4.0
# Below this a formula would be cut into slivers; a line may then run wide.
MIN_LINE_UNITS = 16.0
# Labels wider than this (with their \quad) go on a line of their own above the relation.
STACK_LABEL_UNITS = 16.0


def _line_room(left_units: float) -> Tuple[float, float]:
    """(first line, continuation lines) for formulas beside a left column this wide."""
    first = max(MIN_LINE_UNITS, LINE_UNITS - left_units)
    return first, max(MIN_LINE_UNITS, first - CONTINUATION_INDENT)


def relation_latex_lines(poly, names: Sequence[str], symbol_latex: Dict[str, str],
                         left_units: float = 0.0) -> List[str]:
    """The relation `poly = 0` as display lines that fit the column beside a left column
    of `left_units` (long sums would run off the page), (1 − q_i) factored out where that
    shortens it."""
    pieces = relation_latex_pieces(poly, names, symbol_latex)
    pieces[-1] += " = 0"     # counted with the last term, so that it never stands alone
    first, rest = _line_room(left_units)
    return break_lines(pieces, rest, first)


def _label_text(label: str) -> str:
    return rf"\text{{[{label_latex(label)}]}}"


@dataclass
class CaseRelations:
    """One presentation of a small case, built by the command line for its relations."""
    case: str
    name: str
    presentation: object = None           # presentations.interface.Presentation; None: not
                                          # available here (a moved file, a missing plug-in)


def presentation_relations(presentation) -> List[Tuple[str, List[str], bool]]:
    """(label, display lines, whether the label stands on a line of its own) per relation."""
    symbol_latex = {g.name: generator_latex(g) for g in presentation.generators}
    names = presentation.ring.ctx.names()
    # the labels take the left column of the align, the formulas what is left
    label_units = max((latex_width(_label_text(r.label)) for r in presentation.relations),
                      default=0.0) + 2.0      # and its \quad
    # a wide label would leave the formulas a sliver: it then gets a line of its own
    stacked = label_units > STACK_LABEL_UNITS
    left = 2.0 if stacked else label_units
    return [(r.label, relation_latex_lines(r.poly, names, symbol_latex, left), stacked)
            for r in presentation.relations]


def align_lines(relations: Sequence[Tuple[str, List[str], bool]]) -> List[str]:
    """An align* environment of labelled relations (from `presentation_relations`)."""
    lines = [r"\begin{align*}"]
    for label, parts, stacked in relations:
        if stacked:
            lines += [rf"& {_label_text(label)} \\", rf"& \quad {parts[0]} \\"]
        else:
            lines.append(rf"{_label_text(label)}\quad & {parts[0]} \\")
        lines += [rf"& \qquad {part} \\" for part in parts[1:]]
    lines[-1] = lines[-1].rstrip(" \\")
    return lines + [r"\end{align*}"]


def presentation_latex(presentation) -> str:
    """`ringmatch relations --latex`: the relations as an align* block for a paper, set like
    the relations under a table, with the generators and units in words above it."""
    from .formulas import formula
    flag = presentation.flag
    symbol_latex = {g.name: generator_latex(g) for g in presentation.generators}
    names = presentation.ring.ctx.names()
    lines = [f"% {presentation.family} presentation of QK_T({flag.name}), rank {flag.rank}; "
             "needs \\usepackage{amsmath} (and amssymb for the case name)",
             "% generators: " + ", ".join(f"{g.name} = {symbol_latex[g.name]}"
                                          for g in presentation.generators),
             "% " + ELEMENTARY_NOTE,
             rf"\paragraph{{{case_latex(flag.name)}, {latex_escape(presentation.family)}}}"]
    lines += align_lines(presentation_relations(presentation))
    if presentation.units:
        inverted = ", ".join(f"${formula(u, names, latex=True, symbol_latex=symbol_latex)}$"
                             for u in presentation.units)
        lines.append(f"Inverted: {inverted}.")
    return "\n".join(lines)


def label_latex(label: str) -> str:
    """A relation label for text mode, its powers of y as math ("level 1, y^2")."""
    pieces = re.split(r"\^(\d+)", label)
    out = latex_escape(pieces[0])
    for power, text in zip(pieces[1::2], pieces[2::2]):
        out = out[:-1] + f"${out[-1]}^{{{power}}}$" if out and out[-1].isalpha() else \
            out + rf"\textasciicircum{{}}{power}"
        out += latex_escape(text)
    return out


def relations_latex(found: Sequence[CaseRelations]) -> List[str]:
    lines: List[str] = []
    for item in found:
        title = f"{item.case}, {item.name}"
        if item.presentation is None:
            lines.append(f"% relations of {title}: presentation not available here")
            continue
        heading = f"{case_latex(item.case)}, {latex_escape(item.name)}"
        lines += ["", rf"\paragraph{{{heading}}}",
                  *align_lines(presentation_relations(item.presentation))]
    if any("(T)" in line for line in lines):
        lines.insert(0, "\n" + ELEMENTARY_NOTE)
    return lines


def relations_markdown(found: Sequence[CaseRelations]) -> List[str]:
    lines: List[str] = []
    for item in found:
        if item.presentation is None:
            lines += ["", f"Relations of {item.case}, {item.name}: presentation not "
                      "available here."]
            continue
        lines += ["", f"**{item.case}, {item.name}**", ""]
        for label, parts, _ in presentation_relations(item.presentation):
            lines += [f"[{label}]", "", "$$", " ".join(parts), "$$", ""]
    if any("(T)" in line for line in lines):
        lines.insert(0, "\n" + ELEMENTARY_NOTE)
    return lines


# Relations write the elementary symmetric polynomials of the weights compactly.
ELEMENTARY_NOTE = (r"In the relations, $e_j(T)$ is the $j$-th elementary symmetric "
                   r"polynomial of the weights $T_1, \dots, T_n$.")


# ---------------------------------------------------------------------------------------
# Isomorphisms of small cases

@dataclass
class CaseIsomorphism:
    """The change of generators printed for one case, or why there is none."""
    case: str
    skipped: List[Tuple[str, str]]        # (presentation, why the finder cannot use it)
    pair: Optional[Tuple[str, str]] = None
    seed: Optional[int] = None
    seed_origin: str = ""                 # where the seed comes from, for the block
    result: object = None                 # compare.iso_records.IsoResult
    legend: List[Tuple[str, str]] = field(default_factory=list)   # (name, LaTeX of its class)
    note: Optional[str] = None            # why nothing was computed


def _verdict(result) -> str:
    if result.verified:
        return "Found and verified (probabilistic: random specialisations)"
    return "Found, not verified" if result.found else result.status.capitalize()


def _formula_pairs(direction, symbol_latex: Dict[str, str]) -> List[Tuple[str, str]]:
    """(target, formula) in LaTeX, generators named as in the relations."""
    return [(target, " ".join(lines)) for target, lines in _formula_lines(direction, symbol_latex)]


def _formula_lines(direction, symbol_latex: Dict[str, str]) -> List[Tuple[str, List[str]]]:
    """(target, lines of its formula), the lines fitting the column beside the target."""
    from .isomorphism import formula_latex_lines, target_latex
    out = []
    for f in direction.formulas:
        target = target_latex(f.target, symbol_latex)
        first, rest = _line_room(latex_width(target) + 2.8)      # and its "="
        out.append((target, formula_latex_lines(f, direction.source_generators, symbol_latex,
                                                rest, first)))
    return out


def _directions(result):
    return (("Map", result.forward), ("Inverse", result.backward))


def isomorphisms_latex(found: Sequence[CaseIsomorphism]) -> List[str]:
    lines: List[str] = []
    for item in found:
        lines += [f"% {item.case}: {name} skipped for the isomorphism: {latex_escape(why)}"
                  for name, why in item.skipped]
        if item.note:
            lines.append(f"% {item.case}: no isomorphism printed: {latex_escape(item.note)}")
            continue
        result = item.result
        title = f"{case_latex(item.case)}, {latex_escape(item.pair[0])} $\\to$ " \
                f"{latex_escape(item.pair[1])}"
        lines += ["", rf"\paragraph{{Isomorphism {title}}}",
                  latex_escape(f"{_verdict(result)}; seed {item.seed}.")]
        if not result.found:
            lines.append(latex_escape(result.reason))
            continue
        symbol_latex = dict(item.legend)
        for title, direction in _directions(result):
            lines += [latex_escape(f"{title} ({direction.target} generators in "
                                   f"{direction.source} generators):"), r"\begin{align*}"]
            for target, parts in _formula_lines(direction, symbol_latex):
                lines.append(f"  {target} &= {parts[0]} \\\\")
                lines += [f"  &\\qquad {part} \\\\" for part in parts[1:]]
            lines[-1] = lines[-1].rstrip(" \\")
            lines.append(r"\end{align*}")
    return lines


def isomorphisms_markdown(found: Sequence[CaseIsomorphism]) -> List[str]:
    lines: List[str] = []
    for item in found:
        for name, why in item.skipped:
            lines += ["", f"Note: {item.case}: {name} skipped for the isomorphism: {why}."]
        if item.note:
            lines += ["", f"Note: {item.case}: no isomorphism printed: {item.note}."]
            continue
        result = item.result
        lines += ["", f"**Isomorphism {item.case}, {item.pair[0]} → {item.pair[1]}**: "
                      f"{_verdict(result)}; seed {item.seed}."]
        if not result.found:
            lines += ["", result.reason]
            continue
        symbol_latex = dict(item.legend)
        for title, direction in _directions(result):
            lines += ["", f"{title} ({direction.target} generators in {direction.source} "
                          "generators):", ""]
            for target, formula in _formula_pairs(direction, symbol_latex):
                lines += ["$$", f"{target} = {formula}", "$$", ""]
    return lines


def isomorphism_block_lines(found: Sequence[CaseIsomorphism]) -> List[str]:
    computed = [item for item in found if item.result is not None]
    if not computed:
        return []
    entries = []
    for item in computed:
        certificate = item.result.certificate
        prime = (certificate.get("search") or {}).get("prime")
        verdict = _verdict(item.result).lower()
        entries.append(f"{item.case} {item.pair[0]}->{item.pair[1]} seed {item.seed} "
                       f"({item.seed_origin}), search prime {prime}: {verdict}")
    bounds = computed[0].result.bounds
    return [f"isomorphisms computed with compare.iso.find_isomorphism (order s^{bounds['order']}, "
            f"up to {bounds['max_terms']} terms): " + "; ".join(entries)]


# ---------------------------------------------------------------------------------------
# CSV and Markdown

def csv_table(table: Table) -> str:
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    headings = [c.key for c in table.headings]
    grouped = table.groups[0][0] is not None
    writer.writerow((["n"] if grouped and "n" not in headings else []) + headings)
    for n, rows in table.groups:
        for row in rows:
            writer.writerow(([n] if grouped and "n" not in headings else []) + row)
    for line in block_lines(table):
        out.write(f"# {line}\n")
    return out.getvalue()


def _markdown_cell(value: str) -> str:
    return value.replace("|", "\\|")


def markdown_table(table: Table, options: TableOptions = TableOptions()) -> str:
    from tabulate import tabulate
    headings = [c.heading for c in table.headings]
    lines: List[str] = []
    for n, rows in table.groups:
        if n is not None:
            lines += [f"#### n = {n}", ""]
        lines.append(tabulate([[_markdown_cell(v) for v in row] for row in rows],
                              headers=headings, tablefmt="github",
                              colalign=["right" if c.align == "r" else "left"
                                        for c in table.headings]))
        lines.append("")
    lines.insert(0, plain_caption(table, options) + "[^reproduce]")
    lines.insert(1, "")
    if options.relations:
        lines += relations_markdown(table.relations) + [""]
    if options.isomorphisms:
        lines += isomorphisms_markdown(table.isomorphisms) + [""]
    lines.append("[^reproduce]: " + "  \n    ".join(block_lines(table)))
    return "\n".join(lines) + "\n"


def check_format(fmt: str) -> None:
    if fmt not in FORMATS:
        raise TableError(f"unknown format {fmt!r}; choose from {', '.join(FORMATS)}")


def render(source: Source, fmt: str, options: TableOptions = TableOptions(), *,
           relations: Sequence[CaseRelations] = (),
           isomorphisms: Sequence[CaseIsomorphism] = ()) -> str:
    """The table in `fmt`; relations and isomorphisms as computed by the command line
    (`compare.table_command.render` computes them and calls this)."""
    check_format(fmt)
    if fmt == "csv":      # no display math in CSV
        options = replace(options, isomorphisms=False)
    table = build_table(source, options, relations=relations, isomorphisms=isomorphisms)
    return render_table(table, fmt, options)


def render_table(table: Table, fmt: str, options: TableOptions = TableOptions()) -> str:
    check_format(fmt)
    if fmt == "latex":
        return latex_table(table, options)
    if fmt == "csv":
        return csv_table(table)
    return markdown_table(table, options)


def render_schubert(source: Source, fmt: str, *, command: str = "") -> str:
    """The stored Schubert multiplication tables of a store (`ringmatch schubert --store`),
    as rendered by reports/schubert.py; nothing is recomputed."""
    from . import schubert
    from .frames import load_schubert_rows
    if fmt not in FORMATS:
        raise TableError(f"unknown format {fmt!r} (choose from {', '.join(FORMATS)})")
    rows = load_schubert_rows(source)
    if not rows:
        raise TableError(f"{source}: no Schubert tables stored (write them with "
                         "`ringmatch schubert --cases … --store FILE`)")
    if fmt == "csv":
        return schubert.stored_csv(rows)
    if fmt == "latex":
        return schubert.stored_latex(rows, command=command)
    return schubert.stored_markdown(rows)
