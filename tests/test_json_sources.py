"""`table` and `figure` read every JSON the tool writes: `check --json`, the JSON of
`check --report`, and `sweep --json` (one schema for results, compare/records.py); a file
that is not such JSON is a one-line error naming it (exit status 2), never a traceback."""
import json

import pytest

from conftest import run_cli, run_in_process

# the report's own fields, besides the case schema (reports/discrepancy.py)
REPORT_FIELDS = {"format", "command", "notes", "formulas"}


@pytest.fixture(scope="module")
def sources(tmp_path_factory):
    """{kind: (path, cases)}: a check --report JSON (a disagreement, with witnesses), a
    check --json result and a sweep --json of four cases."""
    folder = tmp_path_factory.mktemp("json-sources")
    report = folder / "report"
    done = run_in_process("check", "Fl(1,2;3)", "--presentations",
                          "whitney,whitney-sign-error", "--seed", "11", "--report", str(report))
    assert done.returncode == 1, done.stderr              # disagree
    check = run_in_process("check", "Gr(2,4)", "--presentations", "whitney,vieta",
                           "--seed", "1", "--json")
    assert check.returncode == 0, check.stderr
    (folder / "check.json").write_text(check.stdout)
    sweep = run_cli("sweep", "--max-n", "3", "--presentations", "whitney,vieta",
                    "--store", str(folder / "s.db"), "--json")
    assert sweep.returncode == 0, sweep.stderr
    (folder / "sweep.json").write_text(sweep.stdout)
    return {"report": (next(report.glob("*.json")), 1), "check": (folder / "check.json", 1),
            "sweep": (folder / "sweep.json", 4)}


def test_the_three_kinds_share_one_case_schema(sources):
    report = json.loads(sources["report"][0].read_text())
    check = json.loads(sources["check"][0].read_text())
    sweep = json.loads(sources["sweep"][0].read_text())
    assert report["schema"] == check["schema"] == sweep["cases"][0]["schema"] == 3
    assert set(report) - REPORT_FIELDS == set(check) == set(sweep["cases"][0])
    assert isinstance(report["presentations"], dict)
    witness = report["pairs"][0]["witnesses"][0]
    assert witness["kind"] == "fails at the Bethe points"
    assert report["formulas"]["whitney-sign-error"][witness["relation"]]["text"]


@pytest.mark.parametrize("kind", ["report", "check", "sweep"])
def test_table_reads_each_kind(sources, kind):
    path, cases = sources[kind]
    table = run_in_process("table", str(path), "--format", "csv")
    assert table.returncode == 0, (path, table.stderr)
    assert "Traceback" not in table.stderr
    verdict = "disagree" if kind == "report" else "agree"
    assert len([line for line in table.stdout.splitlines()
                if line.endswith("," + verdict) or f",{verdict}," in line]) == cases, \
        table.stdout


@pytest.mark.parametrize("kind", ["report", "check", "sweep"])
def test_figure_reads_each_kind(sources, kind, tmp_path):
    path, _ = sources[kind]
    figure = run_in_process("figure", str(path), "--out", str(tmp_path / "map.svg"))
    assert figure.returncode == 0, (path, figure.stderr)
    assert (tmp_path / "map.svg").stat().st_size > 0


@pytest.mark.parametrize("text, fragment", [
    ('[1, 2', "not valid JSON"),
    ('{"case": 3, "verdict": "agree"}', "'case' is not text"),
    ('{"case": "Fl(3)", "verdict": "agree", "certificate": 5}', "certificate"),
    ('{"case": "Fl(3)", "verdict": "agree", "pairs": [{"a": 1}]}', "a pair"),
    ('{"case": "X(3)", "verdict": "agree"}', "not a flag type"),
    ('{"case": "Fl(3)", "verdict": "agree", "schema": 9}', "schema version 9"),
    ('{"cases": [{"case": "P1"}]}', "item 0"),
])
@pytest.mark.parametrize("command", ["table", "figure"])
def test_a_malformed_json_file_is_a_one_line_error(tmp_path, command, text, fragment):
    path = tmp_path / "bad.json"
    path.write_text(text)
    words = [command, str(path)] + (["--out", str(tmp_path / "x.png")]
                                     if command == "figure" else [])
    done = run_in_process(*words)
    assert done.returncode == 2, done.stderr
    assert "Traceback" not in done.stderr
    assert len(done.stderr.strip().splitlines()) == 1
    assert str(path) in done.stderr and fragment in done.stderr, done.stderr
