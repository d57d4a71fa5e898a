"""`table` and `figure` read every JSON the tool writes: `check --json`, the JSON of
`check --report`, and `sweep --json` (one schema for results)."""
import json

from conftest import run_cli, run_in_process


def test_table_reads_check_report_and_sweep_json(tmp_path):
    report = tmp_path / "report"
    assert run_in_process("check", "Gr(2,4)", "--presentations", "whitney,vieta",
                          "--seed", "1", "--report", str(report)).returncode == 0
    check = run_in_process("check", "Gr(2,4)", "--presentations", "whitney,vieta",
                           "--seed", "1", "--json")
    (tmp_path / "check.json").write_text(check.stdout)
    sweep = run_cli("sweep", "--max-n", "3", "--presentations", "whitney,vieta",
                           "--store", str(tmp_path / "s.db"), "--json")
    assert sweep.returncode == 0, sweep.stderr
    (tmp_path / "sweep.json").write_text(sweep.stdout)
    assert json.loads(check.stdout)["schema"] == json.loads(sweep.stdout)["cases"][0]["schema"]
    for source, cases in ((next(report.glob("*.json")), 1), (tmp_path / "check.json", 1),
                          (tmp_path / "sweep.json", 4)):
        table = run_in_process("table", str(source), "--format", "csv")
        assert table.returncode == 0, (source, table.stderr)
        assert "Traceback" not in table.stderr
        assert len([line for line in table.stdout.splitlines()
                    if line.endswith(",agree") or ",agree," in line]) == cases, table.stdout
