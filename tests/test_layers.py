"""The package's layers point only down (docs: DEVELOPERS.md, "Layers").

    algebra → presentations → engine → reports → command line

A module may import from its own layer and the layers before it in this list, never from a
later one, and no two modules may import each other in a cycle.  The imports are read from
the source with `ast`, including imports inside functions (a deferred import is still a
dependency; deferring it only hides a cycle from the interpreter).  Nothing is imported
here, so a broken module still gets its edges checked.
"""
from __future__ import annotations

import ast
from pathlib import Path
from typing import Dict, Iterator, List, Set, Tuple

ROOT = Path(__file__).resolve().parent.parent

# Folder of the repository → package it is installed as (pyproject.toml, package-dir).
PACKAGES = {"ringmatch": "ringmatch", "compare": "ringmatch.compare",
            "presentations": "ringmatch.presentations", "reports": "ringmatch.reports"}

LAYERS = ("algebra", "presentations", "engine", "reports", "command line")

# Modules of compare/ outside the engine layer; every other compare module is engine, except
# that subcommand modules (*_cli, *_command) and the demo's (demo*) are the command line.
ALGEBRA = {"ringmatch", "ringmatch.errors", "ringmatch.compare", "ringmatch.compare.algebra",
           "ringmatch.compare.series", "ringmatch.compare.ideal_division",
           "ringmatch.compare.groebner", "ringmatch.compare.reconstruct"}
COMMAND_LINE = {"ringmatch.compare.cli", "ringmatch.compare.demo", "ringmatch.compare.notebook"}

# Known violations, to be removed as they are fixed; the test fails when an entry is no
# longer needed, so the list can only shrink.  Empty: keep it so.
ALLOWED: Set[Tuple[str, str]] = set()

# The engine compares families through their meanings only (compare/transport.py), so it
# may use the registry and the shared helpers but not one family's own module.
FAMILY_MODULES = {"ringmatch.presentations.whitney", "ringmatch.presentations.vieta",
                  "ringmatch.presentations.toda", "ringmatch.presentations.bethe"}


def layer_of(module: str) -> str:
    if module in ALGEBRA:
        return "algebra"
    if module in COMMAND_LINE or module.startswith("ringmatch.compare.") and (
            module.endswith(("_cli", "_command")) or module.startswith("ringmatch.compare.demo")):
        return "command line"
    if module == "ringmatch.presentations" or module.startswith("ringmatch.presentations."):
        return "presentations"
    if module == "ringmatch.reports" or module.startswith("ringmatch.reports."):
        return "reports"
    if module.startswith("ringmatch.compare."):
        return "engine"
    raise AssertionError(f"{module}: in no layer; add it to tests/test_layers.py")


def modules() -> Dict[str, Path]:
    found = {}
    for folder, package in PACKAGES.items():
        for path in sorted((ROOT / folder).glob("*.py")):
            found[package if path.stem == "__init__" else f"{package}.{path.stem}"] = path
    return found


