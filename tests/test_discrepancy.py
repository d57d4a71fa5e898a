"""Discrepancy reports (reports/discrepancy.py) on real disagreements found by the engine.

The wrong presentations are (a) the q-Whitney relations with the sign of the quantum term
flipped, built here as a Family record, and (b) the shipped conjecture
presentations/files/examples/whitney-sign-error.toml.  The formulas the report prints are
checked against the relations written out independently in SymPy from docs/mathematics.md §2.1
(q-Whitney relations, arXiv:2310.03826), with the respective error put in by hand.
"""
from __future__ import annotations

import contextlib
import io
import json
import shlex

import pytest
import sympy

from ringmatch.compare.cli import main as cli_main
from ringmatch.compare.engine import check_case
from ringmatch.compare.records import SCHEMA_VERSION, CaseResult
from ringmatch.presentations import get_family, whitney
from ringmatch.presentations.flagtype import parse_flag
from ringmatch.reports.discrepancy import case_file_stem
# the command line writes the relations out (rebuilding the presentations), then the report
from ringmatch.compare.report_command import report_record, write_report

from broken_variants import flipped_q_sign
from conftest import run_cli

FL3 = parse_flag("Fl(1,2;3)")
SEED = 11


FLIPPED = flipped_q_sign("whitney-flipped")


def sympy_whitney_coefficient(flag, level, power, *, quantum_sign=1, below_sign=-1):
    """Coefficient of y^power in (1 − q_i)(λ_y(S_i)λ_y(Q_i) − λ_y(S_{i+1}))
    + quantum_sign · y^{d_i} q_i det Q_i (λ_y(S_i) + below_sign·(λ_y(S_i−1) − 1) − 1),
    written directly from docs/mathematics.md §2.1 (arXiv:2310.03826) in SymPy.  The published
    relation is quantum_sign = +1, below_sign = −1 (the constant terms of λ_y(S_i) and
    λ_y(S_{i−1}) cancel there; the shipped conjecture keeps that cancellation but adds
    the higher λ_a(S_{i−1}))."""
    y = sympy.Symbol("y")
    T = sympy.symbols(f"T1:{flag.n + 1}")

    def lam_S(i):
        if i == 0:
            return sympy.Integer(1)
        if i == flag.m + 1:
            return sympy.prod([1 + y * t for t in T])
        return 1 + sum(sympy.Symbol(f"S{i}_{j}") * y ** j for j in range(1, flag.k(i) + 1))

    i, d = level, flag.d(level)
    q = sympy.Symbol(f"q{i}")
    lam_Q = 1 + sum(sympy.Symbol(f"Q{i}_{j}") * y ** j for j in range(1, d + 1))
    det_Q = sympy.Symbol(f"Q{i}_{d}")
    higher = (lam_S(i) - 1) + below_sign * (lam_S(i - 1) - 1)
    expr = (1 - q) * (lam_S(i) * lam_Q - lam_S(i + 1)) + quantum_sign * y ** d * q * det_Q * higher
    return sympy.expand(expr).coeff(y, power)


def label_position(label):
    level, power = label.replace("level ", "").split(", y^")
    return int(level), int(power)


def sympy_text(expr) -> str:
    return sympy.sstr(sympy.expand(expr)).replace("**", "^") + " = 0"   # file grammar


@pytest.fixture(scope="module")
def flipped_result():
    return check_case(FL3, [whitney.FAMILY, FLIPPED], seed=SEED)


SHIPPED = "presentations/files/examples/whitney-sign-error.toml"
REPORT_FIELDS = ("format", "command", "notes", "formulas")   # besides the case schema


@pytest.fixture(scope="module")
def shipped_result():
    return check_case(FL3, [whitney.FAMILY, get_family(SHIPPED)], seed=SEED)


@pytest.fixture(scope="module")
def shipped_exact_result():
    """The exact route alone (docs/verdicts.md §2): by default the Bethe points refute the
    shipped conjecture first, and a presentation they refute gets no Gröbner basis, hence
    no normal form; --method groebner gives the witnesses with normal forms."""
    return check_case(FL3, [whitney.FAMILY, get_family(SHIPPED)], seed=SEED, method="groebner")


def read_report(result, directory, **options):
    markdown_path, json_path = write_report(result, directory, **options)
    return markdown_path, json_path, markdown_path.read_text(), json.loads(json_path.read_text())


