"""What every test module shares, and the shape of a run.

Helpers, imported by name (`from conftest import ROOT, run_cli`): `ROOT`, the repository;
`run_cli(...)`, the `ringmatch` command in a fresh interpreter, as a user runs it;
`run_in_process(...)`, the same result from `main` in this interpreter (no start-up cost);
`examples(n)`, the number of Hypothesis examples for a property whose full count is n.

Shape of a run: tests marked `slow` are left out unless `--slow` is given (CI gives it:
.ci/run), and Hypothesis runs a fifth of the written example counts unless the `ci` profile
is loaded (`--hypothesis-profile=ci`, or HYPOTHESIS_PROFILE=ci), so that a default run stays
well under five minutes on two cores while CI runs everything at full strength.

The header line says up front how many tests run and how long the last whole run took.  With `-q` (the project's default) pytest prints only dots, and the whole suite runs for
minutes; a count and a duration tell a newcomer that nothing hangs.  The duration is the
one measured on this machine by the last complete run (kept in pytest's cache), so it is
never a guess; before any run the note falls back to the order of magnitude.
"""
from __future__ import annotations

import contextlib
import io
import os
import subprocess
import sys
import time
from pathlib import Path

import pytest
from hypothesis import settings

ROOT = Path(__file__).resolve().parent.parent


def run_cli(*args, cwd=ROOT, env=None, timeout: float = 300) -> subprocess.CompletedProcess:
    """`ringmatch ARGS` as a separate process (exit status, stdout and stderr as text): what
    a user sees, including the one-line errors and exit statuses of `main`."""
    return subprocess.run([sys.executable, "-m", "ringmatch.compare.cli", *map(str, args)],
                          cwd=cwd, env=env, capture_output=True, text=True, timeout=timeout)


def run_in_process(*args) -> subprocess.CompletedProcess:
    """What `run_cli` returns, but from `main` inside this interpreter: no start-up cost of
    a second of imports, so for the many cheap requests (bad input, small cases).  An
    exception escaping `main` fails the test, as a traceback would have."""
    from ringmatch.compare.cli import main
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            status = main([str(a) for a in args])
        except SystemExit as stop:   # --help, --version: argparse exits by itself
            status = stop.code if isinstance(stop.code, int) else int(stop.code is not None)
    return subprocess.CompletedProcess(["ringmatch", *map(str, args)], status, out.getvalue(),
                                       err.getvalue())


# The example counts written in the tests are CI's; a default run takes a fifth of each.
CI_EXAMPLES = 100
settings.register_profile("ci", max_examples=CI_EXAMPLES, deadline=None)
settings.register_profile("default", max_examples=CI_EXAMPLES // 5, deadline=None)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "default"))


def examples(full: int) -> int:
    """Hypothesis examples for a property test whose full (CI) count is `full`: all of them
    under the `ci` profile, a fifth (at least 10) under the default one.  Read when the test
    module is imported, after `--hypothesis-profile` has been applied."""
    return max(min(full, 10), full * settings.default.max_examples // CI_EXAMPLES)


def pytest_addoption(parser):
    parser.addoption("--slow", action="store_true", default=False,
                     help="also run the tests marked slow (CI does)")


def pytest_collection_modifyitems(config, items):
    # An explicit -m decides by itself (`-m slow` runs only the slow ones).
    if config.getoption("slow") or config.option.markexpr:
        return
    slow = [item for item in items if item.get_closest_marker("slow")]
    if slow:
        config.hook.pytest_deselected(items=slow)
        items[:] = [item for item in items if not item.get_closest_marker("slow")]

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
        and not option.keyword and not option.markexpr and not option.maxfail \
        and not option.slow   # the cached duration is that of the default run
    if count == 0:
        return
    cache = getattr(session.config, "cache", None)
    last = cache.get(_CACHE_KEY, None) if cache is not None else None
    if _state["whole"]:
        how_long = (f"the last whole run here took {_duration_text(last)}" if last
                    else "the whole suite takes a few minutes on two cores")
    elif getattr(option, "slow", False) and \
            all(arg.rstrip("/").endswith("tests") for arg in session.config.args):
        how_long = "slow tests included (as in CI): longer than the default run"
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


def sympy_ideals_equal(flag, family_a, family_b, seed, *, prime=32003, equivariant=True):
    """Independent judge: whether two presentations in the same generators define equal
    ideals at the engine's specialisation (same seed and prime), decided by SymPy's
    `groebner` alone (equal reduced bases)."""
    import sympy
    from ringmatch.compare import algebra
    from ringmatch.presentations.interface import build_specialised
    from ringmatch.reports.formulas import to_sympy
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=seed, prime=prime,
                                       equivariant=equivariant)
    bases = []
    for family in (family_a, family_b):
        presentation = build_specialised(family, flag, spec)
        names = presentation.ring.ctx.names()
        symbols = [sympy.Symbol(x) for x in names]
        polys = [to_sympy(r.poly, names) for r in presentation.relations]
        bases.append(sympy.groebner(polys, *symbols, modulus=prime, order="grevlex"))
    return bases[0].exprs == bases[1].exprs
