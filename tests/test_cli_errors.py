"""Bad input: one line on stderr naming the problem, exit status 2, no traceback."""

import pytest

from conftest import run_cli as run


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
    result = run(*args)
    assert result.returncode == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert fragment in lines[0]
    assert "Traceback" not in result.stderr
