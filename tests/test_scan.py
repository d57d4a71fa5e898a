"""`ringmatch scan` (compare/scan.py, reports/scan.py).

The agreement that the scans find is checked against SymPy in tests/test_parameters.py; here
the scan's own bookkeeping: the grid, the store, the modes, the outputs and bad input.
"""
from __future__ import annotations

import json
import sqlite3
import subprocess
import sys
from pathlib import Path

import pytest

from ringmatch.compare import scan
from ringmatch.presentations.flagtype import parse_flag
from ringmatch.reports import scan as scan_report

ROOT = Path(__file__).resolve().parent.parent


def run_cli(*args, cwd=ROOT):
    return subprocess.run([sys.executable, "-m", "ringmatch.compare.cli", *args],
                          capture_output=True, text=True, timeout=900, cwd=cwd)


def scan_json(*args):
    result = run_cli("scan", *args, "--json", "--workers", "2")
    assert result.returncode == 0, result.stderr
    return json.loads(result.stdout)


def test_whitney_unknowns_single_out_the_whitney_values(tmp_path):
    """Issue #16: (+1, 1) is the only assignment that agrees on every flag type, n ≤ 5."""
    store = tmp_path / "scan.db"
    data = scan_json("whitney-unknowns", "--max-n", "5", "--narrow", "--store", str(store))
    assert data["parameters"] == ["sign", "power"]
    assert data["agreeing_everywhere"] == [{"sign": 1, "power": 1}]
    assert data["agrees_up_to_rank"] == 120
    assert len(data["cases"]) == 26
    # narrowing: the seven wrong assignments are dropped at the first case, P^1
    assert sorted(d["at"] for d in data["dropped"]) == ["P1"] * 7
    for point in data["points"]:
        assert {"case", "values", "colength", "classical_colength", "holds", "verdict"} <= \
            set(point)


def test_points_are_stored_and_resumed(tmp_path):
    store = tmp_path / "scan.db"
    first = scan_json("whitney-unknowns", "--max-n", "3", "--store", str(store))
    assert first["computed"] == 32 and first["from_store"] == 0
    assert len(first["points"]) == 32
    refuted = [p for p in first["points"] if p["refuted_by_points"]]
    assert refuted and all(p["colength"] is None and p["verdict"] == "disagree"
                           and p["holds"] is False for p in refuted)
    again = scan_json("whitney-unknowns", "--max-n", "3", "--store", str(store))
    assert again["computed"] == 0 and again["from_store"] == 32
    assert again["points"] == first["points"]
    # one row per case and point, the values in the stored settings
    with sqlite3.connect(store) as conn:
        rows = conn.execute("SELECT settings FROM results").fetchall()
    assert len(rows) == 32
    assert any(json.loads(s)["presentations"][1].get("values") == {"sign": 1, "power": 1}
               for (s,) in rows)
    # --colengths is another setting: computed again, with colengths everywhere
    full = scan_json("whitney-unknowns", "--cases", "P1", "--colengths", "--store", str(store))
    assert full["computed"] == 8
    assert all(p["colength"] is not None for p in full["points"])


def test_first_agreeing_stops_there(tmp_path):
    data = scan_json("whitney-unknowns", "--max-n", "3", "--first-agreeing", "--narrow",
                     "--store", str(tmp_path / "s.db"))
    assert data["stopped_at"] == {"sign": 1, "power": 1}
    # grid order: sign=-1 first, then sign=1 with power 0, 1 — nothing after (1, 1)
    computed = {tuple(sorted(p["values"].items())) for p in data["points"]}
    assert (("power", 2), ("sign", 1)) not in computed


def test_vary_and_set_shape_the_grid(tmp_path):
    data = scan_json("coulomb-levels", "--cases", "P1;P2", "--vary", "a=-1..1", "--set", "b=0",
                     "--colengths", "--store", str(tmp_path / "s.db"))
    assert data["parameters"] == ["a"] and data["fixed"] == {"b": 0}
    counts = {(p["case"], p["values"]["a"]): p["colength"] for p in data["points"]}
    # nonzero roots of ∏(x − T_j) ± q∏T x^a (by hand, see tests/test_parameters.py)
    assert counts == {("P1", -1): 3, ("P1", 0): 2, ("P1", 1): 2,
                      ("P2", -1): 4, ("P2", 0): 3, ("P2", 1): 3}
    assert data["agreeing_everywhere"] == [{"a": 0}]


