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
