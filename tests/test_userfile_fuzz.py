"""Property-based fuzzing of the presentation-file reader (docs/presentation-files.md).

10 500 generated files in total: the shipped files (and case files written from the
built-in families) with characters, tokens and lines deleted, inserted, duplicated and
swapped; relation expressions that are random token soups, or random well-formed expressions,
inside a valid container; and arbitrary text.  Every one must end either in a presentation (expanded for a small flag
type, in a specialised ring) or in a one-line `PresentationFileError` naming the file — any
other exception fails the test — and `eval`/`exec` are switched off while it runs, so
nothing in a file can be executed.
"""
from __future__ import annotations

import builtins
import json
import re
from contextlib import contextmanager

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ringmatch.compare import algebra
from ringmatch.presentations import FAMILIES, userfile
from ringmatch.presentations.flagtype import parse_flag
from ringmatch.presentations.interface import build_specialised
from ringmatch.presentations.userfile import PresentationFileError, family_from_text

from conftest import examples

LABEL = "fuzz.toml"
SMALL_CASES = [parse_flag(c) for c in ("Gr(1;2)", "Fl(1,2;3)", "Gr(2;4)", "Fl(1,3;4)", "Fl(4)")]
SPECS = {flag: algebra.draw_specialisation(flag.n, flag.m, seed=7) for flag in SMALL_CASES}

SEEDS = sorted(path.read_text() for path in userfile.shipped_files().values())
SEEDS += [userfile.case_file_text(FAMILIES[name], parse_flag(case))
          for name, case in (("whitney", "Gr(1;2)"), ("toda", "Fl(3)"), ("vieta", "Fl(1,2;3)"))]

ALPHABET = list("\"'[]{}()=_.,:+-*/^#\n \t0123456789ijkmnqyTSQYCLxeh\\λ−·")
TOKENS = ["lambda_y(", "lambda_j(", "det(", "e_j(", "h_2(", "x_1(", "L_", "sum(", "prod(",
          "..", ":", "[y^", "[y]", "]", "{i}", "{", "}", "k_{i+1}", "d_i", "k_", "n", "m",
          "rank", "q_i", "q_1", "T_j", "T_9", "T1", "S_0", "S_i", "Q_i", "Y_i", "C^n", "T", "y",
          "/", "(1 - q_i)", "^-1", "^", "^200", "*", "-", "+", "=", "(", ")", ",", "0", "1",
          "99999", "i", "j", "a", "S1_1", "Q1_1", "w1_1", "L1", '"', '"""', "'", "\n",
          "\n[[relations]]\n", "\n[[generators]]\n", "\n[[units]]\n", "\nexpr = \"",
          "for = \"", "group = [", "coefficients = \"", "label = \"", "applies_to", "flavour",
          "\"case\"", "\"family\"", "case = \"Fl(4)\"\n", "weight = 0", "name = \"",
          "meaning = \"", "lambda_j(S_i)", "e_j(Y_i)", "x_a(S_i)", "L_i", "#"]
TOKEN_PATTERN = re.compile(r"\s+|[A-Za-z_][A-Za-z0-9_]*|\d+|\.\.|.", re.S)


@contextmanager
def dynamic_code_forbidden():
    def refuse(*args, **kwargs):
        raise AssertionError("eval/exec called while reading a presentation file")
    saved = builtins.eval, builtins.exec
    builtins.eval, builtins.exec = refuse, refuse
    try:
        yield
    finally:
        builtins.eval, builtins.exec = saved


def check_clean_error(error: PresentationFileError) -> None:
    text = str(error)
    assert "\n" not in text and text.startswith(LABEL), text
    assert error.message, text


def read_and_expand(text: str) -> str:
    """'parsed', 'refused' (no small case supported) or 'error' — or a failing assertion."""
    with dynamic_code_forbidden():
        try:
            family = family_from_text(text, LABEL)
        except PresentationFileError as error:
            check_clean_error(error)
            return "error"
        for flag in SMALL_CASES:
            if family.unsupported(flag) is not None:
                continue
            try:
                presentation = build_specialised(family, flag, SPECS[flag])
            except PresentationFileError as error:
                check_clean_error(error)
                return "error"
            assert presentation.relations and presentation.generators
            assert all(r.poly.context() is presentation.ring.ctx for r in presentation.relations)
            return "parsed"
        return "refused"


# ---------------------------------------------------------------------------------------
# Mutations

