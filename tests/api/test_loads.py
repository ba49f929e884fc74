"""GET /v1/loads through the Flask test client."""

from __future__ import annotations

from collections.abc import Callable
from fractions import Fraction

import pytest
import sympy
from flask.testing import FlaskClient
from werkzeug.test import TestResponse

Conforms = Callable[[TestResponse, str], None]
PATH = "/v1/loads"


def test_three_share_a_day_among_88(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?buckets=365&count=88&load=3")
    assert response.status_code == 200
    conforms(response, PATH)
    body = response.get_json()
    # Diaconis and Mosteller (1989), JASA 84: about 88 people give an even chance that
    # three share a birthday.
    assert body["overflow"]["value"] > 0.5
    assert body["method"] == "exact" and body["relative_error_bound"] == 0.0
    fails = Fraction(int(body["exact"]["numerator"]), int(body["exact"]["denominator"]))
    assert fails == 1 - Fraction(int(_no_triple_count(365, 88)), 365**88)
    assert body["load"] == "3" and body["buckets"] == "365" and body["count"] == "88"
    assert body["overflow_one_lower"] is None
    assert "uniformly at random" in body["assumptions"]


def _no_triple_count(days: int, people: int) -> sympy.Integer:
    """Outcomes with no day used three times, by sympy: sum over the days used twice."""
    total = sympy.Integer(0)
    for pairs in range(people // 2 + 1):
        singles = people - 2 * pairs
        if pairs + singles > days:
            continue
        total += (sympy.factorial(days) / (sympy.factorial(pairs) * sympy.factorial(singles)
                                           * sympy.factorial(days - pairs - singles))
                  * sympy.factorial(people) / 2**pairs)
    return total


def test_expected_figures_and_profile(client: FlaskClient, conforms: Conforms) -> None:
    body = client.get(f"{PATH}?buckets=1e4&count=1e5&load=30").get_json()
    p = sympy.Rational(1, 10**4)
    empty = 10**4 * (1 - p) ** (10**5)
    assert float(body["expected_empty"]["decimal"]) == pytest.approx(float(empty), rel=1e-14,
                                                                     abs=0)
    rows = body["profile"]
    assert [int(row["load"]) for row in rows] == list(range(int(rows[0]["load"]),
                                                            int(rows[-1]["load"]) + 1))
    assert float(body["expected_at_load"]["decimal"]) >= float(body["overflow"]["decimal"])
    assert body["relative_error_bound"] < 1e-12


def test_smallest_load_within_max_risk(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?buckets=365&count=88&max_risk=0.5")
    assert response.status_code == 200
    conforms(response, PATH)
    body = response.get_json()
    assert body["load"] == "4"
    assert float(body["overflow"]["decimal"]) <= 0.5 < float(body["overflow_one_lower"]["decimal"])


def test_large_hash_table(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?buckets=1e9&count=1e9&max_risk=1e-6")
    assert response.status_code == 200
    conforms(response, PATH)
    body = response.get_json()
    assert float(body["overflow"]["decimal"]) <= 1e-6 < float(body["overflow_one_lower"]["decimal"])
    assert body["relative_error_bound"] < 1e-9


@pytest.mark.parametrize(
    ("query", "field"),
    [
        ("buckets=0&count=5&load=2", "buckets"),
        ("buckets=1&count=5&load=2", "buckets"),
        ("buckets=1e13&count=5&load=2", "buckets"),
        ("buckets=10&count=-1&load=2", "count"),
        ("buckets=10&count=1e16&load=2", "count"),
        ("buckets=10&count=1000001&load=2", "count"),
        ("buckets=10&count=5&load=0", "load"),
        ("buckets=10&count=5&max_risk=1", "max_risk"),
        ("buckets=10&count=5&load=2&max_risk=0.1", "load"),
        ("buckets=10&count=5", "load"),
        ("count=5&load=2", "buckets"),
        ("buckets=10&count=5&load=2&size=9", "size"),
    ],
)
def test_bad_input_names_the_field(client: FlaskClient, conforms: Conforms, query: str,
                                   field: str) -> None:
    response = client.get(f"{PATH}?{query}")
    assert response.status_code == 422
    assert response.mimetype == "application/problem+json"
    conforms(response, PATH)
    assert field in response.get_json()["errors"]
