"""The `ringmatch schubert` subcommand: Schubert structure constants of one case.

Exit status: 0 when every check passes (and, with several presentations, their tables agree;
with `--basis all`, when some candidate passes every check), 1 when a check fails, 3 when
nothing fails but a case of a run over cases was stopped by --case-timeout/--case-memory, 2
for a usage error.
"""
from __future__ import annotations

import json
import os
import re

from ringmatch.errors import InputError
from ringmatch.presentations import get_family
from ringmatch.presentations import schubert_bases as sb
from ringmatch.presentations import schubert_files

from . import algebra
from . import limited
from . import schubert as engine


def _values(args) -> dict:
    """The --set values for presentation files with parameters (compare/parameters.py)."""
    from . import parameters
    return parameters.resolved(args, args.presentation)


def add_arguments(p, *, flag_argument, presentation_list, prime_argument, non_negative_int) -> None:
    from . import parameters
    parameters.add_argument(p)
    p.add_argument("case", type=flag_argument, nargs="?",
                   help="e.g. 'Gr(2,5)', P3, or a partial flag with a basis file")
    p.add_argument("--up-to", type=non_negative_int, metavar="N",
                   help="instead of one case, every Grassmannian Gr(k;n) with n <= N, smallest "
                        "first: one line (or JSON object) per case")
    p.add_argument("--cases", metavar="CASE;CASE…",
                   help="instead of one case, these cases in sweep order (separated by ';', "
                        "e.g. 'P2;Gr(2,4);Gr(2,5)'): one line (or JSON object) per case")
    p.add_argument("--stop-at-first", action="store_true",
                   help="with --up-to or --cases: stop at the first case where a check fails")
    from .sweep_command import _positive_float
    p.add_argument("--case-timeout", type=_positive_float, metavar="SECONDS",
                   help="with --up-to or --cases: stop a case after this many seconds; it is "
                        "reported as not decided, not stored, and the run goes on (exit "
                        "status 3 when nothing fails but a case was stopped)")
    p.add_argument("--case-memory", type=non_negative_int, metavar="MiB",
                   help="with --up-to or --cases: memory one case may allocate; beyond it, "
                        "as --case-timeout")
    p.add_argument("--store", metavar="FILE",
                   help="with --up-to or --cases: keep each case's result (every constant, the "
                        "checks) as a row of this results store (SQLite); cases stored there "
                        "under the same settings are read back, not computed again; "
                        "`ringmatch table FILE --schubert` renders the tables")
    p.add_argument("--presentation", type=presentation_list, default=["whitney"],
                   metavar="NAME[,NAME…]",
                   help="presentation(s) to compute in; with two or more, their tables are "
                        "also compared (default whitney)")
    p.add_argument("--basis", default=None, metavar="BASIS",
                   help="auto (Grassmannians: the first built-in candidate passing every "
                        "check), all (report every built-in candidate), one of "
                        + ", ".join(c.name for c in sb.CANDIDATES)
                        + ", or a .toml file with a [schubert] table; default: the "
                          "presentation file's own [schubert] table, else auto")
    p.add_argument("--seed", type=int, help="seed for the random q values (recorded)")
    p.add_argument("--prime", type=prime_argument, default=algebra.DEFAULT_PRIME,
                   help="a prime of at least 2^40 (the integer lifting needs room)")
    p.add_argument("--q-degree", type=non_negative_int, metavar="D",
                   help="stated bound on the q-degree of the constants (default min(k, n-k) "
                        "for Gr(k;n), n-1 otherwise); the interpolation must stabilise below "
                        "D+1")
    p.add_argument("--equivariant", action="store_true",
                   help="T at random residues (recorded): coefficients mod p, and only the "
                        "basis, finiteness and classical-ring checks")
    p.add_argument("--json", action="store_true", help="one JSON object on stdout")
    p.add_argument("--latex", action="store_true", help="a LaTeX fragment for an appendix")
    p.add_argument("--out", metavar="DIR",
                   help="also write each case's result as DIR/<case>.json and a LaTeX fragment "
                        "DIR/<case>.tex; with --up-to, cases already there under the same "
                        "settings are read back, so an interrupted run resumes")
    p.add_argument("--checks-only", action="store_true",
                   help="text: leave out the multiplication table")


