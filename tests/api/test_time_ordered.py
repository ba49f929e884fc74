"""Time-ordered identifiers through the API: the tick model in collisions, bits and rates."""

from __future__ import annotations

from collections.abc import Callable

import mpmath
import pytest
from flask.testing import FlaskClient
from werkzeug.test import TestResponse

Conforms = Callable[[TestResponse, str], None]


def _closed_form_risk(bits: int, rate: int, tick_ms: int, seconds: int) -> mpmath.mpf:
    """1 - (e^-mu (1 + mu/M)^M)^ticks by mpmath at 600 bits (mu = rate x tick)."""
    ctx = mpmath.MPContext()
    ctx.prec = 600
    x = ctx.mpf(rate) * tick_ms / 1000 / 2**bits
    ticks = ctx.mpf(seconds) * 1000 / tick_ms
    return -ctx.expm1(-ticks * 2**bits * (x - ctx.log1p(x)))


def test_uuid_v7_collisions_by_rate_and_duration(client: FlaskClient, conforms: Conforms) -> None:
    # RFC 9562, section 5.7: 74 random bits in each millisecond; a million a second, a year
    response = client.get("/v1/collisions?format=uuid-v7&rate=1e6&duration=P365D")
    assert response.status_code == 200
    conforms(response, "/v1/collisions")
    body = response.get_json()
    assert body["method"] == "tick-model"
    true = _closed_form_risk(74, 10**6, 1, 365 * 86400)
    ctx = mpmath.MPContext()
    ctx.prec = 200
    assert abs(ctx.mpf(body["collision"]["decimal"]) - true) / true <= (
        body["collision"]["relative_error_bound"])
    assert body["count"] == str(10**6 * 365 * 86400)
    assert body["tick_model"]["tick"] == "PT0.001S"
    assert body["tick_model"]["mean_per_tick"]["decimal"] == "1.0000000000000000000e3"
    assert body["exact"] is None


def test_custom_layout_with_a_burst(client: FlaskClient, conforms: Conforms) -> None:
    calm = client.get("/v1/collisions?tick=PT1S&random_bits=32&rate=1e3&duration=P1D")
    busy = client.get("/v1/collisions?tick=PT1S&random_bits=32&rate=1e3&duration=P1D"
                      "&burst=20&burst_share=0.01")
    for response in (calm, busy):
        assert response.status_code == 200
        conforms(response, "/v1/collisions")
    assert busy.get_json()["collision"]["value"] > calm.get_json()["collision"]["value"]
    assert busy.get_json()["tick_model"]["burst_share"] == "1/100"


def test_count_questions_say_tick_model_is_null(client: FlaskClient) -> None:
    assert client.get("/v1/collisions?bits=64&count=5").get_json()["tick_model"] is None


def test_fewest_random_bits_per_tick(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get("/v1/bits?tick=PT0.001S&rate=1e6&duration=P365D&max_risk=1e-9")
    assert response.status_code == 200
    conforms(response, "/v1/bits")
    body = response.get_json()
    bits = body["bits"]
    # the closed form at 600 bits (mpmath) on both sides of the answer
    assert _closed_form_risk(bits, 10**6, 1, 365 * 86400) <= mpmath.mpf("1e-9")
    assert _closed_form_risk(bits - 1, 10**6, 1, 365 * 86400) > mpmath.mpf("1e-9")
    assert "PT0.001S tick" in body["space"]["description"]


def test_highest_rate_of_uuid_v7(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get("/v1/rates?format=uuid-v7&duration=P365D&max_risk=1e-9")
    assert response.status_code == 200
    conforms(response, "/v1/rates")
    rate = int(response.get_json()["rate"])
    assert _closed_form_risk(74, rate, 1, 365 * 86400) <= mpmath.mpf("1e-9")
    assert _closed_form_risk(74, rate + 1, 1, 365 * 86400) > mpmath.mpf("1e-9")


@pytest.mark.parametrize(("path", "query", "fields"), [
    ("/v1/collisions", "format=uuid-v7&count=5", {"count"}),
    ("/v1/collisions", "bits=64&rate=5&duration=P1D", {"rate"}),
    ("/v1/collisions", "format=uuid-v7&count=5&rate=5&duration=P1D", {"count", "rate"}),
    ("/v1/collisions", "format=uuid-v7&rate=5", {"duration"}),
    ("/v1/collisions", "format=uuid-v7&rate=5&duration=P1Y", {"duration"}),
    ("/v1/collisions", "format=uuid-v7&rate=5&duration=-P1D", {"duration"}),
    ("/v1/collisions", "format=uuid-v7&rate=5&duration=P1D&burst=3", {"burst_share"}),
    ("/v1/collisions", "format=uuid-v7&rate=5&duration=P1D&burst=3&burst_share=0.5",
     {"burst", "burst_share"}),
    ("/v1/collisions", "format=uuid-v7&rate=5&duration=P1D&burst=0.5&burst_share=0.5",
     {"burst"}),
    ("/v1/collisions", "tick=PT1S&rate=5&duration=P1D", {"random_bits"}),
    ("/v1/collisions", "tick=0.001&random_bits=8&rate=5&duration=P1D", {"tick"}),
    ("/v1/collisions", "format=uuid-v7", {"count"}),
    ("/v1/bits", "tick=PT1S&rate=5&max_risk=1e-6", {"duration"}),
    ("/v1/bits", "count=5&rate=5&duration=P1D&tick=PT1S&max_risk=1e-6", {"count", "rate"}),
    ("/v1/rates", "bits=64&duration=P1D&max_risk=1e-6", {"space"}),
    ("/v1/rates", "format=uuid-v7&max_risk=1e-6", {"duration"}),
    ("/v1/capacity", "format=uuid-v7&max_risk=1e-6", {"space"}),
    ("/v1/capacity", "tick=PT1S&random_bits=40&max_risk=1e-6", {"space"}),
])
def test_bad_time_ordered_queries_name_their_fields(client: FlaskClient, conforms: Conforms,
                                                    path: str, query: str,
                                                    fields: set[str]) -> None:
    response = client.get(f"{path}?{query}")
    assert response.status_code == 422, response.get_data(as_text=True)
    conforms(response, path)
    assert set(response.get_json()["errors"]) == fields