def _position(draw, text: str) -> int:
    return draw(st.integers(0, len(text)))


@st.composite
def mutated_file(draw) -> str:
    text = draw(st.sampled_from(SEEDS))
    for _ in range(draw(st.integers(1, 5))):
        kind = draw(st.sampled_from(["delete", "insert_char", "insert_token", "swap_chars",
                                     "swap_tokens", "delete_token", "duplicate_line",
                                     "delete_line"]))
        if kind == "delete":
            i = _position(draw, text)
            text = text[:i] + text[i + draw(st.integers(1, 12)):]
        elif kind == "insert_char":
            i = _position(draw, text)
            text = text[:i] + draw(st.sampled_from(ALPHABET)) + text[i:]
        elif kind == "insert_token":
            i = _position(draw, text)
            text = text[:i] + draw(st.sampled_from(TOKENS)) + text[i:]
        elif kind == "swap_chars" and len(text) > 1:
            i, j = sorted((_position(draw, text[:-1]), _position(draw, text[:-1])))
            text = text[:i] + text[j] + text[i + 1:j] + text[i] + text[j + 1:]
        elif kind in ("swap_tokens", "delete_token"):
            tokens = TOKEN_PATTERN.findall(text)
            if len(tokens) > 1:
                i = draw(st.integers(0, len(tokens) - 1))
                j = draw(st.integers(0, len(tokens) - 1))
                if kind == "swap_tokens":
                    tokens[i], tokens[j] = tokens[j], tokens[i]
                else:
                    del tokens[i]
                text = "".join(tokens)
        elif kind in ("duplicate_line", "delete_line"):
            lines = text.split("\n")
            i = draw(st.integers(0, len(lines) - 1))
            lines[i:i + 1] = [lines[i]] * (2 if kind == "duplicate_line" else 0)
            text = "\n".join(lines)
    return text


SOUP_CONTAINER = """\
format = 1
flavour = "family"
name = "soup"
applies_to = "all"

[[generators]]
for = "i = 1..m"
group = [
  {{ for = "j = 1..k_i", name = "S{{i}}_{{j}}", meaning = "lambda_j(S_i)", weight = "j" }},
  {{ for = "j = 1..d_i", name = "Q{{i}}_{{j}}", meaning = "lambda_j(Q_i)", weight = "j" }},
]

[[units]]
expr = {unit}

[[relations]]
for = {loops}
coefficients = {coefficients}
expr = {expr}
"""
SOUP_TOKENS = [t for t in TOKENS if not any(c in t for c in "\"'\n#")] + \
              ["S1_1", "S1_2", "Q1_1", "Q2_1", "S2_1", "S2_2", " ", "  ", "(", ")", "i", "j",
               "1", "2", "3"]


def toml_string(text: str) -> str:
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"'


@st.composite
def token_soup_file(draw) -> str:
    def soup(max_size):
        return "".join(draw(st.lists(st.sampled_from(SOUP_TOKENS), min_size=0,
                                     max_size=max_size)))
    loops = draw(st.sampled_from(['"i = 1..m"', '"i = 1..1"', toml_string(soup(6))]))
    coefficients = draw(st.sampled_from(['"j = 1..k_{i+1}"', '"j = 0..2"',
                                         toml_string(soup(5))]))
    unit = draw(st.sampled_from(['"det(S_1)"', '"1 + S1_1"', toml_string(soup(5))]))
    expr = toml_string(soup(16))
    return SOUP_CONTAINER.format(unit=unit, loops=loops, coefficients=coefficients, expr=expr)


ATOMS = ["S1_1", "S1_2", "Q1_1", "S2_1", "T_1", "T_3", "T_9", "q_1", "q_2", "q_i", "y", "n", "m",
         "k_i", "d_i", "i", "j", "a", "0", "1", "2", "7", "det(S_i)", "det(Q_1)", "det(C^n)",
         "lambda_y(S_i)", "lambda_y(Q_i)", "lambda_y(S_{i+1})", "lambda_y(S_{i-1})",
         "lambda_2(S_1)", "e_2(T)", "h_2(S_1)", "h_3(T)", "x_1(C^n)", "L_1", "lambda_y(Y_1)",
         "(1 - q_i)", "rank"]
