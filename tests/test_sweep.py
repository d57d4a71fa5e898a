"""Sweeps (compare/sweep.py): enumeration and order, seeds, limits, resume after SIGKILL,
stop at the first counterexample, the command line, and the Dask path."""
import io
import json
import math
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest

from ringmatch.compare import store, sweep, workers
from ringmatch.compare.cases import case_seed, enumerate_cases, parse_case_list
from ringmatch.compare.workers import Limits
from ringmatch.reports import sweeps as sweep_text
from ringmatch.presentations.flagtype import parse_flag

from conftest import run_cli as ringmatch
from conftest import run_in_process

ROOT = Path(__file__).resolve().parent.parent


def comparable(result) -> dict:
    """A result (a CaseResult or its JSON) without its wall-clock timings, which differ
    from run to run."""
    data = result if isinstance(result, dict) else result.to_json()
    return {k: v for k, v in data.items() if k != "timings"}


def plan(cases: str, names=("whitney", "vieta"), seed=0):
    return sweep.plan_sweep(parse_case_list(cases), list(names), seed=seed,
                            prime=store.sweep_settings([])["prime"], equivariant=True,
                            order=6, trials=1, method="auto")


# ---------------------------------------------------------------------------------------
# Enumeration

def test_all_partial_flags_up_to_6_are_57():
    """Flag types in C^n are the nonempty subsets {k_1 < … < k_m} of {1…n−1}: 2^(n−1) − 1
    of them (standard count); summed over n = 2…6 that is 1 + 3 + 7 + 15 + 31 = 57."""
    flags = enumerate_cases("partial", 6)
    assert len(flags) == 57 == sum(2 ** (n - 1) - 1 for n in range(2, 7))
    assert len(set(flags)) == 57
    for n in range(2, 7):
        assert sum(f.n == n for f in flags) == 2 ** (n - 1) - 1
    assert len(enumerate_cases("partial", 7)) == 120


def test_kinds_and_bounds():
    grassmannians = enumerate_cases("grassmannian", 6)
    assert len(grassmannians) == sum(n - 1 for n in range(2, 7))     # Gr(k;n), 0 < k < n
    assert all(f.m == 1 for f in grassmannians)
    complete = enumerate_cases("complete", 6)
    assert [f.name for f in complete] == ["P1", "Fl(3)", "Fl(4)", "Fl(5)", "Fl(6)"]
    assert [f.n for f in enumerate_cases("partial", 5, min_n=5)] == [5] * 15
    small = enumerate_cases("partial", 5, max_rank=30)
    assert small and all(f.rank <= 30 for f in small)


def test_order_is_n_then_rank_then_dims():
    flags = enumerate_cases("partial", 6)
    keys = [(f.n, f.rank, f.dims) for f in flags]
    assert keys == sorted(keys)
    # ranks are the multinomial coefficients n!/(k_1! d_1! ⋯ d_m!) (Euler characteristic)
    fl135 = parse_flag("Fl(1,3;5)")
    assert fl135.rank == math.factorial(5) // (1 * 2 * 2) == 30
    assert [f.name for f in flags[:7]] == ["P1", "P2", "Gr(2;3)", "Fl(3)", "P3", "Gr(3;4)",
                                           "Gr(2;4)"]


def test_case_list_is_put_in_sweep_order_once():
    flags = parse_case_list("Fl(3); Gr(2,4);P1;Gr(2;4);")
    assert [f.name for f in flags] == ["P1", "Fl(3)", "Gr(2;4)"]


def test_case_seeds_are_reproducible_and_differ_between_cases():
    a = [case_seed(7, f) for f in enumerate_cases("partial", 6)]
    assert a == [case_seed(7, f) for f in enumerate_cases("partial", 6)]
    assert len(set(a)) == len(a)
    assert a != [case_seed(8, f) for f in enumerate_cases("partial", 6)]


# ---------------------------------------------------------------------------------------
# Running, resuming, limits

def test_sweep_stores_each_case_and_a_second_run_computes_nothing(tmp_path):
    p = plan("P1;P2;Gr(2;3);Fl(3)")
    first = sweep.run_sweep(p, tmp_path / "s.db", workers=2)
    assert first.computed and sorted(first.computed) == sorted(f.name for f in p.flags)
    assert first.counts() == {"agree": 4}
    for result in first.ordered_results():
        certificate = result.certificate
        assert certificate.sweep_seed == 0
        assert certificate.seed == case_seed(0, parse_flag(result.case))
    again = sweep.run_sweep(p, tmp_path / "s.db", workers=2)
    assert again.computed == [] and len(again.from_store) == 4
    assert [comparable(r) for r in again.ordered_results()] == \
        [comparable(r) for r in first.ordered_results()]
    # another seed is another sweep
    other = sweep.run_sweep(plan("P1", seed=1), tmp_path / "s.db", workers=1)
    assert other.computed == ["P1"]


