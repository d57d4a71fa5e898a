"""Bad input: one line on stderr naming the problem, exit status 2, no traceback."""

import pytest

from conftest import run_cli, run_in_process


@pytest.mark.parametrize("args, fragment", [
    (["relations", "Fl(3,1;5)"], "Fl(3,1;5)"),
    (["relations", "Gr(5;5)"], "Gr(5;5)"),
    (["check", "Fl(;0)"], "Fl(;0)"),
    (["check", "Gr(a,b)"], "Gr(a,b)"),
    (["relations", "P3", "--presentation", "nonsense"], "nonsense"),
    (["check", "P3", "--presentations", "whitney,,vieta"], "empty name"),
    (["check", "P3", "--prime", "1000"], "1000"),
    (["check", "P3", "--seed", "x"], "x"),
    (["relations", "Gr(2,4)", "--presentation", "toda"], "complete flags"),
    (["no-such-command"], "no-such-command"),
])
def test_one_line_error_and_exit_status_2(args, fragment):
    result = run_in_process(*args)
    assert result.returncode == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert fragment in lines[0]
    assert "Traceback" not in result.stderr


def test_a_separate_process_sees_the_same():
    # what a shell sees: nothing but the one line, even from a fresh interpreter
    result = run_cli("check", "Gr(a,b)")
    assert result.returncode == 2 and result.stdout == ""
    assert result.stderr.startswith("ringmatch: ") and result.stderr.count("\n") == 1


LONG = "a" * 300       # longer than a file name may be (255 bytes on common file systems)


@pytest.mark.parametrize("args, fragment", [
    # sizes are estimated before anything is built: one line with the estimate and, where
    # the machine's memory allows the attempt at all, the option that overrides it
    (["relations", "Fl(60)"], "relation terms"),
    (["relations", "P30"], "not attempted"),
    (["relations", "Fl(20)"], "--no-size-limit"),
    (["presentations", "--case-file", "Fl(60)"], "relation terms"),
    (["check", "Fl(60)"], "Bethe points"),
    (["check", "Fl(12)"], "Bethe points"),
    (["points", "Fl(12)"], "Bethe points"),
    (["iso", "Fl(12)", "--from", "vieta", "--to", "whitney"], "linear systems"),
    (["relations", "Fl(1000000)"], "n ≤ 100000"),
    # files and folders the system refuses, named before any computing
    (["check", "P1", "--report", "/proc/nope"], "--report '/proc/nope'"),
    (["check", "P1", "--report", LONG], "File name too long"),
    (["table", LONG], "results store"),
    (["figure", LONG, "--out", "x.png"], "results store"),
    # options that only go together
    (["presentations", "--of", "vieta"], "--case-file"),
    (["presentations", "--plain"], "--case-file"),
    # a near miss of a case name gets the valid spelling
    (["check", "gr(2,5)"], "did you mean 'Gr(2,5)'"),
    (["relations", "fl[1,3;5]"], "did you mean 'Fl(1,3;5)'"),
])
def test_bad_requests_end_in_one_line(args, fragment, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    result = run_in_process(*args)
    assert result.returncode == 2, result
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert fragment in lines[0]
    assert len(lines[0]) < 400              # a long name is shortened, not repeated whole
    assert list(tmp_path.iterdir()) == []   # nothing written


def test_a_report_folder_is_tried_but_not_left_behind_on_refusal(tmp_path):
    folder = tmp_path / "new" / "report"
    result = run_in_process("check", "Fl(60)", "--report", folder)
    assert result.returncode == 2
    assert not (tmp_path / "new").exists()


@pytest.mark.parametrize("address", ["a,b", "1,,2", "tcp://host", "host:99999", "",
                                     # DNS labels of at most 63 characters: longer ones
                                     # ended in a UnicodeError from the idna codec
                                     LONG + ":8786", "b" * 64 + ".example:8786"])
def test_a_malformed_cluster_address_is_one_line(address, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    result = run_in_process("sweep", "--cases", "P1", "--cluster", address)
    assert result.returncode == 2
    assert result.stderr.count("\n") == 1 and "scheduler address" in result.stderr
    assert list(tmp_path.iterdir()) == []      # no store created


@pytest.mark.parametrize("args, fragment", [
    (["sweep", "--cases", "Fl(21)"], "--case-timeout"),
    (["sweep", "--cases", "P1", "--store", LONG], "--store 'aaa"),
    # a scan tries its store and its figure before it computes anything
    (["scan", "whitney-unknowns", "--cases", "P1", "--store", LONG], "--store 'aaa"),
    (["scan", "whitney-unknowns", "--cases", "P1", "--figure", LONG + ".png"],
     "--figure 'aaa"),
    (["scan", "whitney-unknowns", "--cases", "P1", "--figure", "no/such/folder.png"],
     "No such file or directory"),
])
def test_sweep_refusals_write_no_store(args, fragment, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    result = run_in_process(*args)
    assert result.returncode == 2
    assert result.stderr.count("\n") == 1 and fragment in result.stderr
    assert len(result.stderr) < 400
    assert list(tmp_path.iterdir()) == []


def test_a_cluster_that_cannot_be_used_leaves_no_store(tmp_path, monkeypatch):
    """The store is created before the cluster is reached; when no case could be computed
    there, the store this sweep made is removed again (an existing one is left alone)."""
    from ringmatch.compare import sweep

    def unreachable(*args, **kwargs):
        raise OSError("Timed out trying to connect to tcp://127.0.0.1:1 after 20 s")
    pytest.importorskip("distributed", reason="the cluster extra is not installed")
    monkeypatch.setattr(sweep, "run_dask", unreachable)
    monkeypatch.chdir(tmp_path)
    result = run_in_process("sweep", "--cases", "P1", "--cluster", "127.0.0.1:1")
    assert result.returncode == 2
    assert result.stderr.count("\n") == 1 and "cannot use the cluster" in result.stderr
    assert list(tmp_path.iterdir()) == []
    kept = tmp_path / "kept.db"
    assert run_in_process("sweep", "--cases", "P1", "--store", kept).returncode == 0
    result = run_in_process("sweep", "--cases", "P2", "--store", kept, "--cluster",
                            "127.0.0.1:1")
    assert result.returncode == 2 and kept.exists()