def imported(module: str, path: Path, known: Set[str]) -> Iterator[Tuple[str, int]]:
    """(imported module of ours, line) for every import statement in the file."""
    package = module if path.stem == "__init__" else module.rpartition(".")[0]
    for node in ast.walk(ast.parse(path.read_text(), str(path))):
        if isinstance(node, ast.Import):
            targets = [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[:len(base) - node.level + 1]
                stem = ".".join(base + ([node.module] if node.module else []))
            else:
                stem = node.module or ""
            # `from pkg import name` depends on pkg.name when that is a module, else on pkg
            targets = [f"{stem}.{a.name}" if f"{stem}.{a.name}" in known else stem
                       for a in node.names]
        else:
            continue
        for target in targets:
            while target and target not in known and "." in target:
                target = target.rpartition(".")[0]   # a name inside a module
            if target in known and target != module:
                yield target, node.lineno


def edges() -> Dict[Tuple[str, str], str]:
    found = modules()
    known = set(found)
    return {(module, target): f"{found[module].relative_to(ROOT)}:{line}"
            for module, path in found.items() for target, line in imported(module, path, known)}


def test_every_module_is_in_a_layer():
    for module in modules():
        assert layer_of(module) in LAYERS


def test_no_upward_imports():
    upward = []
    for (source, target), where in sorted(edges().items()):
        if LAYERS.index(layer_of(target)) > LAYERS.index(layer_of(source)) and \
                (source, target) not in ALLOWED:
            upward.append(f"{where}: {source} ({layer_of(source)}) imports {target} "
                          f"({layer_of(target)})")
    assert not upward, "imports pointing up a layer:\n" + "\n".join(upward)


def test_engine_imports_no_family_module():
    offending = [f"{where}: {source} imports {target}"
                 for (source, target), where in sorted(edges().items())
                 if target in FAMILY_MODULES and layer_of(source) == "engine"
                 and (source, target) not in ALLOWED]
    assert not offending, "use presentations.lambda_classes or the meanings instead:\n" + \
        "\n".join(offending)


# Reports render results and never compute (DEVELOPERS.md, "Layers"): no module of reports/
# imports the compare modules that compute; records-only modules (iso_records, records — the
# typed check results —, store) may be read.  A name matches the module and every module it
# begins (iso → iso_search, iso_verify).
COMPUTING = ("engine", "iso", "groebner", "points", "lifting", "sweep", "scan", "schubert")
RECORDS_ONLY = {"ringmatch.compare.iso_records", "ringmatch.compare.records"}


def computing_imports(found: Dict[Tuple[str, str], str]) -> List[str]:
    return [f"{where}: {source} imports {target}"
            for (source, target), where in sorted(found.items())
            if layer_of(source) == "reports" and target.startswith("ringmatch.compare.")
            and target.rpartition(".")[2].startswith(COMPUTING) and target not in RECORDS_ONLY]


def test_reports_import_no_computing_module():
    offending = computing_imports(edges())
    assert not offending, "compute in the command line (e.g. compare/table_command.py) and " \
        "pass the results to the report:\n" + "\n".join(offending)


def test_the_records_modules_read_by_reports_compute_nothing():
    # what reports may read must not pull computing modules in behind their back
    found = edges()
    for module in RECORDS_ONLY:
        imports = {target for source, target in found if source == module}
        assert imports <= {"ringmatch.errors"}, (module, sorted(imports))


def test_the_computing_check_fails_on_a_violation():
    # the check above, fed one made-up edge of each kind
    made_up = {("ringmatch.reports.tables", "ringmatch.compare.iso"): "reports/tables.py:1",
               ("ringmatch.reports.tables", "ringmatch.compare.iso_search"): "reports/tables.py:2",
               ("ringmatch.reports.notebook", "ringmatch.compare.engine"): "reports/notebook.py:3",
               ("ringmatch.reports.isomorphism", "ringmatch.compare.iso_records"): "x:1",
               ("ringmatch.compare.table_command", "ringmatch.compare.iso"): "x:2"}
    assert computing_imports(made_up) == [
        "reports/notebook.py:3: ringmatch.reports.notebook imports ringmatch.compare.engine",
        "reports/tables.py:1: ringmatch.reports.tables imports ringmatch.compare.iso",
        "reports/tables.py:2: ringmatch.reports.tables imports ringmatch.compare.iso_search"]


# ... nor rebuild a presentation or resolve a family by name (those are computations too).
REBUILDING = {"get_family", "presentation_file", "build_symbolic", "build_specialised",
              "build_series"}


def rebuilding_imports(module: str, source: str) -> List[str]:
    return [f"{module}:{node.lineno} imports {alias.name}"
            for node in ast.walk(ast.parse(source)) if isinstance(node, ast.ImportFrom)
            for alias in node.names if alias.name in REBUILDING]


def test_reports_rebuild_no_presentation():
    offending = [line for module, path in modules().items() if layer_of(module) == "reports"
                 for line in rebuilding_imports(module, path.read_text())]
    assert not offending, "rebuild in the command line and pass the presentation:\n" + \
        "\n".join(offending)
    assert rebuilding_imports("m", "def f():\n    from ringmatch.presentations import "
                                   "get_family\n") == ["m:2 imports get_family"]


def test_allow_list_is_still_needed():
    stale = ALLOWED - set(edges())
    assert not stale, f"fixed, remove from ALLOWED in tests/test_layers.py: {sorted(stale)}"


def _cycles(graph: Dict[str, Set[str]]) -> List[List[str]]:
    """Strongly connected components with more than one module (Tarjan)."""
    index: Dict[str, int] = {}
    low: Dict[str, int] = {}
    stack: List[str] = []
    on_stack: Set[str] = set()
    components = []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in sorted(graph.get(v, ())):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            component = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                component.append(w)
                if w == v:
                    break
            if len(component) > 1:
                components.append(sorted(component))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return components


def test_no_import_cycles():
    graph: Dict[str, Set[str]] = {}
    for source, target in edges():
        # A submodule reading its own package's registry (`from . import FAMILIES`, deferred)
        # while the package imports the submodule is the registry pattern, not a tangle.
        if source.rpartition(".")[0] == target:
            continue
        if (source, target) not in ALLOWED:
            graph.setdefault(source, set()).add(target)
    cycles = _cycles(graph)
    assert not cycles, "modules importing each other: " + "; ".join(" ↔ ".join(c) for c in cycles)


def test_the_reader_sees_deferred_and_relative_imports():
    # The checks above are only as good as the edge reader: two edges of the kinds that
    # are easy to miss, an import inside a function and a relative `from . import x`.
    found = edges()
    assert ("ringmatch.compare.cli", "ringmatch.compare.engine") in found        # deferred
    assert ("ringmatch.compare.groebner", "ringmatch.compare.ideal_division") in found
    assert ("ringmatch.presentations", "ringmatch.presentations.plugins") in found  # relative
