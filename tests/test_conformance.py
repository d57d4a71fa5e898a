"""`ringmatch presentations --check NAME` (compare/conformance.py): the family contract.

The built-in families and the shipped files that are meant to be right must conform; the
deliberately wrong shipped conjecture (`whitney-sign-error`, a flipped q sign in the level-2
relation) and families broken on purpose below must each be stopped with the problem named.
"""
from __future__ import annotations

import contextlib
import io
import json
from dataclasses import replace

import pytest

from ringmatch.compare.cli import main
from ringmatch.compare.conformance import check_family
from ringmatch.presentations import FAMILIES, get_family
from ringmatch.presentations.interface import Generator, Relation
from ringmatch.presentations.meanings import Meaning


def cli(*args):
    """The command in this process: (exit status, stdout)."""
    out = io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(io.StringIO()):
        status = main(list(args))
    return status, out.getvalue()


@pytest.mark.parametrize("name", sorted(FAMILIES) + ["qwhitney-family", "vieta-family",
                                                     "kestrel-conjecture",
                                                     "p3-single-generator"])
def test_established_presentations_conform(name):
    result = check_family(get_family(name))
    assert result.conforms, result.problem
    assert result.cases


def test_the_case_file_is_checked_on_its_own_case():
    # p3-single-generator describes P3 only, none of the default cases
    assert check_family(get_family("p3-single-generator")).cases == ("P3",)


def test_a_wrong_sign_is_found_at_the_points():
    status, out = cli("presentations", "--check", "whitney-sign-error")
    assert status == 1
    assert "Fl(3)" in out and "level 2, y^2" in out and "does not vanish" in out


def test_json_record():
    status, out = cli("presentations", "--check", "toda", "--json")
    record = json.loads(out)
    assert status == 0 and record["conforms"] is True and record["problem"] is None
    assert record["cases"] == ["P1", "Fl(3)"]
    assert record["not_supported"][0]["case"] == "Gr(2;4)"


def _whitney_with(**changes):
    return replace(FAMILIES["whitney"], name="broken", **changes)


def test_a_meaning_outside_the_flag_type_is_named():
    whitney = FAMILIES["whitney"]

    def generators(flag):
        gens = whitney.generators(flag)
        return gens[:-1] + [Generator(gens[-1].name, Meaning("lambda_S", flag.m + 3, 1), 1)]
    result = check_family(_whitney_with(generators=generators))
    assert not result.conforms and "level" in result.problem and "outside" in result.problem


def test_a_missing_relation_shows_as_the_colength():
    whitney = FAMILIES["whitney"]
    result = check_family(_whitney_with(relations=lambda flag, ring:
                                        whitney.relations(flag, ring)[:-1]))
    assert not result.conforms and "colength" in result.problem


def test_a_unit_that_vanishes_at_a_fixed_point_is_named():
    result = check_family(_whitney_with(
        units=lambda flag, ring: [ring.gen["S1_1"] - ring.T[0]]))
    assert not result.conforms and "unit 1 vanishes" in result.problem


def test_a_family_that_raises_is_described_not_reraised():
    def relations(flag, ring):
        raise RuntimeError("plug-in bug")
    result = check_family(_whitney_with(relations=relations))
    assert result.problem.endswith("raised RuntimeError: plug-in bug")


def test_an_extra_relation_in_one_ring_only_is_named():
    whitney = FAMILIES["whitney"]

    def relations(flag, ring):
        extra = [Relation("extra", ring.one)] if ring.extra.get("s") is not None else []
        return whitney.relations(flag, ring) + extra
    result = check_family(_whitney_with(relations=relations))
    assert not result.conforms and "differ in number" in result.problem


def test_meaning_kinds_are_one_table():
    """Each kind of meaning is one record (presentations/meanings.py): its stored name, text,
    pretty and LaTeX forms, parse pattern and bounds; the forms are the ones files, JSON and
    reports have always used."""
    from ringmatch.presentations.flagtype import parse_flag
    from ringmatch.presentations.meanings import KINDS, meaning_problem, parse_meaning
    forms = {"lambda_S": ("lambda_2(S_1)", "λ_2(S_1)", r"\lambda_{2}(S_{1})", 2),
             "lambda_Q": ("lambda_2(Q_1)", "λ_2(Q_1)", r"\lambda_{2}(Q_{1})", 2),
             "vieta_aux": ("e_2(Y_1)", "e_2(Y^(1))", r"e_{2}(Y^{(1)})", 2),
             "toda_L": ("L_1", "det S_1 / det S_0", r"L_{1}", 1),
             "root": ("x_2(S_1)", "X^(1)_2", r"X^{(1)}_{2}", 1)}
    assert set(KINDS) == set(forms)
    for kind, (text, pretty, latex, degree) in forms.items():
        meaning = Meaning(kind, 1, 0 if kind == "toda_L" else 2)
        assert (meaning.text, meaning.pretty, meaning.latex, meaning.degree) == \
            (text, pretty, latex, degree)
        assert parse_meaning(text.replace("_", "_ ", 1)) == meaning
    with pytest.raises(ValueError, match="unknown meaning kind"):
        Meaning("lambda_R", 1, 1)
    with pytest.raises(ValueError, match=r"lambda_j\(S_i\), lambda_j\(Q_i\), e_j\(Y_i\), L_i, "
                                         r"x_a\(S_i\)"):
        parse_meaning("y_1(S_1)")
    flag = parse_flag("Fl(1,3;5)")      # k = 1, 3; d = 2, 2
    assert meaning_problem(Meaning("lambda_S", 2, 3), flag) is None
    assert meaning_problem(Meaning("root", 1, 2), flag) == "x_2(S_1): index 2 outside 1…1"
    assert meaning_problem(Meaning("lambda_Q", 1, 3), flag) == \
        "lambda_3(Q_1): index 3 outside 1…2"
    assert meaning_problem(Meaning("toda_L", 3), flag) is None        # levels 1…m+1
    assert meaning_problem(Meaning("vieta_aux", 3, 1), flag) == "e_1(Y_3): level 3 outside 1…2"
