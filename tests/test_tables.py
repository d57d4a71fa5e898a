"""Appendix tables and the DataFrame API (reports/tables.py, reports/frames.py).

The rows are real `check_case` results (an agreement, a disagreement with the shipped wrong
conjecture, a points-only check, which is `consistent`: docs/verdicts.md §3), in the shape the
sweeps' store returns.
The LaTeX output is compiled with a real TeX engine.
"""
from __future__ import annotations

import csv
import io
import json
import math
import shutil
import subprocess
import sys
from importlib import metadata

import pytest

from ringmatch.compare.engine import check_case
from ringmatch.presentations import get_family
from ringmatch.presentations.flagtype import parse_flag
from ringmatch.reports.frames import FRAME_COLUMNS, SourceError, load_rows, results_frame, row_from_result
from ringmatch.reports.tables import (LONGTABLE_ROWS, case_latex, TableError, TableOptions, build_table, csv_table,
                            latex_table, markdown_table, parse_columns, render)
# Relations and isomorphisms are computed by the command line, reports only render them.
from ringmatch.compare.table_command import prepared_table, render as computed_render

from conftest import run_cli

CASES = [("P2", ("whitney", "vieta"), "auto", 3),
         ("Fl(1,2;3)", ("whitney", "whitney-sign-error"), "auto", 4),
         ("Gr(2;4)", ("whitney", "vieta"), "points", 5)]   # points alone: consistent, not agree


@pytest.fixture(scope="module")
def rows():
    out = []
    for case, names, method, seed in CASES:
        result = check_case(parse_flag(case), [get_family(n) for n in names], seed=seed,
                            method=method)
        out.append(row_from_result(result, command=f"ringmatch check {case} (test)"))
    return out


@pytest.fixture(scope="module")
def results_file(rows, tmp_path_factory):
    path = tmp_path_factory.mktemp("results") / "results.json"
    path.write_text(json.dumps([row["result"].to_json() for row in rows]))
    return path


def multinomial(n, dims):
    chain = (0, *dims, n)
    value = math.factorial(n)
    for a, b in zip(chain, chain[1:]):
        value //= math.factorial(b - a)
    return value


def test_frame_columns_and_values(rows):
    frame = results_frame(rows)
    assert list(frame.columns) == list(FRAME_COLUMNS)
    assert list(frame["case"]) == ["P2", "Fl(3)", "Gr(2;4)"]
    assert list(frame["verdict"]) == ["agree", "disagree", "consistent"]
    # Standard fact (docs/mathematics.md §1): rank = n!/(k_1! d_1! ⋯ d_m!), computed here directly.
    for _, r in frame.iterrows():
        assert r["rank"] == multinomial(r["n"], r["dims"])
        assert sum(r["steps"]) == r["n"] and len(r["steps"]) == r["m"] + 1
    assert list(frame["kind"]) == ["grassmannian", "complete", "grassmannian"]
    assert list(frame["method"]) == ["both", "both", "points"]
    # agree and disagree are decided exactly at the specialisation; the points prove nothing
    assert list(frame["exact"]) == [True, True, False]
    assert list(frame["certificate"]) == ["exact", "exact", "not proven"]
    assert list(frame["seed"]) == [seed for *_, seed in CASES]


def test_frame_from_json_file_matches_rows(rows, results_file):
    from_rows = results_frame(rows).drop(columns=["seconds", "command"])
    from_file = results_frame(results_file).drop(columns=["seconds", "command"])
    assert from_rows.equals(from_file)


@pytest.mark.parametrize("content, fragment", [
    ("{not json", "not valid JSON"), ('[{"x": 1}]', "item 0"), ("", "not valid JSON")])
def test_bad_json_sources(tmp_path, content, fragment):
    path = tmp_path / "bad.json"
    path.write_text(content)
    with pytest.raises(SourceError, match=fragment):
        load_rows(path)