def test_stop_at_first_counterexample_is_the_smallest_one(tmp_path):
    """whitney-sign-error slips a sign in a term that vanishes for Grassmannians; the first
    case with two steps is Fl(1,2;3) (see the file's header)."""
    p = sweep.plan_sweep(enumerate_cases("partial", 4), ["whitney", "whitney-sign-error"],
                         seed=0, prime=store.sweep_settings([])["prime"], equivariant=True,
                         order=6, trials=1, method="auto")
    outcome = sweep.run_sweep(p, tmp_path / "s.db", workers=2, stop_at_first=True)
    assert outcome.first_counterexample == "Fl(3)"
    assert [r.case for r in outcome.ordered_results()] == ["P1", "P2", "Gr(2;3)", "Fl(3)"]
    assert [r.verdict for r in outcome.ordered_results()] == ["agree"] * 3 + ["disagree"]
    assert len(outcome.not_run) == len(p.flags) - 4
    lines = sweep_text.witness_lines(outcome.results["Fl(3)"])
    assert lines and "whitney-sign-error" in lines[0]


def test_unsupported_cases_are_skipped_with_the_reason(tmp_path):
    p = sweep.plan_sweep(enumerate_cases("partial", 3), ["whitney", "toda"], seed=0,
                         prime=store.sweep_settings([])["prime"], equivariant=True, order=6,
                         trials=1, method="auto")
    assert [f.name for f in p.flags] == ["P1", "Fl(3)"]
    assert [case for case, _ in p.skipped] == ["P2", "Gr(2;3)"]
    assert all("toda:" in reason and "complete flags" in reason for _, reason in p.skipped)
    outcome = sweep.run_sweep(p, tmp_path / "s.db", workers=2)
    assert outcome.counts() == {"agree": 2}


def test_a_case_over_the_time_limit_is_inconclusive_and_the_sweep_goes_on(tmp_path):
    p = plan("P1;Fl(4)", names=("whitney", "vieta", "bethe"))
    limits = Limits(seconds=0.02)
    outcome = sweep.run_sweep(p, tmp_path / "s.db", workers=1, limits=limits)
    fl4 = outcome.results["Fl(4)"]   # about a second of Gröbner bases
    assert fl4.verdict == "inconclusive"
    assert fl4.reason == "limit: took longer than --case-timeout 0.02 s"
    assert len(outcome.results) == 2
    rows = store.load_results(tmp_path / "s.db")
    assert [r["reason"].startswith("limit:") for r in rows if r["case"] == "Fl(4)"] == [True]
    # same limits: not computed again; other limits: computed again
    assert sweep.run_sweep(p, tmp_path / "s.db", limits=limits).computed == []
    relaxed = sweep.run_sweep(p, tmp_path / "s.db", limits=Limits(seconds=600))
    assert "Fl(4)" in relaxed.computed and relaxed.results["Fl(4)"].verdict == "agree"


def test_a_case_over_the_memory_limit_is_inconclusive(tmp_path):
    """Fl(6) with three presentations needs several MiB beyond a fresh worker; with a 1 MiB
    allowance it must stop (FLINT aborts or Python raises MemoryError) within seconds."""
    finished = ringmatch("sweep", "--cases", "P1;Fl(6)", "--presentations",
                         "whitney,vieta,bethe", "--case-memory", "1", "--workers", "1",
                         "--store", str(tmp_path / "s.db"), "--json")
    assert finished.returncode == 3, finished.stderr      # a case is inconclusive
    results = {r["case"]: r for r in json.loads(finished.stdout)["cases"]}
    assert results["Fl(6)"]["verdict"] == "inconclusive"
    assert results["Fl(6)"]["reason"].startswith("limit: out of memory under --case-memory 1 MiB")
    assert results["P1"]["verdict"] == "agree"          # the sweep went on around it


