"""GET /v1/formats, /v1/prefixes and /v1/guessing through the Flask test client."""

from __future__ import annotations

from collections.abc import Callable
from fractions import Fraction

import mpmath
import pytest
from flask.testing import FlaskClient
from werkzeug.test import TestResponse

Conforms = Callable[[TestResponse, str], None]
#: 2^-128 written out exactly: RFC 6749, section 10.10's ceiling on guessing a token.
RFC_6749_CEILING = (
    "2.938735877055718769921841343055614194546663891930218803771879265696043148636817932128"
    "906250e-39"
)


def _problem(client: FlaskClient, conforms: Conforms, path: str, query: str) -> dict[str, object]:
    response = client.get(f"{path}?{query}")
    assert response.status_code == 422, response.get_data(as_text=True)
    assert response.mimetype == "application/problem+json"
    conforms(response, path)
    body: dict[str, object] = response.get_json()
    return body


# --- formats ---------------------------------------------------------------------------------


def test_formats_list_their_random_bits_and_sources(client: FlaskClient, conforms: Conforms
                                                     ) -> None:
    response = client.get("/v1/formats")
    assert response.status_code == 200
    conforms(response, "/v1/formats")
    by_name = {entry["name"]: entry for entry in response.get_json()["formats"]}
    # RFC 9562, sections 5.4 and 5.7: 122 and 74 random bits
    assert by_name["uuid-v4"]["random_bits"] == 122
    assert by_name["uuid-v7"]["random_bits"] == 74
    assert by_name["uuid-v7"]["time_ordered"] and by_name["uuid-v7"]["tick"] == "PT0.001S"
    assert by_name["random-string"]["random_bits"] is None


def test_format_gives_the_space_of_the_collisions_question(client: FlaskClient,
                                                           conforms: Conforms) -> None:
    # encyclopedia article "Universally unique identifier": 2.71e18 version-4 UUIDs for a
    # 50 % chance of a collision (printed to 3 digits)
    response = client.get("/v1/collisions?format=uuid-v4&count=2.71e18")
    assert response.status_code == 200
    conforms(response, "/v1/collisions")
    body = response.get_json()
    assert body["space"]["size"] == str(2**122)
    assert round(body["collision"]["value"], 2) == 0.50


def test_unknown_format_is_a_problem_naming_format(client: FlaskClient, conforms: Conforms
                                                   ) -> None:
    body = _problem(client, conforms, "/v1/collisions", "format=uuid-v1&count=5")
    assert "format" in body["errors"]  # type: ignore[operator]


# --- prefixes --------------------------------------------------------------------------------


