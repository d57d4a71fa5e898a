"""Agreement map: every case of a sweep as a marker coloured by its verdict.

Layouts:
* "steps" — x = n, y = m (number of subspaces: 1 for Grassmannians … n − 1 for complete
  flags); the cases sharing a cell (n, m) sit side by side in a small grid, ordered by
  their dimension vectors;
* "grassmannian" — x = n, y = k for the Grassmannians Gr(k; n) of the source (other cases
  are left out and counted in the stored provenance);
* "auto" — "grassmannian" when every case is one, else "steps".

The palette is ours: dark blue / orange / light grey differ in hue *and* lightness, so they stay
distinct under the common colour-vision deficiencies and in greyscale, and each verdict
also has its own marker shape.  Sized for one paper column (3.3 in wide).

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
from .frames import Source, frame_record, load_rows

FIGURE_FORMATS = ("png", "svg", "pdf")
LAYOUTS = ("auto", "steps", "grassmannian")
COLUMN_WIDTH_INCHES = 3.3


@dataclass(frozen=True)
class VerdictStyle:
    label: str
    colour: str
    marker: str


VERDICT_STYLES: Dict[str, VerdictStyle] = {
    "agree": VerdictStyle("agree", "#1F5FA6", "s"),            # dark blue, square
    "disagree": VerdictStyle("disagree", "#F28E2B", "D"),      # light orange, diamond
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
    size: float       # points^2, matplotlib's scatter size


def choose_layout(records: Sequence[dict], layout: str) -> str:
    if layout not in LAYOUTS:
        raise FigureError(f"unknown layout {layout!r}; choose from {', '.join(LAYOUTS)}")
    if layout == "auto":
        return "grassmannian" if all(r["kind"] == "grassmannian" for r in records) else "steps"
    return layout


def marker_positions(records: Sequence[dict], layout: str) -> List[Marker]:
    """Where each case goes; cases sharing a cell are packed in a square grid inside it."""
    cells: Dict[Tuple[int, int], List[dict]] = defaultdict(list)
    for r in records:
        if layout == "grassmannian":
            if r["kind"] == "grassmannian":
                cells[(r["n"], r["dims"][0])].append(r)
        else:
            cells[(r["n"], r["m"])].append(r)
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
            markers.append(Marker(r["case"], r["verdict"], x + dx, y + dy,
                                  size=70.0 / side ** 2))
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


def agreement_map(source: Source, out, *, layout: str = "auto", command: Optional[str] = None,
                  width: float = COLUMN_WIDTH_INCHES, dpi: int = 300) -> Path:
    """Draw the agreement map of `source` into `out` (.png, .svg or .pdf) and return its
    path.  `command` goes into the stored reproducibility block."""
    out = Path(out)
    fmt = figure_format(out)
    rows = load_rows(source)
    records = [frame_record(row) for row in rows]
    if not records:
        raise FigureError("no cases to draw: the source holds no results")
    layout = choose_layout(records, layout)
    markers = marker_positions(records, layout)
    if not markers:
        raise FigureError("no Grassmannian among the cases; use the 'steps' layout")

    import matplotlib
    matplotlib.use("Agg", force=True)   # files only: never open a window
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D
    from matplotlib.ticker import MaxNLocator

    xs = sorted({round(m.x) for m in markers})
    ys = sorted({round(m.y) for m in markers})
    height = max(2.0, min(4.0, 0.9 + 0.42 * (ys[-1] - ys[0] + 1)))
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
        ax.set_xlim(xs[0] - 0.6, xs[-1] + 0.6)
        ax.set_ylim(ys[0] - 0.6, ys[-1] + 0.6)
        ax.xaxis.set_major_locator(MaxNLocator(integer=True))
        ax.yaxis.set_major_locator(MaxNLocator(integer=True))
        ax.set_xticks(range(xs[0], xs[-1] + 1), minor=True)
        ax.grid(which="minor", axis="x", color="#E6E6E6", linewidth=0.5, zorder=0)
        ax.set_xlabel("$n$", fontsize=8)
        ax.set_ylabel("$k$ in Gr($k$; $n$)" if layout == "grassmannian"
                      else "$m$ (number of subspaces)", fontsize=8)
        ax.tick_params(labelsize=7)
        present = [v for v in VERDICT_STYLES if any(m.verdict == v for m in markers)]
        handles = [Line2D([], [], linestyle="none", marker=VERDICT_STYLES[v].marker,
                          markerfacecolor=VERDICT_STYLES[v].colour,
                          markeredgecolor="black", markeredgewidth=0.3, markersize=5,
                          label=f"{v} ({sum(m.verdict == v for m in markers)})")
                   for v in present]
        ax.legend(handles=handles, fontsize=7, frameon=False, loc="lower center",
                  bbox_to_anchor=(0.5, 1.0), ncol=len(handles), handletextpad=0.3,
                  columnspacing=1.0, borderaxespad=0.2)
        fig.tight_layout(pad=0.3)

    block = prov.provenance(rows, command)
    lines = prov.provenance_lines(block)
    left_out = len(records) - len(markers)
    lines.append(f"layout: {layout}" + (f" ({left_out} non-Grassmannian cases left out)"
                                        if left_out else ""))
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
