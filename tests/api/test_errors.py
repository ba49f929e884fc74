"""Every class of bad input gets RFC 9457 problem+json naming the field and the allowed range."""

from __future__ import annotations

from collections.abc import Callable

import pytest
from flask.testing import FlaskClient
from werkzeug.test import TestResponse

Conforms = Callable[[TestResponse, str], None]

COLLISIONS = "/v1/collisions"
LENGTHS = "/v1/lengths"
CAPACITY = "/v1/capacity"

BAD_QUERIES = [
    # (endpoint, query, field at fault, words the message must hold)
    # missing
    (COLLISIONS, "bits=64", "count", "missing"),
    (LENGTHS, "alphabet=base64&count=10", "max_risk", "missing"),
    (LENGTHS, "alphabet=base64&max_risk=0.1", "count", "missing"),
    (CAPACITY, "bits=64", "max_risk", "missing"),
    (COLLISIONS, "alphabet=base64&count=10", "length", "required"),
    (COLLISIONS, "count=", "space", "exactly one of"),
    # malformed
    (COLLISIONS, "bits=64&count=abc", "count", "whole number"),
    (COLLISIONS, "bits=64&count=2.5", "count", "whole number"),
    (COLLISIONS, "bits=64&count=1e-3", "count", "whole number"),
    (COLLISIONS, "bits=64&count=nan", "count", "whole number"),
    (COLLISIONS, "bits=sixty&count=1", "bits", "from 1 to 8192"),
    (COLLISIONS, "bits=6e1&count=1", "bits", "from 1 to 8192"),
    (COLLISIONS, "size=0x10&count=1", "size", "whole number"),
    (CAPACITY, "bits=64&max_risk=half", "max_risk", "1e-300"),
    (CAPACITY, "bits=64&max_risk=", "max_risk", "1e-300"),
    # out of range
    (COLLISIONS, "bits=0&count=1", "bits", "from 1 to 8192"),
    (COLLISIONS, "bits=8193&count=1", "bits", "from 1 to 8192"),
    (COLLISIONS, "size=1&count=1", "size", "from 2 to 2^8192"),
    (COLLISIONS, "size=1e2467&count=1", "size", "2^8192"),
    (COLLISIONS, "bits=64&count=-1", "count", "from 0 to 2^8192"),
    (COLLISIONS, "alphabet=base64&length=0&count=1", "length", "from 1"),
    (COLLISIONS, "alphabet=base64&length=1366&count=1", "length", "from 1 to 1365"),
    (COLLISIONS, "alphabet_size=1&length=3&count=1", "alphabet_size", "from 2 to 65536"),
    (COLLISIONS, "alphabet_size=65537&length=3&count=1", "alphabet_size", "from 2 to 65536"),
    (CAPACITY, "bits=64&max_risk=1", "max_risk", "not including 1"),
    (CAPACITY, "bits=64&max_risk=1e-301", "max_risk", "1e-300"),
    (CAPACITY, "bits=64&max_risk=-0.1", "max_risk", "1e-300"),
    (LENGTHS, "alphabet=base64&count=10&max_risk=0", "max_risk", "1e-300"),
    # count beyond what the endpoint allows (and a bounded-cost refusal from the exponent)
    (COLLISIONS, "bits=64&count=1e2467", "count", "from 0 to 2^8192"),
    (COLLISIONS, "bits=64&count=1e999999999", "count", "from 0 to 2^8192"),
    (LENGTHS, "alphabet=base64&count=1e2467&max_risk=0.1", "count", "from 0 to 2^8192"),
    # unknown parameter
    (COLLISIONS, "bits=64&count=1&cnt=2", "cnt", "unknown parameter"),
    (LENGTHS, "alphabet=base64&count=1&max_risk=0.1&length=3", "length", "unknown parameter"),
    (CAPACITY, "bits=64&max_risk=0.1&count=5", "count", "unknown parameter"),
    # two space forms, or none
    (COLLISIONS, "bits=64&size=100&count=1", "bits", "got bits and size"),
    (COLLISIONS, "bits=64&size=100&count=1", "size", "got bits and size"),
    (CAPACITY, "alphabet=base64&alphabet_size=64&length=3&max_risk=0.1", "alphabet_size",
     "got alphabet and alphabet_size"),
    (LENGTHS, "alphabet=base64&symbols=ab&count=1&max_risk=0.1", "symbols",
     "exactly one of"),
    (COLLISIONS, "count=1", "space", "exactly one of bits; alphabet + length"),
    (CAPACITY, "max_risk=0.1", "space", "exactly one of"),
    (LENGTHS, "count=1&max_risk=0.1", "alphabet", "exactly one of"),
    (COLLISIONS, "bits=64&length=3&count=1", "length", "not bits"),
    # alphabets: unknown name, repeated symbol, too few symbols
    (COLLISIONS, "alphabet=base58&length=3&count=1", "alphabet", "base64url"),
    (COLLISIONS, "symbols=abca&length=3&count=1", "symbols", "'a'"),
    (LENGTHS, "symbols=xyzzy&count=1&max_risk=0.1", "symbols", "more than once"),
    (LENGTHS, "symbols=x&count=1&max_risk=0.1", "symbols", "from 2"),
    # a parameter given twice
    (COLLISIONS, "bits=64&count=1&count=2", "count", "once"),
]


