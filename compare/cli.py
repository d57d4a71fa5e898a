"""The `ringmatch` command line.

Every subcommand is a small function `cmd_<name>(args) -> int` registered in `build_parser`.
Bad input raises `UsageError` or another `ringmatch.errors.RingmatchError` (every error class
of the package derives from it); `main` turns it into a one-line message on stderr and exit
status 2, never a traceback.
"""
from __future__ import annotations

import argparse
import json
import os
import re
import sys
from typing import List, Optional

from ringmatch.errors import InputError, RingmatchError, UsageError
from ringmatch.presentations import FAMILIES, get_family
from ringmatch.presentations.flagtype import FlagType, FlagTypeError, parse_flag
from ringmatch.presentations.interface import PresentationError, build_symbolic
from ringmatch.presentations.userfile import ParameterValuesMissing, PresentationFileError

from . import algebra


# The old name of what `main` catches, kept for callers; every error class derives from it now.
USER_ERRORS = (RingmatchError,)


class _Parser(argparse.ArgumentParser):
    def error(self, message):   # argparse would print the whole usage block
        raise UsageError(message)


# ---------------------------------------------------------------------------------------
# Shared option handling

def flag_argument(text: str) -> FlagType:
    try:
        return parse_flag(text)
    except FlagTypeError as error:   # argparse would replace our message by a generic one
        raise argparse.ArgumentTypeError(str(error)) from None


def presentation_list(text: str) -> List[str]:
    # Commas inside brackets belong to a name with parameter values: file[a=1,b=2].
    names = [t.strip() for t in re.split(r",(?![^\[]*\])", text)]
    if not all(names):
        raise argparse.ArgumentTypeError(f"{text!r}: empty name in the list")
    if len(set(names)) != len(names):
        raise argparse.ArgumentTypeError(f"{text!r}: a presentation is named twice")
    family_names = []
    for name in names:
        try:
            family_names.append(get_family(name).name)
        except ParameterValuesMissing as error:   # values may still come from --set
            family_names.append(error.family_name)
        except KeyError as error:
            raise argparse.ArgumentTypeError(str(error.args[0])) from None
        except PresentationFileError as error:   # one line naming file:line:col
            raise argparse.ArgumentTypeError(str(error)) from None
    for name, family_name in zip(names, family_names):
        if family_names.count(family_name) > 1:
            raise argparse.ArgumentTypeError(
                f"{text!r}: two presentations are called {family_name!r} ({name} is one); "
                "rename one (the name field of a presentation file)")
    return names


def resolve_family(name: str, args=None):
    """The family of a name; with `args`, a presentation file's parameters take the values
    of the command's --set options (compare/parameters.py)."""
    from . import parameters
    values = parameters.values_of(args) if args is not None else None
    try:
        return get_family(name, values)
    except KeyError as error:
        raise UsageError(str(error.args[0])) from None


def _check_settings(args, names) -> None:
    from . import parameters
    parameters.check_known(parameters.values_of(args), names)


def int_list(option: str, text: str) -> List[int]:
    try:
        return [int(t) for t in text.split(",")]
    except ValueError:
        raise UsageError(f"{option} {text!r}: expected comma-separated integers") from None


def _int_at_least(minimum: int, requirement: str):
    """An argparse type: an integer of at least `minimum`, else a one-line error."""
    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r} is not an integer") from None
        if value < minimum:
            raise argparse.ArgumentTypeError(f"{value} {requirement}")
        return value
    return parse


positive_int = _int_at_least(1, "must be at least 1")
non_negative_int = _int_at_least(0, "must not be negative")


def prime_argument(text: str) -> int:
    try:
        p = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not an integer") from None
    try:
        return algebra.check_prime(p)
    except InputError as error:   # argparse would replace our message by a generic one
        raise argparse.ArgumentTypeError(str(error)) from None


