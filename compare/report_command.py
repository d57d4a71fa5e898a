"""`check --report` and the demo's counterexample: the discrepancy report, with what it needs
computed first.

The report (reports/discrepancy.py) writes the failing and witnessing relations out as
formulas; that takes rebuilding the presentations symbolically, which happens here, in the
command-line layer, and so does resolving presentation names for the reproduce command.
reports/discrepancy.py receives the results and only renders them.
"""
from __future__ import annotations

from typing import Dict, Iterable, List, Mapping, Optional, Tuple

from ringmatch.reports import discrepancy

from .records import CaseResult


def relation_formulas(result: CaseResult, families: Optional[Mapping[str, object]] = None
                      ) -> Dict[str, Dict[str, dict]]:
    """{presentation: {label: {"text", "latex"}}} for the failing and witnessing relations.

    The presentation is rebuilt symbolically (T and q as variables, or T = 1 for a plain
    check); `families` maps names to Family records for presentations that cannot be found
    by name (e.g. a family built in a script).  A presentation that cannot be rebuilt is
    left out and the report says so."""
    from ringmatch.presentations import get_family
    from ringmatch.presentations.flagtype import parse_flag
    from ringmatch.presentations.interface import build_symbolic
    from ringmatch.reports.formulas import formula, relation_latex, symbols_latex

    flag = parse_flag(result.case)
    out: Dict[str, Dict[str, dict]] = {}
    for name, labels in discrepancy.failing_labels(result).items():
        family = (families or {}).get(name)
        if family is None:
            try:
                family = get_family(name)
            except Exception:
                continue
        presentation = build_symbolic(family, flag, equivariant=result.equivariant)
        names = presentation.ring.ctx.names()
        # LaTeX shows generators by their meaning (λ_j(S_i), …), plain text by their names.
        symbol_latex = symbols_latex(presentation.generators)
        out[name] = {r.label: {"text": formula(r.poly, names) + " = 0",
                               "latex": relation_latex(r.poly, names, symbol_latex)}
                     for r in presentation.relations if r.label in labels}
    return out


def unresolvable_names(names: Iterable[str]) -> List[str]:
    """The names `ringmatch check --presentations` would not resolve."""
    from ringmatch.presentations import get_family
    missing = []
    for name in names:
        try:
            get_family(name)
        except Exception:   # any failure to resolve means the command needs a file path
            missing.append(name)
    return missing


def report_record(result: CaseResult, *, command: Optional[str] = None,
                  families: Optional[Mapping[str, object]] = None
                  ) -> discrepancy.DiscrepancyReport:
    """`reports.discrepancy.report_record` with the formulas and, when no command is given,
    the unresolvable names computed."""
    unresolvable = unresolvable_names(result.names) if command is None else []
    return discrepancy.report_record(result, command=command,
                                     formulas=relation_formulas(result, families),
                                     unresolvable=unresolvable)


def write_report(result: CaseResult, directory, *, command: Optional[str] = None,
                 families: Optional[Mapping[str, object]] = None) -> Tuple:
    """Write `<stem>.md` and `<stem>.json` for one `check_case` result into `directory`
    (created if needed) and return their paths.  `command` is the command line to show
    for reproduction (by default one rebuilt from the certificate); `families` maps
    presentation names to Family records that cannot be found by name."""
    unresolvable = unresolvable_names(result.names) if command is None else []
    return discrepancy.write_report(result, directory, command=command,
                                    formulas=relation_formulas(result, families),
                                    unresolvable=unresolvable)
