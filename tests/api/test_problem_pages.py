"""GET /problems/<name>: a human-readable page at the URI of every problem type."""

from __future__ import annotations

from html.parser import HTMLParser

import pytest
from flask import Flask
from flask.testing import FlaskClient

from urnbound.api import problems
from urnbound.api.problem_pages import FALLBACK_EXPLANATION, page_name
from urnbound.app import create_app


class TextOfPage(HTMLParser):
    """The text of an HTML page with tags removed, and whether every tag was closed."""

    VOID = frozenset({"meta", "br", "link"})

    def __init__(self) -> None:
        super().__init__()
        self.text: list[str] = []
        self.open: list[str] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        if tag not in self.VOID:
            self.open.append(tag)

    def handle_endtag(self, tag: str) -> None:
        assert self.open and self.open.pop() == tag, f"</{tag}> closes nothing"

    def handle_data(self, data: str) -> None:
        self.text.append(data)


def page_text(html: str) -> str:
    parser = TextOfPage()
    parser.feed(html)
    parser.close()
    assert parser.open == [], f"unclosed tags: {parser.open}"
    return " ".join(" ".join(parser.text).split())


def test_the_four_known_types_are_listed() -> None:
    uris = [kind.uri for kind in problems.problem_types()]
    assert len(uris) == len(set(uris))
    # Other kinds may be added; these four must stay.
    assert {
        "/problems/invalid-query",
        "/problems/out-of-range",
        "/problems/no-convergence",
        "/problems/not-ready",
    } <= set(uris)
    assert all(page_name(kind) is not None for kind in problems.problem_types())


@pytest.mark.parametrize("kind", problems.problem_types(), ids=lambda kind: kind.uri)
def test_every_problem_type_uri_answers_a_page(
    client: FlaskClient, kind: problems.ProblemType
) -> None:
    response = client.get(kind.uri)
    assert response.status_code == 200
    assert response.mimetype == "text/html"
    assert response.mimetype_params.get("charset") == "utf-8"
    text = page_text(response.get_data(as_text=True))
    assert kind.title in text
    assert f"HTTP status {kind.status}" in text
    assert kind.explanation, f"{kind.uri} has no explanation of its own"
    assert " ".join(kind.explanation.split()) in text


def test_head_on_a_problem_page(client: FlaskClient) -> None:
    response = client.head(problems.INVALID_QUERY.uri)
    assert response.status_code == 200
    assert response.data == b""


def test_problem_bodies_point_at_their_page(client: FlaskClient) -> None:
    for kind in problems.problem_types():
        with client.application.test_request_context("/v1/somewhere"):
            body = problems.problem_response(problems.typed_problem(kind, "why")).get_json()
        assert body["type"] == kind.uri
        assert client.get(body["type"]).status_code == 200


def test_a_bad_query_links_to_a_served_page(client: FlaskClient) -> None:
    problem = client.get("/v1/collisions?bits=0&count=1").get_json()
    assert problem["type"].startswith("/problems/")
    assert client.get(problem["type"]).status_code == 200


def test_unknown_problem_name_is_a_404_problem(client: FlaskClient) -> None:
    for path in ("/problems/no-such-problem", "/problems/", "/problems/not-ready/more"):
        response = client.get(path)
        assert response.status_code == 404, path
        assert response.mimetype == "application/problem+json"
        assert response.get_json()["status"] == 404


def test_a_new_problem_type_gets_its_page(monkeypatch: pytest.MonkeyPatch) -> None:
    added = problems.ProblemType("/problems/added-kind", "A kind added later & <tested>", 409)
    monkeypatch.setattr(problems, "ADDED_KIND", added, raising=False)
    app: Flask = create_app({"access_log": False, "TESTING": True})
    response = app.test_client().get("/problems/added-kind")
    assert response.status_code == 200
    html = response.get_data(as_text=True)
    assert "A kind added later &amp; &lt;tested&gt;" in html  # escaped, not markup
    text = page_text(html)
    assert "HTTP status 409" in text
    assert FALLBACK_EXPLANATION in text
