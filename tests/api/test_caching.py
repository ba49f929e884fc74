"""Strong ETags, Cache-Control, 304 on If-None-Match, HEAD, and the bounded answer cache."""

from __future__ import annotations

import pytest
from flask import Flask
from flask.testing import FlaskClient
from hypothesis import example, given
from hypothesis import settings as hypothesis_settings
from hypothesis import strategies as st

from urnbound.api.state import ServiceState
from urnbound.app import create_app
from urnbound.config import Settings

QUESTION = "/v1/collisions?bits=64&count=1e6"


def state_of(app: Flask) -> ServiceState:
    state: ServiceState = app.extensions["urnbound"]
    return state


def sample(app: Flask, name: str, **labels: str) -> float:
    value = state_of(app).metrics.registry.get_sample_value(name, labels)
    return 0.0 if value is None else value


def test_answer_carries_strong_etag_and_cache_control(
    client: FlaskClient, settings: Settings
) -> None:
    response = client.get(QUESTION)
    etag = response.headers["ETag"]
    assert etag.startswith('"') and not etag.startswith("W/")
    assert response.cache_control.public
    assert response.cache_control.max_age == settings.cache_max_age


def test_etag_is_stable_across_requests_and_apps(client: FlaskClient, app: Flask) -> None:
    first = client.get(QUESTION).headers["ETag"]
    assert client.get(QUESTION).headers["ETag"] == first
    other = create_app({"access_log": False}).test_client()
    assert other.get(QUESTION).headers["ETag"] == first


def test_normalized_spellings_share_etag_and_entry(client: FlaskClient, app: Flask) -> None:
    first = client.get("/v1/collisions?bits=64&count=1e6")
    second = client.get("/v1/collisions?count=1000000&bits=64")
    assert first.headers["ETag"] == second.headers["ETag"]
    assert len(state_of(app).caching.answers) == 1
    assert sample(app, "urnbound_answer_cache_total", result="hit") == 1
    assert sample(app, "urnbound_answer_cache_total", result="miss") == 1
    risk_a = client.get("/v1/capacity?bits=64&max_risk=1e-6").headers["ETag"]
    risk_b = client.get("/v1/capacity?bits=64&max_risk=0.000001").headers["ETag"]
    assert risk_a == risk_b


@pytest.mark.parametrize(
    "other",
    [
        "/v1/collisions?bits=64&count=1000001",
        "/v1/collisions?bits=65&count=1e6",
        "/v1/collisions?size=18446744073709551616&count=1e6",  # same size, other description
        "/v1/capacity?bits=64&max_risk=1e-6",
    ],
)
def test_different_questions_differ(client: FlaskClient, other: str) -> None:
    assert client.get(QUESTION).headers["ETag"] != client.get(other).headers["ETag"]


def test_if_none_match_gives_empty_304(client: FlaskClient, app: Flask) -> None:
    etag = client.get(QUESTION).headers["ETag"]
    lookups = sample(app, "urnbound_answer_cache_total", result="hit")
    response = client.get(QUESTION, headers={"If-None-Match": etag})
    assert response.status_code == 304
    assert response.data == b""
    assert response.headers["ETag"] == etag
    assert response.cache_control.max_age is not None
    # Answered from the tag alone: the cache was not even consulted.
    assert sample(app, "urnbound_answer_cache_total", result="hit") == lookups


def test_if_none_match_with_other_tags(client: FlaskClient) -> None:
    etag = client.get(QUESTION).headers["ETag"]
    assert client.get(QUESTION, headers={"If-None-Match": '"other"'}).status_code == 200
    listed = client.get(QUESTION, headers={"If-None-Match": f'"other", {etag}'})
    assert listed.status_code == 304
    weak = client.get(QUESTION, headers={"If-None-Match": f"W/{etag}"})
    assert weak.status_code == 304  # If-None-Match compares weakly (RFC 9110, 13.1.2)


