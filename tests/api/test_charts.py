"""Charts: /v1/budgets and /v1/curves answer with SVG when Accept prefers it; the CLI --chart."""

from __future__ import annotations

import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from click.testing import CliRunner
from flask.testing import FlaskClient

from urnbound.cli import build_cli
from urnbound.domain.charts import RISK_LABEL, time_unit

SVG = "image/svg+xml"
SVG_NS = "{http://www.w3.org/2000/svg}"
#: An invented dashboard: 64-bit identifiers, forty million out, two million a day.
BUDGET = "/v1/budgets?bits=64&issued=4e7&rate=2e6&per=P1D&horizon=P730D&max_risk=1e-3"
CURVE = "/v1/curves?bits=64&from=1e3&to=1e11"


def texts_of(svg: bytes) -> list[str]:
    """Every text of the SVG document (which must parse as XML), in document order."""
    root = ET.fromstring(svg)
    assert root.tag == f"{SVG_NS}svg"
    return [" ".join("".join(e.itertext()).split()) for e in root.iter(f"{SVG_NS}text")]


def test_budget_chart_has_labelled_axes_the_budget_line_and_the_moment(
    client: FlaskClient
) -> None:
    answer = client.get(BUDGET).get_json()
    response = client.get(BUDGET, headers={"Accept": SVG})
    assert response.status_code == 200
    assert response.mimetype == SVG
    assert response.headers["Vary"] == "Accept"
    texts = texts_of(response.data)
    assert "time from now (years)" in texts
    assert RISK_LABEL in texts
    assert "max_risk 0.001" in texts
    assert f"budget runs out: {answer['exhausted_after']['duration']}" in texts
    assert {"1e-3", "1e-2"} <= set(texts)  # powers of ten on the risk axis
    assert any(text.startswith("Risk budget: 2^64 values") for text in texts)


def test_chart_has_its_own_etag_and_answers_304(client: FlaskClient) -> None:
    as_json = client.get(BUDGET)
    as_svg = client.get(BUDGET, headers={"Accept": SVG})
    assert as_json.headers["Vary"] == "Accept"
    assert as_json.headers["ETag"] != as_svg.headers["ETag"]
    again = client.get(BUDGET, headers={"Accept": SVG, "If-None-Match": as_svg.headers["ETag"]})
    assert again.status_code == 304
    # the same chart twice: one answer, one chart, byte for byte
    assert client.get(BUDGET, headers={"Accept": SVG}).data == as_svg.data


@pytest.mark.parametrize(("accept", "media_type"), [
    (None, "application/json"),
    ("*/*", "application/json"),
    ("application/json", "application/json"),
    ("text/html,application/xhtml+xml,*/*;q=0.8", "application/json"),
    ("image/svg+xml", SVG),
    ("image/*", SVG),
    ("application/json;q=0.5, image/svg+xml", SVG),
])
def test_accept_decides_the_representation(
    client: FlaskClient, accept: str | None, media_type: str
) -> None:
    headers = {} if accept is None else {"Accept": accept}
    assert client.get(CURVE, headers=headers).mimetype == media_type


def test_curve_chart_has_both_probabilities_against_the_count(client: FlaskClient) -> None:
    response = client.get(CURVE, headers={"Accept": SVG})
    assert response.mimetype == SVG
    texts = texts_of(response.data)
    assert "identifiers drawn (count, log scale)" in texts
    assert "probability (log scale)" in texts
    assert {"P(some two identifiers are equal)", "its complement"} <= set(texts)
    assert {"1e4", "1e6", "1e8", "1e10"} <= set(texts)


def test_questions_without_a_chart_stay_json(client: FlaskClient) -> None:
    response = client.get("/v1/collisions?bits=64&count=1e6", headers={"Accept": SVG})
    assert response.mimetype == "application/json"
    assert "Vary" not in response.headers


def test_bad_input_is_still_a_problem_document(client: FlaskClient) -> None:
    response = client.get("/v1/budgets?bits=64&rate=5&horizon=P1D&max_risk=1e-6&points=501",
                          headers={"Accept": SVG})
    assert response.status_code == 422
    assert response.mimetype == "application/problem+json"


def test_tiny_risks_are_placed_from_their_logarithms(client: FlaskClient) -> None:
    # 8192 random bits: risks near 1e-2450, far below the float range
    response = client.get("/v1/curves?bits=8192&from=1e3&to=1e9&points=4",
                          headers={"Accept": SVG})
    texts = texts_of(response.data)
    assert any(text.startswith("1e-24") for text in texts)


def test_documented_as_an_alternative_representation(openapi_document: dict[str, object]
                                                     ) -> None:
    paths = openapi_document["paths"]
    assert isinstance(paths, dict)
    for path in ("/v1/budgets", "/v1/curves"):
        assert SVG in paths[path]["get"]["responses"]["200"]["content"]
    assert SVG not in paths["/v1/collisions"]["get"]["responses"]["200"]["content"]


def test_cli_writes_the_same_chart(client: FlaskClient, tmp_path: Path) -> None:
    target = tmp_path / "budget.svg"
    argv = ["budgets", "--bits", "64", "--issued", "4e7", "--rate", "2e6", "--per", "P1D",
            "--horizon", "P730D", "--max-risk", "1e-3", "--chart", str(target)]
    result = CliRunner().invoke(build_cli(), argv)
    assert result.exit_code == 0, result.output
    assert target.read_bytes() == client.get(BUDGET, headers={"Accept": SVG}).data


def test_cli_has_no_chart_option_where_there_is_no_chart() -> None:
    result = CliRunner().invoke(build_cli(), ["collisions", "--bits", "64", "--count", "5",
                                              "--chart", "x.svg"])
    assert result.exit_code == 2
    assert "No such option" in result.output


@pytest.mark.parametrize(("seconds", "unit"), [
    (90, "seconds"), (3_600, "minutes"), (86_400 * 3, "days"), (86_400 * 800, "years")])
def test_time_axis_unit_follows_the_horizon(seconds: int, unit: str) -> None:
    assert time_unit(seconds)[0] == unit
