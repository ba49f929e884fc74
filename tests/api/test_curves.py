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
    assert [round(100 * p["collision"]["value"], 1) for p in body["points"]] == [
        11.7, 41.1, 70.6, 89.1, 97.0, 99.4, 99.9]
    assert body["method"] == "exact"


def test_log_spaced_by_default_with_complements(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?bits=64&from=1e6&to=1e10&points=5")
    conforms(response, PATH)
    points = response.get_json()["points"]
    assert [p["count"] for p in points] == [str(10**k) for k in range(6, 11)]
    for point in points:
        total = point["collision"]["value"] + point["no_collision"]["value"]
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


def test_cli_bad_range_exits_2_naming_the_option() -> None:
    result = CliRunner().invoke(build_cli(), ["curves", "--bits", "64", "--from", "9",
                                              "--to", "3"])
    assert result.exit_code == 2
    assert "--to:" in result.output
