"""GET /v1/budgets through the Flask test client, and `urnbound budgets` on the command line."""

from __future__ import annotations

from collections.abc import Callable
from fractions import Fraction

import pytest
from click.testing import CliRunner
from flask.testing import FlaskClient
from tests.core._reference import high_precision_risk, ln_of_text, relative_gap
from werkzeug.test import TestResponse

from urnbound.cli import build_cli
from urnbound.core.limits import MAX_POINTS
from urnbound.domain.durations import parse_duration

Conforms = Callable[[TestResponse, str], None]
PATH = "/v1/budgets"
#: A ledger service: 64-bit identifiers, forty million issued, two million a day.
LEDGER = "bits=64&issued=4e7&rate=2e6&per=P1D&horizon=P730D"


def _problem(client: FlaskClient, conforms: Conforms, query: str) -> dict[str, list[str]]:
    response = client.get(f"{PATH}?{query}")
    assert response.status_code == 422, response.get_data(as_text=True)
    assert response.mimetype == "application/problem+json"
    conforms(response, PATH)
    errors: dict[str, list[str]] = response.get_json()["errors"]
    return errors


def test_a_steady_budget_projects_counts_and_risks(client: FlaskClient, conforms: Conforms
                                                   ) -> None:
    response = client.get(f"{PATH}?{LEDGER}&max_risk=1e-3&points=5")
    assert response.status_code == 200
    conforms(response, PATH)
    body = response.get_json()
    assert body["now"]["count"] == "40000000"
    # forty million plus two million a day for 730 days
    assert body["at_horizon"]["count"] == "1500000000"
    assert body["at_horizon"]["offset"] == "P730D"
    assert [p["offset"] for p in body["series"]] == [
        "P0D", "P182DT12H", "P365D", "P547DT12H", "P730D"]
    for point in body["series"]:
        ref = high_precision_risk(2**64, int(point["count"]))
        # mpmath's log-gamma at high precision (tests/core/_reference.py)
        gap = relative_gap(ref.mp, ln_of_text(ref.mp, point["collision"]["decimal"]), ref.ln_risk)
        assert gap <= 1e-19
    exhausted = body["exhausted_after"]
    assert exhausted["already_exhausted"] is False
    seconds = Fraction(int(exhausted["seconds"]))
    assert parse_duration(exhausted["duration"], field="t") == seconds
    # the count is issued + rate t, exactly, on both sides of the moment
    assert int(exhausted["count"]) == 40_000_000 + int(seconds * 2_000_000 / 86_400)
    assert int(exhausted["count_before"]) == 40_000_000 + int((seconds - 1) * 2_000_000 / 86_400)
    assert exhausted["collision_before"]["value"] <= 1e-3 < exhausted["collision"]["value"]
    assert int(body["headroom"]) == int(body["capacity"]) - 40_000_000
    assert body["assumptions"].startswith("These figures assume")