def test_first_conditional_request_is_304_without_computing(app: Flask) -> None:
    etag = app.test_client().get(QUESTION).headers["ETag"]
    fresh = create_app({"access_log": False, "TESTING": True})
    response = fresh.test_client().get(QUESTION, headers={"If-None-Match": etag})
    assert response.status_code == 304
    assert len(state_of(fresh).caching.answers) == 0
    assert sample(fresh, "urnbound_answers_computed_total", endpoint="collisions",
                  method="exact") == 0


def test_head_has_headers_and_no_body(client: FlaskClient) -> None:
    get = client.get(QUESTION)
    head = client.head(QUESTION)
    assert head.status_code == 200
    assert head.data == b""
    assert head.headers["ETag"] == get.headers["ETag"]
    assert head.headers["Content-Length"] == str(len(get.data))
    assert head.headers["Content-Type"] == "application/json"


def test_errors_are_not_cached(client: FlaskClient, app: Flask) -> None:
    response = client.get("/v1/collisions?bits=0&count=1")
    assert response.status_code == 422
    assert "ETag" not in response.headers
    assert len(state_of(app).caching.answers) == 0


def test_cache_is_bounded_lru() -> None:
    app = create_app({"cache_entries": 2, "access_log": False})
    client = app.test_client()
    for count in (1, 2, 3):
        client.get(f"/v1/collisions?bits=32&count={count}")
    cache = state_of(app).caching.answers
    assert len(cache) == 2
    client.get("/v1/collisions?bits=32&count=2")  # still held: a hit
    client.get("/v1/collisions?bits=32&count=1")  # evicted: a miss
    assert sample(app, "urnbound_answer_cache_total", result="hit") == 1
    assert sample(app, "urnbound_answer_cache_total", result="miss") == 4


def test_zero_entries_turns_caching_off_but_keeps_etags() -> None:
    app = create_app({"cache_entries": 0, "access_log": False})
    client = app.test_client()
    first = client.get(QUESTION)
    second = client.get(QUESTION)
    assert first.data == second.data
    assert first.headers["ETag"] == second.headers["ETag"]
    assert len(state_of(app).caching.answers) == 0


def test_exact_digit_limit_is_part_of_the_tag(client: FlaskClient) -> None:
    other = create_app({"exact_digit_limit": 10, "access_log": False}).test_client()
    assert other.get(QUESTION).headers["ETag"] != client.get(QUESTION).headers["ETag"]


def test_each_spelling_is_parsed_once_and_shares_the_answer(app: Flask) -> None:
    client = app.test_client()
    for _ in range(3):
        client.get("/v1/collisions?bits=64&count=1e6")
        client.get("/v1/collisions?bits=64&count=1000000")
    caching = state_of(app).caching
    assert len(caching.spellings) == 2
    assert len(caching.answers) == 1
    assert sample(app, "urnbound_answer_cache_total", result="hit") == 5


def test_rejected_spellings_are_not_remembered(app: Flask) -> None:
    client = app.test_client()
    for _ in range(2):
        assert client.get("/v1/collisions?bits=64&count=1e2467").status_code == 422
    assert len(state_of(app).caching.spellings) == 0


@hypothesis_settings(max_examples=40, deadline=None)
@given(mantissa=st.integers(min_value=1, max_value=999), exponent=st.integers(0, 40))
@example(mantissa=1, exponent=6)
def test_scientific_and_plain_spellings_share_one_tag(mantissa: int, exponent: int) -> None:
    client = create_app({"access_log": False}).test_client()
    plain = client.get(f"/v1/collisions?bits=128&count={mantissa * 10**exponent}")
    scientific = client.get(f"/v1/collisions?bits=128&count={mantissa}e{exponent}")
    assert plain.status_code == scientific.status_code == 200
    assert plain.headers["ETag"] == scientific.headers["ETag"]
    assert plain.data == scientific.data