def command(args) -> int:
    from ringmatch.errors import UsageError
    try:
        return _run(args)
    except InputError as error:
        raise UsageError(str(error)) from None


def _basis_for(args, flag, presentation_name: str, family=None):
    choice = args.basis
    if choice is None:
        if presentation_name.endswith(".toml") and \
                schubert_files.has_schubert_table(presentation_name):
            choice = presentation_name
        elif flag.is_grassmannian:
            choice = "auto"
        else:
            raise engine.SchubertError(f"{flag.name} is not a Grassmannian: give a basis "
                                       "file with --basis FILE.toml ([schubert] table)")
    if choice in ("auto", "all"):
        if not flag.is_grassmannian:
            raise engine.SchubertError(f"--basis {choice}: the built-in candidates are for "
                                       "Grassmannians only")
        return choice
    if choice.startswith("groth:"):
        return engine.candidate_basis(flag, sb.candidate_named(choice))
    if not choice.endswith(".toml"):
        sb.candidate_named(choice)      # raises the one-line list of known names
    generators = family.generators(flag) if family is not None and \
        not family.unsupported(flag) else ()
    loaded = schubert_files.load_basis(choice, flag, generators)
    if loaded.candidate is not None:
        basis = engine.candidate_basis(flag, loaded.candidate)
        return engine.Basis(loaded.name, basis.labels, loaded.candidate,
                            source=f"{loaded.source}: {basis.source}")
    return engine.Basis(loaded.name, loaded.labels, polynomials=loaded.polynomials,
                        source=loaded.source, classical=loaded.classical)


def _run(args) -> int:
    from ringmatch.reports import schubert as report
    if args.json and args.latex:
        raise engine.SchubertError("--json and --latex exclude each other")
    if args.prime < 2**40:
        raise engine.SchubertError(f"--prime {args.prime}: needs a prime of at least 2^40")
    cases = getattr(args, "cases", None)
    if [args.case is not None, args.up_to is not None, cases is not None].count(True) != 1:
        raise engine.SchubertError("give one case, --up-to N or --cases 'A;B' (one of them)")
    if getattr(args, "store", None) is not None and args.case is not None:
        raise engine.SchubertError("--store goes with --up-to or --cases")
    for option, value in (("--case-timeout", args.case_timeout),
                          ("--case-memory", args.case_memory)):
        if value is not None and args.case is not None:
            raise engine.SchubertError(f"{option} goes with --up-to or --cases")
    if args.case_memory == 0:
        raise engine.SchubertError("--case-memory 0: give a positive number of MiB")
    if args.out is not None:
        _usable_folder(args.out)
    if args.up_to is not None or cases is not None:
        return _sweep(args, report)
    flag = args.case
    if args.basis == "all":
        options = dict(seed=args.seed, prime=args.prime, degree_bound=args.q_degree,
                       equivariant=args.equivariant)
        return _all_candidates(args, flag, options, report)
    results, comparisons = _case(args, flag, args.seed)
    payload = _payload(report, results, comparisons)
    if args.json:
        print(json.dumps(payload, indent=2))
    elif args.latex:
        print("\n\n".join(report.as_latex(r) for r in results))
    else:
        texts = [report.as_text(r, table=not args.checks_only) for r in results]
        texts += [report.comparison_text(c["first"], c["second"], c["difference"],
                                         c["classes"]) for c in comparisons]
        print("\n\n".join(texts))
    ok = _passed(results, comparisons)
    if args.out is not None:
        _write(args, flag, report, results, payload, ok)
    return 0 if ok else 1


def _case(args, flag, seed):
    """Every presentation at the same q values; the tables of the later ones compared with
    the first's."""
    results, bases = [], []
    for name in args.presentation:
        family = get_family(name, _values(args))
        basis = _basis_for(args, flag, name, family)
        options = dict(seed=seed, prime=args.prime, degree_bound=args.q_degree,
                       equivariant=args.equivariant)
        result = engine.choose_candidate(flag, family, **options) if basis == "auto" \
            else engine.structure_constants(flag, family, basis, **options)
        seed = result.certificate["seed"] if seed is None else seed
        results.append(result)
        bases.append((family, result.basis))
    comparisons = []
    for other, pair in zip(results[1:], bases[1:]):
        classes = None if args.equivariant else engine.same_classes(
            flag, bases[0], pair, seed=seed, prime=args.prime)
        comparisons.append({"first": results[0], "second": other,
                            "difference": engine.first_difference(results[0], other),
                            "classes": classes})
    return results, comparisons


