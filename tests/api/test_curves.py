"""GET /v1/curves through the Flask test client, and `urnbound curves` on the command line."""

from __future__ import annotations

from collections.abc import Callable

import pytest
from click.testing import CliRunner
from flask.testing import FlaskClient
from werkzeug.test import TestResponse

from urnbound.cli import build_cli
from urnbound.core.limits import MAX_POINTS

Conforms = Callable[[TestResponse, str], None]
PATH = "/v1/curves"


def test_birthday_curve_is_the_published_table(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?size=365&from=10&to=70&points=7&spacing=linear")
    assert response.status_code == 200
    conforms(response, PATH)
    body = response.get_json()
    # "Birthday problem" table (Wikipedia): 10 .. 70 draws from 365 values
    assert [p["count"] for p in body["points"]] == ["10", "20", "30", "40", "50", "60", "70"]
    assert [round(100 * p["risk"]["value"], 1) for p in body["points"]] == [
        11.7, 41.1, 70.6, 89.1, 97.0, 99.4, 99.9]
    assert body["method"] == "exact"
    assert body["question"] == "collisions"
    assert body["event"] == "some two identifiers are equal"


def test_log_spaced_by_default_with_complements(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?bits=64&from=1e6&to=1e10&points=5")
    conforms(response, PATH)
    points = response.get_json()["points"]
    assert [p["count"] for p in points] == [str(10**k) for k in range(6, 11)]
    for point in points:
        total = point["risk"]["value"] + point["complement"]["value"]
        assert total == pytest.approx(1.0, rel=1e-15, abs=0)


def test_default_points_is_fifty(client: FlaskClient) -> None:
    body = client.get(f"{PATH}?format=uuid-v4&from=1&to=1e20").get_json()
    assert len(body["points"]) == 50


@pytest.mark.parametrize(("query", "field", "phrase"), [
    ("bits=64&from=0&to=100", "from", "at least 1 for log spacing"),
    ("bits=64&from=100&to=100", "to", "above from"),
    (f"bits=64&from=1&to=100&points={MAX_POINTS + 1}", "points", f"from 2 to {MAX_POINTS}"),
    ("bits=64&from=1&to=100&spacing=cubic", "spacing", "log, linear"),
    ("bits=64&from=-1&to=100", "from", "from 0 to 2^8192"),
    ("bits=64&to=100", "from", "missing"),
    ("format=uuid-v7&from=1&to=100", "space", "time-ordered"),
])
def test_bad_input_is_a_problem_naming_the_field(
    client: FlaskClient, conforms: Conforms, query: str, field: str, phrase: str
) -> None:
    response = client.get(f"{PATH}?{query}")
    assert response.status_code == 422, response.get_data(as_text=True)
    assert response.mimetype == "application/problem+json"
    conforms(response, PATH)
    errors = response.get_json()["errors"]
    assert phrase in " ".join(errors[field])


def test_loads_curve_is_the_loads_answer_at_each_count(client: FlaskClient,
                                                       conforms: Conforms) -> None:
    response = client.get(f"{PATH}?size=1e4&from=1e3&to=1e5&points=3&question=loads&load=30")
    assert response.status_code == 200, response.get_data(as_text=True)
    conforms(response, PATH)
    body = response.get_json()
    assert body["event"] == "some bucket holds at least 30 items"
    assert body["assumptions"].startswith("These figures assume every item is placed")
    for point in body["points"]:
        single = client.get(f"/v1/loads?buckets=1e4&count={point['count']}&load=30").get_json()
        assert point["risk"] == single["overflow"]
        assert point["complement"] == single["no_overflow"]


def test_coverage_curve_is_the_complement_of_coverage(client: FlaskClient,
                                                      conforms: Conforms) -> None:
    response = client.get(f"{PATH}?size=50&from=50&to=500&points=4&question=coverage")
    conforms(response, PATH)
    body = response.get_json()
    assert body["event"] == "some bucket is never used"
    for point in body["points"]:
        single = client.get(f"/v1/coverage?buckets=50&draws={point['count']}").get_json()
        assert point["risk"] == single["not_covered"]
    # 50 buckets: N H_N = 224.96 draws expected to use every one ("Coupon collector's
    # problem"; OEIS A060293); at 500 draws nearly every run has
    assert body["points"][-1]["risk"]["value"] < 0.03


@pytest.mark.parametrize(("query", "field", "phrase"), [
    ("size=1e4&from=1&to=100&question=loads", "load", "required with question=loads"),
    ("size=1e4&from=1&to=100&load=3", "load", "goes with question=loads"),
    ("size=1e4&from=1&to=100&question=loads&load=3&at_least=2", "at_least",
     "goes with question=coverage"),
    ("size=1e4&from=1&to=100&question=loads&load=3&points=101", "points", "at most 100"),
    ("size=1e4&from=1&to=100&question=sizes", "question", "collisions, loads, coverage"),
    ("bits=64&from=1&to=100&question=coverage", "space", "at most"),
])
def test_occupancy_curves_refuse_what_they_do_not_take(
    client: FlaskClient, query: str, field: str, phrase: str
) -> None:
    response = client.get(f"{PATH}?{query}")
    assert response.status_code == 422, response.get_data(as_text=True)
    assert phrase in " ".join(response.get_json()["errors"][field])


def test_cli_bad_range_exits_2_naming_the_option() -> None:
    result = CliRunner().invoke(build_cli(), ["curves", "--bits", "64", "--from", "9",
                                              "--to", "3"])
    assert result.exit_code == 2
    assert "--to:" in result.output
