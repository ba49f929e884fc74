"""A question defined only in this test gets a route, an OpenAPI entry and a CLI command.

Nothing outside this file is edited: the toy question and its own parameter are handed to
the app factory, the OpenAPI generator and the command-line builder in a test-only registry.
"""

from __future__ import annotations

from math import comb

from click.testing import CliRunner

from urnbound.api.openapi import spec_document
from urnbound.app import create_app
from urnbound.cli import build_cli
from urnbound.domain.inputs import Inputs
from urnbound.domain.numbers import parse_int_in_range, whole_rule
from urnbound.domain.parameters import COUNT, Parameter
from urnbound.domain.question import Answer, AnswerField, Context, Question
from urnbound.domain.registry import Registry, default_registry

GROUP = Parameter(
    "group_size",
    lambda text: parse_int_in_range(text, "group_size", 2, 9),
    whole_rule(2, 9, scientific=False),
    "How many items make one group.",
    "3",
    {"type": "integer", "minimum": 2, "maximum": 9},
)


def _groups(inputs: Inputs, context: Context) -> Answer:
    # C(n, k): the number of ways to pick a group of k from n (exact integer arithmetic).
    return Answer({"groups": comb(inputs["count"], inputs["group_size"]),
                   "count": inputs["count"]}, "exact")


TOY = Question(
    name="groups",
    path="/v1/groups",
    summary="How many groups of group_size can be picked from count items.",
    description="A toy question for the registry test.",
    inputs=(COUNT, GROUP),
    answer=(AnswerField("groups", "whole", "C(count, group_size)."),
            AnswerField("count", "whole", "Items.")),
    compute=_groups,
    example={"count": "10", "group_size": "3"},
    premise=None,
)
REGISTRY = Registry((TOY,))


def test_the_toy_question_is_served_with_caching_and_problems() -> None:
    client = create_app({"TESTING": True, "ACCESS_LOG": False}, registry=REGISTRY).test_client()
    response = client.get("/v1/groups?count=1e1&group_size=3")
    assert response.status_code == 200
    assert response.get_json() == {"groups": "120", "count": "10"}  # C(10, 3) = 120
    assert response.headers["ETag"]
    again = client.get("/v1/groups?count=10&group_size=3",
                       headers={"If-None-Match": response.headers["ETag"]})
    assert again.status_code == 304
    bad = client.get("/v1/groups?count=10&group_size=12")
    assert bad.status_code == 422
    assert bad.get_json()["errors"]["group_size"][0].startswith(
        "group_size must be a whole number from 2 to 9")
    assert client.get("/v1/collisions?bits=8&count=2").status_code == 404  # not registered


def test_the_toy_question_has_its_openapi_entry() -> None:
    document = spec_document(REGISTRY)
    operation = document["paths"]["/v1/groups"]["get"]
    assert operation["operationId"] == "groups"
    by_name = {p["name"]: p for p in operation["parameters"]}
    assert set(by_name) == {"count", "group_size"}
    assert by_name["group_size"]["required"] is True
    assert by_name["group_size"]["schema"] == {"type": "integer", "minimum": 2, "maximum": 9}
    assert "GroupsAnswer" in document["components"]["schemas"]
    assert "/v1/collisions" not in document["paths"]


def test_the_toy_question_has_its_cli_command() -> None:
    cli = build_cli(REGISTRY)
    shown = CliRunner().invoke(cli, ["groups", "--count", "10", "--group-size", "3", "--json"])
    assert shown.exit_code == 0, shown.output
    client = create_app({"TESTING": True, "ACCESS_LOG": False}, registry=REGISTRY).test_client()
    assert shown.output.rstrip("\n").encode() == client.get(
        "/v1/groups?count=10&group_size=3").data
    refused = CliRunner().invoke(cli, ["groups", "--count", "10", "--group-size", "1"])
    assert refused.exit_code == 2
    assert "--group-size" in refused.output
    assert "groups" in CliRunner().invoke(cli, ["--help"]).output


def test_the_service_registry_does_not_carry_the_toy() -> None:
    assert "groups" not in default_registry().by_name