def test_over_budget_now_is_p0d_with_the_flag(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?{LEDGER}&max_risk=1e-6")
    conforms(response, PATH)
    body = response.get_json()
    assert body["exhausted_after"]["duration"] == "P0D"
    assert body["exhausted_after"]["already_exhausted"] is True
    assert body["exhausted_after"]["collision_before"] is None
    assert body["headroom"] == "0"
    assert body["capacity_used"]["value"] > 1


def test_a_horizon_ending_first_gives_null(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?format=uuid-v4&issued=1e9&rate=1e4&horizon=P3650D"
                          "&max_risk=1e-9")
    assert response.status_code == 200
    conforms(response, PATH)
    body = response.get_json()
    assert body["exhausted_after"] is None
    assert len(body["series"]) == 50
    assert body["space"]["bits"] == 122.0


def test_growth_changes_the_count_and_the_cache_key(client: FlaskClient) -> None:
    steady = client.get(f"{PATH}?{LEDGER}&max_risk=1e-3&points=2").get_json()
    growing = client.get(f"{PATH}?{LEDGER}&max_risk=1e-3&points=2&growth=2").get_json()
    # rate 2e6/day doubling yearly, two years: 2e6 * 365 * (4 - 1) / ln 2 on top of 4e7
    assert growing["at_horizon"]["count"] == "3199502139"
    assert int(growing["at_horizon"]["count"]) > int(steady["at_horizon"]["count"])
    same = client.get(f"{PATH}?{LEDGER}&max_risk=0.001&points=2&growth=2.0")
    assert same.get_json() == growing


def test_per_and_rate_per_second_agree(client: FlaskClient) -> None:
    daily = client.get(f"{PATH}?bits=80&rate=86400&per=P1D&horizon=P30D&max_risk=1e-9")
    secondly = client.get(f"{PATH}?bits=80&rate=1&horizon=P30D&max_risk=1e-9")
    assert daily.get_json() == secondly.get_json()


def test_one_rate_per_second_is_one_question_with_one_etag(client: FlaskClient) -> None:
    # one a second, spelt four ways: the rate is normalised to per-second before the key
    spellings = ["rate=86400&per=P1D", "rate=1", "rate=3600&per=PT1H",
                 "rate=0.001&per=PT0.001S"]
    responses = [client.get(f"{PATH}?bits=80&{rate}&horizon=P30D&max_risk=1e-9")
                 for rate in spellings]
    assert all(r.status_code == 200 for r in responses)
    assert len({r.headers["ETag"] for r in responses}) == 1
    assert len({r.get_data() for r in responses}) == 1
    revalidated = client.get(f"{PATH}?bits=80&rate=1&horizon=P30D&max_risk=1e-9",
                             headers={"If-None-Match": responses[0].headers["ETag"]})
    assert revalidated.status_code == 304
    other = client.get(f"{PATH}?bits=80&rate=86401&per=P1D&horizon=P30D&max_risk=1e-9")
    assert other.headers["ETag"] != responses[0].headers["ETag"]


@pytest.mark.parametrize(("query", "field", "phrase"), [
    ("bits=64&rate=5&horizon=P1D&max_risk=1e-6&per=daily", "per", "ISO 8601 duration"),
    ("bits=64&rate=5&horizon=P1D&max_risk=1e-6&per=P1M", "per", "no years or months"),
    ("bits=64&rate=5&horizon=P400000D&max_risk=1e-6", "horizon", "at most P365000D"),
    ("bits=64&rate=5&horizon=-P1D&max_risk=1e-6", "horizon", "ISO 8601 duration"),
    (f"{LEDGER}&max_risk=1e-6&points={MAX_POINTS + 1}", "points", f"from 2 to {MAX_POINTS}"),
    (f"{LEDGER}&max_risk=1e-6&points=1", "points", f"from 2 to {MAX_POINTS}"),
    (f"{LEDGER}&max_risk=1e-6&growth=0", "growth", "above 0 and at most 10"),
    (f"{LEDGER}&max_risk=1e-6&growth=-1", "growth", "above 0 and at most 10"),
    (f"{LEDGER}&max_risk=1e-6&growth=11", "growth", "above 0 and at most 10"),
    ("bits=64&rate=0&horizon=P1D&max_risk=1e-6", "rate", "from 1e-9 to 1e30"),
    ("bits=64&rate=1e31&horizon=P1D&max_risk=1e-6", "rate", "from 1e-9 to 1e30"),
    ("bits=64&horizon=P1D&max_risk=1e-6", "rate", "missing"),
    ("bits=64&rate=5&max_risk=1e-6", "horizon", "missing"),
    ("bits=64&rate=5&horizon=P1D&max_risk=1", "max_risk", "up to but not including 1"),
    ("bits=64&rate=5&horizon=P1D&max_risk=1e-6&issued=-4", "issued", "from 0 to 2^8192"),
    ("format=uuid-v7&rate=1e6&horizon=P36500D&max_risk=1e-6&growth=10", "horizon",
     "give a horizon up to P6925D"),
    ("format=uuid-v7&rate=1e30&horizon=P1D&max_risk=1e-6&growth=2", "rate",
     "half the 2^74 values per tick"),
])
def test_bad_input_is_a_problem_naming_the_field_and_range(
    client: FlaskClient, conforms: Conforms, query: str, field: str, phrase: str
) -> None:
    errors = _problem(client, conforms, query)
    assert field in errors
    assert phrase in " ".join(errors[field])


@pytest.mark.parametrize(("arguments", "option"), [
    (["--per", "weekly"], "--per"),
    (["--horizon", "P400000D"], "--horizon"),
    (["--points", "501"], "--points"),
    (["--growth", "0"], "--growth"),
])
def test_cli_bad_input_exits_2_naming_the_option(arguments: list[str], option: str) -> None:
    base = {"--bits": "64", "--rate": "5", "--horizon": "P1D", "--max-risk": "1e-6"}
    given = dict(zip(arguments[::2], arguments[1::2], strict=True))
    argv = [part for name, value in {**base, **given}.items() for part in (name, value)]
    result = CliRunner().invoke(build_cli(), ["budgets", *argv])
    assert result.exit_code == 2
    assert f"{option}:" in result.output


def test_cli_json_is_the_api_body(client: FlaskClient) -> None:
    argv = ["budgets", "--bits", "64", "--issued", "4e7", "--rate", "2e6", "--per", "P1D",
            "--horizon", "P730D", "--max-risk", "1e-3", "--points", "3", "--json"]
    result = CliRunner().invoke(build_cli(), argv)
    assert result.exit_code == 0, result.output
    body = client.get(f"{PATH}?{LEDGER}&max_risk=1e-3&points=3").get_data(as_text=True)
    assert result.output.strip() == body


def test_a_time_ordered_layout_accrues_risk_per_tick(client: FlaskClient, conforms: Conforms
                                                     ) -> None:
    response = client.get(f"{PATH}?format=uuid-v7&rate=1e6&horizon=P365D&max_risk=1e-9"
                          "&points=3")
    assert response.status_code == 200, response.get_data(as_text=True)
    conforms(response, PATH)
    body = response.get_json()
    # the same figure as /v1/collisions answers by the tick model for a year at 1e6/s (the
    # series' batch states its own bound, no wider than the single answer's)
    year = client.get("/v1/collisions?format=uuid-v7&rate=1e6&duration=P365D").get_json()
    at_horizon, single = body["at_horizon"]["collision"], year["collision"]
    for member in ("value", "decimal", "log10"):
        assert at_horizon[member] == single[member]
    assert at_horizon["relative_error_bound"] <= single["relative_error_bound"]
    assert body["method"] == "tick-model"
    exhausted = body["exhausted_after"]
    assert exhausted["collision_before"]["value"] <= 1e-9 < exhausted["collision"]["value"]
    assert body["capacity"] == exhausted["count_before"]


#: uuid-v7 at a million a second now, half as many again each year.
GROWING_V7 = "format=uuid-v7&rate=1e6&growth=1.5&horizon=P365D&max_risk=1e-9"


def test_a_time_ordered_layout_with_growth_integrates_the_rising_rate(
    client: FlaskClient, conforms: Conforms
) -> None:
    response = client.get(f"{PATH}?{GROWING_V7}&points=3")
    assert response.status_code == 200, response.get_data(as_text=True)
    conforms(response, PATH)
    body = response.get_json()
    assert body["method"] == "tick-model"
    # leading order: the steady year's 8.3475e-7 times (1.5^2 - 1) / (2 ln 1.5) = 1.5415
    # for the squared rate's mean over the year (from memory: the tick model's risk is
    # about rate^2 tau d / (2M) while small)
    steady = client.get("/v1/collisions?format=uuid-v7&rate=1e6&duration=P365D").get_json()
    ratio = body["at_horizon"]["collision"]["value"] / steady["collision"]["value"]
    assert ratio == pytest.approx((1.5**2 - 1) / (2 * 0.4054651081081644), rel=1e-6, abs=0)
    # the count: 1e6 Y (1.5 - 1) / ln 1.5 (issue 9's closed form; ln 1.5 from memory)
    assert int(body["at_horizon"]["count"]) == pytest.approx(
        1e6 * 31_536_000 * 0.5 / 0.4054651081081644, rel=1e-12, abs=0)
    exhausted = body["exhausted_after"]
    assert exhausted["collision_before"]["value"] <= 1e-9 < exhausted["collision"]["value"]
    assert body["capacity"] == exhausted["count_before"]


def test_cli_answers_growth_for_a_time_ordered_layout(client: FlaskClient) -> None:
    argv = ["budgets", "--format", "uuid-v7", "--rate", "1e6", "--growth", "1.5",
            "--horizon", "P365D", "--max-risk", "1e-9", "--points", "3", "--json"]
    result = CliRunner().invoke(build_cli(), argv)
    assert result.exit_code == 0, result.output
    body = client.get(f"{PATH}?{GROWING_V7}&points=3").get_data(as_text=True)
    assert result.output.strip() == body