def test_a_sweep_called_from_python_with_stderr_redirected(tmp_path):
    """As in a notebook or a program that captures output: sys.stderr has no file descriptor
    (and pytest has faulthandler on).  Workers used to die re-enabling faulthandler on it."""
    import faulthandler
    assert faulthandler.is_enabled()      # pytest's, as a notebook may have it
    finished = run_in_process("sweep", "--cases", "P1;Gr(2,4)", "--presentations",
                              "whitney,vieta", "--store", tmp_path / "s.db", "--json")
    cases = json.loads(finished.stdout)["cases"]
    assert [(c["case"], c["verdict"]) for c in cases] == [("P1", "agree"), ("Gr(2;4)", "agree")], \
        [c["reason"] for c in cases]


def test_a_crashed_worker_says_which_exception_ended_it():
    said = workers._crash_line("Traceback (most recent call last):\n  File \"x\", line 1\n"
                               "io.UnsupportedOperation: fileno\n")
    assert said == "io.UnsupportedOperation: fileno"


def _fill_memory_then_spin() -> dict:
    """What CPython 3.11 can do when it runs out of memory while unwinding an exception:
    take the whole allowance, then loop for ever without allocating or returning."""
    hoard = []
    try:
        while True:
            hoard.append(bytearray(256 * 1024))
    except MemoryError:
        pass
    while True:
        pass


def test_a_worker_spinning_at_its_memory_limit_is_stopped_as_out_of_memory(monkeypatch):
    # the hang this guards against was seen in a sweep under --case-memory 1 (CPython
    # retrying a failed allocation inside its exception unwinding, forever)
    monkeypatch.setattr(workers, "CEILING_SECONDS", 1.0)
    from ringmatch.compare.limited import Stopped, run_limited
    started = time.monotonic()
    stopped = run_limited(_fill_memory_then_spin, memory_mib=32)
    assert isinstance(stopped, Stopped)
    assert stopped.reason == ("limit: out of memory under --case-memory 32 MiB "
                              "(stopped after 1 s at its address-space limit)")
    assert time.monotonic() - started < 30


def test_a_worker_well_below_its_memory_limit_is_not_stopped(monkeypatch):
    monkeypatch.setattr(workers, "CEILING_SECONDS", 0.3)
    from ringmatch.compare.limited import run_limited

    def idle() -> dict:
        time.sleep(1.5)     # longer than the patience, far from the limit
        return {"done": True}
    assert run_limited(idle, memory_mib=256) == {"done": True}


def stored_rows(path) -> dict:
    conn = sqlite3.connect(path, timeout=30)
    try:
        return {case: when for case, when in
                conn.execute("SELECT case_name, finished_at FROM results")}
    except sqlite3.OperationalError:    # the schema is not there yet
        return {}
    finally:
        conn.close()