def test_colengths_of_refuted_points_are_the_scans_own(monkeypatch):
    """The check computes no Gröbner basis for a presentation the Bethe points refute; the
    scan's --colengths computes its colengths at the check's specialisation, under the
    scan's limits, and a point whose colengths a limit stopped is computed again under
    other limits."""
    import time
    from ringmatch.compare.workers import Limits, run_case
    flag = parse_flag("P1")
    plan = scan.plan_scan("coulomb-levels", [flag], fixed={"b": 0}, vary=[("a", (-1,))],
                          colengths=True)
    point = plan.points[0]
    result = run_case(plan.task(flag, point, "auto"))
    name = plan.family_name(point)
    assert result.verdict == "disagree" and result.presentations[name].colength is None
    assert scan.refuted_at_points(plan, point, result)
    full = scan.with_colengths(plan, flag, point, result, Limits())
    assert full.presentations[name].colength == 3          # hand count: 2 − (−1)
    assert full.presentations[name].classical_colength == 2
    assert "by the scan" in full.presentations[name].colength_method
    assert full.verdict == "disagree"
    original = scan.colengths_at
    monkeypatch.setattr(scan, "colengths_at",
                        lambda *a, **k: (time.sleep(30), original(*a, **k))[1])
    stopped = scan.with_colengths(plan, flag, point, result, Limits(seconds=0.5))
    assert stopped.presentations[name].colength is None
    record = scan.point_record(plan, flag, point, stopped, True, 0.0)
    assert record["colengths_note"] == ("colengths not computed: limit: took longer than "
                                        "--case-timeout 0.5 s")
    row = {"result": stopped}
    assert not scan.colengths_again(row, Limits(seconds=0.5))
    assert scan.colengths_again(row, Limits(seconds=60))


# ---------------------------------------------------------------------------------------
# Verdict words and outputs, from hand-made scan objects

def fake_scan(records):
    return {"presentation": "guess", "file_name": "guess", "reference": "whitney",
            "parameters": ["a", "b"], "fixed": {}, "axes": {"a": [0, 1], "b": [0, 1]},
            "cases": ["P1"], "points": records, "agreeing": {}, "agreeing_everywhere": [],
            "agrees_up_to_rank": None, "dropped": [], "stopped_at": None, "skipped": [],
            "settings": {}, "from_store": 0, "computed": len(records), "store": None}


def record(a, b, verdict, colength):
    return {"case": "P1", "rank": 2, "values": {"a": a, "b": b}, "colength": colength,
            "classical_colength": 2, "holds": True, "verdict": verdict, "reason": "",
            "refuted_by_points": colength is None, "seconds": 0.0}


def test_only_agree_counts_as_agreement():
    flag = parse_flag("P1")
    plan = scan.ScanPlan("guess", None, b"", None, {}, [scan.Axis("a", (0, 1))],
                         [(("a", 0),), (("a", 1),)], [flag], [], {})
    outcome = scan.ScanOutcome(plan)
    outcome.results[("P1", (("a", 0),))] = {"verdict": "consistent"}
    outcome.results[("P1", (("a", 1),))] = {"verdict": "agree"}
    assert outcome.agreeing(flag) == [(("a", 1),)]
    assert outcome.agreeing_everywhere() == [(("a", 1),)]


def test_tables_in_three_formats():
    data = fake_scan([record(0, 0, "agree", 2), record(0, 1, "disagree", None),
                      record(1, 0, "consistent", "infinite"), record(1, 1, "inconclusive", 5)])
    markdown = scan_report.render_tables(data, "markdown")
    assert "| a \\ b | b=0 | b=1 |" in markdown
    assert "| 0 | agree 2 | disagree – |" in markdown
    assert "| 1 | consistent ∞ | inconclusive 5 |" in markdown
    latex = scan_report.render_tables(data, "latex")
    assert r"consistent $\infty$" in latex and r"disagree --" in latex
    assert r"\begin{tabular}" in latex
    csv_text = scan_report.render_tables(data, "csv")
    assert csv_text.splitlines()[0] == \
        "case,a,b,verdict,colength,classical_colength,holds,refuted_by_points"
    assert "P1,1,0,consistent,∞,2,True,False" in csv_text
    assert "b=1" in scan_report.summary_text(data)


