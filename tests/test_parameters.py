"""Integer parameters in presentation files (docs/presentation-files.md §1, §4) and --set.

External checks: the agreement of the shipped parameterised families with `whitney` is
compared with SymPy's `groebner` at a random rational specialisation of T and q (reduced
Gröbner bases of the ideals, after eliminating what one family has and the other lacks);
the number of solutions of the level equations for P^1 and P^2 is counted by hand (the
number of nonzero roots of a one-variable polynomial of known degree).
"""
from __future__ import annotations

import json
import random
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest
import sympy

from ringmatch.compare.engine import check_case
from ringmatch.compare.scan import colengths_at
from ringmatch.presentations import FAMILIES, get_family, userfile
from ringmatch.presentations.flagtype import parse_flag
from ringmatch.presentations.interface import build_symbolic
from ringmatch.presentations.userfile import (ParameterValuesMissing, PresentationFileError,
                                              family_from_text)
from ringmatch.reports.formulas import to_sympy

ROOT = Path(__file__).resolve().parent.parent

HEAD = """\
format = 1
flavour = "family"
name = "guess"
applies_to = "all"
{parameters}
[[generators]]
for = "i = 1..m, j = 1..k_i"
name = "S{{i}}_{{j}}"
meaning = "lambda_j(S_i)"
weight = "j"

[[units]]
for = "i = 1..m"
expr = "det(S_i)"

[[relations]]
for = "i = 1..m"
coefficients = "t = d_i + 1..k_{{i+1}}"
expr = "{expr}"
"""
ELIMINATED = ("(lambda_y(S_{i+1}) + c * y^{d_i} * q_i * det(S_{i+1}) / det(S_i) * "
              "lambda_y(S_{i-1})) * sum(j = 0..k_{i+1}: (-1)^j * h_j(S_i) * y^j)")
SIGN = """
[[parameters]]
name = "c"
values = [-1, 1]
default = 1
"""


def run_cli(*args, cwd=ROOT):
    return subprocess.run([sys.executable, "-m", "ringmatch.compare.cli", *args],
                          capture_output=True, text=True, timeout=600, cwd=cwd)


def error_of(text: str, values=None, case: str = "Gr(2,4)") -> str:
    with pytest.raises(PresentationFileError) as info:
        family = family_from_text(text, "p.toml", values)
        build_symbolic(family, parse_flag(case))
    message = str(info.value)
    assert "\n" not in message and message.startswith("p.toml")
    return message


# ---------------------------------------------------------------------------------------
# Declaring and binding

def test_a_parameter_is_an_integer_wherever_one_may_stand():
    text = HEAD.format(parameters=SIGN, expr=ELIMINATED)
    default = family_from_text(text, "p.toml")
    assert default.name == "guess[c=1]"
    flipped = family_from_text(text, "p.toml", {"c": -1})
    assert flipped.name == "guess[c=-1]"
    flag = parse_flag("Gr(2,4)")
    # s = 1 is the eliminated Vieta form: the same polynomials as the built-in family
    ours = [r.poly for r in build_symbolic(default, flag).relations]
    theirs = [r.poly for r in build_symbolic(FAMILIES["vieta-eliminated"], flag).relations]
    assert [str(p) for p in ours] == [str(p) for p in theirs]
    assert [str(r.poly) for r in build_symbolic(flipped, flag).relations] != \
        [str(p) for p in ours]


def test_exponents_ranges_and_labels_take_parameters():
    text = textwrap.dedent("""\
        format = 1
        flavour = "case"
        name = "p1guess"
        case = "P1"
        [[parameters]]
        name = "p"
        values = "0..3"
        default = 2
        [[generators]]
        name = "S1_1"
        meaning = "lambda_1(S_1)"
        weight = 1
        [[relations]]
        for = "r = p..p"
        label = "power {p}"
        expr = "(T_1 - S1_1) * (T_2 - S1_1) - q_1 * T_1 * T_2 * (S1_1 / T_1)^p"
        """)
    presentation = build_symbolic(family_from_text(text, "p.toml"), parse_flag("P1"))
    assert presentation.relations[0].label == "power 2"
    assert presentation.family == "p1guess[p=2]"


def test_per_step_parameters_take_a_value_per_step():
    family = get_family("coulomb-levels", {"a": 1, "a_2": -1})
    assert family.name == "coulomb-levels[a=1,a_2=-1,b=0]"
    build_symbolic(family, parse_flag("Fl(1,2;3)"))


