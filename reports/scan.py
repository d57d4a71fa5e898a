"""What a scan shows: a summary, a table per case, a figure with a panel per case.

All three read the JSON object of a scan (`compare.scan.outcome_json`), so they can be redrawn
from a saved `ringmatch scan --json` without computing anything.

Tables: rows are the values of the first varied parameter, columns those of the second (one
column when only one parameter varies; further parameters give one table per combination of
their values).  A cell is the verdict and the colength, e.g. `agree 6`; `–` marks a colength
that was not computed (the point was refuted at the Bethe points) and `∞` an infinite one.

Figure: one small panel per case, a coloured cell per grid point with its colength written in
it.  The colours are the Okabe–Ito colours (blue, orange, bluish green, grey), chosen to stay
apart under the common colour-vision deficiencies; each verdict is also printed as a letter
in the legend, and the cells' text is black or white by the cell's lightness.
"""
from __future__ import annotations

import csv
import io
import itertools
from typing import Dict, List, Optional, Sequence, Tuple

from ringmatch.errors import InputError

TABLE_FORMATS = ("markdown", "csv", "latex")
COLOURS = {"agree": "#0072B2", "disagree": "#E69F00", "consistent": "#009E73",
           "inconclusive": "#BBBBBB"}
TEXT_ON = {"agree": "white", "disagree": "black", "consistent": "white", "inconclusive": "black"}
MISSING = "–"


class ScanReportError(InputError):
    """A scan table or figure that cannot be made (format, nothing to show)."""


def colength_text(value) -> str:
    if value is None:
        return MISSING
    if value == "infinite":
        return "∞"
    return str(value)


def cell_text(record: Optional[dict]) -> str:
    if record is None:
        return ""
    return f"{record['verdict']} {colength_text(record.get('colength'))}"


def _index(data: dict) -> Dict[Tuple[str, Tuple[Tuple[str, int], ...]], dict]:
    names = data["parameters"]
    return {(r["case"], tuple((n, r["values"][n]) for n in names)): r for r in data["points"]}


def blocks(data: dict) -> List[Tuple[str, Dict[str, int]]]:
    """(title, values of the parameters beyond the first two) for each table of a case."""
    names = data["parameters"]
    extra = names[2:]
    if not extra:
        return [("", {})]
    out = []
    for values in itertools.product(*(data["axes"][n] for n in extra)):
        chosen = dict(zip(extra, values))
        out.append((", ".join(f"{k}={v}" for k, v in chosen.items()), chosen))
    return out


def case_table(data: dict, case: str, extra: Dict[str, int]) -> Tuple[List[str], List[List[str]]]:
    """Headers and rows of one table: rows = first parameter, columns = second."""
    names = data["parameters"]
    index = _index(data)
    if not names:
        return ["case"], [[cell_text(index.get((case, ())))]]
    row_name = names[0]
    column_name = names[1] if len(names) > 1 else None
    columns = data["axes"][column_name] if column_name else [None]
    headers = [row_name if column_name is None else f"{row_name} \\ {column_name}"]
    headers += [f"{column_name}={c}" if column_name else "verdict colength" for c in columns]
    rows = []
    for r in data["axes"][row_name]:
        row = [str(r)]
        for c in columns:
            values = {row_name: r, **({column_name: c} if column_name else {}), **extra}
            key = (case, tuple((n, values[n]) for n in names))
            row.append(cell_text(index.get(key)))
        rows.append(row)
    return headers, rows


def render_tables(data: dict, fmt: str) -> str:
    if fmt not in TABLE_FORMATS:
        raise ScanReportError(f"table format {fmt!r}: expected one of {', '.join(TABLE_FORMATS)}")
    if not data["points"]:
        raise ScanReportError("the scan has no results to tabulate")
    cases = [c for c in data["cases"] if any(r["case"] == c for r in data["points"])]
    if fmt == "csv":
        return _csv(data, cases)
    out: List[str] = []
    for case in cases:
        for title, extra in blocks(data):
            headers, rows = case_table(data, case, extra)
            caption = f"{case}: {data['presentation']} against {data['reference']}" + \
                (f" ({title})" if title else "")
            out.append(_markdown(caption, headers, rows) if fmt == "markdown"
                       else _latex(caption, headers, rows))
    return "\n".join(out)


