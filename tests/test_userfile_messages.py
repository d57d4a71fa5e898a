"""A misspelt function in a presentation file is named, with the nearest known one."""
import pytest

from test_userfile import relation_error


@pytest.mark.parametrize("expr_line, expected", [
    ('expr = "lamda_1(S_1) - 1"', "unknown function 'lamda'; did you mean 'lambda'?"),
    ('expr = "lambada_y(Q_1)"', "unknown function 'lambada'; did you mean 'lambda'?"),
    ('expr = "sun_1(S_1)"', "unknown function 'sun'; did you mean 'sum'?"),
])
def test_an_unknown_function_is_named(expr_line, expected):
    message = relation_error(expr_line)
    assert expected in message and message.startswith("bad.toml:15:")


def test_a_product_without_star_still_says_so():
    assert "multiplication needs an explicit *" in relation_error('expr = "S1_1 (S1_2 + 1)"')