def test_sigkill_loses_nothing_finished_and_resume_recomputes_nothing(tmp_path):
    arguments = ["sweep", "--max-n", "5", "--presentations", "whitney,vieta,bethe",
                 "--workers", "1", "--json"]
    killed_store = tmp_path / "killed.db"
    process = subprocess.Popen([sys.executable, "-m", "ringmatch.compare.cli", *arguments,
                                "--store", str(killed_store)], cwd=ROOT,
                               stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 120
        while len(stored_rows(killed_store) if killed_store.exists() else {}) < 4:
            assert process.poll() is None, "the sweep ended before it could be killed"
            assert time.monotonic() < deadline
            time.sleep(0.02)
        process.send_signal(signal.SIGKILL)
        process.wait()
    finally:
        if process.poll() is None:
            process.kill()
            process.wait()
    before = stored_rows(killed_store)
    assert 4 <= len(before) < 26, "kill the sweep mid-run"

    resumed = ringmatch(*arguments, "--store", str(killed_store))
    assert resumed.returncode == 0, resumed.stderr
    report = json.loads(resumed.stdout)
    assert set(before) <= set(report["from_store"])
    after = stored_rows(killed_store)
    assert len(after) == 26
    assert {case: after[case] for case in before} == before     # not one row rewritten

    clean = ringmatch(*arguments, "--store", str(tmp_path / "clean.db"))
    assert clean.returncode == 0, clean.stderr
    reference = json.loads(clean.stdout)
    assert [comparable(r) for r in report["cases"]] == \
        [comparable(r) for r in reference["cases"]]
    assert report["counts"] == reference["counts"]


# ---------------------------------------------------------------------------------------
# The command line

def test_json_output_has_cases_first_counterexample_and_counts(tmp_path):
    finished = ringmatch("sweep", "--cases", "Gr(2,4);P1", "--presentations",
                         "whitney,vieta", "--store", str(tmp_path / "s.db"), "--json")
    assert finished.returncode == 0, finished.stderr
    # off a terminal no bar is redrawn: one line per finished case, on stderr
    lines = finished.stderr.splitlines()
    assert [line.split()[0] for line in lines] == ["[1/2]", "[2/2]"]
    assert sorted(line.split()[1:3] for line in lines) == [["Gr(2;4)", "agree"], ["P1", "agree"]]
    report = json.loads(finished.stdout)
    assert [r["case"] for r in report["cases"]] == ["P1", "Gr(2;4)"]
    assert report["first_counterexample"] is None
    assert report["counts"] == {"agree": 2}
    assert set(report["cases"][0]) >= {"schema", "case", "rank", "verdict", "reason",
                                       "certificate", "presentations", "pairs", "timings"}


def test_stop_at_first_prints_the_witness(tmp_path):
    finished = ringmatch("sweep", "--max-n", "3", "--presentations",
                         "whitney,whitney-sign-error", "--stop-at-first",
                         "--store", str(tmp_path / "s.db"))
    assert finished.returncode == 1, finished.stderr      # a case disagrees
    assert "first counterexample: Fl(3)" in finished.stdout
    assert "is not in" in finished.stdout or "fails at fixed point" in finished.stdout


@pytest.mark.parametrize("arguments, message", [
    (["--presentations", "whitney"], "--max-n N"),
    (["--max-n", "3", "--min-n", "5"], "--min-n 5 is larger than --max-n 3"),
    (["--cases", "Gr(2,4)", "--max-n", "4"], "--cases lists the cases itself"),
    (["--cases", "Gr(5,4)"], "Gr(5,4)"),
    (["--max-n", "3", "--presentations", "whitney,nosuch"], "unknown presentation 'nosuch'"),
    (["--max-n", "3", "--store", "/nonexistent-folder/s.db"], "does not exist"),
    (["--max-n", "3", "--case-timeout", "-1"], "--case-timeout"),
    (["--max-n", "3", "--kind", "flags"], "--kind"),
])
def test_bad_input_is_one_line_and_status_2(arguments, message, tmp_path):
    finished = ringmatch("sweep", *arguments, cwd=tmp_path)
    assert finished.returncode == 2
    assert finished.stderr.count("\n") == 1 and "Traceback" not in finished.stderr
    assert message in finished.stderr


def test_progress_line_only_on_a_terminal():
    class Terminal(io.StringIO):
        def isatty(self):
            return True

    assert sweep.terminal_progress(io.StringIO()) is None
    screen = Terminal()
    show = sweep.terminal_progress(screen)
    show(1, 4, 3.0, "P1")
    show(4, 4, 12.0, "Fl(3)")
    text = screen.getvalue()
    assert "1/4 cases" in text and "0:03 elapsed" in text and "~0:09 left" in text
    assert text.endswith("\n")


# ---------------------------------------------------------------------------------------
# Dask

def test_dask_cluster_gives_the_same_results_as_local_workers(tmp_path):
    distributed = pytest.importorskip("distributed", reason="the cluster extra is not installed")
    p = plan("P2;Gr(2;4);Fl(3)")
    local = sweep.run_sweep(p, tmp_path / "local.db", workers=2)
    with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False,
                                  protocol="tcp", host="127.0.0.1",
                                  dashboard_address=None) as cluster:
        remote = sweep.run_sweep(p, tmp_path / "dask.db", cluster=cluster.scheduler_address)
    assert sorted(remote.computed) == sorted(local.computed)
    assert [comparable(r) for r in remote.ordered_results()] == \
        [comparable(r) for r in local.ordered_results()]
    assert len(store.load_results(tmp_path / "dask.db")) == 3


# ---------------------------------------------------------------------------------------
# Crashed workers, and one sweep per store

def _segfault(task):
    import os
    os.kill(os.getpid(), signal.SIGSEGV)