def _csv(data: dict, cases: Sequence[str]) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    names = data["parameters"]
    writer.writerow(["case", *names, "verdict", "colength", "classical_colength", "holds",
                     "refuted_by_points"])
    for record in data["points"]:
        if record["case"] in cases:
            writer.writerow([record["case"], *(record["values"][n] for n in names),
                             record["verdict"], colength_text(record.get("colength")),
                             colength_text(record.get("classical_colength")),
                             record.get("holds"), record.get("refuted_by_points")])
    return buffer.getvalue()


def _markdown(caption: str, headers: List[str], rows: List[List[str]]) -> str:
    lines = [f"**{caption}**", "", "| " + " | ".join(headers) + " |",
             "|" + "|".join("---" for _ in headers) + "|"]
    lines += ["| " + " | ".join(row) + " |" for row in rows]
    return "\n".join(lines) + "\n"


_LATEX_SPECIAL = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#",
                  "_": r"\_", "{": r"\{", "}": r"\}", "~": r"\textasciitilde{}",
                  "^": r"\textasciicircum{}", "–": "--", "∞": r"$\infty$"}


def _tex(text: str) -> str:
    return "".join(_LATEX_SPECIAL.get(ch, ch) for ch in text)


def _latex(caption: str, headers: List[str], rows: List[List[str]]) -> str:
    lines = [r"\begin{table}[ht]", r"\centering", r"\small",
             r"\begin{tabular}{r" + "l" * (len(headers) - 1) + "}", r"\hline",
             " & ".join(_tex(h) for h in headers) + r" \\", r"\hline"]
    lines += [" & ".join(_tex(c) for c in row) + r" \\" for row in rows]
    lines += [r"\hline", r"\end{tabular}", rf"\caption{{{_tex(caption)}}}", r"\end{table}"]
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------------------------------
# Summary

def summary_text(data: dict) -> str:
    lines = [f"scan of {data['presentation']} against {data['reference']}: "
             f"{len(data['cases'])} case(s), parameters "
             + (", ".join(f"{n} in {_values_text(data['axes'][n])}" for n in data["parameters"])
                or "none") + (f"; fixed {_assignment(data['fixed'])}" if data["fixed"] else ""),
             f"{data['from_store']} from the store, {data['computed']} computed"
             + (f"; store {data['store']}" if data.get("store") else ""), ""]
    for case in data["cases"]:
        if not any(r["case"] == case for r in data["points"]):
            continue
        for title, extra in blocks(data):
            headers, rows = case_table(data, case, extra)
            lines.append(f"{case}" + (f" ({title})" if title else ""))
            lines.append(_plain(headers, rows))
            lines.append("")
    for case in data["cases"]:
        agreeing = data["agreeing"].get(case, [])
        if any(r["case"] == case for r in data["points"]):
            lines.append(f"agree on {case}: " + ("; ".join(_assignment(v) for v in agreeing)
                                                 or "none"))
    everywhere = data["agreeing_everywhere"]
    lines.append("agree on every case scanned: " + ("; ".join(_assignment(v) for v in everywhere)
                                                    or "none"))
    if everywhere and data.get("agrees_up_to_rank") is not None:
        lines.append(f"  (agrees up to rank {data['agrees_up_to_rank']})")
    if data["dropped"]:
        lines.append(f"dropped after disagreeing: {len(data['dropped'])} value assignment(s)")
    if data.get("stopped_at") is not None:
        lines.append(f"stopped at the first agreeing values: {_assignment(data['stopped_at'])}")
    if data["skipped"]:
        lines.append(f"skipped {len(data['skipped'])} case(s): "
                     + "; ".join(f"{s['case']} ({s['reason']})" for s in data["skipped"][:6]))
    return "\n".join(lines)


def _assignment(values: dict) -> str:
    return ", ".join(f"{k}={v}" for k, v in values.items()) or "(no parameters)"


def _values_text(values: Sequence[int]) -> str:
    if len(values) > 2 and list(values) == list(range(values[0], values[-1] + 1)):
        return f"{values[0]}..{values[-1]}"
    return "{" + ", ".join(map(str, values)) + "}"