def test_csv_rows_and_reproducibility_block(rows):
    text = render(rows, "csv", TableOptions(columns=parse_columns("case,rank,verdict,prime,seed"),
                                            command="ringmatch table x.db --format csv"))
    body = [line for line in text.splitlines() if not line.startswith("#")]
    comments = [line for line in text.splitlines() if line.startswith("#")]
    parsed = list(csv.reader(io.StringIO("\n".join(body))))
    assert parsed[0] == ["case", "rank", "verdict", "prime", "seed"]
    frame = results_frame(rows)
    assert parsed[1:] == [[r["case"], str(r["rank"]), r["verdict"], str(r["prime"]),
                           str(r["seed"])] for _, r in frame.iterrows()]
    # the block comes after the table and names versions, primes, seeds and the command
    assert text.index("#") > text.index("Gr(2;4)")
    block = "\n".join(comments)
    assert "ringmatch table x.db --format csv" in block
    assert f"python-flint {metadata.version('python-flint')}" in block
    assert str(frame["prime"][0]) in block
    assert "Fl(3) 4" in block and "run: ringmatch check P2 (test)" in block


def test_csv_grouped_by_n_leads_with_n(rows):
    table = build_table(rows, TableOptions(columns=("case", "verdict"), group_by_n=True))
    parsed = list(csv.reader(io.StringIO(csv_table(table).split("\n#")[0])))
    assert parsed[0] == ["n", "case", "verdict"]
    assert [p[0] for p in parsed[1:]] == ["3", "3", "4"]


def test_markdown_footnote(rows):
    text = markdown_table(build_table(rows, TableOptions(command="ringmatch table s.db")))
    assert text.count("[^reproduce]") == 2
    assert "\n[^reproduce]: produced by: ringmatch table s.db" in text
    table_lines = [line for line in text.splitlines() if line.startswith("| ")]
    assert len(table_lines) == 1 + len(rows)


def test_unknown_column_and_format(rows):
    with pytest.raises(TableError, match="'colour'"):
        parse_columns("case,colour")
    with pytest.raises(TableError, match="'html'"):
        render(rows, "html")


