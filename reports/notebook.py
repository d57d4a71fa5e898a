"""Notebook display: small records that Jupyter renders as tables and formulas.

Each record has `_repr_html_`, `_repr_latex_` and `_repr_markdown_`; nothing here imports
IPython, so the module is as cheap to import in a script as in a notebook.  The records hold
what they show, computed beforehand (reports never compute): make them with the functions of
`ringmatch.compare.notebook`, which load the table, write the relations out or rebuild the
presentation first.

    from ringmatch.compare.notebook import results_view, check_view, relations_view
    results_view("runs.db")                 # the appendix table, as HTML
    check_view(result)                      # one `check_case` result with its witnesses
    relations_view("whitney", "Fl(3)")      # the relations in display math
"""
from __future__ import annotations

import html
from dataclasses import dataclass, field
from typing import List, Optional

from .discrepancy import DiscrepancyReport
from .tables import Table, TableOptions, latex_table, markdown_table


def _html_table(headings: List[str], rows: List[List[str]]) -> str:
    head = "".join(f"<th>{html.escape(h)}</th>" for h in headings)
    body = "".join("<tr>" + "".join(f"<td>{html.escape(str(v))}</td>" for v in row) + "</tr>"
                   for row in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


@dataclass
class ResultsView:
    """The appendix table of a store (or rows), shown in a notebook; the table as prepared by
    `compare.table_command.prepared_table` (with its relations and isomorphisms)."""
    table: Table
    options: TableOptions = field(default_factory=TableOptions)

    def _table(self) -> Table:
        return self.table

    def _repr_html_(self) -> str:
        table = self._table()
        parts = []
        for n, rows in table.groups:
            if n is not None:
                parts.append(f"<h4>n = {n}</h4>")
            parts.append(_html_table([c.heading for c in table.headings], rows))
        return "\n".join(parts)

    def _repr_latex_(self) -> str:
        return latex_table(self._table(), self.options)

    def _repr_markdown_(self) -> str:
        return markdown_table(self._table(), self.options)


@dataclass
class CheckView:
    """One `check_case` result: verdict, presentations, pairs and witnesses, from its
    discrepancy report (`compare.report_command.report_record`, a
    `reports.discrepancy.DiscrepancyReport`)."""
    record: DiscrepancyReport

    def _record(self) -> DiscrepancyReport:
        return self.record

    def _repr_markdown_(self) -> str:
        from .discrepancy import markdown_text
        return markdown_text(self._record())

    def _repr_html_(self) -> str:
        from .discrepancy import fixed_point_text
        report = self._record()
        result = report.result
        parts = [f"<p><b>{html.escape(result.case)}</b>: {html.escape(result.verdict)} "
                 f"— {html.escape(result.reason)}</p>",
                 _html_table(["presentation", "colength", "colength at q = 0", "holds",
                              "complete"],
                             [[name, p.colength, p.classical_colength, p.holds, p.complete]
                              for name, p in result.presentations.items()])]
        if result.pairs:
            parts.append(_html_table(["first", "second", "verdict", "method", "reason"],
                                     [[p.a, p.b, p.verdict, p.method, p.reason]
                                      for p in result.pairs]))
        for name, f in report.failed_relations():
            text = report.formula(name, f.relation)
            formula = f" <code>{html.escape(text)}</code>" if text else ""
            parts.append(f"<p>{html.escape(name)} [{html.escape(f.relation)}] "
                         f"fails at the Bethe points over "
                         f"{html.escape(fixed_point_text(f.fixed_point))}{formula}</p>")
        return "\n".join(parts)

    def _repr_latex_(self) -> Optional[str]:
        report = self._record()
        failed = [(name, f.relation, report.formula(name, f.relation, "latex"))
                  for name, f in report.failed_relations()]
        failed = [item for item in failed if item[2]]
        if not failed:
            return None     # Jupyter then falls back to HTML
        lines = [r"\begin{aligned}"]
        from .tables import label_latex, latex_escape
        lines += [rf"&\text{{{latex_escape(name)} [{label_latex(relation)}]: }}"
                  rf" && {latex} \\" for name, relation, latex in failed]
        return "$$" + "\n".join(lines) + r"\end{aligned}$$"


@dataclass
class RelationsView:
    """A presentation's relations for one flag type, rendered as display math; the
    presentation as built symbolically (`presentations.interface.Presentation`)."""
    presentation: object

    def _built(self):
        return self.presentation

    def _repr_latex_(self) -> str:
        from .formulas import symbols_latex
        from .tables import label_latex, relation_latex_lines
        built = self._built()
        symbol_latex = symbols_latex(built.generators)
        names = built.ring.ctx.names()
        rows = []
        for r in built.relations:
            # a notebook is about as wide as a page, two columns
            parts = relation_latex_lines(r.poly, names, symbol_latex, left_units=-40.0)
            rows.append(rf"\text{{[{label_latex(r.label)}]}}\quad & " + r" \\ & \quad ".join(parts))
        return r"$$\begin{aligned}" + r" \\ ".join(rows) + r"\end{aligned}$$"

    def _repr_markdown_(self) -> str:
        from .formulas import presentation_text
        return "```\n" + presentation_text(self._built()) + "\n```"
