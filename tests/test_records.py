"""The typed results of a check (compare/records.py): every record's JSON round trip, one
shape for every witness, and results of schema version 2 (tests/schema2/, written by the
version before the typed records with `check --json`, `check --report` and `sweep --json`)
read into today's records."""
import json
from pathlib import Path

import pytest

from ringmatch.compare.engine import check_case
from ringmatch.compare.records import (FAILS_AT_POINTS, NOT_IN_IDEAL, SCHEMA_VERSION,
                                       CaseResult, Certificate, PairResult, PointFailure,
                                       PresentationResult, RecordError, Witness)
from ringmatch.compare.workers import Limits, undecided_result
from ringmatch.compare.cases import CaseTask, load_sources
from ringmatch.presentations import get_family
from ringmatch.presentations.flagtype import parse_flag

SCHEMA2 = Path(__file__).resolve().parent / "schema2"
WITNESS_KEYS = {"kind", "relation_of", "relation", "not_in", "normal_form", "fails_at_points"}
FAILURE_KEYS = {"relation", "fixed_point", "failing_points", "lowest_power", "classical", "unit"}
FL3 = parse_flag("Fl(1,2;3)")


def again(record):
    """The record through its JSON text and back."""
    return type(record).from_json(json.loads(json.dumps(record.to_json())))


@pytest.fixture(scope="module")
def points_result():
    """The shipped sign error refuted at the Bethe points (a witness with a failing point)."""
    return check_case(FL3, [get_family("whitney"), get_family("whitney-sign-error")], seed=11)


@pytest.fixture(scope="module")
def exact_result():
    """The same by the exact route alone (witnesses with normal forms), two trials."""
    return check_case(FL3, [get_family("whitney"), get_family("whitney-sign-error")], seed=11,
                      method="groebner", trials=2)


# ---------------------------------------------------------------------------------------
# Round trips

def test_every_record_survives_its_json(points_result, exact_result):
    for result in (points_result, exact_result):
        assert again(result) == result
        assert again(result.certificate) == result.certificate
        for p in result.presentations.values():
            assert again(p) == p
            for failure in p.failures:
                assert again(failure) == failure
        for pair in result.pairs:
            assert again(pair) == pair
            for w in pair.witnesses:
                assert again(w) == w
        assert result.to_json()["schema"] == SCHEMA_VERSION == 3


def test_records_made_by_hand_survive_their_json():
    unit = PointFailure("unit 1 vanishes", [[1], [1, 2]], failing_points=2, unit=1)
    witness = Witness("guess", "level 1, y^1", fails_at_points=unit)
    certificate = Certificate(prime=101, seed=3, order=6, method="points", kind="k",
                              trials=[Certificate(prime=101, seed=3)], sweep_seed=9,
                              limits={"seconds": 1.0, "memory_mib": None},
                              failed_attempts=2, extra={"from_a_plugin": [1, 2]})
    presentation = PresentationResult("guess", 3, 2, 6, colength="infinite", holds=False,
                                      failures=[unit], notes=["a note"])
    pair = PairResult("whitney", "guess", "disagree", "Bethe points", "why", [witness],
                      exact=True, order=6)
    result = CaseResult("Fl(3)", 6, True, "disagree", "why", certificate, exact=True,
                        presentations={"guess": presentation}, pairs=[pair],
                        timings={"points": 0.5}, scan={"refuted_by_points": True})
    for record in (unit, witness, certificate, presentation, pair, result):
        assert again(record) == record
    assert result.to_json()["certificate"]["from_a_plugin"] == [1, 2]   # kept as read


def test_an_undecided_case_is_a_case_result_too():
    task = CaseTask("Fl(4)", tuple(load_sources(["whitney", "vieta"])), 2, 101, True, None, 1,
                    "auto")
    result = undecided_result(task, "limit: took longer than --case-timeout 1 s",
                              Limits(seconds=1.0))
    assert isinstance(result, CaseResult) and not result.decided
    assert (result.verdict, result.exact, result.certificate.kind) == \
        ("inconclusive", False, "not computed")
    assert result.certificate.limits == {"seconds": 1.0, "memory_mib": None}
    assert result.certificate.sweep_seed == 2 and result.certificate.seed == task.seed
    assert again(result) == result


# ---------------------------------------------------------------------------------------
# One shape for every witness

