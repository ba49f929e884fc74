"""The WSGI front: question replies identical to the Flask view's, errors handed over once.

The front replies to GET and HEAD of registered questions without Flask's request
machinery. Each check here asks the same request of the app as deployed (front first) and
of the Flask app behind it (the view replying on its own), and wants the same status,
headers and body; then that failures reach the problem handlers without a second
computation, and that metrics and the access line count each request once.
"""

from __future__ import annotations

import json
from collections.abc import Iterator

import pytest
from flask import Flask
from werkzeug.test import Client

from urnbound.api.front import Front
from urnbound.app import create_app
from urnbound.domain.errors import DomainError
from urnbound.domain.inputs import Inputs
from urnbound.domain.parameters import COUNT
from urnbound.domain.question import Answer, AnswerField, Context, Question
from urnbound.domain.registry import Registry

#: (method, path and query, request headers): answers, a chart, validators, a HEAD.
REQUESTS = (
    ("GET", "/v1/collisions?bits=64&count=1e6", {}),
    ("GET", "/v1/collisions?alphabet=base64url&length=12&count=123456789", {}),
    ("GET", "/v1/loads?buckets=1e3&count=1e5&load=150", {}),
    ("GET", "/v1/coverage?buckets=50&draws=300", {}),
    ("GET", "/v1/curves?bits=64&from=1e3&to=1e9&points=5", {}),
    ("GET", "/v1/curves?bits=64&from=1e3&to=1e9&points=5", {"Accept": "image/svg+xml"}),
    ("GET", "/v1/curves?bits=64&from=1e3&to=1e9&points=5", {"Accept": "image/*"}),
    ("GET", "/v1/curves?bits=64&from=1e3&to=1e9&points=5", {"Accept": "*/*"}),
    ("HEAD", "/v1/collisions?bits=64&count=1e6", {}),
    ("GET", "/v1/alphabets", {}),
)


def _apps() -> tuple[Flask, Client, Client]:
    """A fresh app, a client through its front and a client of the Flask app behind it."""
    app = create_app({"TESTING": True, "access_log": False})
    front = app.wsgi_app
    assert isinstance(front, Front)
    return app, Client(front), Client(front.app)


@pytest.mark.parametrize(("method", "target", "headers"), REQUESTS)
def test_the_front_replies_as_the_flask_view_does(method: str, target: str,
                                                   headers: dict[str, str]) -> None:
    _app, through_front, flask_only = _apps()
    # Each client asks twice: a computed reply, then a cached one.
    for _ in range(2):
        ours = through_front.open(target, method=method, headers=headers)
        theirs = flask_only.open(target, method=method, headers=headers)
        assert ours.status == theirs.status
        assert list(ours.headers.items()) == list(theirs.headers.items())
        assert ours.get_data() == theirs.get_data()
    if method == "HEAD":
        assert ours.get_data() == b""
        assert int(ours.headers["Content-Length"]) > 0


@pytest.mark.parametrize(("method", "target", "headers"), REQUESTS[:6])
def test_a_matching_etag_gets_the_same_304(method: str, target: str,
                                            headers: dict[str, str]) -> None:
    _app, through_front, flask_only = _apps()
    etag = through_front.open(target, method=method, headers=headers).headers["ETag"]
    asked = {**headers, "If-None-Match": f'W/{etag}, "other"'}
    ours = through_front.open(target, method=method, headers=asked)
    theirs = flask_only.open(target, method=method, headers=asked)
    assert ours.status_code == theirs.status_code == 304
    assert list(ours.headers.items()) == list(theirs.headers.items())
    assert ours.get_data() == theirs.get_data() == b""


def test_other_methods_and_paths_still_reach_flask() -> None:
    _app, through_front, _flask_only = _apps()
    assert through_front.post("/v1/collisions?bits=64&count=2").status_code == 405
    assert through_front.get("/v1/collisions/?bits=64&count=2").status_code == 404
    options = through_front.options("/v1/collisions")
    assert options.status_code == 200
    assert "GET" in options.headers["Allow"]


CALLS: list[int] = []


def _refused(inputs: Inputs, context: Context) -> Answer:
    CALLS.append(inputs["count"])
    raise DomainError("count must be odd for this test question", field="count")


REFUSING = Question(
    name="refusing",
    path="/v1/refusing",
    summary="Refuses every count, counting its calls.",
    description="A test question whose computation always raises.",
    inputs=(COUNT,),
    answer=(AnswerField("count", "whole", "Items."),),
    compute=_refused,
    example={"count": "3"},
    premise=None,
)


@pytest.fixture
def calls() -> Iterator[list[int]]:
    CALLS.clear()
    yield CALLS
    CALLS.clear()


def test_an_error_raised_in_the_front_is_answered_once(calls: list[int]) -> None:
    client = create_app({"TESTING": True, "access_log": False},
                        registry=Registry((REFUSING,))).test_client()
    response = client.get("/v1/refusing?count=4")
    assert response.status_code == 422
    assert response.mimetype == "application/problem+json"
    assert response.get_json()["errors"] == {"count": ["count must be odd for this test question"]}
    assert calls == [4]  # computed once, in the front; the view raised the same error


def test_each_request_is_logged_once(capsys: pytest.CaptureFixture[str]) -> None:
    client = create_app({"access_log": True}).test_client()
    capsys.readouterr()
    client.get("/v1/collisions?bits=64&count=1e6")  # replied in the front
    client.head("/v1/collisions?bits=64&count=1e6")  # cached, in the front
    client.get("/v1/collisions?bits=0&count=1")  # refused: handed to Flask
    lines = [json.loads(line) for line in capsys.readouterr().out.strip().splitlines()]
    assert [(line["method"], line["status"]) for line in lines] == [
        ("GET", 200), ("HEAD", 200), ("GET", 422)]
    assert {line["endpoint"] for line in lines} == {"/v1/collisions"}
    assert lines[0]["bytes"] == lines[1]["bytes"] > 0  # HEAD counts the body it omits


@pytest.mark.parametrize(("query", "field"), [
    ("bits=64&count=\xff", "query"),  # a raw byte that is not UTF-8 (WSGI: latin-1 text)
    ("bits=64&count=%ff", "count"),  # an escape that is not UTF-8: U+FFFD, not a number
    ("bits=64&count=%E2%82%AC", "count"),  # the euro sign, well-formed but not a number
])
def test_query_bytes_that_are_not_a_number_are_422_problems(query: str, field: str) -> None:
    _app, through_front, _flask_only = _apps()
    response = through_front.get("/v1/collisions", environ_overrides={"QUERY_STRING": query})
    assert response.status_code == 422
    assert response.mimetype == "application/problem+json"
    assert field in response.get_json()["errors"]


def test_a_failing_counter_does_not_cost_the_answer(monkeypatch: pytest.MonkeyPatch,
                                                    caplog: pytest.LogCaptureFixture) -> None:
    app, through_front, _flask_only = _apps()

    def broken(*_args: object) -> None:
        raise OSError("metrics file not writable")

    monkeypatch.setattr(type(app.extensions["urnbound"].metrics), "observe_request", broken)
    response = through_front.get("/v1/collisions?bits=64&count=1e6")
    assert response.status_code == 200
    assert response.get_json()["collision"]["decimal"]
    assert "could not count or log" in caplog.text
