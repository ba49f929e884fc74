"""GET /v1/reviews: one review of a scheme, consistent with the questions it gathers."""

from __future__ import annotations

from collections.abc import Callable

import pytest
from flask.testing import FlaskClient
from werkzeug.test import TestResponse

Conforms = Callable[[TestResponse, str], None]
SCHEME = ("alphabet=base64url&length=16&count=1e9&live=1e5&guess_rate=1e4&window=P365D"
          "&max_risk=1e-12&max_success=1e-9")


def test_review_gathers_the_answers_of_the_other_questions(client: FlaskClient,
                                                           conforms: Conforms) -> None:
    response = client.get(f"/v1/reviews?{SCHEME}")
    assert response.status_code == 200
    conforms(response, "/v1/reviews")
    body = response.get_json()
    collisions = client.get("/v1/collisions?alphabet=base64url&length=16&count=1e9").get_json()
    guessing = client.get("/v1/guessing?alphabet=base64url&length=16&live=1e5&guess_rate=1e4"
                          "&window=P365D&max_success=1e-9").get_json()
    assert body["collisions"]["risk"] == collisions["collision"]
    assert body["guessing"]["hit_distinct"] == guessing["hit_distinct"]
    assert body["guessing"]["within_max"] is guessing["policy"]["success_within_max"] is True
    # 6.3e-12 > 1e-12: the collision verdict fails, so the review does
    assert body["collisions"]["within_max"] is False and body["passes"] is False
    checks = {verdict["check"]: verdict for verdict in body["verdicts"]}
    assert set(checks) == {"entropy", "collision", "guessing"}
    # NIST SP 800-63B, section 7.1 and OWASP: at least 64 bits; 96 bits pass
    assert checks["entropy"]["passes"] is True and "NIST SP 800-63B" in checks["entropy"]["source"]
    assert "cryptographically secure" in body["cautions"] and "rate limiting" in body["cautions"]


def test_shortest_compliant_length_meets_every_threshold(client: FlaskClient) -> None:
    length = client.get(f"/v1/reviews?{SCHEME}").get_json()["shortest_compliant_length"]["length"]
    # the lengths question gives the collision side, the guessing answer the other
    by_collision = client.get("/v1/lengths?alphabet=base64url&count=1e9&max_risk=1e-12"
                              ).get_json()["length"]
    assert length >= by_collision
    for at, passes in ((length, True), (length - 1, False)):
        scheme = SCHEME.replace("length=16", f"length={at}")
        review = client.get(f"/v1/reviews?{scheme}").get_json()
        assert review["passes"] is passes, at


def test_time_ordered_scheme_and_a_space_by_size(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get("/v1/reviews?format=uuid-v7&rate=5e4&duration=P3650D&max_risk=1e-9")
    assert response.status_code == 200
    conforms(response, "/v1/reviews")
    body = response.get_json()
    assert body["collisions"]["method"] == "tick-model" and body["guessing"] is None
    assert body["shortest_compliant_length"]["alphabet_size"] == 2
    assert client.get("/v1/reviews?size=1e30&count=5").get_json()[
        "shortest_compliant_length"] is None


@pytest.mark.parametrize(("query", "fields"), [
    ("bits=64&count=5&guesses=4", {"live"}),
    ("bits=64&count=5&rate=5&duration=P1D", {"count", "rate"}),
    ("bits=64&count=5&live=5", {"guesses"}),
    ("bits=64&count=5&live=5&guess_rate=1e3", {"window"}),
    ("bits=64&count=5&live=5&guesses=1&max_success=0", {"max_success"}),
    ("bits=64", {"count"}),
    ("format=uuid-v7&count=5", {"count"}),
])
def test_bad_reviews_name_their_fields(client: FlaskClient, conforms: Conforms, query: str,
                                       fields: set[str]) -> None:
    response = client.get(f"/v1/reviews?{query}")
    assert response.status_code == 422, response.get_data(as_text=True)
    conforms(response, "/v1/reviews")
    assert set(response.get_json()["errors"]) == fields
