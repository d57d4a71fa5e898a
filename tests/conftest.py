"""Say up front how many tests run and how long the last whole run took.

With `-q` (the project's default) pytest prints only dots, and the whole suite runs for
minutes; a count and a duration tell a newcomer that nothing hangs.  The duration is the
one measured on this machine by the last complete run (kept in pytest's cache), so it is
never a guess; before any run the note falls back to the order of magnitude.
"""
from __future__ import annotations

import time

_CACHE_KEY = "ringmatch/whole-suite-seconds"
_state = {}


def _duration_text(seconds: float) -> str:
    if seconds < 90:
        return f"about {max(1, round(seconds))} s"
    return f"about {round(seconds / 60)} minutes"


def pytest_collection_finish(session):
    count = len(session.items)
    _state["count"], _state["start"] = count, time.monotonic()
    option = session.config.option
    _state["whole"] = all(arg.rstrip("/").endswith("tests") for arg in session.config.args) \
        and not option.keyword and not option.markexpr and not option.maxfail
    if count == 0:
        return
    cache = getattr(session.config, "cache", None)
    last = cache.get(_CACHE_KEY, None) if cache is not None else None
    if _state["whole"]:
        how_long = (f"the last whole run here took {_duration_text(last)}" if last
                    else "the whole suite takes a few minutes on two cores")
    else:
        how_long = "a selection of the suite"
    reporter = session.config.pluginmanager.get_plugin("terminalreporter")
    if reporter is not None:
        reporter.write_line(f"ringmatch: {count} tests; {how_long}")


def pytest_sessionfinish(session, exitstatus):
    cache = getattr(session.config, "cache", None)
    if cache is None or "start" not in _state or not _state.get("whole"):
        return
    if exitstatus in (0, 1) and _state.get("count", 0) > 0:   # ran to the end, pass or fail
        cache.set(_CACHE_KEY, time.monotonic() - _state["start"])