def _passed(results, comparisons) -> bool:
    return all(r.passed for r in results) and all(c["difference"] is None for c in comparisons)


def _payload(report, results, comparisons) -> dict:
    if len(results) == 1:
        return report.as_json(results[0])
    return {"runs": [report.as_json(r) for r in results],
            "comparisons": [{"first": c["first"].presentation,
                             "second": c["second"].presentation,
                             "same_table": c["difference"] is None,
                             "difference": c["difference"],
                             "same_classes": None if c["classes"] is None
                             else c["classes"]["same"],
                             "classes": c["classes"]} for c in comparisons]}


# ---------------------------------------------------------------------------------------
# --out: one JSON and one LaTeX file per case, reused when the settings match

def _usable_folder(folder: str) -> None:
    path = os.path.abspath(folder)
    while not os.path.exists(path):
        path = os.path.dirname(path)
    if not os.path.isdir(path) or not os.access(path, os.W_OK):
        raise engine.SchubertError(f"--out {folder!r}: {path} is not a writable folder")


def _settings(args) -> dict:
    return {"presentations": list(args.presentation), "basis": args.basis, "seed": args.seed,
            "prime": args.prime, "q_degree": args.q_degree, "equivariant": args.equivariant}


def _stem(args, flag) -> str:
    return os.path.join(args.out, re.sub(r"[^A-Za-z0-9]+", "_", flag.name).strip("_"))


def _stored(args, flag):
    """The stored summary of this case under the same settings, or None."""
    try:
        with open(_stem(args, flag) + ".json", encoding="utf-8") as handle:
            stored = json.load(handle)
    except (OSError, ValueError):
        return None
    if not isinstance(stored, dict) or stored.get("settings") != _settings(args):
        return None
    return stored


def _write(args, flag, report, results, payload, ok) -> None:
    os.makedirs(args.out, exist_ok=True)
    stem = _stem(args, flag)
    record = {"settings": _settings(args), "case": flag.name, "passed": ok, "result": payload}
    # Written to a temporary name first, so that an interrupted run leaves no half file that
    # a resumed run would trust.
    for suffix, text in ((".tex", "\n\n".join(report.as_latex(r) for r in results) + "\n"),
                         (".json", json.dumps(record, indent=2) + "\n")):
        with open(stem + suffix + ".part", "w", encoding="utf-8") as handle:
            handle.write(text)
        os.replace(stem + suffix + ".part", stem + suffix)


def _all_candidates(args, flag, options, report) -> int:
    if not flag.is_grassmannian:
        raise engine.SchubertError("--basis all: the built-in candidates are for Grassmannians")
    outcomes, payload = {}, []
    for name in args.presentation:
        family = get_family(name, _values(args))
        quotients: dict = {}        # the same q values for every candidate: one basis per q
        for candidate in sb.CANDIDATES:
            result = engine.structure_constants(flag, family,
                                                engine.candidate_basis(flag, candidate),
                                                quotients=quotients, **options)
            options["seed"] = result.certificate["seed"]
            label = candidate.name if len(args.presentation) == 1 else \
                f"{candidate.name} in {family.name}"
            outcomes[label] = [c["name"] for c in result.checks if not c["passed"]]
            payload.append({"presentation": family.name, "basis": candidate.name,
                            "checks": {c["name"]: c["passed"] for c in result.checks},
                            "passed": result.passed})
    if args.json:
        print(json.dumps({"case": flag.name, "candidates": payload,
                          "seed": options["seed"]}, indent=2))
    else:
        print(report.candidates_text(flag.name, outcomes))
    return 0 if any(not failed for failed in outcomes.values()) else 1


