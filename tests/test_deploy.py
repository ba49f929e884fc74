"""deploy/: the Kubernetes manifests against the Kubernetes schemas, the image they name, and
the nginx configuration rendered as the manifests render it."""

from __future__ import annotations

import importlib.util
import re
import subprocess
import sys
import tomllib
from pathlib import Path
from types import ModuleType
from typing import Any

import kubernetes_validate
import pytest
import yaml

from e2e.stack import nginx_binary

REPO_ROOT = Path(__file__).resolve().parents[1]
DEPLOY = REPO_ROOT / "deploy"
#: The Kubernetes release the manifests are checked against (schemas shipped by
#: kubernetes-validate); apps/v1, autoscaling/v2 and policy/v1 are all GA there.
KUBERNETES_VERSION = "1.30.0"


def documents() -> list[dict[str, Any]]:
    text = (DEPLOY / "kubernetes.yaml").read_text(encoding="utf-8")
    return [doc for doc in yaml.safe_load_all(text) if doc]


def one(kind: str) -> dict[str, Any]:
    found = [doc for doc in documents() if doc["kind"] == kind]
    assert len(found) == 1, kind
    return found[0]


def containers() -> dict[str, dict[str, Any]]:
    spec = one("Deployment")["spec"]["template"]["spec"]
    return {container["name"]: container for container in spec["containers"]}


def env_of(container: dict[str, Any]) -> dict[str, str]:
    return {item["name"]: item["value"] for item in container.get("env", [])}


def package_version() -> str:
    with (REPO_ROOT / "pyproject.toml").open("rb") as handle:
        version: str = tomllib.load(handle)["project"]["version"]
        return version


