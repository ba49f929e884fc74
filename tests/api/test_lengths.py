"""GET /v1/lengths through the Flask test client."""

from __future__ import annotations

from collections.abc import Callable

import mpmath
import pytest
from flask.testing import FlaskClient
from werkzeug.test import TestResponse

Conforms = Callable[[TestResponse, str], None]
PATH = "/v1/lengths"


def _mpmath_risk(size: int, count: int) -> mpmath.mpf:
    """Independent reference: log-gamma form at high precision in a private context."""
    ctx = mpmath.MPContext()
    ctx.prec = 4 * size.bit_length() + 200
    log_none = ctx.loggamma(size + 1) - ctx.loggamma(size - count + 1) - count * ctx.log(size)
    return -ctx.expm1(log_none)


@pytest.mark.parametrize(
    ("count", "max_risk", "bits"),
    [
        # "Birthday attack" table (Wikipedia), 64 bits at P = 1e-6: 6,100,000 items, a cell
        # rounded to 2 digits from sqrt(2N ln(1/(1-p))) = 6.07e6; 6.0e6 lies below it, so
        # 64 bits suffice and 63 do not.
        ("6.0e6", "1e-6", 64),
        # same table, 128 bits at P = 1e-18: 2.6e10 items (2 digits).
        ("2.6e10", "1e-18", 128),
        # same table, 64 bits at P = 1e-12: 6100 items (2 digits).
        ("6000", "1e-12", 64),
    ],
)
def test_fewest_bits_match_the_published_table(
    client: FlaskClient, conforms: Conforms, count: str, max_risk: str, bits: int
) -> None:
    response = client.get(f"{PATH}?alphabet_size=2&count={count}&max_risk={max_risk}")
    assert response.status_code == 200
    conforms(response, PATH)
    body = response.get_json()
    assert body["length"] == bits
    assert body["entropy_bits"] == float(bits)
    assert body["space"]["size"] == str(2**bits)


def test_base64url_length_is_tight(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?alphabet=base64url&count=1e9&max_risk=1e-9")
    conforms(response, PATH)
    body = response.get_json()
    length = body["length"]
    assert body["space"]["description"] == f"base64url alphabet (64 symbols), length {length}"
    # Independent reference: mpmath log-gamma at high precision on both sides of the answer.
    at_length = _mpmath_risk(64**length, 10**9)
    one_shorter = _mpmath_risk(64 ** (length - 1), 10**9)
    assert at_length <= mpmath.mpf("1e-9") < one_shorter
    assert mpmath.mpf(body["collision"]["decimal"]) == pytest.approx(at_length, rel=1e-15, abs=0)
    assert mpmath.mpf(body["collision_one_shorter"]["decimal"]) == pytest.approx(
        one_shorter, rel=1e-15, abs=0
    )


def test_length_one_has_no_shorter_neighbour(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?alphabet=decimal&count=1&max_risk=0.5")
    conforms(response, PATH)
    body = response.get_json()
    assert body["length"] == 1
    assert body["collision_one_shorter"] is None


def test_literal_alphabet(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?symbols=0123456789abcdef&count=1e6&max_risk=1e-6")
    conforms(response, PATH)
    hex_named = client.get(f"{PATH}?alphabet=base16&count=1e6&max_risk=1e-6").get_json()
    assert response.get_json()["length"] == hex_named["length"]


def test_smallest_risk_and_largest_count(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?alphabet=base16&count=1e60&max_risk=1e-300")
    assert response.status_code == 200
    conforms(response, PATH)
    assert response.get_json()["collision"]["log10"] <= -300


def test_answer_names_its_method_and_bound(client: FlaskClient) -> None:
    # 2 symbols and 3 identifiers: tiny spaces are answered exactly.
    small = client.get("/v1/lengths?alphabet_size=2&count=3&max_risk=0.5").get_json()
    assert (small["method"], small["relative_error_bound"]) == ("exact", 0.0)
    large = client.get("/v1/lengths?alphabet=base64url&count=1e12&max_risk=1e-9").get_json()
    assert large["method"] == "asymptotic"
    assert 0.0 < large["relative_error_bound"] < 1e-15
