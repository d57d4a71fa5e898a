"""Agreement map: every case of a sweep as a marker coloured and shaped by its verdict.

Layouts:
* "list" — one column per n, the cases of that n listed top to bottom (by number of
  subspaces, then dimension vector), each marker followed by the case's name: every case is
  named;
* "steps" — x = n, y = m (number of subspaces: 1 for Grassmannians … n − 1 for complete
  flags); the cases sharing a cell (n, m) sit side by side in a small grid, ordered by
  their dimension vectors;
* "grassmannian" — x = n, y = k for the Grassmannians Gr(k; n) of the source (other cases
  are left out and counted in the stored provenance);
* "auto" — "list" up to LIST_MAX_CASES cases, else "grassmannian" when every case is one,
  else "steps".

In every layout all markers have one size (size encodes nothing), the axes have integer
ticks, and a note under the plot states which presentations, which sizes (n, rank) and how
many cases it shows.  Counterexamples (`disagree`) are named beside their markers — in the
grids the first NAMED_COUNTEREXAMPLES of them, each only where its name covers no other
name and no marker; the note counts the ones left unnamed.

The palette is ours: dark blue / yellow / orange / light grey differ in hue *and* lightness,
so they stay distinct under the common colour-vision deficiencies and in greyscale, and each
verdict also has its own marker shape.  `consistent` (relations vanish at the Bethe points
to the stated order, not proven) has its own colour and shape and is never drawn or counted
as agreement.  Sized for one paper column (3.3 in wide).

The reproducibility block (reports.provenance) is stored in the file: PNG text chunks,
SVG metadata (Dublin Core description), PDF document information (Subject).
"""
from __future__ import annotations

import math
from collections import defaultdict
from dataclasses import dataclass
from pathlib import Path
from typing import Dict, List, Optional, Sequence, Tuple

from ringmatch.errors import InputError

from . import provenance as prov
from .frames import Source, distinct, frame_record, load_rows, select_rows

FIGURE_FORMATS = ("png", "svg", "pdf")
LAYOUTS = ("auto", "list", "steps", "grassmannian")
COLUMN_WIDTH_INCHES = 3.3
# Up to this many cases the "list" layout names every case; beyond, the names crowd.
LIST_MAX_CASES = 40
# Counterexamples named beside their markers in the grid layouts; the rest are counted.
NAMED_COUNTEREXAMPLES = 8
MARKER_SIZE = 22.0     # points^2, matplotlib's scatter size; one size for every marker


@dataclass(frozen=True)
class VerdictStyle:
    label: str
    colour: str
    marker: str


VERDICT_STYLES: Dict[str, VerdictStyle] = {
    "agree": VerdictStyle("agree", "#1F5FA6", "s"),              # dark blue, square
    "consistent": VerdictStyle("consistent", "#F0E442", "^"),    # yellow, triangle
    "disagree": VerdictStyle("disagree", "#F28E2B", "D"),        # orange, diamond
    "inconclusive": VerdictStyle("inconclusive", "#C8C8C8", "o"),   # light grey, circle
}


class FigureError(InputError):
    """A figure request that cannot be met (format, layout, nothing to draw)."""


@dataclass(frozen=True)
class Marker:
    case: str
    verdict: str
    x: float
    y: float
    size: float       # points^2, matplotlib's scatter size (the same for every marker)


def choose_layout(records: Sequence[dict], layout: str) -> str:
    if layout not in LAYOUTS:
        raise FigureError(f"unknown layout {layout!r}; choose from {', '.join(LAYOUTS)}")
    if layout == "auto":
        if len(records) <= LIST_MAX_CASES:
            return "list"
        return "grassmannian" if all(r["kind"] == "grassmannian" for r in records) else "steps"
    return layout


def _listing_order(r: dict) -> tuple:
    return (r["m"], r["dims"], r["verdict"])