EXPRESSIONS = st.recursive(
    st.sampled_from(ATOMS),
    lambda inner: st.one_of(
        st.tuples(inner, st.sampled_from(["+", "-", "*", "/"]), inner).map(
            lambda t: f"({t[0]} {t[1]} {t[2]})"),
        st.tuples(inner, st.sampled_from(["0", "1", "2", "3", "-1", "-2", "k_i", "(n-1)"])).map(
            lambda t: f"{t[0]}^{t[1]}"),
        st.tuples(st.sampled_from(["0", "1", "2", "j", "d_i", "{n}"]), inner).map(
            lambda t: f"[y^{t[0]}]({t[1]})"),
        st.tuples(st.sampled_from(["sum", "prod"]), st.sampled_from(["a = 1..2", "a = 0..n",
                                                                      "a = 2..1", "j = 1..2"]),
                  inner).map(lambda t: f"{t[0]}({t[1]}: {t[2]})"),
        inner.map(lambda e: f"-{e}")),
    max_leaves=10)


@st.composite
def grammar_built_file(draw) -> str:
    """Well-formed expressions from random pieces: they reach evaluation, where index
    ranges, units, degrees and loop variables are checked."""
    loops = draw(st.sampled_from(['"i = 1..m"', '"i = 1..1"', '"i = m..m"', '"i = 0..m"']))
    coefficients = draw(st.sampled_from(['"j = 1..k_{i+1}"', '"j = 0..2"', '"a = 0..1"']))
    unit = draw(st.sampled_from(['"det(S_1)"', '"1 + S1_1"', toml_string(draw(EXPRESSIONS))]))
    expr = toml_string(draw(EXPRESSIONS))
    return SOUP_CONTAINER.format(unit=unit, loops=loops, coefficients=coefficients, expr=expr)


def fuzz_settings(full: int) -> settings:
    return settings(max_examples=examples(full), deadline=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                           HealthCheck.filter_too_much])


@fuzz_settings(4500)
@given(mutated_file())
def test_mutated_shipped_files_parse_or_fail_cleanly(text):
    read_and_expand(text)


@fuzz_settings(4000)
@given(token_soup_file() | grammar_built_file())
def test_token_soup_expressions_parse_or_fail_cleanly(text):
    read_and_expand(text)


@fuzz_settings(2000)
@given(st.text(alphabet=st.characters(blacklist_categories=("Cs",)), max_size=300)
       | st.text(alphabet=ALPHABET + list("abcdefgrstuvwz"), max_size=300))
def test_arbitrary_text_parses_or_fails_cleanly(text):
    read_and_expand(text)


def test_the_seeds_themselves_parse():
    """The unmutated inputs expand (so mutations start from working files)."""
    outcomes = [read_and_expand(text) for text in SEEDS]
    assert outcomes.count("parsed") >= len(SEEDS) - 1     # the P3 case is not a small case
    assert "error" not in outcomes
    soup = SOUP_CONTAINER.format(unit='"det(S_1)"', loops='"i = 1..m"',
                                 coefficients='"j = 1..k_{i+1}"',
                                 expr='"lambda_y(S_i) * lambda_y(Q_i) - lambda_y(S_{i+1})"')
    assert read_and_expand(soup) == "parsed"


# ---------------------------------------------------------------------------------------
# Files that are small but unbounded (issue #18): each ends in one located line

