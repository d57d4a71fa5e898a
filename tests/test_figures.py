"""Agreement map (reports/figures.py): rendered files, stored provenance, layout, palette.

The cases are real `check_case` results with all four verdicts (docs/verdicts.md): the exact
route's agree and disagree, `consistent` from the Bethe points alone (--method points), and
`inconclusive` from an exact route stopped by its time budget.
"""
from __future__ import annotations

import json
import xml.etree.ElementTree as ET

import pytest

pytest.importorskip("matplotlib", reason="matplotlib is a dependency in pyproject.toml; "
                                         "install the project to draw figures")
from PIL import Image  # noqa: E402  (matplotlib depends on Pillow)

from ringmatch.compare.engine import check_case  # noqa: E402
from ringmatch.presentations import get_family  # noqa: E402
from ringmatch.presentations.flagtype import parse_flag  # noqa: E402
from ringmatch.reports.figures import (VERDICT_STYLES, FigureError, agreement_map,  # noqa: E402
                             choose_layout, marker_positions, stored_provenance)
from ringmatch.reports.frames import frame_record, row_from_result  # noqa: E402

from conftest import run_cli  # noqa: E402

# (case, presentations, method, budget in seconds for the exact route)
CASES = [("P1", ("whitney", "vieta"), "auto", None), ("P2", ("whitney", "vieta"), "auto", None),
         ("Gr(2;4)", ("whitney", "vieta"), "auto", None),
         ("Fl(1,2;3)", ("whitney", "whitney-sign-error"), "auto", None),
         ("Fl(1,3;4)", ("whitney", "whitney-sign-error"), "auto", None),
         ("Fl(2,3;4)", ("whitney", "vieta"), "points", None),     # points alone: consistent
         ("Fl(1,2;4)", ("whitney", "vieta"), "groebner", 1e-6)]   # budget gone: inconclusive


@pytest.fixture(scope="module")
def rows():
    return [row_from_result(check_case(parse_flag(case), [get_family(n) for n in names],
                                       seed=9, method=method, budget=budget))
            for case, names, method, budget in CASES]


def hex_rgb(colour):
    return tuple(int(colour[k:k + 2], 16) for k in (1, 3, 5))


def pixels_near(image, rgb, tolerance=12):
    counts = image.convert("RGB").getcolors(maxcolors=1 << 24)
    return sum(count for count, pixel in counts
               if all(abs(a - b) <= tolerance for a, b in zip(pixel, rgb)))


def test_verdicts_cover_all_four(rows):
    assert [row["verdict"] for row in rows] == ["agree"] * 3 + ["disagree"] * 2 + \
        ["consistent", "inconclusive"]
    assert set(VERDICT_STYLES) == {row["verdict"] for row in rows}


def test_png_size_content_and_metadata(rows, tmp_path):
    path = agreement_map(rows, tmp_path / "map.png", dpi=100, command="ringmatch figure t")
    with Image.open(path) as image:
        width, height = image.size
        assert width == 330 and 200 <= height <= 400          # 3.3 in at 100 dpi
        colours = image.convert("RGB").getcolors(maxcolors=1 << 20)
        assert len(colours) > 20                                # antialiased, not blank
        for verdict in ("agree", "disagree", "inconclusive"):
            assert pixels_near(image, hex_rgb(VERDICT_STYLES[verdict].colour)) > 20, verdict
        # one small triangle (and its legend entry) at 100 dpi: a dozen pixels; the test of
        # `consistent` below counts it at 200 dpi
        assert pixels_near(image, hex_rgb(VERDICT_STYLES["consistent"].colour)) > 5
        background = max(colours)[1]
        assert background == (255, 255, 255)
    text = stored_provenance(path)
    assert "produced by: ringmatch figure t" in text
    assert str(rows[0]["result"].certificate.prime) in text
    assert "Fl(3) 9" in text and "layout: list" in text
    # the note printed under the plot is stored too: presentations, sizes, count
    assert "note: whitney, vieta | whitney, whitney-sign-error (equivariant)" in text
    assert "note: 7 cases, 2 ≤ n ≤ 4, rank ≤ 12" in text
    assert "note: consistent: relations vanish at the Bethe points to order s^6; not proven" \
        in text


@pytest.mark.parametrize("suffix", ["svg", "pdf"])
def test_vector_formats_store_provenance(rows, tmp_path, suffix):
    path = agreement_map(rows, tmp_path / f"map.{suffix}", command=f"ringmatch figure {suffix}")
    assert path.stat().st_size > 1000
    if suffix == "svg":
        ET.fromstring(path.read_bytes())      # well-formed
    else:
        assert path.read_bytes().startswith(b"%PDF")
    text = stored_provenance(path)
    assert f"produced by: ringmatch figure {suffix}" in text
    assert "matplotlib" in text and "primes:" in text