def marker_positions(records: Sequence[dict], layout: str) -> List[Marker]:
    """Where each case goes.  "list": column n, row −i for the i-th case of that n;
    grids: cases sharing a cell are packed in a square grid inside it."""
    if layout == "list":
        columns: Dict[int, List[dict]] = defaultdict(list)
        for r in records:
            columns[r["n"]].append(r)
        return [Marker(r["case"], r["verdict"], float(n), float(-row), MARKER_SIZE)
                for n, members in sorted(columns.items())
                for row, r in enumerate(sorted(members, key=_listing_order))]
    cells: Dict[Tuple[int, int], List[dict]] = defaultdict(list)
    for r in records:
        if layout == "grassmannian":
            if r["kind"] == "grassmannian":
                cells[(r["n"], r["dims"][0])].append(r)
        else:
            cells[(r["n"], r["m"])].append(r)
    widest = max((math.ceil(math.sqrt(len(m))) for m in cells.values()), default=1)
    markers = []
    for (x, y), members in sorted(cells.items()):
        members = sorted(members, key=lambda r: (r["dims"], r["verdict"]))
        side = math.ceil(math.sqrt(len(members)))
        rows = math.ceil(len(members) / side)
        pitch = 0.8 / side
        for index, r in enumerate(members):
            row, col = divmod(index, side)
            in_row = min(side, len(members) - row * side)   # centre a short last row
            dx = (col - (in_row - 1) / 2) * pitch
            dy = ((rows - 1) / 2 - row) * pitch
            # the densest cell sets one size for all: a bigger marker must not mean more
            markers.append(Marker(r["case"], r["verdict"], x + dx, y + dy,
                                  size=min(MARKER_SIZE * 2.5, 70.0 / widest ** 2)))
    return markers


def figure_format(path: Path) -> str:
    suffix = path.suffix.lower().lstrip(".")
    if suffix not in FIGURE_FORMATS:
        raise FigureError(f"{path}: unknown figure format {path.suffix or '(none)'!r}; "
                          f"use .png, .svg or .pdf")
    return suffix


def metadata_for(fmt: str, text: str, title: str) -> dict:
    creator = "ringmatch " + prov.package_versions(("ringmatch",))["ringmatch"]
    if fmt == "png":
        return {"Title": title, "Software": creator, "Description": text}
    if fmt == "svg":
        return {"Title": title, "Creator": creator, "Description": text}
    return {"Title": title, "Creator": creator, "Subject": text}


def figure_note(records: Sequence[dict], shown: Sequence[Marker]) -> str:
    """What the figure shows, in words: presentations, equivariance, sizes, counts."""
    names = {m.case for m in shown}
    chosen = [r for r in records if r["case"] in names]
    sets = distinct(tuple(r["presentations"]) for r in chosen)
    presentations = " | ".join(", ".join(s) for s in sets) or "–"
    variants = distinct("equivariant" if r["equivariant"] in (True, None) else "plain"
                        for r in chosen)
    ns = [r["n"] for r in chosen]
    ranks = [r["rank"] for r in chosen]
    lines = [f"{presentations} ({' and '.join(variants)})",
             f"{len(chosen)} case{'s' if len(chosen) != 1 else ''}, "
             f"{min(ns)} ≤ n ≤ {max(ns)}, rank ≤ {max(ranks)}" if chosen else "no cases"]
    limited = sum(1 for r in chosen if str(r.get("reason", "")).startswith("limit"))
    if limited:
        lines[-1] += f"; {limited} stopped by a resource limit"
    orders = distinct(r["order"] for r in chosen if r["verdict"] == "consistent")
    if orders:
        lines.append("consistent: relations vanish at the Bethe points to order "
                     + "/".join(f"s^{o}" for o in orders) + "; not proven")
    return "\n".join(lines)


NOTE_WIDTH = 76     # characters of the 5.5 pt note on a column's width


def wrap_note(note: str) -> str:
    import textwrap
    return "\n".join(part for line in note.splitlines()
                     for part in (textwrap.wrap(line, NOTE_WIDTH, subsequent_indent="  ")
                                  or [""]))


Box = Tuple[float, float, float, float]      # x0, y0, x1, y1 in display units

# Where a name may go, in points from its marker: above right first, then the other corners
# and the sides.
LABEL_SPOTS = ((3, 3, "left", "bottom"), (3, -3, "left", "top"),
               (-3, 3, "right", "bottom"), (-3, -3, "right", "top"),
               (5, 0, "left", "center"), (-5, 0, "right", "center"))


def overlaps(a: Box, b: Box) -> bool:
    return a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]


def inside(a: Box, bounds: Box) -> bool:
    return bounds[0] <= a[0] and a[2] <= bounds[2] and bounds[1] <= a[1] and a[3] <= bounds[3]


def first_free(candidates: Sequence[Box], taken: Sequence[Box], bounds: Box) -> Optional[int]:
    """The first candidate box inside `bounds` that overlaps none of `taken`."""
    for index, box in enumerate(candidates):
        if inside(box, bounds) and not any(overlaps(box, other) for other in taken):
            return index
    return None