@pytest.mark.parametrize("parameters, message", [
    (SIGN + SIGN, "parameter 'c' is declared twice"),
    ('\n[[parameters]]\nname = "s"\nvalues = [1]\n', "reserved"),
    ('\n[[parameters]]\nname = "c"\nvalues = [1, 1.5]\n', "must be integers"),
    ('\n[[parameters]]\nname = "c"\nvalues = "1..5000"\n', "more than the limit 1000"),
    ('\n[[parameters]]\nname = "c"\nvalues = "3..1"\n', "empty range"),
    ('\n[[parameters]]\nname = "c"\nvalues = [1, 2]\ndefault = 7\n', "not among its values"),
    ('\n[[parameters]]\nname = "c"\nvalues = [1, 1]\n', "listed twice"),
    ('\n[[parameters]]\nname = "q"\nvalues = [1]\n', "reserved"),
    ('\n[[parameters]]\nname = "c"\nvalues = [1]\ncolour = 1\n', "unknown key 'colour'"),
    ('\n[[parameters]]\nname = "c"\n', "needs values"),
])
def test_bad_declarations_name_the_line(parameters, message):
    text = HEAD.format(parameters=parameters, expr=ELIMINATED)
    assert message in error_of(text)


def test_bad_values_name_the_declaration():
    text = HEAD.format(parameters=SIGN, expr=ELIMINATED)
    line = text.splitlines().index('name = "c"') + 1
    message = error_of(text, {"c": 3})
    assert message.startswith(f"p.toml:{line}:") and "not among the declared values -1, 1" \
        in message
    assert "is not an integer" in error_of(text, {"c": "1"})


def test_a_parameter_without_default_needs_a_value():
    text = HEAD.format(parameters='\n[[parameters]]\nname = "c"\nvalues = [-1, 1]\n',
                       expr=ELIMINATED)
    with pytest.raises(ParameterValuesMissing) as info:
        family_from_text(text, "p.toml")
    assert info.value.names == ["c"] and "--set c=" in str(info.value)
    assert family_from_text(text, "p.toml", {"c": 1}).name == "guess[c=1]"


def test_parameters_clash_with_nothing_else():
    text = HEAD.format(parameters=SIGN, expr="sum(c = 1..2: y)")
    assert "loop variable 'c' has the name of a parameter" in error_of(text)
    text = HEAD.format(parameters=SIGN, expr="c_1 * y")
    assert "parameter c takes no subscript" in error_of(text)


# ---------------------------------------------------------------------------------------
# The shipped families

@pytest.mark.parametrize("case", ["P1", "Gr(2,4)", "Fl(1,3;5)", "Fl(4)", "Gr(3,6)"])
def test_coulomb_levels_at_level_zero_is_vieta(case):
    flag = parse_flag(case)
    ours = build_symbolic(get_family("coulomb-levels"), flag)
    theirs = build_symbolic(FAMILIES["vieta-eliminated"], flag)
    assert [str(r.poly) for r in ours.relations] == [str(r.poly) for r in theirs.relations]
    assert ours.ring.ctx.names() == theirs.ring.ctx.names()
    result = check_case(flag, [FAMILIES["vieta"], get_family("coulomb-levels")], seed=3)
    assert result.verdict == "agree"


def hand_count(n: int, a: int, b: int) -> int:
    """Nonzero roots of ∏_j (x − T_j) + (−1)^(n−1) q ∏T · x^(a+b) (P^(n−1): det S = x).

    Degree max(n, a+b) with a nonzero constant term when a+b ≥ 0 (at a+b = n the leading
    coefficient is 1 ± q∏T ≠ 0); for a+b < 0, times x^(−(a+b)): degree n − (a+b), constant
    term ± q∏T ≠ 0.  Generic q: distinct roots."""
    s = a + b
    return max(n, s) if s >= 0 else n - s