def _plain(headers: List[str], rows: List[List[str]]) -> str:
    from tabulate import tabulate
    return tabulate(rows, headers=headers, tablefmt="simple", disable_numparse=True)


# ---------------------------------------------------------------------------------------
# Figure

def scan_figure(data: dict, out, *, command: Optional[str] = None) -> str:
    from pathlib import Path
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.patches import Patch

    path = Path(out)
    fmt = path.suffix.lower().lstrip(".")
    if fmt not in ("png", "svg", "pdf"):
        raise ScanReportError(f"--figure {out}: the file name must end in .png, .svg or .pdf")
    cases = [c for c in data["cases"] if any(r["case"] == c for r in data["points"])]
    if not cases:
        raise ScanReportError("the scan has no results to draw")
    names = data["parameters"]
    row_values = data["axes"][names[0]] if names else [None]
    column_values = data["axes"][names[1]] if len(names) > 1 else [None]
    extra_blocks = blocks(data)
    panels = [(case, title, extra) for case in cases for title, extra in extra_blocks]
    columns = min(4, len(panels))
    rows_of_panels = -(-len(panels) // columns)
    cell = 0.22
    width = max(3.3, columns * (len(column_values) * cell + 0.7))
    height = rows_of_panels * (len(row_values) * cell + 1.1) + 0.5
    figure, axes = plt.subplots(rows_of_panels, columns, figsize=(width, height), squeeze=False)
    index = _index(data)
    seen = set()
    for ax, (case, title, extra) in itertools.zip_longest(axes.flat, panels,
                                                         fillvalue=(None, None, None)):
        if case is None:
            ax.axis("off")
            continue
        for y, r in enumerate(row_values):
            for x, c in enumerate(column_values):
                values = {**({names[0]: r} if names else {}),
                          **({names[1]: c} if len(names) > 1 else {}), **extra}
                record = index.get((case, tuple((n, values[n]) for n in names)))
                verdict = record["verdict"] if record else None
                colour = COLOURS.get(verdict, "#FFFFFF" if record is None else "#BBBBBB")
                seen.add(verdict if verdict in COLOURS else None if record is None
                         else "inconclusive")
                ax.add_patch(plt.Rectangle((x - 0.5, y - 0.5), 1, 1, facecolor=colour,
                                           edgecolor="white", linewidth=0.6))
                if record is not None:
                    ax.text(x, y, colength_text(record.get("colength")), ha="center",
                            va="center", fontsize=5,
                            color=TEXT_ON.get(verdict, "black"))
        ax.set_xlim(-0.5, len(column_values) - 0.5)
        ax.set_ylim(len(row_values) - 0.5, -0.5)
        ax.set_aspect("equal")
        ax.set_title(case + (f"\n{title}" if title else ""), fontsize=6, pad=2)
        ax.set_xticks(range(len(column_values)))
        ax.set_xticklabels(["" if c is None else str(c) for c in column_values], fontsize=5)
        ax.set_yticks(range(len(row_values)))
        ax.set_yticklabels(["" if r is None else str(r) for r in row_values], fontsize=5)
        ax.tick_params(length=0, pad=1)
        if len(names) > 1:
            ax.set_xlabel(names[1], fontsize=5, labelpad=1)
        if names:
            ax.set_ylabel(names[0], fontsize=5, labelpad=1)
        for spine in ax.spines.values():
            spine.set_visible(False)
    handles = [Patch(facecolor=COLOURS[v], edgecolor="black", linewidth=0.3, label=v)
               for v in ("agree", "consistent", "inconclusive", "disagree") if v in seen]
    figure.legend(handles=handles, loc="lower center", ncol=len(handles), fontsize=6,
                  frameon=False, title="verdict (number: colength; – not computed)",
                  title_fontsize=6)
    figure.suptitle(f"{data['presentation']} against {data['reference']}", fontsize=7)
    figure.tight_layout(rect=(0, 0.08, 1, 0.95))
    metadata = {"png": {"Description": command or ""}, "svg": {"Description": command or ""},
                "pdf": {"Subject": command or ""}}[fmt]
    try:
        figure.savefig(path, format=fmt, dpi=300, metadata=metadata)
    finally:
        plt.close(figure)
    return str(path)
