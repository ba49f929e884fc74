"""GET /metrics: Prometheus text exposition of requests, latency, cache and answer methods."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from flask import Flask
from flask.testing import FlaskClient
from prometheus_client.parser import text_string_to_metric_families

from urnbound.app import create_app


def samples(client: FlaskClient) -> dict[tuple[str, tuple[tuple[str, str], ...]], float]:
    response = client.get("/metrics")
    assert response.status_code == 200
    assert response.mimetype == "text/plain"
    found = {}
    for family in text_string_to_metric_families(response.get_data(as_text=True)):
        for sample in family.samples:
            found[(sample.name, tuple(sorted(sample.labels.items())))] = sample.value
    return found


def test_exposition_counts_requests_cache_and_methods(client: FlaskClient) -> None:
    client.get("/v1/collisions?size=365&count=23")  # exact path, miss
    client.get("/v1/collisions?size=365&count=23")  # hit
    client.get("/v1/collisions?bits=4096&count=1e30")  # asymptotic path, miss
    client.get("/v1/collisions?bits=0&count=1")  # 422
    client.get("/nowhere")  # 404
    found = samples(client)
    route = "/v1/collisions"
    assert found[("urnbound_http_requests_total",
                  (("endpoint", route), ("method", "GET"), ("status", "200")))] == 3
    assert found[("urnbound_http_requests_total",
                  (("endpoint", route), ("method", "GET"), ("status", "422")))] == 1
    assert found[("urnbound_http_requests_total",
                  (("endpoint", "unmatched"), ("method", "GET"), ("status", "404")))] == 1
    assert found[("urnbound_answer_cache_total", (("result", "hit"),))] == 1
    assert found[("urnbound_answer_cache_total", (("result", "miss"),))] == 2
    assert found[("urnbound_answers_computed_total",
                  (("endpoint", "collisions"), ("method", "exact")))] == 1
    assert found[("urnbound_answers_computed_total",
                  (("endpoint", "collisions"), ("method", "asymptotic")))] == 1
    assert found[("urnbound_http_request_duration_seconds_count", (("endpoint", route),))] == 4
    assert found[("urnbound_http_request_duration_seconds_bucket",
                  (("endpoint", route), ("le", "+Inf")))] == 4


def test_each_app_has_its_own_registry(app: Flask, client: FlaskClient) -> None:
    client.get("/healthz")
    other = create_app({"access_log": False}).test_client()
    key = ("urnbound_http_requests_total",
           (("endpoint", "/healthz"), ("method", "GET"), ("status", "200")))
    assert samples(client)[key] == 1
    assert key not in samples(other)


def test_head_on_metrics(client: FlaskClient) -> None:
    response = client.head("/metrics")
    assert response.status_code == 200
    assert response.data == b""


@pytest.mark.parametrize(
    "path", ["/metrics/", "/metrics/anything", "/metrics/metrics", "/metricsx", "/METRICS"]
)
def test_only_the_exact_path_serves_metrics(client: FlaskClient, path: str) -> None:
    response = client.get(path)
    assert response.status_code == 404
    assert response.mimetype == "application/problem+json"
    body = response.get_json()
    assert body["status"] == 404
    assert body["instance"] == path
    assert b"urnbound_http_requests" not in response.data


def test_paths_near_metrics_are_counted_as_unmatched(client: FlaskClient) -> None:
    client.get("/metrics/anything")
    key = ("urnbound_http_requests_total",
           (("endpoint", "unmatched"), ("method", "GET"), ("status", "404")))
    assert samples(client)[key] == 1


def test_post_on_metrics_is_a_405_problem(client: FlaskClient) -> None:
    response = client.post("/metrics")
    assert response.status_code == 405
    assert response.mimetype == "application/problem+json"
    assert response.headers["Allow"] == "GET, HEAD"
    assert json.loads(response.data)["status"] == 405


def test_invented_methods_share_one_label_value(client: FlaskClient) -> None:
    for method in ("BREW", "WHEN", "PROPFIND"):
        assert client.open("/healthz", method=method).status_code == 405
    found = samples(client)
    key = ("urnbound_http_requests_total",
           (("endpoint", "unmatched"), ("method", "other"), ("status", "405")))
    assert found[key] == 3
    assert not any(dict(labels).get("method") == "BREW" for _, labels in found)


MULTIPROCESS_SCRIPT = """
import json
from prometheus_client.parser import text_string_to_metric_families
from urnbound.app import create_app

client = create_app({"access_log": False}).test_client()
client.get("/v1/collisions?size=365&count=23")
client.get("/v1/collisions?size=365&count=23")
text = client.get("/metrics").get_data(as_text=True)
found = {
    sample.name + json.dumps(sample.labels, sort_keys=True): sample.value
    for family in text_string_to_metric_families(text)
    for sample in family.samples
}
print(json.dumps(found))
"""


def test_multiprocess_registry_reads_the_shared_directory(tmp_path: Path) -> None:
    # The client picks multiprocess mode at import, so this runs in a fresh interpreter.
    env = {**os.environ, "PROMETHEUS_MULTIPROC_DIR": str(tmp_path)}
    result = subprocess.run(
        [sys.executable, "-c", MULTIPROCESS_SCRIPT],
        env=env, capture_output=True, text=True, check=True, timeout=120,
    )
    found = json.loads(result.stdout.strip().splitlines()[-1])
    assert found['urnbound_answer_cache_total{"result": "hit"}'] == 1
    assert found['urnbound_answer_cache_total{"result": "miss"}'] == 1
    assert any(path.suffix == ".db" for path in tmp_path.iterdir())