def test_flipped_sign_report(flipped_result, tmp_path):
    markdown_path, json_path, markdown, record = read_report(
        flipped_result, tmp_path, families={"whitney-flipped": FLIPPED})
    assert (markdown_path.name, json_path.name) == ("Fl_3.md", "Fl_3.json")
    assert record["verdict"] == "disagree" and "**disagree**" in markdown
    pair = record["pairs"][0]
    assert pair["verdict"] == "disagree"

    # Every relation the report names as failing is printed as the flipped formula.
    failed = record["presentations"]["whitney-flipped"]["failures"]
    assert failed
    for failure in failed:
        level, power = label_position(failure["relation"])
        expected = sympy_text(sympy_whitney_coefficient(FL3, level, power, quantum_sign=-1))
        assert record["formulas"]["whitney-flipped"][failure["relation"]]["text"] == expected
        assert expected in markdown
        # and it differs from the published relation with the same label
        published = sympy_text(sympy_whitney_coefficient(FL3, level, power))
        assert published != expected
        assert failure["lowest_power"] >= 1      # the q = 0 part is the classical relation
    # A family made in a script has no name the command line knows: the report says so.
    assert record["notes"] == ["the command line knows no presentation called "
                               "whitney-flipped: give its file path or plug-in instead"]


def test_shipped_conjecture_report(shipped_result, tmp_path):
    _, _, markdown, record = read_report(shipped_result, tmp_path)
    assert record["verdict"] == "disagree"
    assert record["schema"] == SCHEMA_VERSION     # the case schema of check --json
    assert list(record["presentations"]) == ["whitney", "whitney-sign-error"]
    rows = record["presentations"]
    assert rows["whitney"]["complete"] is True
    assert rows["whitney-sign-error"]["holds"] is False
    assert rows["whitney-sign-error"]["complete"] is False

    # The file says the slipped sign first matters at level 2 of Fl(1,2;3) (λ_1(S_1) ≠ 0).
    assert not rows["whitney"]["failures"]
    failure = rows["whitney-sign-error"]["failures"][0]
    assert failure["relation"] == "level 2, y^2"
    expected = sympy_text(sympy_whitney_coefficient(FL3, 2, 2, below_sign=+1))
    formulas = record["formulas"]["whitney-sign-error"]
    assert formulas["level 2, y^2"]["text"] == expected and expected in markdown

    # The points refuted it (docs/verdicts.md §3): an exact witness naming the failing
    # point and the power of s, and no Gröbner basis (so no normal form) for it.
    pair = record["pairs"][0]
    assert pair["verdict"] == "disagree" and pair["method"] == "Bethe points"
    witnesses = pair["witnesses"]
    assert witnesses and all(w["kind"] == "fails at the Bethe points" for w in witnesses)
    assert witnesses[0]["relation_of"] == "whitney-sign-error"
    assert witnesses[0]["relation"] == "level 2, y^2"
    assert witnesses[0]["fails_at_points"] == failure and witnesses[0]["normal_form"] is None
    assert "fails at the Bethe points: at the point over {1} ⊂ {1,2}, from s^1 on" in markdown
    assert rows["whitney-sign-error"]["colength"] is None
    assert rows["whitney-sign-error"]["exact"] is True

    certificate = record["certificate"]
    for key in ("prime", "seed"):
        assert f"- {key}: {certificate[key]}" in markdown
    assert ", ".join(map(str, certificate["weights"])) in markdown
    assert ", ".join(map(str, certificate["q_line"])) in markdown
    # a witness at the Bethe points: exact, and no probability enters (docs/verdicts.md §3)
    assert certificate["exact"] is True
    assert certificate["kind"] == "exact witness at the Bethe points (no probability)"
    assert f"- {certificate['kind']}, 1 trial(s)" in markdown
    assert record["command"] in markdown and f"--seed {SEED}" in record["command"]


def test_shipped_conjecture_exact_witnesses(shipped_exact_result, tmp_path):
    """The exact route's witness: the shipped relation with its normal form modulo the
    q-Whitney ideal, printed in the file grammar (compare.algebra.poly_text)."""
    _, _, markdown, record = read_report(shipped_exact_result, tmp_path)
    assert record["verdict"] == "disagree"
    assert record["certificate"]["exact"] is True and record["certificate"]["method"] == \
        "groebner"
    pair = record["pairs"][0]
    assert pair["method"] == "exact at a specialisation"
    witnesses = pair["witnesses"]
    assert witnesses and all(w["kind"] == "not in the ideal" for w in witnesses)
    expected = sympy_text(sympy_whitney_coefficient(FL3, 2, 2, below_sign=+1))
    formulas = record["formulas"]["whitney-sign-error"]
    for w in witnesses:
        assert (w["relation_of"], w["not_in"]) == ("whitney-sign-error", "whitney")
        assert w["normal_form"] and f"`{w['normal_form']}`" in markdown
        assert "**" not in w["normal_form"] and w["fails_at_points"] is None
        assert formulas[w["relation"]]["text"] in markdown
    assert formulas["level 2, y^2"]["text"] == expected
    # no points were evaluated
    assert not any(p["failures"] for p in record["presentations"].values())
    assert "--method groebner" in record["command"]


