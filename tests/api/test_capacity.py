"""GET /v1/capacity through the Flask test client."""

from __future__ import annotations

from collections.abc import Callable

import pytest
from flask.testing import FlaskClient
from werkzeug.test import TestResponse

Conforms = Callable[[TestResponse, str], None]
PATH = "/v1/capacity"


def two_digits(text: str) -> float:
    return float(f"{int(text):.1e}")


@pytest.mark.parametrize(
    ("bits", "max_risk", "published"),
    [
        # "Birthday attack" table (Wikipedia): items hashed to 32 bits for P = 50 %: 77,000.
        (32, "0.5", 77_000),
        # same table, 64 bits, P = 1e-12 / 1e-9 / 1e-6 / 0.1 % / 1 % / 50 %:
        # 6100 / 190,000 / 6,100,000 / 1.9e8 / 6.1e8 / 5.1e9.
        (64, "1e-12", 6_100),
        (64, "1e-9", 190_000),
        (64, "1e-6", 6_100_000),
        (64, "0.001", 1.9e8),
        (64, "0.01", 6.1e8),
        (64, "0.5", 5.1e9),
        # same table, 128 bits, P = 1e-18 / 1e-12 / 1e-6 / 50 %: 2.6e10 / 2.6e13 / 2.6e16 / 2.2e19.
        (128, "1e-18", 2.6e10),
        (128, "1e-12", 2.6e13),
        (128, "1e-6", 2.6e16),
        (128, "0.5", 2.2e19),
    ],
)
def test_published_table_to_two_digits(
    client: FlaskClient, conforms: Conforms, bits: int, max_risk: str, published: float
) -> None:
    response = client.get(f"{PATH}?bits={bits}&max_risk={max_risk}")
    assert response.status_code == 200
    conforms(response, PATH)
    # The table's cells are sqrt(2N ln(1/(1-p))) rounded to 2 digits (same article).
    assert two_digits(response.get_json()["count"]) == published


def test_uuid_version_4_even_chance(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?bits=122&max_risk=0.5")
    conforms(response, PATH)
    # 122 random bits (UUID version 4): about 2.71e18 for P = 50 %
    # (encyclopedia article "Universally unique identifier", section on collisions).
    assert float(f"{int(response.get_json()['count']):.2e}") == 2.71e18


def test_birthday_capacity_is_one_below_the_half_point(
    client: FlaskClient, conforms: Conforms
) -> None:
    response = client.get(f"{PATH}?size=365&max_risk=0.5")
    conforms(response, PATH)
    body = response.get_json()
    # OEIS A033810: a(365) = 23 is the smallest count reaching 1/2, so 22 is the largest below.
    assert body["count"] == "22"
    # encyclopedia table "Birthday problem": 23 draws give 0.5072972.
    assert round(body["collision_one_more"]["value"], 7) == 0.5072972
    assert body["collision"]["value"] < 0.5


def test_boundary_brackets_the_target(client: FlaskClient) -> None:
    body = client.get(f"{PATH}?alphabet=base32&length=13&max_risk=1e-9").get_json()
    assert body["collision"]["value"] <= 1e-9 < body["collision_one_more"]["value"]
    assert body["space"]["description"] == "base32 alphabet (32 symbols), length 13"


def test_answer_names_its_method_and_bound(client: FlaskClient, conforms: Conforms) -> None:
    # 365 values: answered exactly (small); 2^64 values at 1e-6: the expansion.
    small = client.get(f"{PATH}?size=365&max_risk=0.5").get_json()
    assert (small["method"], small["relative_error_bound"]) == ("exact", 0.0)
    response = client.get(f"{PATH}?bits=64&max_risk=1e-6")
    conforms(response, PATH)
    large = response.get_json()
    assert large["method"] == "asymptotic"
    assert 0.0 < large["relative_error_bound"] < 1e-15