@pytest.mark.parametrize(("path", "query", "field", "words"), BAD_QUERIES)
def test_bad_query_is_a_problem_naming_the_field(
    client: FlaskClient, conforms: Conforms, path: str, query: str, field: str, words: str
) -> None:
    response = client.get(f"{path}?{query}")
    assert response.status_code == 422
    assert response.mimetype == "application/problem+json"
    conforms(response, path)
    body = response.get_json()
    assert body["type"] == "/problems/invalid-query"
    assert body["status"] == 422
    assert body["instance"] == path
    assert field in body["detail"]
    assert any(words in message for message in body["errors"][field])
    assert "ETag" not in response.headers


def test_unknown_path_is_a_404_problem(client: FlaskClient) -> None:
    response = client.get("/v1/collision")
    assert response.status_code == 404
    assert response.mimetype == "application/problem+json"
    body = response.get_json()
    assert body == {
        "type": "about:blank",
        "title": "Not Found",
        "status": 404,
        "detail": body["detail"],
        "instance": "/v1/collision",
    }
    assert body["detail"]


@pytest.mark.parametrize("method", ["POST", "PUT", "DELETE", "PATCH"])
@pytest.mark.parametrize("path", [COLLISIONS, LENGTHS, CAPACITY, "/v1/alphabets", "/healthz"])
def test_wrong_method_is_a_405_problem_with_allow(
    client: FlaskClient, method: str, path: str
) -> None:
    response = client.open(path, method=method)
    assert response.status_code == 405
    assert response.mimetype == "application/problem+json"
    assert response.get_json()["title"] == "Method Not Allowed"
    assert set(response.headers["Allow"].replace(" ", "").split(",")) == {"GET", "HEAD", "OPTIONS"}


def test_wrong_method_on_metrics_is_a_405_problem(client: FlaskClient) -> None:
    response = client.post("/metrics")
    assert response.status_code == 405
    assert response.mimetype == "application/problem+json"
    assert response.headers["Allow"] == "GET, HEAD"


def test_several_bad_fields_are_all_reported(client: FlaskClient) -> None:
    response = client.get(f"{CAPACITY}?bits=0&max_risk=2")
    assert response.status_code == 422
    assert set(response.get_json()["errors"]) == {"bits", "max_risk"}


def test_unknown_alphabet_without_length_names_the_alphabet(client: FlaskClient) -> None:
    # Found by trying it: this was reported as a missing length.
    response = client.get(f"{COLLISIONS}?alphabet=base58&count=5")
    assert response.status_code == 422
    assert list(response.get_json()["errors"]) == ["alphabet"]


def test_alphabet_names_match_without_regard_to_case(client: FlaskClient) -> None:
    upper = client.get(f"{COLLISIONS}?alphabet=BASE64URL&length=8&count=2e6").get_json()
    lower = client.get(f"{COLLISIONS}?alphabet=base64url&length=8&count=2e6").get_json()
    assert upper == lower
    assert upper["space"]["description"].startswith("base64url alphabet")


def test_old_parameter_names_are_unknown(client: FlaskClient) -> None:
    response = client.get(f"{COLLISIONS}?alphabet_chars=abc&length=3&count=1")
    assert response.status_code == 422
    assert "unknown parameter" in response.get_json()["errors"]["alphabet_chars"][0]
    body = client.get(f"{COLLISIONS}?symbols=abc&length=3&count=2").get_json()
    assert "one_in" not in body and "reciprocal_risk" in body
