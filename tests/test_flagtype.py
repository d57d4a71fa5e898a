"""Flag types: trade-notation parsing, rank and torus-fixed points."""
import math

import pytest

from ringmatch.presentations.flagtype import FlagType, FlagTypeError, parse_flag


@pytest.mark.parametrize("text, dims, n", [
    ("Fl(1,3;5)", (1, 3), 5),
    ("Fl( 1 , 3 ; 5 )", (1, 3), 5),
    ("Gr(2;5)", (2,), 5),
    ("Gr(2,5)", (2,), 5),
    ("P4", (1,), 5),
    ("P^4", (1,), 5),
    ("Fl(4)", (1, 2, 3), 4),
    ("Fl(1,2;3)", (1, 2), 3),
])
def test_trade_notation(text, dims, n):
    assert parse_flag(text) == FlagType(dims, n)


@pytest.mark.parametrize("text", ["Fl(3,1;5)", "Gr(5;5)", "Fl(;0)", "Gr(a,b)", "Fl(1,3,5)",
                                  "Gr(0,3)", "Fl(1)", "P0", "", "Fl(1,1;3)", "Fl(2;2)"])
def test_bad_names_are_rejected_with_the_name_in_the_message(text):
    with pytest.raises(FlagTypeError) as caught:
        parse_flag(text)
    assert repr(text) in str(caught.value)
    assert "\n" not in str(caught.value)


def test_canonical_names_round_trip():
    for text in ["Fl(1,3;5)", "Gr(2;5)", "P4", "Fl(4)", "Fl(2,4,6;8)"]:
        flag = parse_flag(text)
        assert parse_flag(flag.name) == flag
    assert parse_flag("Gr(2,5)").name == "Gr(2;5)"
    assert parse_flag("Fl(1,2;3)").name == "Fl(3)"


def test_rank_is_the_multinomial_coefficient():
    # Standard fact: the number of torus-fixed points (Euler characteristic) of
    # Fl(k_1,…,k_m;n) is n!/(k_1!(k_2−k_1)!⋯(n−k_m)!).
    assert parse_flag("Gr(2,5)").rank == math.comb(5, 2) == 10
    assert parse_flag("Fl(5)").rank == 120
    assert parse_flag("Fl(1,3;5)").rank == math.factorial(5) // (1 * 2 * 2) == 30
    assert parse_flag("Fl(2,4,6;8)").rank == 2520
    assert parse_flag("Gr(5,10)").rank == 252


@pytest.mark.parametrize("text", ["Gr(2,5)", "Fl(4)", "Fl(1,3;5)", "P3", "Fl(2,3;6)"])
def test_fixed_points_are_the_chains_and_count_to_the_rank(text):
    flag = parse_flag(text)
    points = list(flag.fixed_points())
    assert len(points) == len(set(points)) == flag.rank
    for chain in points:
        assert [len(level) for level in chain] == list(flag.dims)
        for smaller, larger in zip(chain, chain[1:]):
            assert set(smaller) < set(larger)
        assert all(1 <= j <= flag.n for j in chain[-1])