def render_module() -> ModuleType:
    spec = importlib.util.spec_from_file_location("render_nginx", DEPLOY / "render_nginx.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules["render_nginx"] = module  # dataclasses look the module up by name
    spec.loader.exec_module(module)
    return module


@pytest.mark.parametrize("index", range(len(documents())))
def test_each_manifest_is_valid_against_the_kubernetes_schema(index: int) -> None:
    document = documents()[index]
    # Strict: unknown fields (a misspelt key) are errors too.
    kubernetes_validate.validate(document, KUBERNETES_VERSION, strict=True)


def test_the_manifests_hold_the_expected_kinds() -> None:
    kinds = sorted(doc["kind"] for doc in documents())
    assert kinds == ["Deployment", "HorizontalPodAutoscaler", "NetworkPolicy",
                     "PodDisruptionBudget", "Service"]


def test_the_network_policy_lets_clients_reach_only_the_proxy() -> None:
    # the Service targets the proxy port; gunicorn's port is open to the scraper only
    policy = one("NetworkPolicy")["spec"]
    assert policy["podSelector"] == one("Deployment")["spec"]["selector"]
    open_to_all = [rule for rule in policy["ingress"] if "from" not in rule]
    assert [port["port"] for rule in open_to_all for port in rule["ports"]] == ["http"]
    scraped = [rule for rule in policy["ingress"] if "from" in rule]
    assert [port["port"] for rule in scraped for port in rule["ports"]] == ["service"]
    named = {port["name"] for c in containers().values() for port in c.get("ports", [])}
    assert {"http", "service"} <= named


def test_every_container_has_requests_limits_and_a_locked_down_context() -> None:
    pod = one("Deployment")["spec"]["template"]["spec"]
    assert pod["securityContext"]["runAsNonRoot"] is True
    assert pod["securityContext"]["runAsUser"] != 0
    assert pod["automountServiceAccountToken"] is False
    for container in containers().values():
        for kind in ("requests", "limits"):
            assert set(container["resources"][kind]) == {"cpu", "memory"}, container["name"]
        context = container["securityContext"]
        assert context["readOnlyRootFilesystem"] is True
        assert context["allowPrivilegeEscalation"] is False
        assert context["capabilities"]["drop"] == ["ALL"]


def test_probes_check_readiness_and_liveness_on_the_service_paths() -> None:
    service = containers()["service"]
    assert service["readinessProbe"]["httpGet"]["path"] == "/readyz"
    assert service["livenessProbe"]["httpGet"]["path"] == "/healthz"
    # The front is ready when the whole path through it answers.
    assert containers()["proxy"]["readinessProbe"]["httpGet"]["path"] == "/readyz"


def test_termination_grace_outlasts_the_pause_and_gunicorn_graceful_timeout() -> None:
    pod = one("Deployment")["spec"]["template"]["spec"]
    service = containers()["service"]
    pause = int(service["lifecycle"]["preStop"]["exec"]["command"][1])
    graceful = int(env_of(service)["URNBOUND_GRACEFUL_TIMEOUT"])
    assert pod["terminationGracePeriodSeconds"] > pause + graceful
    proxy_stop = " ".join(containers()["proxy"]["lifecycle"]["preStop"]["exec"]["command"])
    assert "-s quit" in proxy_stop
    state_dir = env_of(containers()["proxy"])["URNBOUND_PROXY_STATE_DIR"]
    assert f"-c {state_dir}/nginx.conf" in proxy_stop


def test_the_front_is_the_proxy_and_the_proxy_reaches_the_service() -> None:
    proxy, service = containers()["proxy"], containers()["service"]
    service_port = one("Service")["spec"]["ports"][0]["targetPort"]
    assert service_port in {port["name"] for port in proxy["ports"]}
    upstream = env_of(proxy)["URNBOUND_PROXY_UPSTREAMS"]
    assert upstream == f"127.0.0.1:{env_of(service)['URNBOUND_PORT']}"
    assert int(env_of(service)["URNBOUND_PORT"]) == service["ports"][0]["containerPort"]
    # The proxy's state directory is a writable volume on the read-only filesystem.
    mounts = {mount["mountPath"] for mount in proxy["volumeMounts"]}
    assert env_of(proxy)["URNBOUND_PROXY_STATE_DIR"] in mounts


def test_metrics_are_scraped_from_gunicorn_not_through_the_proxy() -> None:
    annotations = one("Deployment")["spec"]["template"]["metadata"]["annotations"]
    service = containers()["service"]
    assert annotations["prometheus.io/port"] == str(service["ports"][0]["containerPort"])
    assert annotations["prometheus.io/path"] == "/metrics"
    template = (DEPLOY / "nginx.conf.in").read_text(encoding="utf-8")
    assert re.search(r"location = /metrics \{\s*return 404;", template)


def test_autoscaler_budget_and_service_select_the_deployment() -> None:
    deployment = one("Deployment")
    labels = deployment["spec"]["template"]["metadata"]["labels"]
    target = one("HorizontalPodAutoscaler")["spec"]
    assert target["scaleTargetRef"] == {
        "apiVersion": "apps/v1",
        "kind": "Deployment",
        "name": deployment["metadata"]["name"],
    }
    assert [m["resource"]["name"] for m in target["metrics"]] == ["cpu"]
    assert 2 <= target["minReplicas"] < target["maxReplicas"]
    budget = one("PodDisruptionBudget")["spec"]
    assert budget["selector"]["matchLabels"].items() <= labels.items()
    assert budget["minAvailable"] < target["minReplicas"]
    assert one("Service")["spec"]["selector"].items() <= labels.items()


def test_the_manifests_name_the_image_the_dockerfile_builds() -> None:
    image = f"urnbound:{package_version()}"
    assert {c["image"] for c in containers().values()} == {image}
    dockerfile = (DEPLOY / "Dockerfile").read_text(encoding="utf-8")
    assert f"-t {image} ." in dockerfile
    copied = " ".join(re.findall(r"^COPY (.+?)(?=^\S)", dockerfile, re.M | re.S))
    assert Path(containers()["proxy"]["command"][0]).name in copied
    for name in ("entrypoint.sh", "gunicorn.conf.py", "nginx.conf.in", "render_nginx.py"):
        assert f"deploy/{name}" in copied


def rendered_for_the_pod(state_dir: Path) -> str:
    """The nginx configuration as the proxy container renders it (its environment)."""
    render = render_module()
    env = env_of(containers()["proxy"])
    settings = render.ProxySettings(
        listen=env["URNBOUND_PROXY_LISTEN"],
        upstreams=tuple(env["URNBOUND_PROXY_UPSTREAMS"].split(",")),
        state_dir=str(state_dir),
        worker_processes=env["URNBOUND_PROXY_WORKERS"],
        rate=int(env["URNBOUND_PROXY_RATE"]),
        burst=int(env["URNBOUND_PROXY_BURST"]),
    )
    text: str = render.rendered(settings)
    return text


def test_rendering_fills_every_placeholder(tmp_path: Path) -> None:
    text = rendered_for_the_pod(tmp_path)
    assert "@" not in re.sub(r"#.*", "", text)
    assert "server 127.0.0.1:8000 max_fails=1 fail_timeout=5s;" in text
    assert "listen 8080 default_server" in text


@pytest.mark.parametrize(
    ("field", "value"),
    [
        ("upstreams", ("127.0.0.1:8000; include /etc/passwd",)),
        ("listen", "8080 ssl"),
        ("state_dir", "relative/dir"),
        ("state_dir", "/tmp/../etc"),
        ("rate", 0),
        ("unlimited_clients", ("not-an-address",)),
    ],
)
def test_rendering_refuses_values_that_would_change_the_configuration(
    tmp_path: Path, field: str, value: object
) -> None:
    render = render_module()
    base = {"listen": "8080", "upstreams": ("127.0.0.1:8000",), "state_dir": str(tmp_path)}
    settings = render.ProxySettings(**{**base, field: value})
    with pytest.raises(SystemExit):
        render.rendered(settings)


@pytest.mark.skipif(nginx_binary() is None, reason="nginx is not installed")
def test_nginx_accepts_the_configuration_the_pod_renders(tmp_path: Path) -> None:
    render = render_module()
    config = tmp_path / "nginx.conf"
    config.write_text(rendered_for_the_pod(tmp_path), encoding="utf-8")
    render.make_state_dirs(str(tmp_path))
    checked = subprocess.run(
        [str(nginx_binary()), "-t", "-e", "stderr", "-c", str(config)],
        capture_output=True,
        text=True,
        timeout=60,
        stdin=subprocess.DEVNULL,
    )
    assert checked.returncode == 0, checked.stderr
    assert "syntax is ok" in checked.stderr


def test_the_renderer_reads_the_pods_environment(tmp_path: Path) -> None:
    # As deploy/proxy-entrypoint.sh runs it: options from URNBOUND_PROXY_* variables only.
    env = dict(env_of(containers()["proxy"]), URNBOUND_PROXY_STATE_DIR=str(tmp_path / "state"))
    output = tmp_path / "nginx.conf"
    subprocess.run(
        [sys.executable, str(DEPLOY / "render_nginx.py"), "--output", str(output)],
        env={**env, "PATH": "/usr/bin:/bin"},
        check=True,
        timeout=60,
        stdin=subprocess.DEVNULL,
    )
    text = output.read_text(encoding="utf-8")
    assert f"listen {env['URNBOUND_PROXY_LISTEN']} default_server" in text
    assert f"server {env['URNBOUND_PROXY_UPSTREAMS']} " in text
    assert f"rate={env['URNBOUND_PROXY_RATE']}r/s" in text
    assert f"burst={env['URNBOUND_PROXY_BURST']} nodelay" in text
    assert (tmp_path / "state" / "cache").is_dir()
    assert f"pid {tmp_path / 'state'}/nginx.pid;" in text
