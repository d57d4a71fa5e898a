"""Notebook display of results: the views of `reports.notebook`, with what they show computed
first (the table and its relations and isomorphisms, a check's relations written out, a
presentation rebuilt).  Nothing here imports IPython.

    from ringmatch.compare.notebook import results_view, check_view, relations_view
    results_view("runs.db")                 # the appendix table, as HTML
    check_view(result)                      # one `check_case` result with its witnesses
    relations_view("whitney", "Fl(3)")      # the relations in display math
"""
from __future__ import annotations

from ringmatch.reports.frames import Source
from ringmatch.reports.notebook import CheckView, RelationsView, ResultsView
from ringmatch.reports.tables import TableOptions


def results_view(source: Source, **options) -> ResultsView:
    """`options` are the fields of `reports.tables.TableOptions` (columns, group_by_n, …)."""
    from .table_command import prepared_table
    if "columns" in options:
        options["columns"] = tuple(options["columns"])
    chosen = TableOptions(**options)
    return ResultsView(prepared_table(source, "latex", chosen), chosen)


def check_view(result) -> CheckView:
    """`result`: a `compare.records.CaseResult` (or its JSON form)."""
    from .records import as_case_result
    from .report_command import report_record
    return CheckView(report_record(as_case_result(result)))


def relations_view(presentation: str, case: str, *, equivariant: bool = True) -> RelationsView:
    from ringmatch.presentations import get_family
    from ringmatch.presentations.flagtype import parse_flag
    from ringmatch.presentations.interface import build_symbolic
    family = get_family(presentation)
    return RelationsView(build_symbolic(family, parse_flag(case), equivariant=equivariant))
