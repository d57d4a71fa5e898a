"""`ringmatch scan`: the command line of compare/scan.py.

Everything that can be wrong with the request (the file, --set/--vary values, the grid's
size, the output options) is checked before the store is opened, so bad input writes
nothing.
"""
from __future__ import annotations

import json
import sqlite3
import sys

from ringmatch.errors import UsageError

from . import parameters, store
from .sweep import terminal_progress
from .workers import Limits

DEFAULT_STORE = "ringmatch-scans.db"


def add_arguments(parser, *, prime_argument, positive_int) -> None:
    from . import algebra
    from .scan import DEFAULT_MAX_GRID, parse_axis
    from .sweep_command import add_case_selection, add_run_options
    from ringmatch.reports.scan import TABLE_FORMATS
    parser.add_argument("presentation",
                        help="presentation file with [[parameters]] (a path or a shipped name, "
                             "e.g. whitney-unknowns, coulomb-levels)")
    parser.add_argument("--reference", default="whitney", metavar="NAME",
                        help="presentation every grid point is compared with; default whitney")
    parameters.add_argument(parser)
    parser.add_argument("--vary", action="append", type=parse_axis, default=[],
                        metavar="NAME=V1,V2|LOW..HIGH",
                        help="scan only these values of a parameter (repeatable); parameters "
                             "neither fixed with --set nor listed here take all declared values")
    parser.add_argument("--per-step", action="store_true",
                        help="a per-step parameter a is one axis per step (a_1, a_2, …) instead "
                             "of one value for every step")
    parser.add_argument("--max-grid", type=positive_int, default=DEFAULT_MAX_GRID, metavar="K",
                        help=f"refuse scans of more than K grid points × cases (default "
                             f"{DEFAULT_MAX_GRID})")
    add_case_selection(parser, positive_int)
    parser.add_argument("--narrow", action="store_true",
                        help="cases from small to large; drop a value assignment as soon as it "
                             "disagrees")
    parser.add_argument("--first-agreeing", action="store_true",
                        help="grid points in order; stop at the first that agrees on every case")
    parser.add_argument("--colengths", action="store_true",
                        help="compute colengths also where the Bethe points already refute a "
                             "point (a Gröbner basis each)")
    add_run_options(parser, positive_int, store=DEFAULT_STORE, unit="check")
    parser.add_argument("--seed", type=int, default=0,
                        help="scan seed; each case's seed derives from it (default 0)")
    parser.add_argument("--prime", type=prime_argument, default=algebra.DEFAULT_PRIME)
    parser.add_argument("--plain", action="store_true", help="non-equivariant: all T_j = 1")
    parser.add_argument("--order", type=positive_int, default=None,
                        help="truncation order N of the Bethe points (default: at least 6 and "
                             "2 + the largest q-degree among the relations)")
    parser.add_argument("--trials", type=positive_int, default=1)
    parser.add_argument("--json", action="store_true",
                        help="one JSON object: parameters, points, agreeing_everywhere, …")
    parser.add_argument("--table", choices=TABLE_FORMATS, metavar="FORMAT",
                        help="print a table per case instead of the summary: "
                             + ", ".join(TABLE_FORMATS))
    parser.add_argument("--figure", metavar="FILE",
                        help="also draw a panel per case into FILE (.png, .svg or .pdf)")


def command(args) -> int:
    from ringmatch.presentations import userfile
    from ringmatch.reports import scan as scan_report
    from .scan import outcome_json, plan_scan, run_scan
    from .sweep_command import _store_path_usable, flags_from_arguments
    if args.json and args.table:
        raise UsageError("--json and --table exclude each other")
    if args.figure is not None and not args.figure.lower().endswith((".png", ".svg", ".pdf")):
        raise UsageError(f"--figure {_shown(args.figure)}: the file name must end in .png, "
                         ".svg or .pdf")
    flags = flags_from_arguments(args)
    _store_path_usable(args.store)
    if args.figure is not None:
        _figure_usable(args.figure)
    largest = max(f.n for f in flags)
    if not args.plain and args.prime - 2 < largest:
        raise UsageError(f"--prime {args.prime} is too small for {largest} distinct weights")
    fixed = parameters.values_of(args)
    try:
        plan = plan_scan(args.presentation, flags, reference=args.reference, fixed=fixed,
                         vary=args.vary, seed=args.seed, prime=args.prime,
                         equivariant=not args.plain, order=args.order, trials=args.trials,
                         colengths=args.colengths, per_step=args.per_step,
                         max_grid=args.max_grid)
    except KeyError as error:   # an unknown reference name
        raise UsageError(str(error.args[0])) from None
    if not plan.flags:
        raise UsageError(f"{userfile.spec_of(args.presentation).name} has nothing for any of "
                         "the cases asked for")
    mode = {(False, False): "all", (True, False): "narrow", (False, True): "first",
            (True, True): "first-narrow"}[(args.narrow, args.first_agreeing)]
    progress = terminal_progress()
    try:
        outcome = run_scan(plan, args.store, mode=mode, workers=args.workers,
                           limits=Limits(args.case_timeout, args.case_memory), progress=progress)
    except store.StoreError as error:
        raise UsageError(f"--store {error}") from None
    except (OSError, sqlite3.Error) as error:
        raise UsageError(f"--store {_shown(args.store)}: {error}") from None
    finally:
        if progress is not None:
            progress.close()
    data = outcome_json(outcome, args.store)
    if args.json:
        print(json.dumps(data, indent=2))
    elif args.table:
        sys.stdout.write(scan_report.render_tables(data, args.table))
    else:
        print(scan_report.summary_text(data))
    if args.figure is not None:
        try:
            path = scan_report.scan_figure(data, args.figure,
                                           command=" ".join(["ringmatch", *sys.argv[1:]]))
        except OSError as error:
            raise UsageError(f"--figure {_shown(args.figure)}: {error.strerror or error}") from None
        print(f"figure: {path}", file=sys.stderr)
    return 0


def _shown(path: str) -> str:
    text = str(path)
    return repr(text) if len(text) <= 60 else repr(text[:30] + "…" + text[-30:])


def _figure_usable(path: str) -> None:
    """The figure file is tried before the scan (created and removed again, or opened for
    appending when it exists), so that a name the system refuses ends the command before
    anything is computed or stored."""
    import os
    existed = os.path.lexists(path)
    try:
        with open(path, "a"):
            pass
    except OSError as error:
        raise UsageError(f"--figure {_shown(path)}: {error.strerror or error}") from None
    if not existed:
        try:
            os.remove(path)
        except OSError:
            pass
