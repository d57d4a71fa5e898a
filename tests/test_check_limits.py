"""`check --case-timeout/--case-memory` (compare/limited.py): the same limits as a sweep's,
ending in an inconclusive verdict that names the limit, never in a dead process."""
import json

from conftest import run_cli


def test_check_over_the_time_limit_is_inconclusive():
    done = run_cli("check", "Fl(7)", "--presentations", "whitney,vieta,bethe",
                   "--case-timeout", "0.01", "--json", "--seed", "1")
    assert "Traceback" not in done.stderr
    result = json.loads(done.stdout)
    assert result["verdict"] == "inconclusive"
    assert result["reason"] == "limit: took longer than --case-timeout 0.01 s"
    assert result["certificate"]["seed"] == 1
    assert result["certificate"]["limits"] == {"seconds": 0.01, "memory_mib": None}


def test_check_over_the_memory_limit_is_inconclusive():
    """1 MiB beyond a fresh process: FLINT aborts or Python raises MemoryError, in the
    child only."""
    done = run_cli("check", "Fl(6)", "--presentations", "whitney,vieta,bethe",
                   "--case-memory", "1", "--json")
    assert "Traceback" not in done.stderr
    result = json.loads(done.stdout)
    assert result["verdict"] == "inconclusive"
    assert result["reason"].startswith("limit: out of memory under --case-memory 1 MiB")


def test_within_the_limits_the_result_is_the_plain_checks():
    limited = run_cli("check", "Gr(2,4)", "--presentations", "whitney,vieta", "--seed", "3",
                      "--case-timeout", "600", "--case-memory", "2000", "--json")
    plain = run_cli("check", "Gr(2,4)", "--presentations", "whitney,vieta", "--seed", "3",
                    "--json")
    strip = lambda r: {k: v for k, v in json.loads(r.stdout).items() if k != "timings"}
    assert strip(limited) == strip(plain)


def test_stage_lines_name_each_stage(capsys):
    import io
    from ringmatch.compare import limited
    from ringmatch.compare.engine import check_case
    from ringmatch.presentations import get_family
    from ringmatch.presentations.flagtype import parse_flag
    lines = io.StringIO()
    with limited.stage_lines("check P2", stream=lines):
        check_case(parse_flag("P2"), [get_family("whitney")], seed=1, method="both")
    text = lines.getvalue()
    assert "check P2: Bethe points…" in text and "check P2: Bethe points done in" in text
    assert "check P2: exact route (Gröbner bases at a specialisation)…" in text
    assert "check P2: exact route (Gröbner bases at a specialisation) done in" in text
