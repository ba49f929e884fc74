"""GET /v1/coverage, and multiplicity on /v1/collisions, through the Flask test client."""

from __future__ import annotations

from collections.abc import Callable
from fractions import Fraction
from math import factorial

import pytest
import sympy
from flask.testing import FlaskClient
from sympy.functions.combinatorial.numbers import stirling
from werkzeug.test import TestResponse

Conforms = Callable[[TestResponse, str], None]
PATH = "/v1/coverage"


def test_every_bucket_used(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?buckets=50&draws=300")
    assert response.status_code == 200
    conforms(response, PATH)
    body = response.get_json()
    # P(all k values seen in n draws) = S2(n, k) k! / k^n (OEIS A008277); S2 by sympy.
    exact = Fraction(int(stirling(300, 50)) * factorial(50), 50**300)
    covered = Fraction(int(body["exact"]["numerator"]), int(body["exact"]["denominator"]))
    assert covered == exact
    assert Fraction(body["not_covered"]["decimal"]) == pytest.approx(1 - exact, rel=5e-20, abs=0)
    # Coupon collector's problem: N H_N = 224.96... for N = 50 (encyclopedia article).
    assert body["expected_draws_to_cover"]["decimal"].startswith("2.2496026")
    assert body["at_least"] == 1 and body["covered_one_fewer"] is None


def test_fewest_draws_for_a_target(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?buckets=50&target=0.5")
    assert response.status_code == 200
    conforms(response, PATH)
    body = response.get_json()
    draws = int(body["draws"])
    at = Fraction(int(stirling(draws, 50)) * factorial(50), 50**draws)
    before = Fraction(int(stirling(draws - 1, 50)) * factorial(50), 50 ** (draws - 1))
    assert before < Fraction(1, 2) <= at
    assert float(body["covered_one_fewer"]["decimal"]) < 0.5


def test_used_twice_at_scale(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?buckets=1e6&draws=2e7&at_least=2")
    assert response.status_code == 200
    conforms(response, PATH)
    body = response.get_json()
    assert body["relative_error_bound"] < 1e-9
    assert body["method"] != "exact"


@pytest.mark.parametrize(
    ("query", "field"),
    [
        ("buckets=0&draws=5", "buckets"),
        ("buckets=1&draws=5", "buckets"),
        ("buckets=10&draws=-5", "draws"),
        ("buckets=10&draws=5&at_least=0", "at_least"),
        ("buckets=10&draws=5&at_least=1001", "at_least"),
        ("buckets=10&target=1.5", "target"),
        ("buckets=10&draws=5&target=0.5", "draws"),
        ("buckets=10", "draws"),
    ],
)
def test_bad_input_names_the_field(client: FlaskClient, conforms: Conforms, query: str,
                                   field: str) -> None:
    response = client.get(f"{PATH}?{query}")
    assert response.status_code == 422
    conforms(response, PATH)
    assert field in response.get_json()["errors"]


COLLISIONS = "/v1/collisions"


def test_multiplicity_two_is_the_pairwise_answer(client: FlaskClient, conforms: Conforms) -> None:
    plain = client.get(f"{COLLISIONS}?size=365&count=23").get_json()
    two = client.get(f"{COLLISIONS}?size=365&count=23&multiplicity=2").get_json()
    assert plain == two
    assert plain["multiplicity"] == 2
    assert plain["expected_coincident_sets"] == plain["expected_colliding_pairs"]


@pytest.mark.parametrize(("multiplicity", "count"), [(3, 88), (4, 187)])
def test_multiplicity_on_365_days(client: FlaskClient, conforms: Conforms, multiplicity: int,
                                  count: int) -> None:
    # Diaconis and Mosteller (1989), JASA 84: 88 people for three sharing, 187 for four.
    at = client.get(f"{COLLISIONS}?size=365&count={count}&multiplicity={multiplicity}")
    conforms(at, COLLISIONS)
    before = client.get(f"{COLLISIONS}?size=365&count={count - 1}&multiplicity={multiplicity}")
    assert float(at.get_json()["collision"]["decimal"]) >= 0.5
    assert float(before.get_json()["collision"]["decimal"]) < 0.5
    sets = sympy.binomial(count, multiplicity) / sympy.Integer(365) ** (multiplicity - 1)
    figure = at.get_json()["expected_coincident_sets"]["decimal"]
    assert Fraction(figure) == pytest.approx(Fraction(int(sets.p), int(sets.q)), rel=5e-20, abs=0)


def test_multiplicity_refused_out_of_range(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{COLLISIONS}?size=365&count=23&multiplicity=1")
    assert response.status_code == 422
    assert "multiplicity" in response.get_json()["errors"]