def test_markers_stay_in_their_cells(rows):
    records = [frame_record(row) for row in rows]
    markers = marker_positions(records, "steps")
    assert len(markers) == len(records)
    by_case = {r["case"]: r for r in records}
    for marker in markers:
        r = by_case[marker.case]
        assert abs(marker.x - r["n"]) < 0.5 and abs(marker.y - r["m"]) < 0.5
    assert len({(m.x, m.y) for m in markers}) == len(markers)


def test_every_case_has_its_own_position_and_markers_one_size(rows):
    records = [frame_record(row) for row in rows]
    for layout in ("list", "steps", "grassmannian"):
        markers = marker_positions(records, layout)
        assert len({(m.x, m.y) for m in markers}) == len(markers), layout
        assert len({m.size for m in markers}) == 1, layout     # size encodes nothing
    listed = marker_positions(records, "list")
    assert {m.x for m in listed} == {float(r["n"]) for r in records}   # one column per n
    assert all(m.y == int(m.y) for m in listed)


def test_list_layout_names_every_case_and_marks_counterexamples(rows, tmp_path):
    path = agreement_map(rows, tmp_path / "map.svg")
    svg = path.read_text()
    # matplotlib writes each text as a comment with the string before its glyphs
    for row in rows:
        assert f"<!-- {row['case']} -->" in svg, row["case"]


def test_grid_layouts_name_the_counterexamples(rows, tmp_path):
    path = agreement_map(rows, tmp_path / "map.svg", layout="steps")
    svg = path.read_text()
    disagreeing = [r["case"] for r in rows if r["verdict"] == "disagree"]
    assert disagreeing
    for case in disagreeing:
        assert f"<!-- {case} -->" in svg
    assert "<!-- P1 -->" not in svg          # agreeing cases stay unnamed in a grid


def test_first_free_spot_avoids_what_is_taken_and_stays_inside():
    from ringmatch.reports.figures import first_free, overlaps
    bounds = (0, 0, 100, 100)
    taken = [(10, 10, 30, 20)]
    candidates = [(20, 15, 40, 25), (90, 0, 110, 10), (40, 40, 60, 50)]
    assert overlaps(candidates[0], taken[0]) and not overlaps(candidates[2], taken[0])
    assert first_free(candidates, taken, bounds) == 2     # the second leaves the plot
    assert first_free(candidates[:2], taken, bounds) is None
    assert not overlaps((0, 0, 10, 10), (10, 0, 20, 10))  # touching is not covering


def test_crowded_counterexamples_get_names_that_cover_nothing():
    """Many disagreeing cases packed in few cells: every name written covers no other name
    and no marker, and stays inside the plot (the rest are counted in the note)."""
    import matplotlib
    matplotlib.use("Agg", force=True)
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure
    from ringmatch.reports.figures import name_markers, overlaps
    records = [{"case": f"Fl({','.join(map(str, dims))};6)", "verdict": "disagree", "n": 6,
                "m": len(dims), "dims": dims, "kind": "partial"}
               for dims in [(1, 2), (1, 3), (1, 4), (2, 3), (2, 4), (3, 4), (1, 5), (2, 5),
                            (3, 5), (4, 5), (1, 2, 3), (1, 2, 4), (1, 3, 4), (2, 3, 4)]]
    markers = marker_positions(records, "steps")
    fig = Figure(figsize=(3.3, 2.5), dpi=100)
    ax = fig.add_subplot(1, 1, 1)
    ax.set_xlim(5.4, 6.6)
    ax.set_ylim(1.4, 3.6)
    named = name_markers(fig, ax, markers, markers)
    assert 0 < len(named) < len(markers)
    renderer = FigureCanvasAgg(fig).get_renderer()
    boxes = [tuple(text.get_window_extent(renderer).extents) for text in ax.texts]
    assert len(boxes) == len(named)
    frame = tuple(ax.get_window_extent(renderer).extents)
    for i, box in enumerate(boxes):
        assert frame[0] <= box[0] and box[2] <= frame[2] and frame[1] <= box[1] \
            and box[3] <= frame[3]
        assert not any(overlaps(box, other) for other in boxes[i + 1:])
        for m in markers:
            x, y = ax.transData.transform((m.x, m.y))
            assert not (box[0] < x < box[2] and box[1] < y < box[3]), m.case


