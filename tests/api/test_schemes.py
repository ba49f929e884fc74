"""Watched schemes: a schemes file in a temporary folder, figures at a frozen clock, gauges.

The clock is injected (``create_app(..., clock=...)``): nothing sleeps. The gauges are read
back with the Prometheus client's own text parser.
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import UTC, datetime, timedelta
from pathlib import Path

import mpmath
import pytest
from flask import Flask
from prometheus_client.parser import text_string_to_metric_families
from tests.core._reference import high_precision_risk, ln_of_text, relative_gap

from urnbound.app import create_app
from urnbound.domain.schemes import SchemesError

#: Two invented schemes: ticket codes (36^14), and 122-bit order identifiers.
SCHEMES = """
[[scheme]]
name = "tickets"
alphabet = "lowercase-alphanumeric"
length = 14
issued = 40_000_000
counted_at = 2026-11-01T00:00:00Z
rate = "2e5"
per = "P1D"
max_risk = "1e-6"

[[scheme]]
name = "orders"
format = "uuid-v4"
issued = "1e9"
counted_at = "2026-10-01T00:00:00+02:00"
rate = 50
growth = 1.5
max_risk = 1e-12
horizon = "P365D"
"""
START = datetime(2026, 12, 1, tzinfo=UTC)


class FrozenClock:
    """A clock that stands still until a test moves it."""

    def __init__(self, moment: datetime) -> None:
        self.moment = moment

    def __call__(self) -> datetime:
        return self.moment


def make_app(path: Path, clock: Callable[[], datetime]) -> Flask:
    return create_app({"TESTING": True, "access_log": False, "schemes": str(path)}, clock=clock)


@pytest.fixture
def schemes_file(tmp_path: Path) -> Path:
    path = tmp_path / "schemes.toml"
    path.write_text(SCHEMES, encoding="utf-8")
    return path


@pytest.fixture
def clock() -> FrozenClock:
    return FrozenClock(START)


@pytest.fixture
def watched(schemes_file: Path, clock: FrozenClock, monkeypatch: pytest.MonkeyPatch) -> Flask:
    monkeypatch.delenv("PROMETHEUS_MULTIPROC_DIR", raising=False)
    return make_app(schemes_file, clock)


def test_listing_names_every_scheme_with_a_short_max_age(watched: Flask) -> None:
    response = watched.test_client().get("/v1/schemes")
    assert response.status_code == 200
    body = response.get_json()
    assert [s["name"] for s in body["schemes"]] == ["tickets", "orders"]
    assert body["schemes"][0]["fields"]["rate"] == "2e5"
    assert response.headers["Cache-Control"] == "public, max-age=30"


def test_budget_as_of_now_projects_the_count_from_its_timestamp(watched: Flask) -> None:
    client = watched.test_client()
    body = client.get("/v1/schemes/tickets").get_json()
    assert body["scheme"] == "tickets" and body["as_of"] == "2026-12-01T00:00:00+00:00"
    # thirty days at 200,000 a day on top of forty million
    assert body["now"]["count"] == "46000000"
    ref = high_precision_risk(36**14, 46_000_000)  # mpmath log-gamma at high precision
    assert relative_gap(ref.mp, ln_of_text(ref.mp, body["now"]["collision"]["decimal"]),
                        ref.ln_risk) <= 1e-19
    # a steady rate: the same budget as /v1/budgets asked now with that count
    same = client.get("/v1/budgets?alphabet=lowercase-alphanumeric&length=14&issued=4.6e7"
                      "&rate=2e5&per=P1D&horizon=P3650D&max_risk=1e-6&points=12").get_json()
    assert body["exhausted_after"] == same["exhausted_after"]
    assert body["capacity"] == same["capacity"]


def test_figures_and_etag_change_with_the_clock(watched: Flask, clock: FrozenClock) -> None:
    client = watched.test_client()
    first = client.get("/v1/schemes/tickets")
    tag = first.headers["ETag"]
    assert client.get("/v1/schemes/tickets", headers={"If-None-Match": tag}).status_code == 304
    clock.moment = START + timedelta(days=1)
    later = client.get("/v1/schemes/tickets", headers={"If-None-Match": tag})
    assert later.status_code == 200 and later.headers["ETag"] != tag
    assert later.get_json()["now"]["count"] == "46200000"
    before = first.get_json()["exhausted_after"]["seconds"]
    assert later.get_json()["exhausted_after"]["seconds"] == before - 86_400


def test_gauges_in_metrics_follow_prometheus_conventions(watched: Flask) -> None:
    client = watched.test_client()
    tickets = client.get("/v1/schemes/tickets").get_json()
    orders = client.get("/v1/schemes/orders").get_json()
    text = client.get("/metrics").get_data(as_text=True)
    samples = {(s.name, s.labels.get("scheme")): s.value
               for family in text_string_to_metric_families(text) for s in family.samples}
    risk = samples[("urnbound_scheme_collision_risk", "tickets")]
    assert risk == pytest.approx(tickets["now"]["collision"]["value"], rel=1e-15, abs=0)
    assert samples[("urnbound_scheme_collision_risk_log10", "tickets")] == pytest.approx(
        tickets["now"]["collision"]["log10"], rel=1e-15, abs=0)
    used = int(tickets["now"]["count"]) / int(tickets["capacity"])
    assert samples[("urnbound_scheme_budget_used_ratio", "tickets")] == pytest.approx(
        used, rel=1e-15, abs=0)
    assert samples[("urnbound_scheme_budget_exhausted_in_seconds", "tickets")] == (
        tickets["exhausted_after"]["seconds"])
    # 122 random bits and a trillionth: the year's horizon ends first
    assert orders["exhausted_after"] is None
    assert samples[("urnbound_scheme_budget_exhausted_in_seconds", "orders")] == float("inf")


def test_growth_scheme_counts_from_its_offset_timestamp(watched: Flask) -> None:
    body = watched.test_client().get("/v1/schemes/orders").get_json()
    # counted 2026-09-30T22:00Z: 61 days and 2 hours before the clock
    assert body["as_of"] == "2026-12-01T00:00:00+00:00"
    assert int(body["now"]["count"]) > 10**9 + 50 * (61 * 86_400 + 7_200)  # the rate grew


def test_unknown_scheme_is_a_404_problem(watched: Flask) -> None:
    response = watched.test_client().get("/v1/schemes/invoices")
    assert response.status_code == 404
    assert response.mimetype == "application/problem+json"
    assert "tickets, orders" in response.get_json()["detail"]


def test_scheme_chart_when_accept_prefers_svg(watched: Flask) -> None:
    response = watched.test_client().get("/v1/schemes/tickets",
                                         headers={"Accept": "image/svg+xml"})
    assert response.mimetype == "image/svg+xml"
    assert b"time from now (years)" in response.data


def test_readyz_reports_the_file_state(watched: Flask, schemes_file: Path) -> None:
    client = watched.test_client()
    assert client.get("/readyz").get_json()["schemes"] == {
        "file": str(schemes_file), "schemes": 2, "state": "loaded"}
    schemes_file.write_text(SCHEMES + "\n# edited\n", encoding="utf-8")
    state = client.get("/readyz").get_json()["schemes"]["state"]
    assert state.startswith("changed on disk")
    schemes_file.unlink()
    assert client.get("/readyz").get_json()["schemes"]["state"].startswith("missing")


def test_no_schemes_file_means_no_schemes(client: object) -> None:
    from flask.testing import FlaskClient

    assert isinstance(client, FlaskClient)
    assert client.get("/v1/schemes").get_json()["schemes"] == []
    assert "urnbound_scheme_" not in client.get("/metrics").get_data(as_text=True)
    assert client.get("/readyz").get_json()["schemes"]["state"] == "none configured"


GOOD = ('[[scheme]]\nname = "{name}"\nbits = 64\ncounted_at = 2026-11-01T00:00:00Z\n'
        'rate = 5\nmax_risk = "1e-6"\n')


@pytest.mark.parametrize(("text", "scheme", "field"), [
    (GOOD.format(name="a") + "colour = 3\n", "a", "colour"),
    (GOOD.format(name="a").replace("bits = 64", 'format = "uuid-v1"'), "a", "format"),
    (GOOD.format(name="a").replace("rate = 5", "rate = -5"), "a", "rate"),
    (GOOD.format(name="a") + GOOD.format(name="a"), "a", "name"),
    (GOOD.format(name="a").replace("2026-11-01T00:00:00Z", "2026-11-01T00:00:00"), "a",
     "counted_at"),
    (GOOD.format(name="a").replace('max_risk = "1e-6"', "max_risk = 2"), "a", "max_risk"),
    (GOOD.format(name="a") + "points = 40\n", "a", "points"),
    # a thousand identifiers a millisecond tick over 2^8 values: past half the values now
    (GOOD.format(name="a").replace("bits = 64", 'tick = "PT0.001S"\nrandom_bits = 8')
     .replace("rate = 5", 'rate = "1e6"') + "growth = 2\n", "a", "rate"),
    # 100 a tick over 2^20 values, ten times more each year: past half after some 3.7 years
    (GOOD.format(name="a").replace("bits = 64", 'tick = "PT0.001S"\nrandom_bits = 20')
     .replace("rate = 5", 'rate = "1e5"') + "growth = 10\n", "a", "horizon"),
])
def test_a_bad_file_stops_start_up_naming_scheme_and_field(
    tmp_path: Path, text: str, scheme: str, field: str
) -> None:
    path = tmp_path / "schemes.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(SchemesError) as caught:
        make_app(path, FrozenClock(START))
    message = str(caught.value)
    assert f"scheme {scheme!r}" in message and f"field {field!r}" in message
    assert str(path) in message


def test_a_missing_file_stops_start_up(tmp_path: Path) -> None:
    with pytest.raises(SchemesError, match="cannot be read"):
        make_app(tmp_path / "absent.toml", FrozenClock(START))


def test_a_time_ordered_scheme_is_watched_by_the_tick_model(tmp_path: Path) -> None:
    path = tmp_path / "schemes.toml"
    path.write_text('[[scheme]]\nname = "events"\nformat = "uuid-v7"\nissued = "3.6e9"\n'
                    'counted_at = 2026-11-30T23:00:00Z\nrate = "1e6"\nmax_risk = "1e-9"\n',
                    encoding="utf-8")
    client = make_app(path, FrozenClock(START)).test_client()
    body = client.get("/v1/schemes/events").get_json()
    # an hour at a million a second on top of 3.6e9: two hours' worth at that rate
    assert body["now"]["count"] == "7200000000"
    same = client.get("/v1/budgets?format=uuid-v7&issued=7.2e9&rate=1e6&horizon=P3650D"
                      "&max_risk=1e-9&points=12").get_json()
    assert body["exhausted_after"] == same["exhausted_after"]
    assert body["method"] == "tick-model"


#: A growing time-ordered scheme: 100 identifiers a millisecond tick over 2^40 random values
#: a tick, ten times as many each year (half the values a tick after some 9.7 years),
#: counted a day before the clock.
GROWING_TICKS = ('[[scheme]]\nname = "{name}"\ntick = "PT0.001S"\nrandom_bits = 40\n'
                 'issued = "2e9"\ncounted_at = 2026-11-30T00:00:00Z\nrate = "1e5"\n'
                 'growth = 10\nmax_risk = "0.5"\nhorizon = "P{days}D"\n')


def reference_tick_risk(seconds: int) -> tuple[mpmath.ctx_mp.MPContext, mpmath.mpf]:
    """P(collision) of GROWING_TICKS ``seconds`` after its count, by mpmath quadrature.

    Poisson arrivals of intensity rate(s) = 1e5 10^(s / Y) (Y = 365 days, the service's
    year) into ticks of 1 ms with M = 2^40 values: each tick's log-survival is
    -(u - M log1p(u / M)) for its mean u (core/ticks.py), integrated over the ticks; the 2e9
    counted ones are taken as issued at 1e5 a second before the count, 2e4 seconds of ticks
    at u = 100.
    """
    mp = mpmath.MPContext()
    mp.dps = 40
    size, tau, year = mp.mpf(2) ** 40, mp.mpf(1) / 1000, mp.mpf(365 * 86_400)

    def excess(u: mpmath.mpf) -> mpmath.mpf:
        return u - size * mp.log1p(u / size)

    ahead = mp.quad(lambda s: excess(10**5 * mp.power(10, s / year) * tau) / tau,
                    mp.linspace(0, seconds, 5))
    hazard = ahead + mp.mpf(2 * 10**4) / tau * excess(10**5 * tau)
    return mp, -mp.expm1(-hazard)


def test_a_growing_time_ordered_scheme_accrues_the_rising_hazard(tmp_path: Path) -> None:
    path = tmp_path / "schemes.toml"
    path.write_text(GROWING_TICKS.format(name="sensors", days=3000), encoding="utf-8")
    client = make_app(path, FrozenClock(START)).test_client()
    response = client.get("/v1/schemes/sensors")
    assert response.status_code == 200, response.get_data(as_text=True)
    body = response.get_json()
    assert body["method"] == "tick-model"
    mp, truth = reference_tick_risk(86_400)
    found = ln_of_text(mp, body["now"]["collision"]["decimal"])
    assert abs(mp.expm1(found - mp.log(truth))) <= body["now"]["collision"][
        "relative_error_bound"]
    # the count issued by then, floored: 2e9 + 1e5 Y (10^(t/Y) - 1) / ln 10 at t = a day
    year = mp.mpf(365 * 86_400)
    grown = 2 * 10**9 + 10**5 * year * mp.expm1(86_400 / year * mp.log(10)) / mp.log(10)
    assert int(body["now"]["count"]) == int(mp.floor(grown))
    moment = body["exhausted_after"]
    assert moment is not None and not moment["already_exhausted"]
    # the reported second brackets the boundary: within budget one second before, over at it
    seconds = 86_400 + int(moment["seconds"])
    assert reference_tick_risk(seconds - 1)[1] <= mp.mpf(1) / 2 < reference_tick_risk(seconds)[1]


def test_a_growing_time_ordered_scheme_past_its_reach_is_refused_not_fatal(
        tmp_path: Path) -> None:
    # valid when counted; two years later the horizon passes half the values per tick
    path = tmp_path / "schemes.toml"
    path.write_text(GROWING_TICKS.format(name="sensors", days=3000) + "\n"
                    + SCHEMES.split("[[scheme]]")[1].join(["[[scheme]]", ""]), encoding="utf-8")
    clock = FrozenClock(START + timedelta(days=2 * 365))
    client = make_app(path, clock).test_client()
    response = client.get("/v1/schemes/sensors")
    assert response.status_code == 422
    assert response.mimetype == "application/problem+json"
    assert "horizon" in response.get_data(as_text=True)
    text = client.get("/metrics").get_data(as_text=True)
    schemes = {s.labels.get("scheme") for family in text_string_to_metric_families(text)
               for s in family.samples if s.name.startswith("urnbound_scheme_")}
    assert schemes == {"tickets"}
