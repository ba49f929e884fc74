"""GET /v1/bits through the Flask test client: the fewest random bits for a count and a budget."""

from __future__ import annotations

from collections.abc import Callable
from fractions import Fraction

import mpmath
import pytest
import sympy
from flask.testing import FlaskClient
from werkzeug.test import TestResponse

Conforms = Callable[[TestResponse, str], None]
PATH = "/v1/bits"


def _mpmath_risk(size: int, count: int) -> mpmath.mpf:
    """Independent reference: log-gamma form at high precision in a private context."""
    ctx = mpmath.MPContext()
    ctx.prec = 4 * size.bit_length() + 200
    log_none = ctx.loggamma(size + 1) - ctx.loggamma(size - count + 1) - count * ctx.log(size)
    return -ctx.expm1(log_none)


def _sympy_risk(size: int, count: int) -> Fraction:
    """The exact risk, by sympy rationals."""
    risk = 1 - sympy.Rational(sympy.ff(sympy.Integer(size), count), sympy.Integer(size) ** count)
    return Fraction(int(risk.p), int(risk.q))


@pytest.mark.parametrize(
    ("count", "max_risk", "bits"),
    [
        # "Birthday attack" table (Wikipedia), 64-bit row: 6,100 / 190,000 / 6,100,000 /
        # 6.1e8 hashes at P = 1e-12 / 1e-9 / 1e-6 / 1%. The cells are sqrt(2N ln(1/(1-p)))
        # rounded to 2 digits, so they are only good to +-1%: counts 2% under a cell keep
        # the risk under p at 64 bits, and one bit fewer doubles the risk, past p.
        ("5980", "1e-12", 64),
        ("1.86e5", "1e-9", 64),
        ("5.98e6", "1e-6", 64),
        ("5.98e8", "0.01", 64),
        # same table, 128-bit row: 2.6e10 / 2.6e13 / 2.6e16 at P = 1e-18 / 1e-12 / 1e-6.
        ("2.55e10", "1e-18", 128),
        ("2.55e13", "1e-12", 128),
        ("2.55e16", "1e-6", 128),
    ],
)
def test_published_birthday_attack_table(
    client: FlaskClient, conforms: Conforms, count: str, max_risk: str, bits: int
) -> None:
    response = client.get(f"{PATH}?count={count}&max_risk={max_risk}")
    assert response.status_code == 200
    conforms(response, PATH)
    body = response.get_json()
    assert body["bits"] == bits
    assert body["space"]["size"] == str(2**bits)
    n, target = int(float(count)), mpmath.mpf(max_risk)
    at_bits, one_fewer = _mpmath_risk(2**bits, n), _mpmath_risk(2 ** (bits - 1), n)
    assert at_bits <= target < one_fewer
    assert float(body["collision"]["decimal"]) == pytest.approx(float(at_bits), rel=1e-15, abs=0)
    assert float(body["collision_one_fewer"]["decimal"]) == pytest.approx(
        float(one_fewer), rel=1e-15, abs=0
    )


@pytest.mark.parametrize(("count", "max_risk"), [(23, "0.5"), (100, "0.001"), (2, "0.25")])
def test_boundary_is_exact_for_small_counts(
    client: FlaskClient, count: int, max_risk: str
) -> None:
    body = client.get(f"{PATH}?count={count}&max_risk={max_risk}").get_json()
    bits, target = body["bits"], Fraction(max_risk)
    at_bits = _sympy_risk(2**bits, count)
    one_fewer = _sympy_risk(2 ** (bits - 1), count) if bits > 1 else None
    assert at_bits <= target
    assert one_fewer is None or one_fewer > target
    assert body["collision"]["value"] == float(at_bits)


def test_one_identifier_needs_one_bit(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?count=1&max_risk=1e-300")
    conforms(response, PATH)
    body = response.get_json()
    assert body["bits"] == 1
    assert body["collision_one_fewer"] is None
    assert body["collision"]["decimal"] == "0"


@pytest.mark.parametrize(
    ("query", "field"),
    [
        ("count=1e9", "max_risk"),
        ("max_risk=1e-9", "count"),
        ("count=1e9&max_risk=1", "max_risk"),
        ("count=1e9&max_risk=1e-301", "max_risk"),
        ("count=1e9&max_risk=1e-9&bits=64", "bits"),
    ],
)
def test_bad_queries_name_the_field(client: FlaskClient, query: str, field: str) -> None:
    response = client.get(f"{PATH}?{query}")
    assert response.status_code == 422
    assert response.mimetype == "application/problem+json"
    assert field in response.get_json()["errors"]


def test_no_width_fits_is_out_of_range(client: FlaskClient) -> None:
    # 2^8192 identifiers cannot be distinct in any space of at most 2^8192 values at 1e-300.
    response = client.get(f"{PATH}?count={2**8192}&max_risk=1e-300")
    assert response.status_code == 422
    assert response.get_json()["type"] == "/problems/out-of-range"