HOSTILE_HEAD = """\
format = 1
flavour = "family"
name = "hostile"
applies_to = "all"
{top}
[[generators]]
for = "i = 1..m, j = 1..k_i"
name = "S{{i}}_{{j}}"
meaning = "lambda_j(S_i)"
weight = "j"
"""
HOSTILE = {
    # every product within the per-operation limits, together minutes and gigabytes
    "total work": ("", '[[relations]]\nfor = "r = 1..40"\nexpr = "(sum(a = 1..60: sum(b = 1..30: '
                       'S1_1^a*T_1^b + 3^900)))*(sum(a = 1..60: sum(b = 1..30: S1_1^a*T_2^b '
                       '+ 5^900)))"\n', "too much arithmetic"),
    "many units": ("", '[[relations]]\nexpr = "S1_1"\n' + "".join(
        f'[[units]]\nexpr = "S1_1 + {k}"\n' for k in range(160)), "more than 32 declared units"),
    "a loop of units": ("", '[[relations]]\nexpr = "S1_1"\n[[units]]\nfor = "a = 1..1000"\n'
                            'expr = "S1_1 + a"\n', "more than 32 declared units"),
    "a huge literal": ("", '[[relations]]\nexpr = "S1_1 - 10^4300"\n', "14000 bits"),
    # 10^4300 has 14 285 bits: an integer power is checked after it is taken, so no integer
    # of a file passes 14 000 bits, and every one can be printed (Python: 4 300 digits)
    "a huge colength": ('expected_colength = "10^4300"', '[[relations]]\nexpr = "S1_1"\n',
                        "a number exceeds 14000 bits"),
    "a large colength": ('expected_colength = "10^4000"', '[[relations]]\nexpr = "S1_1"\n',
                         "expected_colength is larger than"),
    "a huge TOML integer": ("expected_colength = 1" + "0" * 4400, '[[relations]]\nexpr = "S1_1"\n',
                            "integer with more than 40 digits"),
    "a huge label hole": ("", '[[relations]]\nlabel = "x{10^4300}"\nexpr = "S1_1"\n',
                          "a number exceeds 14000 bits"),
    "a large label hole": ("", '[[relations]]\nlabel = "x{10^4000}"\nexpr = "S1_1"\n',
                           "a hole {…} evaluates to a number larger than"),
    "a huge range": ("", '[[relations]]\nfor = "r = 1..10^4300"\nexpr = "S1_1"\n',
                     "a number exceeds 14000 bits"),
    # a message names a long number by its first digits and length, never whole
    "a long range": ("", '[[relations]]\nfor = "r = 1..10^4000"\nexpr = "S1_1"\n',
                     "range 1..100000000000…(4001 digits) is too long"),
    # taking coefficients of y (once a pass in Python over every term, uncounted) is counted
    "a loop of coefficients": ("", '[[relations]]\nfor = "r = 1..3000"\nexpr = "[y^2](X) - '
                                   '[y^2](X)"\n'.replace("X", "(1+y+T_1+T_2+T_3+T_4)^4 * "
                                                          "(1+S1_1+S1_2+q_1+T_1*T_2+T_3*T_4)^4"),
                               "too much arithmetic"),
    # each h_200(S_1) is 400 products and sums of one-term polynomials: the interpreter's
    # cost of an operation is counted too (a loop of them took 40 s)
    "a loop of small operations": ("", '[[relations]]\nexpr = "sum(r = 1..99999: h_200(S_1))"\n',
                                   "too much arithmetic"),
    # dividing by one 330-term unit again and again (its text is what is known about it)
    "a loop of divisions": ('', '[[units]]\nexpr = "1 + S1_1 + S1_2 + T_1 + T_2 + T_3 + T_4"\n'
                                '[[relations]]\nexpr = "sum(r = 1..99999: S1_1 / (1 + S1_1 + '
                                'S1_2 + T_1 + T_2 + T_3 + T_4)^4)"\n', "too much arithmetic"),
    # every relation within its limits, 5 000 of them would keep about 10^8 terms (gigabytes)
    "a loop of large relations": ("", '[[relations]]\nfor = "r = 1..5000"\nexpr = "(1+T_1+T_2+'
                                      'T_3+T_4+q_1)^5 * (1+S1_1+S1_2)^7"\n',
                                  "take more than 200000 terms together"),
}


def test_small_unbounded_files_end_in_one_located_line():
    for what, (top, body, message) in HOSTILE.items():
        text = HOSTILE_HEAD.format(top=top) + body
        with dynamic_code_forbidden():
            try:
                family = family_from_text(text, LABEL)
                build_specialised(family, SMALL_CASES[2], SPECS[SMALL_CASES[2]])
            except PresentationFileError as error:
                check_clean_error(error)
                assert message in str(error), (what, str(error))
                assert error.line is not None, what
                continue
        raise AssertionError(f"{what}: no error")


def test_many_identical_strings_parse_in_linear_time():
    """60 000 identical strings (under the size cap) used to take minutes; the string
    lookup is now constant time, so this ends in the relation limit within seconds."""
    strings = ",".join(['"1"'] * 60_000)
    text = HOSTILE_HEAD.format(top=f"relations = [{strings}]")
    assert len(text.encode()) < 256 * 1024
    try:
        family_from_text(text, LABEL).relations(SMALL_CASES[2], None)
    except PresentationFileError as error:
        check_clean_error(error)
        assert "more than 5000 relations" in str(error)
    else:
        raise AssertionError("no error")


