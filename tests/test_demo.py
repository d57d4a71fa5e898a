"""The demo scenario (compare/demo.py, presentations/files/demo/kestrel-conjecture.toml):
its conjecture is right exactly where it should be, wrong from Gr(4;5) on, and the demo
finds and reports that."""
import sympy

from ringmatch.compare import store, sweep
from ringmatch.compare.cases import enumerate_cases
from ringmatch.compare.engine import check_case
from ringmatch.presentations import FAMILIES, get_family
from ringmatch.presentations.flagtype import parse_flag
from ringmatch.presentations.interface import build_symbolic
from ringmatch.reports.formulas import to_sympy

from conftest import run_cli
CONJECTURE = "kestrel-conjecture"


def relation_polys(family, flag):
    presentation = build_symbolic(family, flag)
    return presentation.ring.ctx.names(), [(r.label, r.poly) for r in presentation.relations]


def test_conjecture_is_the_whitney_presentation_whenever_every_k_i_is_at_most_3():
    """The cut-off after y^3 removes nothing when k_i ≤ 3: same polynomials as q-Whitney
    (arXiv:2310.03826) for every flag type with n ≤ 4, and for those with n = 5, 6 and
    all k_i ≤ 3."""
    conjecture, whitney = get_family(CONJECTURE), FAMILIES["whitney"]
    flags = [f for f in enumerate_cases("partial", 6) if max(f.dims) <= 3]
    assert all(f.n > 4 or max(f.dims) <= 3 for f in enumerate_cases("partial", 4))
    for flag in flags:
        assert relation_polys(conjecture, flag) == relation_polys(whitney, flag), flag.name


def test_conjectured_top_relation_of_gr45_misses_the_factor_1_minus_q():
    """In QK_T(Gr(k;n)): det S · det Q = (1 − q)·T_1⋯T_n (arXiv:2208.01091).  The conjecture's
    top coefficient for Gr(4;5) says det S · det Q = T_1⋯T_5 instead (checked with SymPy; files
    multiply a relation through by the unit 1 − q it divides by, docs/presentation-files.md)."""
    flag = parse_flag("Gr(4;5)")
    names, relations = relation_polys(get_family(CONJECTURE), flag)
    top = to_sympy(dict(relations)["level 1, y^5"], names)
    S4, Q1, q = sympy.symbols("S1_4 Q1_1 q1")          # det S = λ_4(S), det Q = λ_1(Q)
    T = sympy.prod(sympy.symbols("T1:6"))
    assert sympy.expand(top - (1 - q) * (S4 * Q1 - T)) == 0
    names, relations = relation_polys(FAMILIES["whitney"], flag)
    whitney_top = to_sympy(dict(relations)["level 1, y^5"], names)
    assert sympy.expand(whitney_top - (S4 * Q1 - (1 - q) * T)) == 0


def test_the_first_counterexample_in_sweep_order_is_gr45(tmp_path):
    flags = enumerate_cases("partial", 5)
    plan = sweep.plan_sweep(flags, ["whitney", CONJECTURE], seed=0,
                            prime=store.sweep_settings([])["prime"], equivariant=True, order=6,
                            trials=1, method="auto")
    outcome = sweep.run_sweep(plan, tmp_path / "s.db", workers=2, stop_at_first=True)
    assert outcome.first_counterexample == "Gr(4;5)"
    verdicts = [r.verdict for r in outcome.ordered_results()]
    assert verdicts == ["agree"] * 12 + ["disagree"]       # n ≤ 4 (11 cases) and P4 agree
    pair = outcome.results["Gr(4;5)"].pairs[0]
    assert pair.verdict == "disagree"
    assert any(w.relation == "level 1, y^5" for w in pair.witnesses)


def test_conjecture_is_wrong_beyond_the_first_counterexample_too():
    """Not an accident of one case: every Grassmannian with k ≥ 4 and n ≤ 6 disagrees."""
    families = [FAMILIES["whitney"], get_family(CONJECTURE)]
    for case in ("Gr(4;6)", "Gr(5;6)"):
        assert check_case(parse_flag(case), families, seed=3).verdict == "disagree", case


def test_demo_writes_the_report_and_tables_and_says_what_it_found(tmp_path):
    finished = run_cli("demo", "--out", tmp_path / "out", "--confirm-max-n", "3")
    assert finished.returncode == 0, finished.stderr
    assert "4 flag types" in finished.stdout and "4 agree" in finished.stdout
    assert "first fails at Gr(4;5)" in finished.stdout
    written = {p.name for p in (tmp_path / "out").iterdir()}
    assert {"established-table.md", "conjecture-table.md", "established.db",
            "conjecture.db"} <= written
    assert any(name.endswith(".md") and name.startswith("Gr") for name in written)
    rows = store.load_results(tmp_path / "out" / "conjecture.db")
    # With parallel workers a case after the counterexample may finish before the sweep
    # stops; what must hold is that Gr(4;5) disagrees and every smaller case agrees.
    cases = [r["case"] for r in rows]
    first = cases.index("Gr(4;5)")
    assert rows[first]["verdict"] == "disagree"
    assert all(r["verdict"] == "agree" for r in rows[:first])
    table = (tmp_path / "out" / "conjecture-table.md").read_text()
    assert "Gr(4;5)" in table
    # the table's provenance names the demo command, without the absolute local folder
    assert "produced by: ringmatch demo --out out --confirm-max-n 3 (the same table again: " \
        "ringmatch table out/conjecture.db --format markdown)" in table
    assert str(tmp_path) not in table
