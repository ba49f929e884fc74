"""GET /v1/alphabets through the Flask test client."""

from __future__ import annotations

from collections.abc import Callable
from string import ascii_lowercase, ascii_uppercase, digits

from flask.testing import FlaskClient
from werkzeug.test import TestResponse

Conforms = Callable[[TestResponse, str], None]
PATH = "/v1/alphabets"


def test_lists_the_named_alphabets(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(PATH)
    assert response.status_code == 200
    conforms(response, PATH)
    by_name = {entry["name"]: entry for entry in response.get_json()["alphabets"]}
    # RFC 4648 (2006), tables 1 to 5.
    assert by_name["base16"]["symbols"] == digits + "ABCDEF"
    assert by_name["base32"]["symbols"] == ascii_uppercase + "234567"
    assert by_name["base32hex"]["symbols"] == digits + ascii_uppercase[:22]
    assert by_name["base64"]["symbols"] == ascii_uppercase + ascii_lowercase + digits + "+/"
    assert by_name["base64url"]["symbols"] == ascii_uppercase + ascii_lowercase + digits + "-_"
    assert by_name["base64url"]["source"].startswith("RFC 4648")
    # common practice
    sizes = {name: entry["size"] for name, entry in by_name.items()}
    assert sizes["decimal"] == 10
    assert sizes["alphanumeric"] == 62
    assert sizes["lowercase-alphanumeric"] == 36
    for entry in by_name.values():
        assert entry["size"] == len(entry["symbols"]) == len(set(entry["symbols"]))


def test_is_cacheable(client: FlaskClient) -> None:
    first = client.get(PATH)
    assert first.headers["ETag"]
    again = client.get(PATH, headers={"If-None-Match": first.headers["ETag"]})
    assert again.status_code == 304


def test_takes_no_parameters(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get(f"{PATH}?name=base64")
    assert response.status_code == 422
    conforms(response, PATH)
    assert "name" in response.get_json()["errors"]