def test_many_entries_with_a_quoted_key_parse_in_linear_time():
    """A key written in quotes ("weight" = 1) is not found by the key search, which then read
    the rest of the file for every entry (5 700 entries: 10 s); key positions are now found
    once per key."""
    entry = '{name="w",meaning="lambda_1(S_1)","weight"=1}'
    count = (256 * 1024 - 200) // (len(entry) + 1)
    text = HOSTILE_HEAD.format(top='relations = ["1"]\ngenerators = [' +
                               ",".join([entry] * count) + "]").split("[[generators]]")[0]
    try:
        family_from_text(text, LABEL).relations(SMALL_CASES[2], None)
    except PresentationFileError as error:
        check_clean_error(error)
        assert "duplicate generator 'w'" in str(error) and error.line == 6
    else:
        raise AssertionError("no error")


def _random_polynomial(rng, names, terms: int, degree: int) -> str:
    out = []
    for _ in range(terms):
        powers = {}
        for _ in range(rng.randint(degree // 2, degree)):
            name = rng.choice(names)
            powers[name] = powers.get(name, 0) + 1
        out.append(f"{rng.randint(1, 999)}*" + "*".join(f"{v}^{e}" for v, e in powers.items()))
    return "(" + " + ".join(out) + ")"


def test_units_are_recognised_by_gcds_not_by_factoring():
    """A declared unit was factored, and so was every divisor: a product of two random
    20-term polynomials of degree 60 took seconds (in 16 variables a minute), 32 such units
    over a minute, none of it counted or stoppable.  Now a divisor is a unit when dividing
    out its gcds with T_j, 1 − q_i and the declared units leaves a number."""
    import random
    rng = random.Random(5)
    names = ["S1_1", "S2_1", "S2_2", "S3_1", "S3_2", "S3_3", "T_1", "T_2", "T_3", "T_4"]
    a = _random_polynomial(rng, names, 20, 60)
    b = _random_polynomial(rng, names, 20, 60)
    c = _random_polynomial(rng, names, 20, 30)
    fl4 = SMALL_CASES[4]
    units = "".join(f'[[units]]\nexpr = "{a}*{b}*S2_2^2"\n' for _ in range(2))
    good = HOSTILE_HEAD.format(top="") + units + \
        f'[[relations]]\nexpr = "S1_1 / ({b} * S2_2^3 * T_1 * (1 - q_2)^2) + S2_1 / {a}"\n'
    family = family_from_text(good, LABEL)
    presentation = build_specialised(family, fl4, SPECS[fl4])
    assert len(presentation.relations) == 1 and len(presentation.units) == 2
    for divisor, named in ((f"{a} * {c}", "the factor"), (f"{a} * q_2", "the factor q2"),
                           (f"(1 + q_1) * {b}", "the factor q1 + 1")):
        bad = HOSTILE_HEAD.format(top="") + units + \
            f'[[relations]]\nexpr = "S1_1 / ({divisor})"\n'
        try:
            build_specialised(family_from_text(bad, LABEL), fl4, SPECS[fl4])
        except PresentationFileError as error:
            check_clean_error(error)
            assert "division by a non-unit" in str(error) and named in str(error), str(error)
            assert len(str(error)) < 300
        else:
            raise AssertionError(f"{divisor}: no error")


def test_huge_integers_on_the_command_line_are_one_line(tmp_path):
    import subprocess
    import sys
    path = tmp_path / "huge.toml"
    path.write_text(HOSTILE_HEAD.format(top="") + '[[relations]]\nlabel = "x{10^4300}"\n'
                    'expr = "S1_1"\n')
    for args in (["relations", "Gr(2,4)", "--presentation", str(path)],
                 ["check", "Gr(2,4)", "--presentations", f"whitney,{path}"],
                 ["iso", "Gr(2,4)", "--from", "whitney", "--to", str(path)],
                 ["presentations", "--case-file", "Gr(2,4)", "--of", str(path)]):
        result = subprocess.run([sys.executable, "-m", "ringmatch.compare.cli", *args],
                                capture_output=True, text=True, timeout=120)
        assert result.returncode == 2, (args, result.stderr)
        assert result.stderr.count("\n") == 1 and f"{path}:" in result.stderr, result.stderr
        assert "Traceback" not in result.stderr
    # a sweep stores the located error as the case's result once, and does not retry it
    store = tmp_path / "s.db"
    for attempt in range(2):
        result = subprocess.run([sys.executable, "-m", "ringmatch.compare.cli", "sweep",
                                 "--cases", "Gr(2,4)", "--presentations", f"whitney,{path}",
                                 "--store", str(store), "--json"],
                                capture_output=True, text=True, timeout=120)
        assert result.returncode == 3 and "Traceback" not in result.stderr, result.stderr
        report = json.loads(result.stdout)
        assert report["cases"][0]["reason"].startswith(f"presentation error: {path}:12:")
        assert report["from_store"] == (["Gr(2;4)"] if attempt else [])


# ---------------------------------------------------------------------------------------
# Parameters: random declarations and values end in a family or in one located line

_VALID_VALUES = ['"-3..3"', '"0..3"', "[-1, 1]", "[0, 1, 2]", '"-5..5"', '"2..2"']
_ODD_VALUES = st.one_of(
    st.lists(st.one_of(st.integers(-10**7, 10**7), st.just(1.5), st.just(True), st.just("x")),
             max_size=5).map(lambda v: "[" + ", ".join(
                 "true" if x is True else '"x"' if x == "x" else str(x) for x in v) + "]"),
    st.tuples(st.integers(-2000, 2000), st.integers(-2000, 2000)).map(
        lambda t: f'"{t[0]}..{t[1]}"'),
    st.sampled_from(['"1..x"', '""', "3", '"3..-3"', '"1..' + "9" * 50 + '"']))


@st.composite
def parameterised_file(draw) -> tuple:
    """Mostly coherent files (each part spoiled about one time in five: a bad name, bad
    values, a default or a value outside the declaration), so that most reach expansion."""
    def spoiled() -> bool:
        return draw(st.integers(0, 4)) == 4
    names = draw(st.lists(st.sampled_from(["c", "sign", "a", "w"]), min_size=1, max_size=2,
                          unique=True))
    if spoiled():
        names.append(draw(st.sampled_from(["s", "T1", "S1", "c", "9x", "a"])))
    tables, allowed, per_step = [], {}, {}
    for name in names:
        valid = draw(st.sampled_from([(-3, 3), (0, 3), (-1, 1), (2, 2), (-5, 5)]))
        allowed[name] = list(range(valid[0], valid[1] + 1))
        values = draw(_ODD_VALUES) if spoiled() else f'"{valid[0]}..{valid[1]}"'
        lines = ["[[parameters]]", f'name = "{name}"', f"values = {values}"]
        if not spoiled():
            lines.append(f"default = {draw(st.sampled_from(allowed[name]))}")
        elif draw(st.booleans()):
            lines.append(f"default = {draw(st.integers(-6, 6))}")
        per_step[name] = name == "a"
        if per_step[name] or spoiled():
            lines.append(f"per_step = {'1' if spoiled() else str(per_step[name]).lower()}")
        tables.append("\n".join(lines))
    used = draw(st.sampled_from(names))
    symbol = f"{used}_i" if per_step.get(used) else used
    if spoiled():
        symbol = draw(st.sampled_from([used + "_1", used + "_{i+1}", "zz"]))
    factor = draw(st.sampled_from(["{u}", "(-1)^{u}", "2^{u}", "(1 - q_i)^{u}",
                                   "y^{max(0, {u})}", "T_1^{u}"])).replace("{u}", symbol)
    text = SOUP_CONTAINER.format(unit='"det(S_1)"', loops='"i = 1..m"',
                                 coefficients='"j = 1..k_{i+1}"',
                                 expr=toml_string(f"{factor} * lambda_y(S_i) * lambda_y(Q_i) "
                                                  "- lambda_y(S_{i+1})"))
    text = text.replace("[[generators]]", "\n\n".join(tables) + "\n\n[[generators]]", 1)
    values = {}
    for name in names:
        if draw(st.booleans()):
            values[name] = draw(st.integers(-6, 6)) if spoiled() else \
                draw(st.sampled_from(allowed[name]))
    if spoiled():
        values[draw(st.sampled_from(["a_2", "zz", "c"]))] = draw(st.integers(-6, 6))
    return text, values


@fuzz_settings(400)
@given(parameterised_file())
def test_random_parameters_and_values_parse_or_fail_cleanly(case):
    text, values = case
    with dynamic_code_forbidden():
        try:
            family = family_from_text(text, LABEL, values)
            for flag in SMALL_CASES[:3]:
                build_specialised(family, flag, SPECS[flag])
        except PresentationFileError as error:
            check_clean_error(error)