def test_latex_short_and_long_forms(rows):
    short = latex_table(build_table(rows))
    assert r"\begin{tabular}" in short and "longtable" not in short
    for rule in (r"\toprule", r"\midrule", r"\bottomrule"):
        assert rule in short
    # what every row shares is said once, in the caption, which says what was compared
    caption = short.split(r"\caption{", 1)[1].split("}\n", 1)[0]
    assert r"Bethe points to order $s^{6}$; 1 trial per case." in caption
    assert r"\texttt{whitney} against the presentations in column \emph{with}" in caption
    assert "3 cases: 1 agree, 1 consistent, 1 disagree." in caption
    # the certificate follows from the verdict: said once, not in every row
    assert r"\emph{agree} and \emph{disagree}: decided exactly at a random specialisation " \
        r"mod $p$, so wrong only with probability at most degree$/p$." in caption
    assert r"\label{tab:ringmatch}" in short
    body = short.split(r"\midrule", 1)[1].split(r"\bottomrule")[0]
    assert "exact" not in body and "proven" not in body and "whitney" not in body
    # a long presentation name would set the table's width: letters, spelled out in the caption
    assert r"Column \emph{with}: (a) \texttt{vieta}; (b) \texttt{whitney-sign-error}." in caption
    assert body.splitlines()[1].startswith(r"$\mathbb{P}^{2}$ & 3 & (a) & agree & both")
    assert r"$\mathrm{Fl}(3)$ & 6 & (b) & disagree" in body
    assert r"$\mathrm{Gr}(2,4)$" in body
    many = rows * (LONGTABLE_ROWS // len(rows) + 1)
    floats = latex_table(build_table(many))        # default: floats of LONGTABLE_ROWS rows
    assert floats.count(r"\begin{table}") == 2 and "longtable" not in floats
    assert floats.count(r"\label{") == 1 and r"\addtocounter{table}{-1}" in floats
    options = TableOptions(longtable=True)
    long = latex_table(build_table(many, options), options)
    assert r"\begin{longtable}" in long and r"\endhead" in long
    provenance = [line for line in long.splitlines() if line.startswith("% primes:")]
    assert provenance and str(rows[0]["result"].certificate.prime) in provenance[0]
    assert long.rstrip().splitlines()[-1].startswith("% ")   # the block is under the table


def test_consistent_is_its_own_word_and_not_counted_as_agreement(rows):
    text = latex_table(build_table(rows))
    caption = text.split(r"\caption{", 1)[1].split("}\n", 1)[0]
    assert "3 cases: 1 agree, 1 consistent, 1 disagree." in caption
    assert r"\emph{consistent}: every relation vanishes at every Bethe point" in caption
    assert r"$\mathrm{Gr}(2,4)$ & 6 & (a) & consistent & points" in text
    assert "1 agree, 1 consistent" in markdown_table(build_table(rows)).splitlines()[0]
    without = latex_table(build_table(rows[:2]))
    assert "consistent" not in without and "2 cases: 1 agree, 1 disagree." in without


def test_certificate_in_the_rows_when_the_verdict_does_not_decide_it(rows):
    """A `consistent` row with an exact certificate (as no check makes it, but a mixed store
    could hold): the verdict no longer tells the certificate, so every row states it."""
    relabelled = [dict(rows[0], verdict="consistent")] + rows[1:]
    text = latex_table(build_table(relabelled))
    caption = text.split(r"\caption{", 1)[1].split("}\n", 1)[0]
    assert "method, certificate" in text
    assert r"$\mathbb{P}^{2}$ & 3 & (a) & consistent & both, exact" in text
    assert r"$\mathrm{Gr}(2,4)$ & 6 & (a) & consistent & points, not proven" in text
    assert r"\emph{exact}: decided exactly at a random specialisation mod $p$" in caption
    csv_text = render(rows, "csv", TableOptions(columns=parse_columns("case,certificate")))
    assert "Gr(2;4),\"s^6, 1 trial, not proven\"" in csv_text
    assert "P2,\"s^6, 1 trial, exact\"" in csv_text


def test_relations_of_small_cases_in_display_math(rows):
    text = latex_table(prepared_table(rows, "latex", TableOptions(relations=True)),
                       TableOptions(relations=True))
    # case names in math mode, as in the table
    assert r"\paragraph{$\mathbb{P}^{2}$, whitney}" in text
    assert r"\paragraph{$\mathrm{Fl}(3)$, whitney-sign-error}" in text
    assert "Gr(2;4)" in text   # rank 6 is small enough
    # det S · det Q = (1 − q) T_1 T_2 T_3 in QK_T(P^2) (arXiv:2208.01091): the top Whitney
    # relation of P2, printed with (1 − q_1) factored out as in the identity itself.
    lines = text.splitlines()
    start = [k for k, line in enumerate(lines) if "level 1, $y^{3}$" in line and
             r"\lambda_{2}(Q_{1}) \lambda_{1}(S_{1})" in line]
    assert start
    relation = [lines[start[0]].split("& ", 1)[1]]
    for line in lines[start[0] + 1:]:       # continuation lines of a relation too long for one
        if not line.startswith(r"& \qquad"):
            break
        relation.append(line[len(r"& \qquad "):])
    assert " ".join(part.rstrip(" \\") for part in relation) == \
        r"\lambda_{2}(Q_{1}) \lambda_{1}(S_{1}) - \left(1 - q_{1}\right) T_{1} T_{2} T_{3} = 0"


def tex_engine():
    for name in ("pdflatex", "lualatex", "tectonic"):
        path = shutil.which(name)
        if path:
            return name, path
    pytest.skip("no TeX engine on PATH (pdflatex, lualatex or tectonic); .ci/run installs "
                "texlive-latex-base and texlive-latex-recommended when apt-get can")


def compile_latex(source: str, directory):
    name, path = tex_engine()
    (directory / "doc.tex").write_text(source)
    command = [path, "doc.tex"] if name == "tectonic" else \
        [path, "-interaction=nonstopmode", "-halt-on-error", "doc.tex"]
    run = subprocess.run(command, cwd=directory, capture_output=True, text=True, timeout=180)
    log = (directory / "doc.log").read_text(errors="replace") \
        if (directory / "doc.log").exists() else run.stdout
    assert run.returncode == 0, log[-3000:]
    assert (directory / "doc.pdf").stat().st_size > 1000
    return log


def test_latex_compiles_standalone_with_relations(rows, tmp_path):
    options = TableOptions(group_by_n=True, relations=True, standalone=True,
                           command="ringmatch table runs.db --format latex")
    compile_latex(computed_render(rows, "latex", options), tmp_path)


@pytest.mark.parametrize("longtable", [True, False])
def test_latex_long_tables_compile_and_break_pages(rows, tmp_path, longtable):
    many = rows * 30     # 90 rows: more than one page
    options = TableOptions(columns=parse_columns("case,kind,n,rank,presentations,verdict,"
                                                 "certificate,seconds"), group_by_n=True,
                           standalone=True, longtable=longtable)
    log = compile_latex(render(many, "latex", options), tmp_path)
    if "Output written" in log:   # pdflatex and lualatex report the page count
        pages = int(log.split("Output written on doc.pdf (")[1].split(" page")[0])
        assert pages >= 2


def test_latex_fragment_compiles_inside_a_paper(rows, tmp_path):
    fragment = render(rows, "latex", TableOptions(columns=parse_columns("case,reason,verdict")))
    (tmp_path / "appendix.tex").write_text(fragment)
    paper = "\n".join([r"\documentclass{article}", r"\usepackage{booktabs,amssymb}",
                       r"\begin{document}", r"\section*{Appendix}", r"\input{appendix}",
                       r"\end{document}", ""])
    compile_latex(paper, tmp_path)


@pytest.mark.parametrize("options", ["", "twocolumn"])
@pytest.mark.parametrize("copies", [1, 15])
def test_default_table_fits_the_column(rows, tmp_path, options, copies):
    """The default table inside a one-column and a two-column article, short and long (45
    rows: two floats): TeX reports every line wider than the column as an "Overfull
    \\hbox" in the log, and a float taller than the page as an "Overfull \\vbox"."""
    fragment = render(rows * copies, "latex", TableOptions(command="ringmatch table runs.db "
                                                                   "--format latex"))
    (tmp_path / "results.tex").write_text(fragment)
    paper = "\n".join([rf"\documentclass[{options}]{{article}}",
                       r"\usepackage{booktabs,amssymb}", r"\begin{document}",
                       r"\section{Results}", "Table~\\ref{tab:ringmatch} shows the cases.",
                       r"\input{results}", r"\end{document}", ""])
    log = compile_latex(paper, tmp_path)
    assert "Overfull" not in log, log[log.index("Overfull"):][:600]


def test_cli_table_csv(results_file):
    run = run_cli("table", str(results_file), "--format", "csv", "--columns", "case,verdict")
    assert run.returncode == 0, run.stderr
    lines = run.stdout.splitlines()
    assert lines[:4] == ["case,verdict", "P2,agree", "Fl(3),disagree", "Gr(2;4),consistent"]
    assert any(line.startswith("# produced by: ringmatch table") for line in lines)


@pytest.mark.parametrize("make, args, fragment", [
    (None, ["table", "missing.db"], "missing.db: no such file"),
    ("text", ["table", "plain.db"], "neither a results store"),
    (None, ["table", "{results}", "--columns", "case,nope"], "'nope'"),
    (None, ["table", "{results}", "--format", "html"], "html"),
])
def test_cli_table_errors(tmp_path, results_file, make, args, fragment):
    if make:
        (tmp_path / "plain.db").write_text("not a database")
    args = [a.replace("{results}", str(results_file)) for a in args]
    run = run_cli(*args, cwd=tmp_path)
    assert run.returncode == 2
    assert len(run.stderr.strip().splitlines()) == 1 and fragment in run.stderr
    assert "Traceback" not in run.stderr


def test_notebook_records_render_without_ipython(rows):
    from ringmatch.compare.notebook import check_view, relations_view, results_view
    view = results_view(rows, columns=["case", "verdict"], group_by_n=True)
    page = view._repr_html_()
    assert page.count("<tr>") == 1 + 2 + 1 + 1    # two n-blocks: headers and three cases
    assert "<td>disagree</td>" in page and "<h4>n = 4</h4>" in page
    assert r"\begin{tabular}" in view._repr_latex_()
    assert "[^reproduce]" in view._repr_markdown_()

    disagreement = check_view(rows[1]["result"])
    assert "whitney-sign-error" in disagreement._repr_html_()
    latex = disagreement._repr_latex_()
    assert latex.startswith("$$") and "level 2, $y^{2}$" in latex
    # the slipped sign: + λ_1(Q_2) λ_1(S_1) outside the factor 1 − q_2 (the published
    # relation, arXiv:2310.03826, has − there)
    assert r"&& \lambda_{1}(Q_{2}) \lambda_{1}(S_{1}) + \lambda_{1}(Q_{2}) \lambda_{1}(S_{2})" \
        in latex and "Q_{2 1}" not in latex
    assert check_view(rows[0]["result"])._repr_latex_() is None   # nothing failed

    relations = relations_view("whitney", "P2")._repr_latex_()
    assert r"\paragraph{$\mathbb{P}^{2}$, whitney}" in \
        results_view(rows, relations=True)._repr_latex_()
    assert relations.startswith(r"$$\begin{aligned}") and relations.count(r"\text{[level") == 3

    probe = subprocess.run([sys.executable, "-c", "import sys, reports.notebook, "
                            "ringmatch.reports.tables, reports.frames, reports.figures, "
                            "ringmatch.compare.notebook; "
                            "print('IPython' in sys.modules, 'matplotlib' in sys.modules)"],
                           capture_output=True, text=True, timeout=60)
    assert probe.stdout.split() == ["False", "False"], probe.stderr


def test_through_a_real_store(rows, tmp_path):
    """The store written by the sweeps (compare.store), read back by tables and frames."""
    import inspect
    store = pytest.importorskip("ringmatch.compare.store", reason="ringmatch.compare.store (the sweeps' results "
                                "store) is not in this tree yet")
    path = tmp_path / "runs.db"
    conn = store.open_store(path)
    for row in rows:
        result = row["result"]
        wanted = {"presentations": result.names, "equivariant": result.equivariant,
                  "seed": result.certificate.seed, "prime": result.certificate.prime,
                  "order": result.certificate.order,
                  "trials": len(result.certificate.trials),
                  "method": result.certificate.method}
        parameters = inspect.signature(store.sweep_settings).parameters
        try:
            settings = store.sweep_settings(**{k: v for k, v in wanted.items()
                                               if k in parameters})
        except TypeError as error:
            pytest.fail(f"ringmatch.compare.store.sweep_settings no longer takes the contract's "
                        f"settings as keywords: {error}")
        store.save_result(conn, settings, result, row["seconds"])
    conn.close()
    stored = load_rows(path)
    assert [r["case"] for r in stored] == sorted([r["case"] for r in rows], key=lambda c: (
        parse_flag(c).n, parse_flag(c).rank, parse_flag(c).dims))   # sweep order
    frame = results_frame(path).set_index("case")
    expected = results_frame(rows).set_index("case")
    for column in ("rank", "verdict", "method", "prime", "seed", "trials", "kind"):
        assert frame[column].to_dict() == expected[column].to_dict(), column
    text = render(path, "csv", TableOptions(columns=("case", "verdict")))
    assert "Fl(3),disagree" in text and "# primes:" in text
    assert "# computed with: python" in text     # versions the store recorded per run
    from ringmatch.reports.figures import agreement_map, stored_provenance
    figure = agreement_map(path, tmp_path / "map.png", dpi=50, command="ringmatch figure runs.db")
    assert "produced by: ringmatch figure runs.db" in stored_provenance(figure)


def store_of(rows, path):
    """A results store holding `rows`; each row's own seed makes it a sweep of its own."""
    from ringmatch.compare import store
    conn = store.open_store(path)
    for row in rows:
        result = row["result"]
        settings = store.sweep_settings(
            result.names, equivariant=result.equivariant,
            seed=result.certificate.seed, prime=result.certificate.prime,
            order=result.certificate.order, trials=len(result.certificate.trials),
            method=result.certificate.method)
        store.save_result(conn, settings, result, row["seconds"])
    conn.close()
    return path


def test_table_selects_one_sweep_of_several(rows, tmp_path):
    path = store_of(rows, tmp_path / "runs.db")
    mixed = run_cli("table", path, "--format", "csv", "--columns", "case,sweep,equivariant")
    assert mixed.returncode == 0, mixed.stderr
    assert "3 sweeps are shown together" in mixed.stderr and "--sweep KEY" in mixed.stderr
    keys = {line.split(",")[1] for line in mixed.stdout.splitlines()[1:] if "," in line
            and not line.startswith("#")}
    assert len(keys) == 3 and all(len(key) == 8 for key in keys)
    one = sorted(keys)[0]
    chosen = run_cli("table", path, "--format", "csv", "--columns", "case", "--sweep", one)
    assert chosen.returncode == 0 and "sweeps are shown" not in chosen.stderr
    assert len([line for line in chosen.stdout.splitlines()[1:]
                if not line.startswith("#")]) == 1
    assert f"--sweep {one}" in chosen.stdout            # the provenance repeats the selection
    pair = run_cli("table", path, "--format", "csv", "--columns", "case",
                   "--presentations", "whitney-sign-error,whitney")
    assert [line for line in pair.stdout.splitlines() if not line.startswith("#")] == \
        ["case", "Fl(3)"]
    plain = run_cli("table", path, "--plain")
    assert plain.returncode == 2 and "no rows match" in plain.stderr
    unknown = run_cli("table", path, "--sweep", "ffffffff")
    assert unknown.returncode == 2 and "no sweep 'ffffffff'" in unknown.stderr


def test_provenance_has_no_absolute_local_paths(rows):
    moved = [dict(row, run={"command": "ringmatch sweep --presentations "
                                       "whitney,/home/someone/guesses/mine.toml --store "
                                       "'/home/someone/my runs/runs.db'", "versions": {}})
             for row in rows]
    text = render(moved, "markdown",
                  TableOptions(command="ringmatch table /home/someone/runs.db"))
    assert "/home" not in text and "someone" not in text
    assert "run: ringmatch sweep --presentations whitney,mine.toml --store 'runs.db'" in text
    assert "produced by: ringmatch table runs.db" in text


def test_sqlite_file_that_is_not_a_store(tmp_path):
    import sqlite3
    pytest.importorskip("ringmatch.compare.store", reason="ringmatch.compare.store is not in this tree yet")
    path = tmp_path / "other.db"
    with sqlite3.connect(path) as conn:
        conn.execute("CREATE TABLE results (x INTEGER)")
    run = run_cli("table", str(path))
    assert run.returncode == 2 and len(run.stderr.strip().splitlines()) == 1
    assert "other.db" in run.stderr and "Traceback" not in run.stderr


# ---------------------------------------------------------------------------------------
# Isomorphisms of small cases (--isomorphisms)

ISO_CASES = [("P2", ("bethe", "whitney", "vieta"), 21),    # bethe: Chern roots, skipped
             ("Gr(2;4)", ("whitney", "vieta"), 22),
             ("Fl(3)", ("whitney", "vieta"), 23),
             ("Fl(1,2;4)", ("whitney", "vieta"), 24)]       # rank 12: above the bound


@pytest.fixture(scope="module")
def iso_store(tmp_path_factory):
    """A sweeps' store (compare.store) holding real check results."""
    store = pytest.importorskip("ringmatch.compare.store", reason="ringmatch.compare.store (the sweeps' results "
                                "store) is not in this tree yet")
    path = tmp_path_factory.mktemp("iso") / "runs.db"
    conn = store.open_store(path)
    for case, names, seed in ISO_CASES:
        result = check_case(parse_flag(case), [get_family(n) for n in names], seed=seed,
                            method="points")
        settings = store.sweep_settings(list(names), seed=seed, method="points")
        store.save_result(conn, settings, result, 0.1)
    conn.close()
    return path


def change_of_variables(case):
    """docs/mathematics.md §2.2 (derived there): λ_j(Q_i) = w_{i,j} for j < d_i and
    det Q_i = (1 − q_i)·w_{i,d_i}; the λ_j(S_i) are shared.  As (target, formula) LaTeX
    pairs for the inverse (Whitney generators in Vieta ones) and the map (Vieta in Whitney),
    built here from the rule, not from the search."""
    import sympy
    flag = parse_flag(case)
    names = {}
    inverse, forward = {}, {}
    for i in range(1, flag.m + 1):
        q = sympy.Symbol(f"q{i}")
        for j in range(1, flag.k(i) + 1):
            S = sympy.Symbol(f"S{i}_{j}")
            names[S] = rf"\lambda_{{{j}}}(S_{{{i}}})"
            inverse[S] = forward[S] = S
        for j in range(1, flag.d(i) + 1):
            Q, w = sympy.Symbol(f"Q{i}_{j}"), sympy.Symbol(f"w{i}_{j}")
            names[Q], names[w] = rf"\lambda_{{{j}}}(Q_{{{i}}})", rf"e_{{{j}}}(Y^{{({i})}})"
            top = j == flag.d(i)
            inverse[Q] = w * (1 - q) if top else w
            forward[w] = Q / (1 - q) if top else Q

    def printed(pairs):
        return {names[t]: sympy.latex(f, symbol_names=names) for t, f in pairs.items()}
    return printed(inverse), printed(forward)


def align_blocks(text, title):
    """The formulas (target → formula) of each align* after a paragraph title."""
    after = text.split(title, 1)[1].split(r"\paragraph", 1)[0]
    blocks = []
    for chunk in after.split(r"\begin{align*}")[1:]:
        body = chunk.split(r"\end{align*}")[0]
        pairs = [line.strip().rstrip("\\").strip().split(" &= ", 1)
                 for line in body.strip().splitlines()]
        blocks.append(dict(pairs))
    return blocks


def test_isomorphisms_latex_give_the_change_of_variables(iso_store):
    options = TableOptions(isomorphisms=True, command="ringmatch table runs.db --isomorphisms")
    text = computed_render(iso_store, "latex", options)
    for case in ("Gr(2;4)", "Fl(3)"):
        inverse, forward = change_of_variables(case)
        title = rf"\paragraph{{Isomorphism {case_latex(case)}, whitney $\to$ vieta}}"
        assert title in text
        blocks = align_blocks(text, title)
        assert blocks == [forward, inverse], case
    # Gr(2;4): the one non-trivial generator, Q1_2 = (1 − q1)·w1_2
    assert r"\lambda_{2}(Q_{1}) &= e_{2}(Y^{(1)}) \left(1 - q_{1}\right)" in text
    assert r"\lambda_{1}(Q_{1}) &= e_{1}(Y^{(1)}) \\" in text
    # bethe is skipped with a reason in a comment; the pair is then whitney, vieta
    assert "% P2: bethe skipped for the isomorphism: its generators are Chern roots" in text
    assert r"\paragraph{Isomorphism $\mathbb{P}^{2}$, whitney $\to$ vieta}" in text
    assert "Fl(1,2;4)" not in text.split(r"\end{table}")[1].split("% produced by")[0]
    # the block names each search with the seed of the stored certificate
    block = [line for line in text.splitlines() if line.startswith("% isomorphisms computed")]
    assert len(block) == 1
    for case, _, seed in ISO_CASES[:3]:
        assert f"{case} whitney->vieta seed {seed} (the check's seed)" in block[0]
    assert "Fl(1,2;4)" not in block[0]
    assert "produced by: ringmatch table runs.db --isomorphisms" in text
    assert computed_render(iso_store, "latex", options) == text      # same seeds, same output


def test_isomorphisms_markdown_has_the_same_formulas(iso_store):
    text = computed_render(iso_store, "markdown", TableOptions(isomorphisms=True))
    for case in ("Gr(2;4)", "Fl(3)"):
        assert f"**Isomorphism {case}, whitney → vieta**: Found and verified" in text
        inverse, forward = change_of_variables(case)
        for target, formula in {**inverse, **forward}.items():
            assert f"$$\n{target} = {formula}\n$$" in text, (case, target)
    assert "$$\n\\lambda_{2}(Q_{1}) = e_{2}(Y^{(1)}) \\left(1 - q_{1}\\right)\n$$" in text
    assert "Note: P2: bethe skipped for the isomorphism" in text
    footnote = text.split("[^reproduce]: ")[1]
    assert "isomorphisms computed with compare.iso.find_isomorphism" in footnote
    assert "Gr(2;4) whitney->vieta seed 22" in footnote


def test_isomorphisms_latex_compiles(iso_store, tmp_path):
    options = TableOptions(isomorphisms=True, relations=True, standalone=True)
    compile_latex(computed_render(iso_store, "latex", options), tmp_path)


def test_relations_and_isomorphisms_fit_a_column_of_two(iso_store, tmp_path):
    """Long relations (bethe's Chern-root equations among them) and changes of generators
    are broken into lines that fit one column of a two-column article: TeX reports no
    overfull line."""
    fragment = computed_render(iso_store, "latex", TableOptions(isomorphisms=True, relations=True))
    (tmp_path / "results.tex").write_text(fragment)
    paper = "\n".join([r"\documentclass[twocolumn]{article}",
                       r"\usepackage{booktabs,amssymb,amsmath}", r"\allowdisplaybreaks",
                       r"\begin{document}", r"\input{results}", r"\end{document}", ""])
    log = compile_latex(paper, tmp_path)
    assert "Overfull \\hbox" not in log, log[log.index("Overfull"):][:600]
    assert r"\paragraph{$\mathbb{P}^{2}$, bethe}" in fragment
    assert "& \\text{[Bethe equation" in fragment


def test_cli_table_isomorphisms(iso_store):
    run = run_cli("table", str(iso_store), "--format", "markdown", "--isomorphisms")
    assert run.returncode == 0, run.stderr
    assert "$$\n\\lambda_{1}(Q_{2}) = e_{1}(Y^{(2)}) \\left(1 - q_{2}\\right)\n$$" in run.stdout   # Fl(3)
    assert "--isomorphisms" in run.stdout.split("produced by: ")[1].splitlines()[0]
    csv_run = run_cli("table", str(iso_store), "--format", "csv", "--isomorphisms")
    assert csv_run.returncode == 0 and "isomorphisms computed" not in csv_run.stdout