def test_figure_is_written(tmp_path):
    data = fake_scan([record(0, 0, "agree", 2), record(0, 1, "disagree", None),
                      record(1, 0, "consistent", "infinite"), record(1, 1, "inconclusive", 5)])
    path = scan_report.scan_figure(data, tmp_path / "scan.png")
    assert Path(path).stat().st_size > 1000
    with pytest.raises(scan_report.ScanReportError):
        scan_report.scan_figure(data, tmp_path / "scan.gif")


# ---------------------------------------------------------------------------------------
# Bad input: one line, exit status 2, nothing written

@pytest.mark.parametrize("args, message", [
    (["--vary", "colour=1,2"], "--vary colour: whitney-unknowns has no parameter colour"),
    (["--vary", "power=7"], "whitney-unknowns.toml:"),
    (["--vary", "power=1.5"], "values must be integers"),
    (["--vary", "power=0,0"], "a value is listed twice"),
    (["--set", "colour=1"], "--set colour=1"),
    (["--set", "power=1", "--vary", "power=1"], "vary it or fix it, not both"),
    (["--max-grid", "10"], "more than the limit 10"),
    (["--figure", "out.gif"], "must end in .png, .svg or .pdf"),
])
def test_bad_requests_write_nothing(tmp_path, args, message):
    store = tmp_path / "s.db"
    result = run_cli("scan", "whitney-unknowns", "--max-n", "3", "--store", str(store), *args,
                     cwd=tmp_path)
    assert result.returncode == 2, result.stdout
    assert message in result.stderr and result.stderr.count("\n") == 1, result.stderr
    assert not store.exists()


def test_files_without_parameters_and_huge_grids_are_refused(tmp_path):
    store = tmp_path / "s.db"
    result = run_cli("scan", "qwhitney-family", "--max-n", "3", "--store", str(store))
    assert result.returncode == 2 and "declares no parameters" in result.stderr
    result = run_cli("scan", "coulomb-levels", "--max-n", "8", "--store", str(store))
    assert result.returncode == 2 and "grid point(s)" in result.stderr
    assert not store.exists()


def test_the_demo_scene_finds_the_one_exponent(tmp_path):
    """Demo step 3: the exponent of det Q_i in kestrel-exponent; only 1 (q-Whitney) survives."""
    from ringmatch.compare import demo_scan
    from ringmatch.compare.cases import enumerate_cases
    flags = [f for f in enumerate_cases("partial", 4)]
    lines = []
    scene = demo_scan.run_scene(tmp_path, flags, workers=2, say=lines.append)
    assert scene["scan"]["agreeing_everywhere"] == [{"exponent": 1}]
    assert sorted(d["values"]["exponent"] for d in scene["scan"]["dropped"]) == [0, 2, 3]
    assert any("exponent = 1 agrees on all" in line for line in lines)
    assert (tmp_path / "exponent-scan.md").read_text().startswith("**P1:")


def test_per_step_axes(tmp_path):
    data = scan_json("coulomb-levels", "--cases", "Fl(3)", "--per-step", "--vary", "a_1=-1..1",
                     "--vary", "a_2=0,1", "--set", "b=0", "--store", str(tmp_path / "s.db"))
    assert data["parameters"] == ["a_1", "a_2"]
    assert len(data["points"]) == 6
    assert data["agreeing_everywhere"] == [{"a_1": 0, "a_2": 0}]


def test_a_store_in_use_by_a_live_sweep_or_scan_is_refused(tmp_path):
    """Two scans on one store both computed every point (issue #18 audit): a scan claims its
    store as a sweep does, and a live claim refuses it."""
    from ringmatch.compare import store
    path = tmp_path / "s.db"
    other = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    try:
        conn = store.open_store(path)
        with conn:
            conn.execute("INSERT INTO meta VALUES ('sweep_in_progress', ?)", (json.dumps(
                {"host": __import__("socket").gethostname(), "pid": other.pid,
                 "started": "now", "command": "ringmatch scan"}),))
        conn.close()
        plan = scan.plan_scan("whitney-unknowns", [parse_flag("P1")], fixed={"sign": 1},
                              vary=[("power", (1,))])
        with pytest.raises(store.StoreError,
                           match=f"in use by another sweep \\(pid {other.pid}"):
            scan.run_scan(plan, path)
    finally:
        other.kill()
        other.wait()
    outcome = scan.run_scan(plan, path)                 # that one is gone: taken over
    assert outcome.computed == 1
    conn = store.open_store(path)
    assert conn.execute("SELECT count(*) FROM meta WHERE key = 'sweep_in_progress'"
                        ).fetchone()[0] == 0            # and released at the end
    conn.close()