@pytest.mark.parametrize("case, n", [("P1", 2), ("P2", 3)])
def test_coulomb_levels_count_the_solutions_by_hand(case, n):
    flag = parse_flag(case)
    for a in range(-3, 4):
        for b in range(-3, 4):
            family = get_family("coulomb-levels", {"a": a, "b": b})
            result = check_case(flag, [FAMILIES["whitney"], family], seed=5)
            report = result.presentations[family.name]
            # the scan's colengths (scan --colengths), at the check's specialisation
            certificate = result.certificate
            counted = colengths_at(family, flag, seed=certificate.seed,
                                   prime=certificate.prime, equivariant=True)
            assert counted["colength"] == hand_count(n, a, b), (a, b)
            # at q = 0 every level is ∏ (x − T_j) = 0 (times a power of the unit x)
            assert counted["classical_colength"] == n, (a, b)
            # the check computes the colength itself unless the Bethe points refute the
            # presentation (then it computes no Gröbner basis for it)
            if report.colength is None:
                assert report.holds is False and report.failures, (a, b)
                assert result.verdict == "disagree", (a, b)
            else:
                assert report.colength == counted["colength"], (a, b)
            # the same equation as level 0 exactly when a + b = 0 (det S_1 = x)
            assert (result.verdict == "agree") == (a + b == 0), (a, b, result.reason)


# ---------------------------------------------------------------------------------------
# Ground truth of agreement: SymPy's groebner at a random rational specialisation

def sympy_basis(family, flag, keep, residues):
    """Reduced lex basis of the family's ideal (units inverted), intersected with the
    polynomials in the variables `keep`."""
    presentation = build_symbolic(family, flag)
    names = list(presentation.ring.ctx.names())
    symbols = sympy.symbols(names)
    polys = [to_sympy(r.poly, names) for r in presentation.relations]
    polys = [sympy.expand(p.subs(residues)) for p in polys]
    inverses = sympy.symbols(f"u0:{len(presentation.units)}")
    polys += [sympy.expand(u * to_sympy(unit, names).subs(residues) - 1)
              for u, unit in zip(inverses, presentation.units)]
    generators = [s for s in symbols if str(s) not in residues and str(s) not in keep]
    order = list(inverses) + generators + [s for s in symbols if str(s) in keep]
    basis = sympy.groebner(polys, *order, order="lex")
    kept = [p for p in basis.exprs if p.free_symbols <= {sympy.Symbol(k) for k in keep}]
    return sympy.groebner(kept, *[sympy.Symbol(k) for k in keep], order="lex").exprs


def specialisation(flag, seed):
    rng = random.Random(seed)
    values = rng.sample(range(2, 40), flag.n)
    residues = {f"T{j + 1}": v for j, v in enumerate(values)}
    residues.update({f"q{i + 1}": sympy.Rational(rng.randrange(2, 30), rng.randrange(31, 60))
                     for i in range(flag.m)})
    return residues


@pytest.mark.parametrize("case", ["P1", "P2", "Gr(2,4)"])
def test_whitney_unknowns_agreement_matches_sympy(case):
    flag = parse_flag(case)
    residues = specialisation(flag, 11)
    keep = [g.name for g in FAMILIES["whitney"].generators(flag)]
    reference = sympy_basis(FAMILIES["whitney"], flag, keep, residues)
    for sign in (-1, 1):
        for power in range(0, 4):
            family = get_family("whitney-unknowns", {"sign": sign, "power": power})
            same = sympy_basis(family, flag, keep, residues) == reference
            verdict = check_case(flag, [FAMILIES["whitney"], family], seed=2).verdict
            assert (verdict == "agree") == same, (sign, power)
            assert same == (sign == 1 and power == 1), (sign, power)


@pytest.mark.parametrize("case, levels", [
    ("P1", [(0, 0), (1, -1), (1, 0), (0, -2)]),
    ("Gr(2,4)", [(0, 0), (1, -1), (0, 1), (-1, 0)]),
])
def test_coulomb_levels_agreement_matches_sympy(case, levels):
    """Whitney's λ(Q) eliminated, the levels' det S inverted: equal ideals in the λ(S)."""
    flag = parse_flag(case)
    residues = specialisation(flag, 13)
    keep = [f"S{i}_{j}" for i in range(1, flag.m + 1) for j in range(1, flag.k(i) + 1)]
    reference = sympy_basis(FAMILIES["whitney"], flag, keep, residues)
    for a, b in levels:
        family = get_family("coulomb-levels", {"a": a, "b": b})
        same = sympy_basis(family, flag, keep, residues) == reference
        verdict = check_case(flag, [FAMILIES["whitney"], family], seed=2).verdict
        assert (verdict == "agree") == same, (a, b)


