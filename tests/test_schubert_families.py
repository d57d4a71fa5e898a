"""Schubert bases written once for many cases: [[schubert.family]] in a basis file.

Two families are checked, both test data beside this file:

* tests/schubert/projective-powers.toml: O_a = (1 − [O(−1)])^a on every P^{n−1} (Koszul
  resolution of a linear subspace; recalled from memory, stated with Buch–Mihalcea, Duke
  Math. J. 156 (2011));
* tests/schubert/two-row-grothendieck.toml: the Grothendieck polynomials G_{(a,b)} of two
  variables by a closed formula (bialternant formula, recalled from memory; the file derives
  the closed form), written with sums, products and holes.

What is trusted, and why: every check of `ringmatch schubert` comes from geometry (the
K-theoretic Littlewood–Richardson rule of Buch, Acta Math. 189 (2002), expanded with SymPy;
the sum rule of arXiv:1903.02215; the P^{n−1} products of Buch–Mihalcea), and the classes
are compared element by element with the built-in candidate `groth:S:1-x`, which computes
the same polynomials by dividing a determinant (presentations/schubert_bases.py).
"""
from __future__ import annotations

import json
from pathlib import Path

import pytest

from ringmatch.compare import schubert as S
from ringmatch.compare.cli import main
from ringmatch.presentations import get_family, schubert_files
from ringmatch.presentations import schubert_bases as sb
from ringmatch.presentations.flagtype import parse_flag

HERE = Path(__file__).resolve().parent / "schubert"
POWERS = str(HERE / "projective-powers.toml")
TWO_ROWS = str(HERE / "two-row-grothendieck.toml")
SEED = 20261203


def _file_basis(path, case, presentation="whitney"):
    flag = parse_flag(case)
    family = get_family(presentation)
    loaded = schubert_files.load_basis(path, flag, family.generators(flag))
    return flag, family, S.Basis(loaded.name, loaded.labels, polynomials=loaded.polynomials,
                                 source=loaded.source)


@pytest.mark.parametrize("case", ["P1", "P2", "P3", "P4", "P5"])
def test_projective_family_passes_every_check_and_is_the_builtin_basis(case):
    flag, family, basis = _file_basis(POWERS, case)
    assert basis.labels == tuple(sb.partitions_in_box(1, flag.n - 1))
    result = S.structure_constants(flag, family, basis, seed=SEED)
    assert result.passed and {c["name"] for c in result.checks} >= {
        "basis", "finiteness", "classical_lr", "sum_rule", "projective_space"}
    builtin = S.candidate_basis(flag, sb.candidate_named("groth:S:1-x"))
    assert S.first_difference(result, S.structure_constants(flag, family, builtin,
                                                            seed=SEED)) is None
    assert S.same_classes(flag, (family, basis), (get_family("vieta"), builtin), seed=SEED,
                          prime=S.algebra.DEFAULT_PRIME) == {"same": True}


def test_a_family_written_with_meanings_serves_every_presentation(capsys):
    # λ_1(S_1) is a generator of whitney and of vieta, and the first elementary symmetric
    # function of the Chern roots in bethe: one file, three presentations, one table.
    code = main(["schubert", "P3", "--presentation", "whitney,vieta,bethe", "--basis", POWERS,
                 "--json", "--seed", str(SEED)])
    payload = json.loads(capsys.readouterr().out)
    assert code == 0
    assert [c["same_table"] for c in payload["comparisons"]] == [True, True]


@pytest.mark.parametrize("case", ["Gr(2,4)", "Gr(2,5)", "Gr(2,6)"])
def test_two_row_formula_gives_the_grothendieck_classes(case):
    flag, family, basis = _file_basis(TWO_ROWS, case)
    assert sorted(basis.labels) == sorted(sb.partitions_in_box(2, flag.n - 2))
    builtin = S.candidate_basis(flag, sb.candidate_named("groth:S:1-x"))
    assert S.same_classes(flag, (family, basis), (family, builtin), seed=SEED,
                          prime=S.algebra.DEFAULT_PRIME) == {"same": True}
    result = S.structure_constants(flag, family, basis, seed=SEED)
    assert result.passed
    assert {c["name"] for c in result.checks} >= {"classical_lr", "sum_rule", "finiteness"}


def test_a_wrong_term_in_the_family_is_caught_by_the_checks(tmp_path, capsys):
    # Dropping the e_2·h_{a−b−1} correction leaves products of Schur-like classes: the
    # classes differ from the Grothendieck classes and the K-theoretic checks fail.
    text = Path(TWO_ROWS).read_text()
    start = text.index("        - (1 - lambda_1(S_1) + lambda_2(S_1)) *")
    end = text.index('  """ },')
    broken = text[:start] + "        )\n" + text[end:]
    path = tmp_path / "broken.toml"
    path.write_text(broken)
    assert main(["schubert", "Gr(2,4)", "--basis", str(path), "--json",
                 "--seed", str(SEED)]) == 1
    checks = json.loads(capsys.readouterr().out)["checks"]
    assert not all(checks.values())


def test_a_case_entry_wins_over_the_family(tmp_path):
    path = tmp_path / "both.toml"
    path.write_text(Path(POWERS).read_text() + '\n[[schubert.case]]\ncase = "P1"\n'
                    '[schubert.case.classes]\n"[]" = "1"\n"[1]" = "S1_1"\n')
    flag = parse_flag("P1")
    loaded = schubert_files.load_basis(str(path), flag, get_family("whitney").generators(flag))
    assert loaded.polynomials[1] == {(("S1_1", 1),): 1}
    other = parse_flag("P2")
    loaded = schubert_files.load_basis(str(path), other,
                                       get_family("whitney").generators(other))
    assert loaded.polynomials[2] == {(): 1, (("S1_1", 1),): -2, (("S1_1", 2),): 1}