def test_a_crashed_worker_is_recorded_as_such_and_retried_a_bounded_number_of_times(
        tmp_path, monkeypatch):
    """A worker dying without a message is a crash (with its signal), not "out of memory",
    even under --case-memory; it is computed again on resume, up to a bound."""
    monkeypatch.setattr(workers, "run_case", _segfault)     # forked workers inherit it
    p, path = plan("P1"), tmp_path / "s.db"
    limits = Limits(memory_mib=2000)
    reasons = []
    for _ in range(sweep.FAILED_ATTEMPTS + 1):
        outcome = sweep.run_sweep(p, path, limits=limits)
        reasons.append(outcome.results["P1"].reason)
        assert outcome.results["P1"].verdict == "inconclusive"
    assert reasons[0].startswith("crashed: worker ended with signal SIGSEGV without a result")
    assert "out of memory" not in reasons[0]
    assert "failed 3 times" in reasons[2] and sweep.RETRY_OPTION in reasons[2]
    assert reasons[3] == reasons[2]                        # no longer computed
    assert sweep.run_sweep(p, path, limits=limits).computed == []
    assert sweep.run_sweep(p, path, limits=limits, retry_failed=True).computed == ["P1"]
    monkeypatch.undo()
    assert sweep.run_sweep(p, path, retry_failed=True).results["P1"].verdict == "agree"


def test_a_store_in_use_by_a_live_sweep_is_refused_and_a_dead_ones_mark_taken_over(tmp_path):
    path = tmp_path / "s.db"
    other = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    try:
        conn = store.open_store(path)
        with conn:
            conn.execute("INSERT INTO meta VALUES ('sweep_in_progress', ?)", (json.dumps(
                {"host": __import__("socket").gethostname(), "pid": other.pid,
                 "started": "now", "command": "ringmatch sweep"}),))
        conn.close()
        with pytest.raises(store.StoreError, match=f"in use by another sweep \\(pid {other.pid}"):
            sweep.run_sweep(plan("P1"), path)
    finally:
        other.kill()
        other.wait()
    outcome = sweep.run_sweep(plan("P1"), path)         # that sweep is gone: taken over
    assert outcome.computed == ["P1"]
    conn = store.open_store(path)
    assert conn.execute("SELECT count(*) FROM meta WHERE key = 'sweep_in_progress'"
                        ).fetchone()[0] == 0            # and released at the end
    conn.close()


def test_kind_all_is_every_flag_type_and_partial_the_proper_partial_ones(tmp_path):
    from ringmatch.compare.sweep_command import flags_from_arguments
    from ringmatch.compare.cli import build_parser

    def names(*words):
        args = build_parser().parse_args(["sweep", "--max-n", "4", *words])
        return [f.name for f in flags_from_arguments(args)]
    assert names() == names("--kind", "all") and len(names()) == 1 + 3 + 7
    assert names("--kind", "partial") == ["Fl(1,2;4)", "Fl(1,3;4)", "Fl(2,3;4)"]


def test_without_a_terminal_each_finished_case_is_one_line():
    lines = io.StringIO()
    show = sweep.sweep_progress(lines)
    show(0, 2, 0.0, "")
    show(1, 2, 1.0, "P1 agree")
    show(2, 2, 2.0, "P2 agree")
    assert lines.getvalue().splitlines() == ["[1/2] P1 agree (0:01 elapsed)",
                                             "[2/2] P2 agree (0:02 elapsed)"]


def test_ctrl_c_says_what_is_stored_and_how_to_resume(tmp_path):
    # Fl(6) keeps the sweep busy for seconds after its first case (the exact route makes the
    # small ones take milliseconds), so the interrupt always lands mid-sweep.
    words = ["sweep", "--cases", "P1;P2;Gr(2,4);Fl(4);Gr(2,5);Fl(1,3;5);Fl(5);Fl(6)", "--workers",
             "1", "--presentations", "whitney,vieta,bethe", "--store", str(tmp_path / "s.db")]
    process = subprocess.Popen([sys.executable, "-m", "ringmatch.compare.cli", *words],
                               cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                               text=True)
    first = process.stderr.readline()          # a case finished: the sweep is under way
    assert first.startswith("[1/8]"), first
    process.send_signal(signal.SIGINT)
    rest = process.stderr.read()
    process.wait(timeout=120)
    assert process.returncode == 130
    message = [line for line in rest.splitlines() if "interrupted" in line]
    assert len(message) == 1 and "Traceback" not in rest
    assert "of 8 case(s) of this sweep are stored in" in message[0]
    assert message[0].endswith("resume with: ringmatch " + " ".join(
        __import__("shlex").quote(w) for w in words))
    assert "sweep_in_progress" not in str(store.open_store(tmp_path / "s.db").execute(
        "SELECT key FROM meta").fetchall())
