"""`ringmatch schubert --cases/--up-to --store`: Schubert tables in the results store, resumed,
and rendered by `ringmatch table` without recomputing anything.

Known products asserted in the rendered tables: in QK(P^2), O_1 ⋆ O_1 = O_2 and
O_1 ⋆ O_2 = q·O_0 (Buch–Mihalcea, Quantum K-theory of Grassmannians, Duke Math. J. 156
(2011); recalled from memory); in K(Gr(2;4)), O_1 · O_1 = O_2 + O_11 − O_21 (Buch, Acta Math.
189 (2002); recalled from memory, and the classical_lr check of the run agrees).
"""
from __future__ import annotations

import csv
import io
import json

import pytest

from ringmatch.compare import schubert as engine
from ringmatch.compare import schubert_cli, store
from ringmatch.reports import frames

from conftest import run_in_process

SEED = "3"


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """A store with P2 and Gr(2,4), then the run repeated with Gr(2,5) added."""
    path = tmp_path_factory.mktemp("schubert") / "runs.db"
    first = run_in_process("schubert", "--cases", "P2;Gr(2,4)", "--seed", SEED, "--store", path)
    again = run_in_process("schubert", "--cases", "Gr(2,4);P2;Gr(2,5)", "--seed", SEED,
                           "--store", path)
    return path, first, again


def test_one_row_per_case_and_a_resumed_run_computes_only_the_new_case(runs):
    path, first, again = runs
    assert first.returncode == 0, first.stderr
    assert [line.split()[0] for line in first.stdout.splitlines()] == ["P2", "Gr(2;4)"]
    assert again.returncode == 0, again.stderr
    lines = again.stdout.splitlines()
    assert [line.split()[0] for line in lines] == ["P2", "Gr(2;4)", "Gr(2;5)"]
    assert [("stored in" in line) for line in lines] == [True, True, False]
    rows = store.load_schubert_results(path)
    assert [row["case"] for row in rows] == ["P2", "Gr(2;4)", "Gr(2;5)"]
    assert len({row["settings_key"] for row in rows}) == 1 and all(r["passed"] for r in rows)
    assert rows[0]["settings"]["kind"] == "schubert"
    assert rows[0]["result"]["checks"]["projective_space"] is True


def test_nothing_stored_is_computed_again(runs, monkeypatch):
    path = runs[0]

    def refuse(*args, **kwargs):
        raise AssertionError("a stored case was computed again")

    monkeypatch.setattr(schubert_cli, "_case", refuse)
    done = run_in_process("schubert", "--cases", "P2;Gr(2,4);Gr(2,5)", "--seed", SEED,
                          "--store", path, "--json")
    assert done.returncode == 0, done.stderr
    assert all(json.loads(line)["stored"] for line in done.stdout.splitlines())


def test_other_settings_are_rows_of_their_own(tmp_path):
    path = tmp_path / "s.db"
    assert run_in_process("schubert", "--up-to", "2", "--seed", "1", "--store",
                          path).returncode == 0
    other = run_in_process("schubert", "--up-to", "2", "--seed", "2", "--store", path)
    assert other.returncode == 0 and "stored in" not in other.stdout
    assert len(store.load_schubert_results(path)) == 2


def test_the_sweep_rows_of_the_store_are_untouched(runs):
    # Schubert rows live in a table of their own: a sweep reader sees none of them, the
    # schema version is the same, and the store still opens for sweeps.
    path = runs[0]
    assert store.load_results(path) == []
    store.open_store(path).close()
    assert frames.load_rows(path) == []


def test_table_renders_the_stored_products_without_recomputing(runs, monkeypatch):
    path = runs[0]

    def refuse(*args, **kwargs):
        raise AssertionError("table recomputed a Schubert table")

    monkeypatch.setattr(engine, "structure_constants", refuse)
    monkeypatch.setattr(engine, "evaluate", refuse)
    markdown = run_in_process("table", path)          # a store of Schubert rows only
    assert markdown.returncode == 0, markdown.stderr
    text = markdown.stdout
    assert "### P2 in whitney, basis groth:S:1-x: all checks pass" in text
    # QK(P^2): O_1 ⋆ O_1 = O_2, O_1 ⋆ O_2 = q O_0 (Buch–Mihalcea 2011, recalled).
    assert "| O[1] | O[1] | O[2] |" in text and "| O[1] | O[2] | q*O[] |" in text
    # K(Gr(2;4)) at q = 0: O_1 · O_1 = O_2 + O_11 − O_21 (Buch 2002, recalled).
    assert "| O[1] | O[1] | O[2] + O[1,1] - O[2,1] |" in text
    assert run_in_process("table", path, "--schubert").stdout == text

    table = run_in_process("table", path, "--schubert", "--format", "csv")
    rows = list(csv.DictReader(io.StringIO(table.stdout)))
    p2 = {(r["u"], r["v"], r["w"]): r["q_polynomial"] for r in rows if r["case"] == "P2"}
    assert p2[("[1]", "[1]", "[2]")] == "1" and p2[("[1]", "[2]", "[]")] == "q"
    assert {r["case"] for r in rows} == {"P2", "Gr(2;4)", "Gr(2;5)"}

    latex = run_in_process("table", path, "--schubert", "--format", "latex").stdout
    assert r"\mathcal{O}_{1} \star \mathcal{O}_{2} &= q \mathcal{O}_{\emptyset}" in latex
    assert latex.count(r"\begin{align*}") == 3


def test_table_schubert_on_a_store_without_tables_is_a_one_line_error(tmp_path):
    path = tmp_path / "empty.db"
    store.open_store(path).close()
    done = run_in_process("table", path, "--schubert")
    assert done.returncode == 2 and "no Schubert tables stored" in done.stderr
    assert done.stderr.count("\n") == 1


def test_store_needs_several_cases_and_cases_are_checked():
    done = run_in_process("schubert", "P2", "--store", "x.db")
    assert done.returncode == 2 and "--store goes with --up-to or --cases" in done.stderr
    done = run_in_process("schubert", "--cases", "P2;Gr(5,3)")
    assert done.returncode == 2 and done.stderr.count("\n") == 1
    done = run_in_process("schubert", "--cases", "P2", "--up-to", "3")
    assert done.returncode == 2 and "one of them" in done.stderr


def test_a_case_past_its_time_limit_is_not_decided_and_not_stored(tmp_path):
    # bethe computes in the Chern roots: Gr(3;6) takes seconds there, P1 milliseconds.
    path = tmp_path / "limited.db"
    done = run_in_process("schubert", "--cases", "P1;Gr(3,6)", "--presentation", "bethe",
                          "--case-timeout", "0.5", "--seed", SEED, "--store", path)
    assert done.returncode == 3, done.stderr
    first, second = done.stdout.splitlines()
    assert first.startswith("P1") and "all checks pass" in first
    assert second.startswith("Gr(3;6)") and "not decided" in second and \
        "--case-timeout 0.5" in second
    assert [row["case"] for row in store.load_schubert_results(path)] == ["P1"]


@pytest.mark.parametrize("options, message", [
    (["P2", "--case-timeout", "3"], "--case-timeout goes with --up-to or --cases"),
    (["--up-to", "3", "--case-memory", "0"], "--case-memory 0"),
    (["--up-to", "3", "--case-timeout", "-1"], "--case-timeout"),
])
def test_limits_outside_a_run_over_cases_are_usage_errors(options, message):
    done = run_in_process("schubert", *options)
    assert done.returncode == 2 and message in done.stderr and done.stderr.count("\n") == 1