def test_a_presentation_file_carries_its_own_family_basis(tmp_path, capsys):
    family_file = Path(__file__).resolve().parents[1] / "presentations/files/qwhitney-family.toml"
    path = tmp_path / "with-basis.toml"
    path.write_text(family_file.read_text() + "\n" +
                    Path(POWERS).read_text().split("[schubert]", 1)[1].join(["[schubert]", ""]))
    assert main(["schubert", "P2", "--presentation", str(path), "--checks-only",
                 "--seed", str(SEED)]) == 0
    assert "all checks pass" in capsys.readouterr().out


BAD_CLASSES = [
    ('{ for = "a = 0..n-1", label = "[{a}]", expr = "(1 - Z1_1)^a" }',
     "unknown symbol 'Z1_1' (did you mean S1_1?"),
    ('{ for = "a = 0..n-1", label = "[1]", expr = "(1 - S1_1)^a" }',
     "two classes have the label [1]"),
    ('{ for = "a = 0..n-1", label = "[{a}]", expr = "q_1*(1 - S1_1)^a" }',
     "polynomial in the generators alone; this one contains q1"),
    ('{ for = "a = 0..n-1", lable = "[{a}]", expr = "(1 - S1_1)^a" }', "unknown key 'lable'"),
    ('{ for = "a = 0..n-1", label = "[{a}]", expr = "(1 - S1_1)^a / S1_1" }',
     "division by a non-unit"),
    ('{ for = "a = 0..n-1", label = "[{a}]", expr = "(1 - S1_1)^a / 2" }',
     "integer coefficients, not 1/2"),
    ('{ for = "a = 0..n-1", label = "[{a - 5}]", expr = "(1 - S1_1)^a" }', "negative part"),
    ('{ for = "a = 0..n-1", label = "[{a}]", expr = "(1 - S1_1)^(a" }', ""),
    ('{ for = "a = 0..n-1", label = "[{a}]", expr = "(1 - x_1(S_1))^a" }',
     "no generator means x_1(S_1) in this presentation (its generators: S1_1,"),
    ('{ for = "a = 0..10^9", label = "[{a}]", expr = "1" }', "is too long"),
    ('{ for = "a = 0..n-1", label = "[{a}]", expr = "(1 - S1_1)^100000" }', "degree exceeds"),
]


@pytest.mark.parametrize("entry, message", BAD_CLASSES)
def test_broken_family_entries_are_one_line_errors_with_a_position(tmp_path, capsys, entry,
                                                                   message):
    path = tmp_path / "bad.toml"
    path.write_text(f'[schubert]\n[[schubert.family]]\napplies_to = "projective"\n'
                    f'classes = [ {entry} ]\n')
    assert main(["schubert", "P3", "--basis", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"ringmatch: {path}:4:") and message in err
    assert err.count("\n") == 1


def test_family_errors_outside_the_classes(tmp_path, capsys):
    cases = {
        'applies_to = "projektive"\nclasses = [ { label = "[]", expr = "1" } ]':
            "applies_to: 'projektive' is neither",
        'classes = [ { label = "[]", expr = "1" } ]': "needs 'applies_to'",
        'applies_to = "projective"': "needs 'classes'",
        'applies_to = "projective"\nclasses = []': "empty classes list",
        'applies_to = "projective"\nclasses = [ { label = "[]", expr = "1" } ]\ncolour = 1':
            "unknown key 'colour'",
    }
    for body, message in cases.items():
        path = tmp_path / "bad.toml"
        path.write_text(f"[schubert]\n[[schubert.family]]\n{body}\n")
        assert main(["schubert", "P3", "--basis", str(path)]) == 2, body
        err = capsys.readouterr().err
        assert message in err and err.count("\n") == 1, (body, err)


def test_a_family_that_does_not_apply_says_so(capsys):
    assert main(["schubert", "Gr(2,7)", "--basis", TWO_ROWS]) == 2
    assert "nor a [[schubert.family]] that applies to it" in capsys.readouterr().err


def test_too_few_classes_for_the_rank(tmp_path, capsys):
    path = tmp_path / "short.toml"
    path.write_text(Path(POWERS).read_text().replace("a = 0..n-1", "a = 0..n-2"))
    assert main(["schubert", "P3", "--basis", str(path)]) == 2
    assert "has 3 elements; P3 has rank 4" in capsys.readouterr().err


def test_a_basis_file_given_as_a_presentation_says_what_it_is(capsys):
    assert main(["check", "P1", "--presentations", f"whitney,{POWERS}"]) == 2
    err = capsys.readouterr().err
    assert "holds only a Schubert basis" in err and "--basis" in err and err.count("\n") == 1


def test_a_basis_coefficient_divisible_by_the_prime_is_not_dropped(tmp_path, capsys):
    # Mod the default prime the extra term vanishes and the classes would be O_a = (1 − S1_1)^a,
    # which pass every check; over Q they are not those classes.  The prime is passed over.
    prime = S.algebra.DEFAULT_PRIME
    path = tmp_path / "multiple.toml"
    path.write_text('[schubert]\n[[schubert.case]]\ncase = "P2"\n[schubert.case.classes]\n'
                    f'"[]" = "1"\n"[1]" = "1 - S1_1 + {prime}*S1_1^2"\n"[2]" = "(1 - S1_1)^2"\n')
    assert main(["schubert", "P2", "--basis", str(path), "--json", "--seed", str(SEED)]) == 1
    payload = json.loads(capsys.readouterr().out)
    assert payload["certificate"]["prime"] != prime
    assert any(f"{prime} divides {prime}" in note for note in payload["notes"])