# ---------------------------------------------------------------------------------------
# Command line

def test_cli_set_changes_the_relations_and_the_name():
    result = run_cli("relations", "P1", "--presentation", "whitney-unknowns",
                     "--set", "sign=-1", "--set", "power=0")
    assert result.returncode == 0, result.stderr
    assert "whitney-unknowns[sign=-1,power=0]" in result.stdout
    result = run_cli("check", "P1", "--presentations", "whitney,whitney-unknowns", "--json")
    assert result.returncode == 0, result.stderr
    assert "whitney-unknowns[sign=1,power=1]" in json.loads(result.stdout)["presentations"]


@pytest.mark.parametrize("args, message", [
    (["--set", "sgn=1"], "--set sgn=1: unknown parameter (the presentations of this command "
                         "declare power, sign)"),
    (["--set", "sign=1", "--set", "sign=-1"], "--set sign: given twice"),
    (["--set", "sign=1.5"], "is not an integer"),
    (["--set", "sign=" + "9" * 5000], "is not an integer"),
    (["--set", "power=9"], "whitney-unknowns.toml:"),
    (["--set", "=3"], "is not a parameter name"),
    (["--set", "sign"], "expected name=value"),
])
def test_cli_bad_values_are_one_line(args, message):
    result = run_cli("check", "P1", "--presentations", "whitney,whitney-unknowns", *args)
    assert result.returncode == 2
    assert message in result.stderr and result.stderr.count("\n") == 1, result.stderr
    assert "Traceback" not in result.stderr


def test_cli_missing_values_name_the_parameters(tmp_path):
    path = tmp_path / "guess.toml"
    path.write_text(HEAD.format(parameters='\n[[parameters]]\nname = "c"\nvalues = [-1, 1]\n',
                                expr=ELIMINATED))
    result = run_cli("check", "Gr(2,4)", "--presentations", f"whitney,{path}")
    assert result.returncode == 2 and "parameter c of guess needs a value" in result.stderr
    result = run_cli("check", "Gr(2,4)", "--presentations", f"whitney,{path}", "--set", "c=1",
                     "--json")
    assert result.returncode == 0, result.stderr
    assert json.loads(result.stdout)["verdict"] == "agree"


def test_the_names_results_carry_resolve_again():
    family = get_family("whitney-unknowns[sign=-1,power=2]")
    assert family.name == "whitney-unknowns[sign=-1,power=2]"
    assert get_family("coulomb-levels[a=1,a_2=-1,b=0]").name == "coulomb-levels[a=1,a_2=-1,b=0]"
    result = run_cli("check", "P1", "--presentations", "whitney,whitney-unknowns[sign=-1,power=0]",
                     "--json")
    assert result.returncode == 1, result.stderr          # exit status 1: disagree
    assert json.loads(result.stdout)["verdict"] == "disagree"


def test_reports_repeat_the_values(tmp_path):
    result = run_cli("check", "P1", "--presentations", "whitney,whitney-unknowns",
                     "--set", "sign=-1", "--report", str(tmp_path))
    assert result.returncode == 1, result.stderr          # sign=-1 disagrees: exit status 1
    assert "--set sign=-1" in (tmp_path / "P1.md").read_text()


def test_sweep_values_are_part_of_the_store_key(tmp_path):
    store = str(tmp_path / "runs.db")
    base = ["sweep", "--cases", "P1", "--presentations", "whitney,whitney-unknowns",
            "--store", store, "--workers", "1", "--json"]
    first = run_cli(*base, "--set", "sign=-1")
    assert first.returncode == 1, first.stderr            # a case disagrees: exit status 1
    data = json.loads(first.stdout)
    assert data["counts"] == {"disagree": 1} and data["from_store"] == []
    assert data["settings"]["presentations"][1]["name"] == "whitney-unknowns[sign=-1,power=1]"
    second = run_cli(*base)                               # the defaults: another key
    assert second.returncode == 0, second.stderr          # every case agrees: exit status 0
    second = json.loads(second.stdout)
    assert second["counts"] == {"agree": 1} and second["from_store"] == []
    third = run_cli(*base, "--set", "sign=-1")
    assert third.returncode == 1, third.stderr
    assert json.loads(third.stdout)["from_store"] == ["P1"]
