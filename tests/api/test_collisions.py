"""GET /v1/collisions through the Flask test client."""

from __future__ import annotations

from collections.abc import Callable
from fractions import Fraction

import mpmath
import pytest
import sympy
from flask.testing import FlaskClient
from werkzeug.test import TestResponse

Conforms = Callable[[TestResponse, str], None]
PATH = "/v1/collisions"


def ask(client: FlaskClient, query: str) -> TestResponse:
    return client.get(f"{PATH}?{query}")


def test_birthday_table_value(client: FlaskClient, conforms: Conforms) -> None:
    response = ask(client, "size=365&count=23")
    assert response.status_code == 200
    conforms(response, PATH)
    body = response.get_json()
    # 365 equally likely values, 23 draws: 0.5072972 to 7 decimals
    # (encyclopedia table "Birthday problem").
    assert round(body["collision"]["value"], 7) == 0.5072972
    assert body["method"] == "exact"
    assert body["count"] == "23"
    assert body["space"] == {
        "size": "365",
        "bits": pytest.approx(8.5117526537673, rel=1e-13, abs=0),  # log2(365)
        "description": "365 values",
        "alphabet_size": None,
        "length": None,
    }
    assert "cryptographically secure" in body["assumptions"]


def test_exact_fraction_matches_sympy(client: FlaskClient) -> None:
    body = ask(client, "size=365&count=23").get_json()
    # Independent reference: sympy's exact rational product 1 - prod (365 - i) / 365.
    no_collision = sympy.prod([sympy.Rational(365 - i, 365) for i in range(23)])
    expected = 1 - no_collision
    exact = body["exact"]
    assert Fraction(int(exact["numerator"]), int(exact["denominator"])) == Fraction(
        int(expected.p), int(expected.q)
    )
    # decimal carries at least 17 significant digits, correctly rounded from the fraction.
    assert mpmath.mpf(body["collision"]["decimal"]) == pytest.approx(
        float(expected), rel=1e-17, abs=0
    )
    assert len(body["collision"]["decimal"].split("e")[0].replace(".", "")) >= 17


@pytest.mark.parametrize(
    ("count", "percent"),
    # 365 values: 10 / 20 / 30 / 40 / 50 / 57 / 60 / 70 draws give
    # 11.7 % / 41.1 % / 70.6 % / 89.1 % / 97.0 % / 99.0 % / 99.4 % / 99.9 %
    # (encyclopedia table "Birthday problem").
    [(10, 11.7), (20, 41.1), (30, 70.6), (40, 89.1), (50, 97.0), (57, 99.0), (60, 99.4),
     (70, 99.9)],
)
def test_birthday_table_row(client: FlaskClient, count: int, percent: float) -> None:
    body = ask(client, f"size=365&count={count}").get_json()
    assert round(100 * body["collision"]["value"], 1) == percent


def test_pigeonhole_gives_certainty(client: FlaskClient, conforms: Conforms) -> None:
    # 366 draws from 365 values must repeat one (pigeonhole principle).
    response = ask(client, "size=365&count=366")
    conforms(response, PATH)
    body = response.get_json()
    assert body["collision"]["value"] == 1.0
    assert body["no_collision"] == {"value": 0.0, "decimal": "0", "log10": None,
                                    "relative_error_bound": 0.0}
    assert body["collision"]["log10"] == 0.0 and "-0.0" not in response.get_data(as_text=True)
    assert body["exact"] == {"numerator": "1", "denominator": "1"}


def test_zero_count_has_zero_risk(client: FlaskClient, conforms: Conforms) -> None:
    response = ask(client, "bits=64&count=0")
    conforms(response, PATH)
    body = response.get_json()
    assert body["collision"] == {"value": 0.0, "decimal": "0", "log10": None,
                                 "relative_error_bound": 0.0}
    assert body["no_collision"]["log10"] == 0.0 and "-0.0" not in response.get_data(as_text=True)
    assert body["reciprocal_risk"] is None


def _mpmath_risk(size: int, count: int) -> mpmath.mpf:
    """Independent reference: log-gamma form at high precision in a private context."""
    ctx = mpmath.MPContext()
    ctx.prec = 4 * size.bit_length() + 200
    log_none = ctx.loggamma(size + 1) - ctx.loggamma(size - count + 1) - count * ctx.log(size)
    return -ctx.expm1(log_none)


@pytest.mark.parametrize(
    ("query", "size", "count"),
    [
        ("bits=128&count=2.2e19", 2**128, 22 * 10**18),
        ("bits=64&count=1e9", 2**64, 10**9),
        ("bits=256&count=1e30", 2**256, 10**30),
        ("alphabet=base64url&length=22&count=1e12", 64**22, 10**12),
    ],
)
def test_large_spaces_agree_with_mpmath(
    client: FlaskClient, conforms: Conforms, query: str, size: int, count: int
) -> None:
    response = ask(client, query)
    conforms(response, PATH)
    body = response.get_json()
    reference = _mpmath_risk(size, count)
    assert mpmath.mpf(body["collision"]["decimal"]) == pytest.approx(reference, rel=1e-15, abs=0)
    assert body["relative_error_bound"] <= 1e-15 or body["method"] == "exact"


def test_tiny_risk_never_underflows(client: FlaskClient, conforms: Conforms) -> None:
    # 2 draws from 2^8192 values: risk 2^-8192, far below the float64 range.
    response = ask(client, "bits=8192&count=2")
    conforms(response, PATH)
    body = response.get_json()
    assert body["collision"]["value"] == 0.0
    log10_of_2 = 0.30102999566398120
    assert body["collision"]["log10"] == pytest.approx(-8192 * log10_of_2, rel=1e-15, abs=0)
    mantissa, exponent = body["collision"]["decimal"].split("e")
    assert int(exponent) == -2467
    assert body["reciprocal_risk"]["value"] is None  # 2^8192 is beyond float64: null, decimal kept
    assert body["reciprocal_risk"]["decimal"].endswith("e2466")


@pytest.mark.parametrize(
    "query",
    [
        "bits=8&count=20",
        "size=256&count=20",
        "size=2.56e2&count=2e1",
        "alphabet_size=2&length=8&count=20",
        "alphabet=base16&length=2&count=20",
        "symbols=0123456789abcdef&length=2&count=20",
        "symbols=01%2B-&length=4&count=20",  # %2B: a literal + symbol
    ],
)
def test_every_space_form_gives_the_same_risk(client: FlaskClient, query: str) -> None:
    # 20 draws from 256 values, by sympy's exact rational product.
    expected = 1 - sympy.prod([sympy.Rational(256 - i, 256) for i in range(20)])
    body = ask(client, query).get_json()
    exact = body["exact"]
    assert Fraction(int(exact["numerator"]), int(exact["denominator"])) == Fraction(
        int(expected.p), int(expected.q)
    )
    assert body["space"]["size"] == "256"


def test_count_spellings_share_an_answer(client: FlaskClient) -> None:
    first = ask(client, "bits=64&count=1e6")
    second = ask(client, "bits=64&count=1000000")
    third = ask(client, "count=+1E6&bits=64")
    assert first.data == second.data == third.data
    assert first.get_json()["count"] == "1000000"


def test_description_names_the_alphabet(client: FlaskClient) -> None:
    body = ask(client, "alphabet=base64url&length=22&count=1").get_json()
    assert body["space"]["description"] == "base64url alphabet (64 symbols), length 22"
    assert body["space"]["bits"] == 132.0
    assert body["space"]["alphabet_size"] == 64
    assert body["space"]["length"] == 22
