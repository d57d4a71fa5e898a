"""Size estimates made before anything is built (compare/sizes.py)."""
import io
import math

import pytest

from ringmatch.compare import sizes
from ringmatch.presentations.flagtype import parse_flag


@pytest.mark.parametrize("case", ["P4", "Gr(3,7)", "Fl(1,3;6)", "Fl(7)", "Fl(21)"])
def test_the_rank_estimate_is_the_rank(case):
    flag = parse_flag(case)
    assert math.isclose(sizes.rank_estimate(flag), flag.rank, rel_tol=1e-9)


def test_fl60_is_estimated_without_computing_its_rank():
    assert 81 < sizes.log10_rank(parse_flag("Fl(60)")) < 82      # 60! ≈ 8.3·10^81


def test_refusal_announcement_and_override():
    huge = sizes.Estimate("much", seconds=1e6, bytes=1.0)
    with pytest.raises(sizes.SizeError, match=sizes.OVERRIDE):
        sizes.guard("x", huge)
    said = io.StringIO()
    sizes.guard("x", huge, allow_large=True, stream=said)
    assert "this will take a while" in said.getvalue()
    quiet = io.StringIO()
    sizes.guard("x", sizes.Estimate("little", 1.0, 1.0), stream=quiet)
    assert quiet.getvalue() == ""


def test_more_memory_than_the_machine_is_refused_even_when_overridden():
    too_big = sizes.Estimate("much", seconds=1.0, bytes=1e30)
    with pytest.raises(sizes.SizeError, match="not attempted"):
        sizes.guard("x", too_big, allow_large=True)


def test_small_cases_pass_quietly():
    for case in ("P4", "Gr(2,5)", "Fl(4)", "Fl(1,3;5)", "Fl(6)"):
        flag = parse_flag(case)
        for estimate in (sizes.symbolic_estimate(flag, True),
                         sizes.check_estimate(flag, "auto", 6, 1, 3),
                         sizes.iso_estimate(flag, 16)):
            assert estimate.seconds < sizes.ANNOUNCE_SECONDS, (case, estimate)
