"""`ringmatch table`: what a table prints beyond the stored rows, computed before rendering.

The relations of small cases need their presentations rebuilt, and `--isomorphisms` runs the
finder (compare/iso.py) on two presentations of each small case, at a seed taken from the
stored certificate.  Both happen here, in the command-line layer; reports/tables.py receives
the results (`CaseRelations`, `CaseIsomorphism` records) and only renders them.
"""
from __future__ import annotations

import zlib
from dataclasses import replace
from typing import List, Optional, Sequence, Tuple

from ringmatch.reports.frames import Source
from ringmatch.reports.tables import (CaseIsomorphism, CaseRelations, Table, TableOptions,
                                      build_table, check_format, render_table)


def render(source: Source, fmt: str, options: TableOptions = TableOptions()) -> str:
    """The table of `source` in `fmt` (latex, csv, markdown), with the relations and
    isomorphisms of small cases computed first when the options ask for them."""
    return render_table(prepared_table(source, fmt, options), fmt,
                        _for_format(fmt, options))


def _for_format(fmt: str, options: TableOptions) -> TableOptions:
    check_format(fmt)
    if fmt == "csv":      # no display math in CSV: do not spend the searches
        return replace(options, relations=False, isomorphisms=False)
    return options


def prepared_table(source: Source, fmt: str = "latex",
                   options: TableOptions = TableOptions()) -> Table:
    """The table with its relations and isomorphisms computed (as `fmt` prints them)."""
    options = _for_format(fmt, options)
    table = build_table(source, options)
    if options.relations:
        table.relations = [found for row in table.rows
                           for found in case_relations(row, options.relations_max_rank)]
    if options.isomorphisms:
        searched = (case_isomorphism(row, options.isomorphisms_max_rank) for row in table.rows)
        table.isomorphisms = [found for found in searched if found is not None]
    return table


def _equivariant(row: dict) -> bool:
    result = row.get("result")         # a compare.records.CaseResult
    return True if result is None else result.equivariant


# ---------------------------------------------------------------------------------------
# Relations of small cases

def case_relations(row: dict, max_rank: int) -> List[CaseRelations]:
    """Each presentation of a small case rebuilt symbolically; a name that cannot be rebuilt
    here gets a record without a presentation."""
    from ringmatch.presentations import get_family
    from ringmatch.presentations.flagtype import parse_flag
    from ringmatch.presentations.interface import build_symbolic
    flag = parse_flag(row["case"])
    if flag.rank > max_rank:
        return []
    equivariant = _equivariant(row)
    out = []
    for name in row["presentations"]:
        try:
            family = get_family(name)
            presentation = build_symbolic(family, flag, equivariant=equivariant)
        except Exception:   # a file that moved, a plug-in not installed here
            out.append(CaseRelations(row["case"], name))
            continue
        out.append(CaseRelations(row["case"], family.name, presentation))
    return out


# ---------------------------------------------------------------------------------------
# Isomorphisms of small cases

def finder_problem(family, flag) -> Optional[str]:
    """Why compare.iso cannot take this presentation's generators, or None."""
    from . import points
    reason = family.unsupported(flag)
    if reason:
        return f"no presentation for {flag.name}: {reason}"
    generators = family.generators(flag)
    if any(not g.meaning.kind_record.symmetric for g in generators):
        # compare/iso.py: a Chern root is not symmetric in the weights, so it has no formula
        # with coefficients rational in T and q.
        return "its generators are Chern roots, which have no formula of the form the finder " \
               "looks for (coefficients rational in T and q)"
    for g in generators:
        problem = points.meaning_problem(g.meaning, flag)
        if problem:
            return f"generator {g.name}: {problem}"
    return None


def isomorphism_seed(row: dict) -> Tuple[int, str]:
    """The seed of the check's first trial, so that the table is reproducible from the store;
    a row without one gets a seed fixed by its case name."""
    result = row.get("result")
    seed = None if result is None else result.certificate.seed
    if seed is not None:
        return int(seed) % 2**32, "the check's seed"
    return zlib.crc32(row["case"].encode()), "CRC-32 of the case name (no seed stored)"


def case_isomorphism(row: dict, max_rank: int) -> Optional[CaseIsomorphism]:
    """Search the first two presentations of a small case that the finder can take; None for
    cases above max_rank or with fewer than two presentations."""
    from ringmatch.presentations import get_family
    from ringmatch.presentations.flagtype import parse_flag
    from ringmatch.presentations.interface import PresentationError
    from ringmatch.reports.formulas import generator_latex
    from .iso import IsoInputError, find_isomorphism
    flag = parse_flag(row["case"])
    names = list(row["presentations"])
    if flag.rank > max_rank or len(names) < 2:
        return None
    found = CaseIsomorphism(row["case"], [])
    if not _equivariant(row):
        found.note = "not equivariant: the fixed points collide when every T_j = 1, and the " \
                     "finder evaluates at them"
        return found
    families = []
    for name in names:
        if len(families) == 2:
            break
        try:
            family = get_family(name)
            problem = finder_problem(family, flag)
        except Exception as error:   # a file that moved, a plug-in not installed here
            family, problem = None, f"presentation not available here ({error})"
        if problem:
            found.skipped.append((name, problem))
        else:
            families.append(family)
    if len(families) < 2:
        found.note = "fewer than two presentations the finder can take"
        return found
    source, target = families
    found.pair = (source.name, target.name)
    found.seed, found.seed_origin = isomorphism_seed(row)
    try:
        found.result = find_isomorphism(flag, source, target, seed=found.seed)
    except (PresentationError, IsoInputError) as error:
        found.note = f"the finder cannot compare {source.name} with {target.name}: {error}"
        return found
    meanings = {}
    for family in families:
        for g in family.generators(flag):
            meanings.setdefault(g.name, generator_latex(g))
    found.legend = sorted(meanings.items())
    return found