def shown(path: str, limit: int = 60) -> str:
    """A path for a one-line message: a very long one is cut in the middle."""
    text = str(path)
    return repr(text) if len(text) <= limit else repr(text[:limit // 2] + "…" + text[-limit // 2:])


def report_directory_usable(directory: str) -> None:
    """Fail before the computation, not after it, when the report cannot be written: the
    missing folders are made and a file is created in the last one, and all of it is removed
    again, so that a refused or failed check leaves nothing behind."""
    import tempfile
    target = os.path.abspath(directory)
    missing, path = [], target
    try:
        while not os.path.lexists(path):
            missing.append(path)
            path = os.path.dirname(path)
        if not os.path.isdir(path):
            raise UsageError(f"--report {shown(directory)}: {shown(path)} is not a directory")
    except OSError as error:
        raise UsageError(f"--report {shown(directory)}: {error.strerror or error}") from None
    created = []
    try:
        for folder in reversed(missing):
            os.mkdir(folder)
            created.append(folder)
        with tempfile.TemporaryFile(dir=target):
            pass
    except OSError as error:
        raise UsageError(f"--report {shown(directory)}: cannot write there "
                         f"({error.strerror or error})") from None
    finally:
        for folder in reversed(created):
            try:
                os.rmdir(folder)
            except OSError:
                pass


def input_file_usable(option: str, path: str) -> None:
    """A file to be read: a name the system refuses (too long, a file used as a folder) is a
    one-line error naming the option; a missing file is left to the reader's own message."""
    try:
        os.stat(path)
    except FileNotFoundError:
        pass
    except OSError as error:
        raise UsageError(f"{option}{shown(path)}: {error.strerror or error}") from None


def emit(args, result: dict, human: str) -> None:
    if getattr(args, "json", False):
        print(json.dumps(result, indent=2, sort_keys=False))
    else:
        print(human)


# ---------------------------------------------------------------------------------------
# Subcommands

def cmd_relations(args) -> int:
    from ringmatch.reports.formulas import presentation_text
    _check_settings(args, [args.presentation])
    family = resolve_family(args.presentation, args)
    from .sizes import symbolic_estimate
    size_guard(args, f"relations {args.case.name}",
               symbolic_estimate(args.case, equivariant=not args.plain))
    presentation = build_symbolic(family, args.case, equivariant=not args.plain)
    if args.latex:
        from ringmatch.reports.tables import presentation_latex
        print(presentation_latex(presentation))
    else:
        print(presentation_text(presentation))
    return 0


def cmd_check(args) -> int:
    from ringmatch.reports.summary import check_text
    from .engine import check_case
    _check_settings(args, args.presentations)
    families = [resolve_family(name, args) for name in args.presentations]
    if not args.plain and args.prime - 2 < args.case.n:
        raise UsageError(f"--prime {args.prime} is too small for {args.case.n} distinct weights")
    if args.report is not None:
        report_directory_usable(args.report)
    from .sizes import check_estimate
    estimate = check_estimate(args.case, args.method, args.order, args.trials, len(families))
    size_guard(args, f"check {args.case.name}", estimate)
    result = limited_check(args, families, estimate.seconds)
    emit(args, result.to_json(), check_text(result))
    if args.report is not None:
        from ringmatch.reports.discrepancy import reproduce_command
        from . import parameters
        from .report_command import write_report
        command = " ".join([reproduce_command(result, args.presentations, args.method),
                            *parameters.shell_words(parameters.values_of(args))])
        paths = write_report(result, args.report, command=command,
                             families={f.name: f for f in families})
        print("report: " + " and ".join(map(str, paths)), file=sys.stderr)
    return verdict_status(result.verdict)


# Exit statuses of `check` and `sweep` for scripts (README, "What a verdict guarantees").
EXIT_STATUS = {"agree": 0, "disagree": 1, "consistent": 3, "inconclusive": 3}


EXIT_EPILOG = ("exit status: 0 agree (exact at a random specialisation), 1 disagree, "
               "3 consistent (Bethe points to order s^N only) or inconclusive, 2 bad input")


def verdict_status(verdict: str) -> int:
    """0 agree (exact), 1 disagree, 3 consistent or inconclusive; 2 is bad input."""
    return EXIT_STATUS.get(verdict, 3)


def limited_check(args, families, estimated_seconds: float):
    """check_case under --case-timeout/--case-memory, with a line per stage on stderr when
    a person may be waiting (a terminal, or an estimate of more than a few seconds)."""
    import random
    from .engine import check_case
    from .limited import Stopped, run_limited, stage_lines
    seed = args.seed if args.seed is not None else random.SystemRandom().randrange(2**32)

    def work():
        return check_case(args.case, families, seed=seed, prime=args.prime,
                          equivariant=not args.plain, order=args.order, trials=args.trials,
                          method=args.method, budget=args.budget)
    show = sys.stderr.isatty() or estimated_seconds > 10
    with stage_lines(f"check {args.case.name}", enabled=show):
        try:
            result = run_limited(work, seconds=args.case_timeout, memory_mib=args.case_memory)
        except OSError as error:
            raise UsageError(str(error)) from None
    if isinstance(result, Stopped):
        from .records import CaseResult, Certificate
        limits = {"seconds": args.case_timeout, "memory_mib": args.case_memory}
        result = CaseResult.undecided(
            args.case.name, args.case.rank, not args.plain, result.reason,
            Certificate(prime=args.prime, seed=seed, order=args.order, method=args.method,
                        limits=limits))
    return result


def cmd_presentations(args) -> int:
    from ringmatch.presentations import plugins, userfile
    if args.check is not None:
        if args.case_file is not None:
            raise UsageError("--check and --case-file exclude each other")
        from .conformance import check_family
        _check_settings(args, [args.check])
        result = check_family(resolve_family(args.check, args))
        emit(args, {"presentation": result.family, "conforms": result.conforms,
                    "cases": list(result.cases),
                    "not_supported": [{"case": c, "reason": r} for c, r in result.skipped],
                    "problem": result.problem}, result.text())
        return 0 if result.conforms else 1
    if args.case_file is None and (args.of is not None or args.plain):
        raise UsageError(f"{'--of' if args.of is not None else '--plain'} only goes with "
                         "--case-file CASE (it says how the case file is written)")
    if args.case_file is not None:
        args.of = args.of or "whitney"
        _check_settings(args, [args.of])
        family = resolve_family(args.of, args)
        from .sizes import symbolic_estimate
        size_guard(args, f"presentations --case-file {args.case_file.name}",
                   symbolic_estimate(args.case_file, equivariant=not args.plain))
        print(userfile.case_file_text(family, args.case_file, equivariant=not args.plain), end="")
        return 0
    lines = plugins.catalogue(FAMILIES, userfile.shipped_files())
    if args.json:
        print(json.dumps([line.__dict__ for line in lines], indent=2))
        return 0
    width = max(len(line.name) for line in lines)
    source_width = max(len(line.source) for line in lines)
    for line in lines:
        print(f"{line.name:<{width}}  {line.source:<{source_width}}  {line.description}")
    print(f"\nPlug-ins: entry-point group {plugins.ENTRY_POINT_GROUP!r}; files: any path to a "
          ".toml presentation file (docs/presentation-files.md).")
    return 0


def cmd_points(args) -> int:
    from .lifting import SingularJacobian, random_line_points, summary_text
    flag, prime = args.case, args.prime
    weights = line = None
    if args.weights is not None:
        weights = [w % prime for w in int_list("--weights", args.weights)]
        if len(weights) != flag.n:
            raise UsageError(f"--weights {args.weights!r}: {flag.name} needs {flag.n} weights, "
                             f"got {len(weights)}")
    elif prime - 2 < flag.n:
        raise UsageError(f"--prime {prime}: too small for {flag.n} distinct nonzero weights")
    if args.q_line is not None:
        line = [c % prime for c in int_list("--q-line", args.q_line)]
        if len(line) != flag.m:
            raise UsageError(f"--q-line {args.q_line!r}: {flag.name} has {flag.m} q parameter(s), "
                             f"got {len(line)} coefficients")
    from .sizes import points_estimate
    size_guard(args, f"points {flag.name}", points_estimate(flag, args.order))
    try:
        lifted = random_line_points(flag, args.order, seed=args.seed, prime=prime,
                                    weights=weights, q_line=line)
    except SingularJacobian as error:   # only given weights get here; drawn ones are redrawn
        raise UsageError(f"--weights {args.weights!r}: {error}") from None
    emit(args, lifted.record(), summary_text(lifted))
    return 0


def cmd_iso(args) -> int:
    from .iso import Bounds, IsoInputError, find_isomorphism
    from ringmatch.reports.isomorphism import as_json, as_text
    if args.json and args.latex:
        raise UsageError("--json and --latex exclude each other")
    if args.prime < 2**40:
        raise UsageError(f"--prime {args.prime}: iso needs a prime of at least 2^40 (further "
                         "primes are taken 2^32 apart below it)")
    _check_settings(args, [args.source, args.target])
    source, target = resolve_family(args.source, args), resolve_family(args.target, args)
    from .sizes import iso_estimate
    size_guard(args, f"iso {args.case.name}", iso_estimate(args.case, args.order))
    bounds = Bounds(max_degree=args.max_degree, max_terms=args.max_terms, order=args.order)
    try:
        result = find_isomorphism(args.case, source, target, bounds=bounds, seed=args.seed,
                                  prime=args.prime)
    except IsoInputError as error:
        raise UsageError(str(error)) from None
    if args.json:
        print(json.dumps(as_json(result), indent=2))
    else:
        symbol_latex = None
        if args.latex:   # the naming of `relations --latex` and of tables
            from ringmatch.reports.formulas import symbols_latex
            symbol_latex = {**symbols_latex(target.generators(args.case)),
                            **symbols_latex(source.generators(args.case))}
        print(as_text(result, latex=args.latex, symbol_latex=symbol_latex))
    return 0


def _output_command(words: List[str]) -> str:
    import shlex
    return shlex.join(["ringmatch", *words])


def add_selection_arguments(p) -> None:
    """table and figure: which rows of a store with several sweeps to show."""
    p.add_argument("--sweep", metavar="KEY",
                   help="only the rows of this sweep (the first digits of its key; a store "
                        "with several sweeps lists them on stderr)")
    p.add_argument("--presentations", dest="only_presentations", metavar="NAME,...",
                   help="only the rows that compared exactly these presentations")
    which = p.add_mutually_exclusive_group()
    which.add_argument("--equivariant", dest="only_equivariant", action="store_const",
                       const=True, help="only equivariant rows")
    which.add_argument("--plain", dest="only_equivariant", action="store_const", const=False,
                       help="only non-equivariant rows (T_j = 1)")


def _selection(args) -> tuple:
    """(keyword arguments of reports.frames.select_rows, the words that repeat them)."""
    names = None
    if args.only_presentations:
        names = tuple(t.strip() for t in args.only_presentations.split(",") if t.strip())
    words = ["--sweep", args.sweep] if args.sweep else []
    words += ["--presentations", args.only_presentations] if names else []
    words += {True: ["--equivariant"], False: ["--plain"], None: []}[args.only_equivariant]
    return {"sweep": args.sweep, "presentations": names,
            "equivariant": args.only_equivariant}, words


def _note_several_sweeps(store: str, selection: dict) -> None:
    """Rows of different settings side by side are easy to misread: say so, and how to pick."""
    if selection["sweep"]:
        return
    from ringmatch.reports.frames import load_rows, select_rows, sweep_description, sweeps_in
    sweeps = sweeps_in(select_rows(load_rows(store), **selection))
    if len(sweeps) > 1:
        print(f"ringmatch: note: {len(sweeps)} sweeps are shown together: "
              + "; ".join(sweep_description(s) for s in sweeps)
              + ". Choose one with --sweep KEY.", file=sys.stderr)


def _only_schubert_rows(path: str) -> bool:
    """A store holding Schubert tables (`schubert --store`) and no sweep rows."""
    if path.lower().endswith(".json"):
        return False
    from ringmatch.reports.frames import SourceError, load_rows, load_schubert_rows
    try:
        return bool(load_schubert_rows(path)) and not load_rows(path)
    except SourceError:
        return False


def cmd_table(args) -> int:
    from ringmatch.reports.frames import SourceError
    from ringmatch.reports.tables import TableError, TableOptions, parse_columns
    from .table_command import render
    input_file_usable("results store ", args.store)
    if args.schubert or _only_schubert_rows(args.store):
        from ringmatch.reports.tables import render_schubert
        command = _output_command(["table", args.store, "--schubert", "--format", args.format])
        try:
            sys.stdout.write(render_schubert(args.store, args.format, command=command))
        except (SourceError, TableError) as error:
            raise UsageError(str(error)) from None
        return 0
    selection, selection_words = _selection(args)
    words = ["table", args.store, "--format", args.format, *selection_words]
    words += ["--columns", args.columns] if args.columns else []
    words += ["--group-by-n"] if args.group_by_n else []
    words += ["--relations"] if args.relations else []
    words += ["--isomorphisms"] if args.isomorphisms else []
    words += ["--standalone"] if args.standalone else []
    words += ["--longtable"] if args.longtable else []
    words += ["--caption", args.caption] if args.caption else []
    words += ["--label", args.label] if args.label else []
    try:
        options = TableOptions(
            columns=parse_columns(args.columns) if args.columns else TableOptions.columns,
            group_by_n=args.group_by_n, relations=args.relations,
            isomorphisms=args.isomorphisms,
            standalone=args.standalone, command=_output_command(words),
            caption=args.caption, label=args.label, longtable=args.longtable, **selection)
        text = render(args.store, args.format, options)
        _note_several_sweeps(args.store, selection)
    except (SourceError, TableError) as error:
        raise UsageError(str(error)) from None
    sys.stdout.write(text)
    return 0


def cmd_figure(args) -> int:
    from ringmatch.reports.figures import FigureError, agreement_map
    from ringmatch.reports.frames import SourceError
    input_file_usable("results store ", args.store)
    selection, selection_words = _selection(args)
    words = ["figure", args.store, "--out", args.out, "--layout", args.layout, *selection_words]
    try:
        path = agreement_map(args.store, args.out, layout=args.layout,
                             command=_output_command(words), **selection)
        _note_several_sweeps(args.store, selection)
    except (SourceError, FigureError) as error:
        raise UsageError(str(error)) from None
    except OSError as error:
        raise UsageError(f"--out {shown(args.out)}: {error.strerror or error}") from None
    print(f"figure: {path}", file=sys.stderr)
    return 0


def _size_option(p) -> None:
    from .sizes import OVERRIDE
    p.add_argument(OVERRIDE, dest="no_size_limit", action="store_true",
                   help="start even when the size estimate says it takes hours (never "
                        "beyond the machine's memory)")


def size_guard(args, subject: str, estimate) -> None:
    """Refuse or announce by the size estimate, before anything is built."""
    from .sizes import guard
    guard(subject, estimate, allow_large=getattr(args, "no_size_limit", False))


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="ringmatch",
                     description="Compare presentations of quantum K-theory rings of flag varieties.")
    from ringmatch import __version__
    parser.add_argument("--version", action="version", version=f"ringmatch {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    from . import parameters

    p = sub.add_parser("relations", help="print the generators and relations of a presentation")
    p.add_argument("case", type=flag_argument, help="flag type, e.g. 'Fl(1,3;5)', 'Gr(2,5)', P4")
    p.add_argument("--presentation", default="whitney",
                   help=f"family name ({', '.join(sorted(FAMILIES))}); default whitney")
    p.add_argument("--plain", action="store_true", help="non-equivariant: all T_j = 1")
    p.add_argument("--latex", action="store_true", help="LaTeX instead of plain text")
    parameters.add_argument(p)
    _size_option(p)
    p.set_defaults(run=cmd_relations)

    p = sub.add_parser("check", help="decide whether presentations of one case agree",
                       epilog=EXIT_EPILOG)
    p.add_argument("case", type=flag_argument)
    p.add_argument("--presentations", type=presentation_list, default=["whitney"],
                   help="comma-separated family names; default whitney")
    p.add_argument("--seed", type=int, help="seed for the random specialisation (recorded)")
    p.add_argument("--prime", type=prime_argument, default=algebra.DEFAULT_PRIME)
    p.add_argument("--plain", action="store_true", help="non-equivariant: all T_j = 1")
    p.add_argument("--order", type=positive_int, default=None,
                   help="truncation order N of the Bethe points (relations checked mod s^N); "
                        "default: at least 6 and 2 + the largest q-degree among the relations")
    from .sweep_command import _positive_float
    p.add_argument("--budget", type=_positive_float, metavar="SECONDS",
                   help="time for the exact route's Gröbner bases; past it the pairs are at "
                        "most 'consistent' (default: no limit)")
    p.add_argument("--trials", type=positive_int, default=1,
                   help="independent primes/specialisations; all must agree")
    from .engine import METHODS
    p.add_argument("--method", choices=METHODS, default="auto",
                   help="auto (default): Bethe points first as a filter, then the exact "
                        "route (Gröbner bases at a specialisation) up to rank 5040; both: the "
                        "same at any rank; groebner: the exact route alone; points: Bethe "
                        "points alone (at most 'consistent')")
    p.add_argument("--json", action="store_true", help="one JSON object on stdout")
    from .sweep_command import _positive_float
    p.add_argument("--case-timeout", type=_positive_float, metavar="SECONDS",
                   help="stop after this many seconds: inconclusive (limit), as in a sweep")
    p.add_argument("--case-memory", type=positive_int, metavar="MiB",
                   help="memory the computation may allocate; beyond it, inconclusive (limit)")
    p.add_argument("--report", metavar="DIR",
                   help="also write a Markdown and a JSON report of the case into DIR")
    parameters.add_argument(p)
    _size_option(p)
    p.set_defaults(run=cmd_check)

    p = sub.add_parser("presentations",
                       help="list built-in, shipped and plug-in presentations, or write one "
                            "out as a case file")
    p.add_argument("--case-file", type=flag_argument, metavar="CASE",
                   help="instead of the list, print the presentation --of NAME for this flag "
                        "type as an editable case file")
    p.add_argument("--of", metavar="NAME",
                   help="presentation written by --case-file (name or file); default whitney")
    p.add_argument("--plain", action="store_true", help="with --case-file: all T_j = 1")
    p.add_argument("--check", metavar="NAME",
                   help="instead of the list, check that presentation NAME keeps the family "
                        "contract on P1, Gr(2;4), Fl(3) (meanings, relations in all three "
                        "rings, units, colength, relations at the Bethe points); exit status 1 "
                        "with the first problem")
    p.add_argument("--json", action="store_true", help="the list (or the --check result) as JSON")
    parameters.add_argument(p)
    _size_option(p)
    p.set_defaults(run=cmd_presentations)

    p = sub.add_parser("points", help="lift the torus-fixed points to Bethe points in F_p[[s]]")
    p.add_argument("case", type=flag_argument)
    p.add_argument("--weights", metavar="T1,...,Tn",
                   help="equivariant weights (distinct, nonzero mod p); random when omitted")
    p.add_argument("--q-line", metavar="C1,...,Cm",
                   help="q_i = C_i * s; random when omitted")
    p.add_argument("--prime", type=prime_argument, default=algebra.DEFAULT_PRIME)
    p.add_argument("--order", type=positive_int, default=8,
                   help="number of coefficients N of every root (mod s^N); default 8")
    p.add_argument("--seed", type=int, help="seed for the random weights / line (recorded)")
    p.add_argument("--json", action="store_true", help="one JSON object on stdout")
    _size_option(p)
    p.set_defaults(run=cmd_points)

    p = sub.add_parser("table", help="one row per case of a results store (or .json of check "
                                     "results) as LaTeX, CSV or Markdown")
    p.add_argument("store", help="results store of a sweep, or a .json file of check results")
    p.add_argument("--format", choices=["latex", "csv", "markdown"], default="markdown")
    p.add_argument("--columns", metavar="KEY,...",
                   help="columns in order (case, kind, n, rank, presentations, equivariant, "
                        "verdict, reason, method, order, trials, exactness, certificate, prime, "
                        "seed, seconds, sweep); default case,rank,presentations,equivariant,"
                        "verdict,certificate,seconds (LaTeX moves what every row shares into "
                        "the caption)")
    p.add_argument("--group-by-n", action="store_true", help="one block of rows per n")
    p.add_argument("--relations", action="store_true",
                   help="LaTeX/Markdown: print the relations of cases of rank ≤ 6 in display math")
    p.add_argument("--isomorphisms", action="store_true",
                   help="LaTeX/Markdown: for cases of rank ≤ 6, search the change of generators "
                        "between the first two presentations the search can take, at the "
                        "check's seed, and print it in display math")
    p.add_argument("--standalone", action="store_true",
                   help="LaTeX: a complete document rather than a fragment for \\input")
    p.add_argument("--longtable", action="store_true",
                   help="LaTeX, more than 30 rows: one longtable across pages (one-column "
                        "documents only) instead of floats of 30 rows, which also fit two "
                        "columns")
    p.add_argument("--caption", metavar="TEXT",
                   help="first sentence of the caption (default: what was compared); the "
                        "facts shared by every row and the verdict counts follow it")
    p.add_argument("--label", metavar="LABEL",
                   help="LaTeX \\label (default tab:ringmatch-<store name>)")
    p.add_argument("--schubert", action="store_true",
                   help="the Schubert multiplication tables stored by `ringmatch schubert "
                        "--store` (the default for a store holding nothing else)")
    add_selection_arguments(p)
    p.set_defaults(run=cmd_table)

    p = sub.add_parser("figure", help="agreement map of a results store: cases coloured by "
                                      "verdict (.png, .svg or .pdf)")
    p.add_argument("store", help="results store of a sweep, or a .json file of check results")
    p.add_argument("--out", required=True, metavar="FILE",
                   help="output file; the format follows the suffix .png, .svg or .pdf")
    p.add_argument("--layout", choices=["auto", "list", "steps", "grassmannian"],
                   default="auto",
                   help="list: one column per n, every case named; steps: n against the "
                        "number of subspaces; grassmannian: k against n; auto: list up to 40 "
                        "cases, else grassmannian when every case is one, else steps")
    add_selection_arguments(p)
    p.set_defaults(run=cmd_figure)

    p = sub.add_parser("iso", help="find an explicit isomorphism between two presentations: "
                                   "every generator of one as a formula in the other's")
    p.add_argument("case", type=flag_argument)
    p.add_argument("--from", dest="source", required=True, metavar="NAME",
                   help="presentation whose generators the formulas use")
    p.add_argument("--to", dest="target", required=True, metavar="NAME",
                   help="presentation whose generators are expressed")
    p.add_argument("--max-degree", type=non_negative_int, metavar="D",
                   help="monomials of total degree ≤ D only; default: up to the degree where "
                        "the monomials span the ring")
    p.add_argument("--max-terms", type=non_negative_int, default=4, metavar="K",
                   help="look for formulas with at most K terms first (default 4; 0: normal "
                        "forms only)")
    p.add_argument("--order", type=positive_int, default=16,
                   help="Bethe points mod s^N (default 16)")
    p.add_argument("--seed", type=int, help="seed for every random choice (recorded)")
    p.add_argument("--prime", type=prime_argument, default=algebra.DEFAULT_PRIME)
    p.add_argument("--json", action="store_true", help="one JSON object on stdout")
    p.add_argument("--latex", action="store_true", help="formulas in LaTeX")
    parameters.add_argument(p)
    _size_option(p)
    p.set_defaults(run=cmd_iso)

    from . import demo, sweep_command
    p = sub.add_parser("sweep", help="compare presentations on every flag type up to a size: "
                                     "stored, resumable, parallel, first counterexample",
                       epilog="exit status: 0 every case agrees (exactly), 1 some case "
                              "disagrees, 3 otherwise (consistent or inconclusive cases), "
                              "2 bad input")
    sweep_command.add_arguments(p, presentation_list=presentation_list,
                                prime_argument=prime_argument, positive_int=positive_int)
    p.set_defaults(run=sweep_command.command)

    from . import scan_command
    p = sub.add_parser("scan", help="a presentation file with integer parameters over cases × "
                                    "a grid of values: which values agree with a reference")
    scan_command.add_arguments(p, prime_argument=prime_argument, positive_int=positive_int)
    p.set_defaults(run=scan_command.command)

    p = sub.add_parser("demo", help="an invented scenario: established presentations agree, "
                                    "a conjecture's first counterexample is found and reported")
    demo.add_arguments(p, positive_int=positive_int)
    p.set_defaults(run=demo.command)

    from . import schubert_cli
    p = sub.add_parser("schubert", help="quantum K structure constants of a Schubert basis in "
                                        "a presentation, checked against geometry")
    schubert_cli.add_arguments(p, flag_argument=flag_argument,
                               presentation_list=presentation_list,
                               prime_argument=prime_argument, non_negative_int=non_negative_int)
    p.set_defaults(run=schubert_cli.command)
    return parser


def main(argv: Optional[List[str]] = None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
        if not getattr(args, "run", None):
            parser.print_help()
            return 2
        return args.run(args)
    except RingmatchError as error:
        print(f"ringmatch: {error}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("ringmatch: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        # The reader went away (e.g. `| head`); stop quietly like other command-line tools.
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 141


if __name__ == "__main__":
    # Run the package module, not this __main__ copy, so that there is one copy of its state.
    from ringmatch.compare.cli import main as package_main
    sys.exit(package_main())