def test_prefix_answer_with_its_shortest_prefixes(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get("/v1/prefixes?digest_bits=256&prefix_chars=12&count=1e6&max_risk=1e-6")
    assert response.status_code == 200
    conforms(response, "/v1/prefixes")
    body = response.get_json()
    assert body["prefix_bits"] == 48 and body["encoding"] == "base16"
    # NIST SP 800-107 Rev. 1, section 5.1: lambda/2 and lambda bits
    assert body["security_strength"]["collision_bits"] == 24
    assert body["security_strength"]["preimage_bits"] == 48
    ctx = mpmath.MPContext()
    ctx.prec = 300
    ambiguous = -ctx.expm1(10**6 * ctx.log1p(-ctx.mpf(2) ** -48))  # mpmath, log1p form
    assert abs(ctx.mpf(body["new_item_ambiguous"]["decimal"]) - ambiguous) / ambiguous <= (
        body["new_item_ambiguous"]["relative_error_bound"])
    pairwise = -ctx.expm1(ctx.loggamma(2**48 + 1) - ctx.loggamma(2**48 - 10**6 + 1)
                          - 10**6 * ctx.log(2**48))
    assert body["any_collision"]["value"] == pytest.approx(float(pairwise), rel=1e-15, abs=0)
    shortest = body["shortest_prefix"]
    assert shortest["max_risk"] == "1/1000000"
    for name in ("any_collision", "new_item_ambiguous"):
        bits = shortest[name]["bits"]
        assert shortest[name]["chars"] == -(-bits // 4)
    # n = 1e6 items: the pairwise risk needs about 2 log2 n + log2(1/2r) bits
    assert shortest["any_collision"]["bits"] == 59
    assert shortest["new_item_ambiguous"]["bits"] == 40


def test_prefix_without_max_risk_has_no_shortest_prefix(client: FlaskClient) -> None:
    body = client.get("/v1/prefixes?digest_bits=160&prefix_bits=41&count=1000").get_json()
    assert body["shortest_prefix"] is None
    assert body["security_strength"]["collision_bits"] == 20.5
    assert body["prefix_chars"] == 11  # 41 bits need 11 hexadecimal characters


@pytest.mark.parametrize(("encoding", "per_char"), [("base16", 4), ("base32", 5), ("BASE64URL", 6)])
def test_prefix_chars_follow_the_rfc_4648_bits_per_character(client: FlaskClient, encoding: str,
                                                              per_char: int) -> None:
    # RFC 4648: 16, 32 and 64 symbols, 4, 5 and 6 bits a character
    body = client.get(f"/v1/prefixes?digest_bits=512&prefix_chars=10&encoding={encoding}"
                      "&count=10").get_json()
    assert body["prefix_bits"] == 10 * per_char


@pytest.mark.parametrize(("query", "fields"), [
    ("digest_bits=40&prefix_chars=12&count=5", {"prefix_chars", "digest_bits"}),
    ("digest_bits=40&prefix_bits=41&count=5", {"prefix_bits", "digest_bits"}),
    ("digest_bits=256&prefix_bits=40&prefix_chars=10&count=5", {"prefix_bits", "prefix_chars"}),
    ("digest_bits=256&count=5", {"prefix_bits"}),
    ("digest_bits=256&prefix_bits=40&count=5&encoding=base58", {"encoding"}),
    ("digest_bits=0&prefix_bits=40&count=5", {"digest_bits"}),
    ("digest_bits=256&prefix_bits=40&count=-5", {"count"}),
    ("digest_bits=256&prefix_bits=40&count=5&max_risk=1", {"max_risk"}),
])
def test_bad_prefix_queries_name_their_fields(client: FlaskClient, conforms: Conforms, query: str,
                                              fields: set[str]) -> None:
    body = _problem(client, conforms, "/v1/prefixes", query)
    assert set(body["errors"]) == fields  # type: ignore[arg-type]


def test_prefix_longer_than_the_digest_names_both(client: FlaskClient, conforms: Conforms) -> None:
    body = _problem(client, conforms, "/v1/prefixes", "digest_bits=40&prefix_chars=12&count=5")
    assert "longer than the digest (40 bits)" in str(body["detail"]) + str(body["errors"])


# --- guessing --------------------------------------------------------------------------------


def test_guessing_worked_example_about_585_years(client: FlaskClient, conforms: Conforms) -> None:
    # common practice: 64-bit session identifiers, 100,000 live, 10,000 guesses a second
    # give an expected time to a hit of about 585 years (computed, not copied: N / live
    # guesses at 1e4 a second, in Julian years)
    response = client.get("/v1/guessing?bits=64&live=1e5&guess_rate=1e4&window=P365D")
    assert response.status_code == 200
    conforms(response, "/v1/guessing")
    body = response.get_json()
    assert round(body["expected_years_independent"]["value"]) == 585
    assert round(body["expected_years_distinct"]["value"]) == 585
    assert body["expected_seconds_independent"]["decimal"] == "1.8446744073709551616e10"
    assert body["guesses"] == str(10**4 * 365 * 86400)
    assert body["entropy_bits"] == 64
    # NIST SP 800-63B section 7.1 and OWASP: at least 64 bits; 64 meets it
    assert body["policy"]["min_entropy_bits"] == 64
    assert body["policy"]["entropy_meets_minimum"] is True
    assert "NIST SP 800-63B" in body["policy"]["entropy_source"]
    assert "OWASP" in body["policy"]["entropy_source"]
    assert body["policy"]["success_within_max"] is None
    assert "cryptographically secure" in body["caution"] and "security policy" in body["caution"]


def test_guessing_policy_against_the_oauth_ceiling(client: FlaskClient, conforms: Conforms
                                                   ) -> None:
    # RFC 6749, section 10.10: at most 2^-128. 122 random bits (UUID version 4) miss it for
    # one guess; 160 random bits meet it.
    for query, within in (("format=uuid-v4", False), ("bits=160", True)):
        response = client.get(f"/v1/guessing?{query}&live=1&guesses=1"
                              f"&max_success={RFC_6749_CEILING}")
        assert response.status_code == 200
        conforms(response, "/v1/guessing")
        policy = response.get_json()["policy"]
        assert Fraction(policy["max_success"]) == Fraction(1, 2**128)
        assert policy["success_within_max"] is within


def test_guessing_below_the_entropy_floor(client: FlaskClient) -> None:
    body = client.get("/v1/guessing?alphabet=base16&length=15&live=1&guesses=1").get_json()
    assert body["entropy_bits"] == 60 and body["policy"]["entropy_meets_minimum"] is False
    body = client.get("/v1/guessing?alphabet=base16&length=15&live=1&guesses=1"
                      "&min_entropy_bits=56").get_json()
    assert body["policy"]["entropy_meets_minimum"] is True
    assert body["policy"]["entropy_source"] == "the caller's min_entropy_bits"


def test_guessing_small_space_is_exact(client: FlaskClient) -> None:
    body = client.get("/v1/guessing?size=10&live=2&guesses=3").get_json()
    assert body["method"] == "exact"
    assert body["hit_distinct"]["decimal"] == "5.3333333333333333333e-1"  # 8/15
    assert body["expected_seconds_distinct"] is None


@pytest.mark.parametrize(("query", "fields"), [
    ("bits=64&live=5&guesses=5&guess_rate=1e3&window=P1D", {"guesses", "guess_rate"}),
    ("bits=64&live=5&guess_rate=1e3", {"window"}),
    ("bits=64&live=5&window=P1D", {"window"}),
    ("bits=64&live=5", {"guesses"}),
    ("bits=64&live=5&guess_rate=1e3&window=-P1D", {"window"}),
    ("bits=64&live=5&guess_rate=1e3&window=P1Y", {"window"}),
    ("bits=64&live=5&guess_rate=1e3&window=1 day", {"window"}),
    ("bits=64&live=5&guess_rate=-3&window=P1D", {"guess_rate"}),
    ("bits=8&live=300&guesses=1", {"live"}),
    ("bits=64&live=0&guesses=1", {"live"}),
    ("format=uuid-v9&live=1&guesses=1", {"format"}),
    ("bits=64&live=1&guesses=1&max_success=2", {"max_success"}),
    ("bits=64&live=1&guesses=1&min_entropy_bits=0", {"min_entropy_bits"}),
])
def test_bad_guessing_queries_name_their_fields(client: FlaskClient, conforms: Conforms,
                                                query: str, fields: set[str]) -> None:
    body = _problem(client, conforms, "/v1/guessing", query)
    assert set(body["errors"]) == fields  # type: ignore[arg-type]