def test_json_is_the_markdown_record(shipped_result, tmp_path):
    _, _, markdown, record = read_report(shipped_result, tmp_path)
    assert record == json.loads(json.dumps(report_record(shipped_result).to_json(),
                                           ensure_ascii=False))
    assert record["case"] == shipped_result.case and record["rank"] == 6
    # the case schema of `check --json`, with the report's own fields besides
    assert CaseResult.from_json(record) == shipped_result
    assert {k: v for k, v in record.items() if k not in REPORT_FIELDS} == \
        json.loads(json.dumps(shipped_result.to_json(), ensure_ascii=False))
    for name in record["presentations"]:
        assert f"| {name}" in markdown
    for pair in record["pairs"]:
        assert pair["reason"] in markdown


def test_the_printed_command_reproduces_the_result(shipped_result):
    record = report_record(shipped_result)
    words = shlex.split(record.command)
    assert words[:2] == ["ringmatch", "check"]
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        assert cli_main(words[1:] + ["--json"]) == 1      # exit status 1: disagree
    again = CaseResult.from_json(json.loads(out.getvalue()))
    assert again.verdict == shipped_result.verdict
    assert again.certificate.weights == shipped_result.certificate.weights
    assert again.pairs == shipped_result.pairs


def test_agreement_has_no_witness_section(tmp_path):
    result = check_case(parse_flag("P2"), [whitney.FAMILY, get_family("vieta")], seed=3)
    _, _, markdown, record = read_report(result, tmp_path)
    assert record["verdict"] == "agree"
    assert "Witnesses" not in markdown
    assert not any(p["failures"] for p in record["presentations"].values())
    assert (tmp_path / "P2.md").exists()


def test_points_only_report_says_consistent_not_proven(tmp_path):
    """With --method points nothing is decided exactly (docs/verdicts.md §3): the verdict is
    `consistent`, and a presentation's relations are said to vanish to s^N, not to hold."""
    result = check_case(parse_flag("P2"), [whitney.FAMILY, get_family("vieta")], seed=3,
                        method="points")
    _, _, markdown, record = read_report(result, tmp_path)
    assert record["verdict"] == "consistent" and "**consistent**" in markdown
    order = record["certificate"]["order"]
    vieta = record["presentations"]["vieta"]
    assert vieta["holds"] is None and vieta["holds_to_order"] == order
    assert f"to s^{order} at the points (not proven)" in markdown
    assert record["certificate"]["exact"] is False
    assert "--method points" in record["command"] and f"--order {order}" in record["command"]


def test_plain_points_check_reproduces_with_a_method_the_check_accepts():
    """A plain check has no Bethe points (the fixed points collide when every T_j = 1), so
    --method points ran neither route: the certificate says "none", which is no --method;
    the printed command says points, and running it gives the same result."""
    result = check_case(parse_flag("P2"), [whitney.FAMILY, get_family("vieta")], seed=3,
                        method="points", equivariant=False)
    assert result.verdict == "inconclusive" and result.certificate.method == "none"
    words = shlex.split(report_record(result).command)
    assert words[words.index("--method") + 1] == "points" and "--plain" in words
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        assert cli_main(words[1:] + ["--json"]) == 3      # exit status 3: inconclusive
    again = CaseResult.from_json(json.loads(out.getvalue()))
    assert (again.verdict, again.pairs) == (result.verdict, result.pairs)


@pytest.mark.parametrize("case, equivariant, stem", [
    ("Fl(1,3;5)", True, "Fl_1_3__5"), ("Gr(2;5)", True, "Gr_2__5"), ("Fl(4)", True, "Fl_4"),
    ("P3", False, "P3-plain"), ("../x/y", True, "x_y"),
])
def test_file_names(case, equivariant, stem):
    assert case_file_stem(case, equivariant) == stem


def test_cli_report_option(tmp_path):
    run = run_cli("check", "Gr(1;3)", "--presentations", "whitney,vieta", "--seed", "5",
                  "--report", str(tmp_path / "out"))
    assert run.returncode == 0, run.stderr
    record = json.loads((tmp_path / "out" / "P2.json").read_text())
    assert record["verdict"] == "agree"
    assert "--presentations whitney,vieta --seed 5" in record["command"]
    assert "--method auto" in record["command"]


def test_cli_report_into_a_file_is_a_one_line_error(tmp_path):
    blocker = tmp_path / "file"
    blocker.write_text("")
    run = run_cli("check", "P2", "--report", str(blocker / "sub"))
    assert run.returncode == 2
    assert len(run.stderr.strip().splitlines()) == 1 and "--report" in run.stderr
    assert "Traceback" not in run.stderr