def name_markers(fig, ax, chosen: Sequence[Marker], markers: Sequence[Marker]) -> List[str]:
    """Write the case name beside each chosen marker (up to NAMED_COUNTEREXAMPLES) where it
    covers no other name and no marker and stays inside the plot; the names written."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    renderer = FigureCanvasAgg(fig).get_renderer()
    taken: List[Box] = []
    for m in markers:
        x, y = ax.transData.transform((m.x, m.y))
        radius = math.sqrt(m.size) / 2 * fig.dpi / 72     # scatter sizes are points^2
        taken.append((x - radius, y - radius, x + radius, y + radius))
    bounds = tuple(ax.get_window_extent(renderer).extents)
    named = []
    for m in chosen[:NAMED_COUNTEREXAMPLES]:
        labels, boxes = [], []
        for dx, dy, ha, va in LABEL_SPOTS:
            label = ax.annotate(m.case, (m.x, m.y), xytext=(dx, dy), textcoords="offset points",
                                fontsize=5.5, fontweight="bold", ha=ha, va=va, zorder=4)
            labels.append(label)
            boxes.append(tuple(label.get_window_extent(renderer).extents))
        spot = first_free(boxes, taken, bounds)
        for index, label in enumerate(labels):
            if index != spot:
                label.remove()
        if spot is not None:
            taken.append(boxes[spot])
            named.append(m.case)
    return named


def agreement_map(source: Source, out, *, layout: str = "auto", command: Optional[str] = None,
                  width: float = COLUMN_WIDTH_INCHES, dpi: int = 300,
                  sweep: Optional[str] = None, presentations: Optional[Sequence[str]] = None,
                  equivariant: Optional[bool] = None) -> Path:
    """Draw the agreement map of `source` into `out` (.png, .svg or .pdf) and return its
    path.  `command` goes into the stored reproducibility block; `sweep`, `presentations`
    and `equivariant` select rows as reports.frames.select_rows does."""
    out = Path(out)
    fmt = figure_format(out)
    rows = select_rows(load_rows(source), sweep=sweep, presentations=presentations,
                       equivariant=equivariant)
    records = [frame_record(row) for row in rows]
    if not records:
        raise FigureError("no cases to draw: the source holds no results"
                          + (" of that selection" if (sweep or presentations or
                                                     equivariant is not None) else ""))
    layout = choose_layout(records, layout)
    markers = marker_positions(records, layout)
    if not markers:
        raise FigureError("no Grassmannian among the cases; use the 'steps' layout")

    import matplotlib
    matplotlib.use("Agg", force=True)   # files only: never open a window
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D
    from matplotlib.ticker import MaxNLocator

    note = figure_note(records, markers)
    if layout == "steps":
        note += ("\nin a cell, the cases of that n and m by dimension vector, left to right, "
                 "top to bottom")
    note = wrap_note(note)
    # one line more where some counterexamples may find no room for their names
    unnamed_line = layout != "list" and any(m.verdict == "disagree" for m in markers)
    note_lines = note.count("\n") + 1 + unnamed_line
    xs = sorted({round(m.x) for m in markers})
    ys = sorted({round(m.y) for m in markers})
    rows_tall = ys[-1] - ys[0] + 1
    if layout == "list":
        plot_height = 0.35 + 0.12 * rows_tall
    else:
        plot_height = 0.5 + 0.42 * rows_tall
    note_height = 0.1 * note_lines + 0.05
    height = max(2.0, min(6.0, 0.75 + plot_height + note_height))
    fig = Figure(figsize=(width, height), dpi=dpi)
    ax = fig.add_subplot(1, 1, 1)
    with matplotlib.rc_context({"font.size": 8}):
        for verdict, style in VERDICT_STYLES.items():
            chosen = [m for m in markers if m.verdict == verdict]
            if chosen:
                ax.scatter([m.x for m in chosen], [m.y for m in chosen],
                           s=[m.size for m in chosen], c=style.colour, marker=style.marker,
                           edgecolors="black", linewidths=0.3, zorder=3)
        unknown = [m for m in markers if m.verdict not in VERDICT_STYLES]
        if unknown:
            ax.scatter([m.x for m in unknown], [m.y for m in unknown], s=[m.size for m in unknown],
                       c="white", marker="X", edgecolors="black", linewidths=0.5, zorder=3)
        if layout == "list":
            for m in markers:
                ax.annotate(m.case, (m.x, m.y), xytext=(4, 0), textcoords="offset points",
                            fontsize=5.5, va="center", ha="left",
                            fontweight="bold" if m.verdict == "disagree" else "normal")
            ax.set_xlim(xs[0] - 0.25, xs[-1] + 0.9)
            ax.set_ylim(ys[0] - 0.7, ys[-1] + 0.7)
            ax.set_yticks([])
            ax.spines["left"].set_visible(False)
            ax.spines["right"].set_visible(False)
            ax.spines["top"].set_visible(False)
        else:
            ax.set_xlim(xs[0] - 0.6, xs[-1] + 0.6)
            ax.set_ylim(ys[0] - 0.6, ys[-1] + 0.6)
            ax.yaxis.set_major_locator(MaxNLocator(integer=True))
            ax.set_ylabel("$k$ in Gr($k$; $n$)" if layout == "grassmannian"
                          else "$m$ (number of subspaces)", fontsize=8)
        ax.xaxis.set_major_locator(MaxNLocator(integer=True))
        ax.set_xticks(range(xs[0], xs[-1] + 1))
        ax.grid(which="major", axis="x", color="#E6E6E6", linewidth=0.5, zorder=0)
        ax.set_xlabel("$n$", fontsize=8)
        ax.tick_params(labelsize=7)
        present = [v for v in VERDICT_STYLES if any(m.verdict == v for m in markers)]
        handles = [Line2D([], [], linestyle="none", marker=VERDICT_STYLES[v].marker,
                          markerfacecolor=VERDICT_STYLES[v].colour,
                          markeredgecolor="black", markeredgewidth=0.3, markersize=5,
                          label=f"{v} ({sum(m.verdict == v for m in markers)})")
                   for v in present]
        # four entries do not fit one line of a column's width: two lines of two
        ax.legend(handles=handles, fontsize=6.5, frameon=False, loc="lower center",
                  bbox_to_anchor=(0.5, 1.0), ncol=len(handles) if len(handles) <= 3 else 2,
                  handletextpad=0.2, columnspacing=0.8, borderaxespad=0.2)
        fig.tight_layout(pad=0.3, rect=(0, (0.1 * note_lines + 0.08) / height, 1, 1))
        if layout != "list":
            counterexamples = [m for m in markers if m.verdict == "disagree"]
            named = name_markers(fig, ax, counterexamples, markers)
            if len(named) < len(counterexamples):
                note += (f"\n{len(counterexamples) - len(named)} more disagree cases are not "
                         "named; see the table")
        fig.text(0.01, 0.01, note, fontsize=5.5, ha="left", va="bottom", color="#333333")

    block = prov.provenance(rows, command)
    lines = prov.provenance_lines(block)
    left_out = len(records) - len(markers)
    lines.append(f"layout: {layout}" + (f" ({left_out} non-Grassmannian cases left out)"
                                        if left_out else ""))
    lines += [f"note: {line}" for line in note.splitlines()]
    title = f"ringmatch agreement map ({len(markers)} cases)"
    fig.savefig(out, format=fmt, metadata=metadata_for(fmt, "\n".join(lines), title))
    return out


def stored_provenance(path) -> str:
    """The reproducibility text stored in a PNG, SVG or PDF made by `agreement_map`."""
    path = Path(path)
    fmt = figure_format(path)
    if fmt == "png":
        from PIL import Image
        with Image.open(path) as image:
            return image.text.get("Description", "")
    data = path.read_bytes()
    if fmt == "svg":
        import xml.etree.ElementTree as ET
        root = ET.fromstring(data)
        for element in root.iter():
            if element.tag.endswith("}description"):
                return element.text or ""
        return ""
    return _pdf_subject(data)


def _pdf_subject(data: bytes) -> str:
    """The /Subject string of an uncompressed PDF information dictionary (as matplotlib
    writes it: a literal string with backslash escapes, or UTF-16 with a byte-order mark)."""
    start = data.find(b"/Subject")
    if start < 0:
        return ""
    i = data.index(b"(", start) + 1
    out, depth = bytearray(), 1
    escapes = {b"n": b"\n", b"r": b"\r", b"t": b"\t", b"b": b"\b", b"f": b"\f"}
    while i < len(data):
        ch = data[i:i + 1]
        if ch == b"\\":
            nxt = data[i + 1:i + 2]
            if nxt.isdigit():
                digits = data[i + 1:i + 4]
                out.append(int(digits, 8))
                i += 4
                continue
            out += escapes.get(nxt, nxt)
            i += 2
            continue
        if ch == b"(":
            depth += 1
        elif ch == b")":
            depth -= 1
            if depth == 0:
                break
        out += ch
        i += 1
    raw = bytes(out)
    if raw.startswith(b"\xfe\xff"):
        return raw[2:].decode("utf-16-be")
    return raw.decode("latin-1")