def _sweep(args, report) -> int:
    """Every Gr(k;n), n ≤ N (or the --cases), smallest first, in each presentation with the
    chosen basis; with --store (else --out), cases already there under the same settings are
    read back instead of recomputed, and each computed case is stored as it ends."""
    import time
    if args.latex or args.basis == "all":
        raise engine.SchubertError("--up-to and --cases print a summary: use them without "
                                   "--latex and --basis all")
    flags = _sweep_flags(args)
    conn, settings = _open_store(args)
    stored_rows = {} if conn is None else _stored_rows(conn, settings)
    run = None
    failed = undecided = False
    try:
        for flag in flags:
            stored = _stored(args, flag) if args.out is not None and conn is None else None
            row = stored_rows.get(flag.name)
            if row is not None:
                ok, line = row["passed"], f"{flag.name:<10} stored in {args.store}: " + (
                    "all checks pass" if row["passed"] else "a check fails")
                summary = {"case": flag.name, "passed": ok, "stored": True}
            elif stored is not None:
                ok, line = stored["passed"], f"{flag.name:<10} stored in {args.out}: " + (
                    "all checks pass" if stored["passed"] else "a check fails")
                summary = {"case": flag.name, "passed": ok, "stored": True}
            else:
                started = time.monotonic()
                outcome = limited.run_limited(lambda: _computed_case(args, flag, report),
                                              seconds=args.case_timeout,
                                              memory_mib=args.case_memory)
                seconds = time.monotonic() - started
                if isinstance(outcome, limited.Stopped):
                    # Not stored: a later run (perhaps with a larger limit) computes it.
                    ok, undecided = True, True
                    summary = {"case": flag.name, "passed": None, "stopped": outcome.reason}
                    line = (f"{flag.name:<10} not decided ({outcome.reason}); not stored, "
                            "so a later run computes it again")
                else:
                    ok, summary, line = outcome["ok"], outcome["summary"], outcome["line"]
                    if conn is not None:
                        from . import store
                        run = run or store.run_record()
                        store.save_schubert(conn, settings, flag.name, outcome["payload"], ok,
                                            seconds, run=run)
            print(json.dumps(summary) if args.json else line, flush=True)
            failed = failed or not ok
            if failed and args.stop_at_first:
                return 1
    finally:
        if conn is not None:
            from . import store
            store.release(conn)
            conn.close()
    return 1 if failed else 3 if undecided else 0


def _computed_case(args, flag, report) -> dict:
    """One case of a sweep, computed (under --case-timeout/--case-memory in a child process,
    so what comes back is plain data): the summary, its line, the payload to store, and the
    --out files written."""
    results, comparisons = _case(args, flag, args.seed)
    ok = _passed(results, comparisons)
    differences = [c["difference"] for c in comparisons]
    summary = {"case": flag.name, "passed": ok,
               "runs": [{"presentation": r.presentation, "basis": r.basis.name,
                         "checks": {c["name"]: c["passed"] for c in r.checks}}
                        for r in results],
               "same_table": all(d is None for d in differences)}
    line = f"{flag.name:<10} " + "; ".join(
        f"{r.presentation}/{r.basis.name}: " + (
            "all checks pass" if r.passed else "fails " + ", ".join(
                c["name"] for c in r.checks if not c["passed"]))
        for r in results)
    if differences:
        line += "; tables " + ("agree" if all(d is None for d in differences) else "DIFFER")
    payload = _payload(report, results, comparisons)
    if args.out is not None:
        _write(args, flag, report, results, payload, ok)
    return {"ok": ok, "summary": summary, "line": line, "payload": payload}


def _sweep_flags(args) -> list:
    """The cases of --up-to (every Gr(k;n), n ≤ N) or --cases, in sweep order, no repeats."""
    from ringmatch.presentations.flagtype import FlagType, parse_flag
    from .cases import case_order
    if args.up_to is not None:
        return [FlagType((k,), n) for n in range(2, args.up_to + 1) for k in range(1, n)]
    flags = {}
    for word in args.cases.split(";"):
        if word.strip():
            flag = parse_flag(word.strip())
            flags.setdefault(flag.name, flag)
    if not flags:
        raise engine.SchubertError(f"--cases {args.cases!r}: no case named")
    return sorted(flags.values(), key=case_order)


def _open_store(args):
    """(connection, settings) of --store, claimed for this run; (None, None) without it."""
    if getattr(args, "store", None) is None:
        return None, None
    from . import store
    settings = store.schubert_settings(args.presentation, basis=args.basis, seed=args.seed,
                                       prime=args.prime, q_degree=args.q_degree,
                                       equivariant=args.equivariant, values=_values(args))
    conn = store.open_schubert_store(args.store)
    try:
        store.claim(conn)
    except BaseException:
        conn.close()
        raise
    return conn, settings


def _stored_rows(conn, settings) -> dict:
    from . import store
    return store.stored_schubert(conn, settings)