def test_consistent_is_its_own_verdict_never_agreement(rows, tmp_path):
    """`consistent` (relations vanish at the Bethe points to order s^N, not proven) has its
    own colour, marker and legend entry, and is not counted with `agree`."""
    assert VERDICT_STYLES["consistent"].colour != VERDICT_STYLES["agree"].colour
    assert VERDICT_STYLES["consistent"].marker != VERDICT_STYLES["agree"].marker
    # the points-only row of the fixture, and one more made by relabelling an agreement
    altered = [dict(row) for row in rows]
    agreeing = [i for i, row in enumerate(altered) if row["verdict"] == "agree"]
    altered[agreeing[0]] = dict(altered[agreeing[0]], verdict="consistent")
    path = agreement_map(altered, tmp_path / "map.png", dpi=200)
    with Image.open(path) as image:
        assert pixels_near(image, hex_rgb(VERDICT_STYLES["consistent"].colour)) > 20
    svg = agreement_map(altered, tmp_path / "map.svg").read_text()
    assert "<!-- consistent (2) -->" in svg and "<!-- agree (2) -->" in svg
    assert "not proven" in stored_provenance(path)
    only_agree = agreement_map([row for row in rows if row["verdict"] == "agree"],
                               tmp_path / "agree.svg")
    assert "<!-- consistent" not in only_agree.read_text()
    assert "not proven" not in stored_provenance(only_agree)


def test_selection_of_rows(rows, tmp_path):
    path = agreement_map(rows, tmp_path / "map.png", presentations=("vieta", "whitney"))
    assert "note: whitney, vieta (equivariant)" in stored_provenance(path)
    with pytest.raises(FigureError, match="of that selection"):
        agreement_map(rows, tmp_path / "map.png", equivariant=False)


def test_grassmannian_layout(rows):
    records = [frame_record(row) for row in rows]
    grassmannians = [r for r in records if r["kind"] == "grassmannian"]
    assert choose_layout(grassmannians, "auto") == "list"     # few cases: all named
    many = [dict(r, case=f"{r['case']}#{i}") for i in range(14) for r in grassmannians]
    assert choose_layout(many, "auto") == "grassmannian"
    assert choose_layout([dict(r, case=f"{r['case']}#{i}") for i in range(12)
                          for r in records], "auto") == "steps"
    markers = marker_positions(records, "grassmannian")
    assert sorted((round(m.x), round(m.y)) for m in markers) == [(2, 1), (3, 1), (4, 2)]


# Colour-vision deficiency simulation matrices of Machado, Oliveira & Fernandes, "A
# physiologically-based model for simulation of color vision deficiency", IEEE TVCG 15
# (2009), severity 1.0, acting on linear RGB.  Values recalled from memory.
CVD = {
    "protanopia": ((0.152286, 1.052583, -0.204868), (0.114503, 0.786281, 0.099216),
                   (-0.003882, -0.048116, 1.051998)),
    "deuteranopia": ((0.367322, 0.860646, -0.227968), (0.280085, 0.672501, 0.047413),
                     (-0.011820, 0.042940, 0.968881)),
    "tritanopia": ((1.255528, -0.076749, -0.178779), (-0.078411, 0.930809, 0.147602),
                   (0.004733, 0.691367, 0.303900)),
}


def linear(colour):
    def channel(c):
        c /= 255
        return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4
    return [channel(c) for c in hex_rgb(colour)]


def test_palette_stays_distinct_under_colour_vision_deficiencies():
    colours = [linear(style.colour) for style in VERDICT_STYLES.values()]
    for name, matrix in CVD.items():
        seen = [[sum(m * c for m, c in zip(row, rgb)) for row in matrix] for rgb in colours]
        for a in range(len(seen)):
            for b in range(a + 1, len(seen)):
                distance = sum((x - y) ** 2 for x, y in zip(seen[a], seen[b])) ** 0.5
                assert distance > 0.15, (name, a, b, distance)
    # and in greyscale (relative luminance, ITU-R BT.709 weights)
    luminance = sorted(0.2126 * r + 0.7152 * g + 0.0722 * b for r, g, b in colours)
    assert all(b - a > 0.1 for a, b in zip(luminance, luminance[1:]))
    assert len({style.marker for style in VERDICT_STYLES.values()}) == len(VERDICT_STYLES)


def test_bad_requests(rows, tmp_path):
    with pytest.raises(FigureError, match="'.gif'"):
        agreement_map(rows, tmp_path / "map.gif")
    with pytest.raises(FigureError, match="no cases"):
        agreement_map([], tmp_path / "map.png")
    with pytest.raises(FigureError, match="no Grassmannian"):
        agreement_map([rows[3]], tmp_path / "map.png", layout="grassmannian")


def test_cli_figure(rows, tmp_path):
    source = tmp_path / "results.json"
    source.write_text(json.dumps([row["result"].to_json() for row in rows]))
    out = tmp_path / "agreement.png"
    run = run_cli("figure", source, "--out", out)
    assert run.returncode == 0, run.stderr
    with Image.open(out) as image:
        assert image.size[0] == 990                            # 3.3 in at 300 dpi
    # the absolute paths given are cut to file names (no local folders in provenance)
    assert "produced by: ringmatch figure results.json --out agreement.png" \
        in stored_provenance(out)
    assert str(tmp_path) not in stored_provenance(out)
    bad = run_cli("figure", source, "--out", tmp_path / "x.jpg")
    assert bad.returncode == 2 and len(bad.stderr.strip().splitlines()) == 1