def test_every_witness_has_one_shape(points_result, exact_result):
    by_points = [w for pair in points_result.pairs for w in pair.witnesses]
    by_ideal = [w for pair in exact_result.pairs for w in pair.witnesses]
    assert by_points and by_ideal
    for w in by_points + by_ideal:
        data = w.to_json()
        assert set(data) == WITNESS_KEYS
        assert data["relation_of"] == "whitney-sign-error" and data["relation"]
        if data["fails_at_points"] is not None:
            assert set(data["fails_at_points"]) == FAILURE_KEYS
    assert {w.kind for w in by_points} == {FAILS_AT_POINTS}
    assert all(w.normal_form is None and w.not_in is None and
               w.fails_at_points.relation == w.relation for w in by_points)
    assert {w.kind for w in by_ideal} == {NOT_IN_IDEAL}
    assert all(w.normal_form and w.not_in == "whitney" and w.fails_at_points is None
               for w in by_ideal)
    for p in points_result.presentations.values():
        assert all(set(f.to_json()) == FAILURE_KEYS for f in p.failures)


# ---------------------------------------------------------------------------------------
# Schema version 2

def test_check_json_of_schema_version_2_is_read():
    exact = CaseResult.from_json(json.loads((SCHEMA2 / "check-exact-witness.json").read_text()))
    assert (exact.case, exact.rank, exact.verdict, exact.exact) == ("Fl(3)", 6, "disagree", True)
    witness = exact.pairs[0].witnesses[0]
    assert witness.kind == NOT_IN_IDEAL and witness.not_in == "whitney"
    assert witness.relation == "level 2, y^2" and witness.normal_form.startswith("-2*S2_1^2")
    assert exact.certificate.method == "groebner" and len(exact.certificate.trials) == 1

    points = CaseResult.from_json(json.loads((SCHEMA2 / "check-points-witness.json").read_text()))
    witness = points.pairs[0].witnesses[0]
    assert witness.kind == FAILS_AT_POINTS and witness.relation_of == "whitney-sign-error"
    assert witness.fails_at_points == PointFailure("level 2, y^2", [[1], [1, 2]], 6, 1, False)
    assert points.presentations["whitney-sign-error"].failures == [witness.fails_at_points]
    assert points.certificate.order_source == "2 + largest q-degree"
    # written again, it is version 3 and reads back unchanged
    assert again(points) == points and points.to_json()["schema"] == 3

    consistent = CaseResult.from_json(json.loads((SCHEMA2 / "check-consistent.json")
                                                 .read_text()))
    assert consistent.verdict == "consistent" and not consistent.exact
    assert consistent.presentations["vieta"].holds_to_order == consistent.certificate.order


def test_an_undecided_sweep_case_of_schema_version_2_is_read():
    """Undecided cases had no schema and no exact key."""
    data = json.loads((SCHEMA2 / "sweep-limit.json").read_text())
    assert "schema" not in data["cases"][0] and "exact" not in data["cases"][0]
    result = CaseResult.from_json(data["cases"][0])
    assert result.verdict == "inconclusive" and result.reason.startswith("limit:")
    assert not result.decided and not result.exact and result.certificate.trials == []
    assert result.certificate.limits == {"seconds": 0.01, "memory_mib": None}


def test_a_report_of_format_1_is_read():
    """`check --report` used to write the presentations as a list and the witnesses with the
    failure flattened into them (the fixed point as text)."""
    data = json.loads((SCHEMA2 / "report-format1.json").read_text())
    assert isinstance(data["presentations"], list)
    result = CaseResult.from_json(data)
    assert result.names == ["whitney", "whitney-sign-error"]
    witness = result.pairs[0].witnesses[0]
    assert witness.kind == FAILS_AT_POINTS
    assert witness.fails_at_points.fixed_point == [[1], [1, 2]]
    assert witness.fails_at_points.lowest_power == 1


@pytest.mark.parametrize("data, fragment", [
    ([], "not a JSON object"),
    ({"verdict": "agree"}, "no 'case' text"),
    ({"case": "P1"}, "no 'verdict' text"),
    ({"case": "P1", "verdict": "agree", "schema": 99}, "schema version 99"),
    ({"case": "P1", "verdict": "agree", "rank": "three"}, "'rank' is not an integer"),
    ({"case": "P1", "verdict": "agree", "pairs": {}}, "is not a JSON list"),
    ({"case": "P1", "verdict": "agree", "certificate": []}, "certificate is not a JSON"),
    ({"case": "P1", "verdict": "agree", "pairs": [{"a": "x", "b": "y", "verdict": "agree",
                                                   "witnesses": [3]}]}, "a witness"),
    ({"case": "P1", "verdict": "agree",
      "presentations": {"x": {"failures": [{"fixed_point": 3}]}}}, "not a JSON list"),
    ({"case": "P1", "verdict": "agree",
      "presentations": {"x": {"failures": [{"fixed_point": [3]}]}}}, "malformed"),
])
def test_what_is_not_a_result_is_a_one_line_record_error(data, fragment):
    with pytest.raises(RecordError) as caught:
        CaseResult.from_json(data)
    assert fragment in str(caught.value) and "\n" not in str(caught.value)
