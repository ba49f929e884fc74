"""Render deploy/nginx.conf.in into an nginx configuration for given ports and paths."""

# Standard library only: it runs in the container before nginx starts, and in the tests.
#
#   python deploy/render_nginx.py --listen 8080 --upstream 127.0.0.1:8000 \
#       --state-dir /tmp/nginx --output /tmp/nginx/nginx.conf
#   nginx -e stderr -c /tmp/nginx/nginx.conf -g 'daemon off;'
#
# Every option may also come from the environment (URNBOUND_PROXY_LISTEN, ...), so that the
# container's arguments stay short. A value is checked before it reaches the file: a stray
# ';' or '{' in a value would otherwise change the configuration's meaning.

from __future__ import annotations

import argparse
import ipaddress
import os
import re
import sys
from dataclasses import dataclass
from pathlib import Path

TEMPLATE = Path(__file__).resolve().with_name("nginx.conf.in")
PLACEHOLDER = re.compile(r"@([A-Z_]+)@")
ADDRESS = re.compile(r"^(\[[0-9a-fA-F:.]+\]|[A-Za-z0-9.-]+):([0-9]{1,5})$")
PATH_TEXT = re.compile(r"^/[A-Za-z0-9._/-]*$")
SIZE_TEXT = re.compile(r"^[0-9]{1,6}[kmg]$")


@dataclass(frozen=True, slots=True)
class ProxySettings:
    """What varies between deployments of the one nginx configuration."""

    listen: str
    upstreams: tuple[str, ...]
    state_dir: str
    access_log: str = "/dev/stdout"
    worker_processes: str = "auto"
    rate: int = 50
    burst: int = 100
    unlimited_clients: tuple[str, ...] = ()
    cache_max_size: str = "256m"
    mime_types: str = "/etc/nginx/mime.types"


def checked_listen(text: str) -> str:
    """A port, or address:port, for nginx's listen directive."""
    if text.isdigit() and 1 <= int(text) <= 65535:
        return text
    return checked_address(text)


def checked_address(text: str) -> str:
    """host:port with a port from 1 to 65535."""
    match = ADDRESS.match(text)
    if match is None or not 1 <= int(match.group(2)) <= 65535:
        raise SystemExit(f"render_nginx: {text!r} is not host:port (port 1 to 65535)")
    return text


def checked_path(text: str, what: str) -> str:
    """An absolute path made of safe characters."""
    if not PATH_TEXT.match(text) or "/../" in text + "/":
        raise SystemExit(f"render_nginx: {what} must be an absolute path, got {text!r}")
    return text.rstrip("/") or "/"


def checked_network(text: str) -> str:
    """An IP address or network in CIDR notation."""
    try:
        return str(ipaddress.ip_network(text, strict=False))
    except ValueError:
        raise SystemExit(f"render_nginx: {text!r} is not an IP address or network") from None


def checked_count(value: int, what: str, low: int, high: int) -> int:
    """A whole number within a range."""
    if not low <= value <= high:
        raise SystemExit(f"render_nginx: {what} must be from {low} to {high}, got {value}")
    return value


def replacements(settings: ProxySettings) -> dict[str, str]:
    """The text for each placeholder of the template."""
    if not settings.upstreams:
        raise SystemExit("render_nginx: at least one --upstream is needed")
    servers = "\n        ".join(
        f"server {checked_address(address)} max_fails=1 fail_timeout=5s;"
        for address in settings.upstreams
    )
    unlimited = "\n        ".join(
        f'{checked_network(network)} "";' for network in settings.unlimited_clients
    )
    workers = settings.worker_processes
    if workers != "auto":
        workers = str(checked_count(int(workers), "worker processes", 1, 64))
    if not SIZE_TEXT.match(settings.cache_max_size):
        raise SystemExit("render_nginx: cache size must look like 256m or 2g")
    return {
        "LISTEN": checked_listen(settings.listen),
        "UPSTREAM_SERVERS": servers,
        "STATE_DIR": checked_path(settings.state_dir, "the state directory"),
        "ACCESS_LOG": checked_path(settings.access_log, "the access log"),
        "WORKER_PROCESSES": workers,
        "RATE": str(checked_count(settings.rate, "the rate", 1, 100_000)),
        "BURST": str(checked_count(settings.burst, "the burst", 0, 1_000_000)),
        "UNLIMITED_CLIENTS": unlimited,
        "CACHE_MAX_SIZE": settings.cache_max_size,
        "MIME_TYPES": checked_path(settings.mime_types, "the MIME types file"),
    }


def rendered(settings: ProxySettings, template: str | None = None) -> str:
    """The configuration text; fails if a placeholder has no value."""
    text = TEMPLATE.read_text(encoding="utf-8") if template is None else template
    values = replacements(settings)
    missing = sorted(set(PLACEHOLDER.findall(text)) - set(values))
    if missing:
        raise SystemExit(f"render_nginx: no value for {', '.join(missing)}")
    return PLACEHOLDER.sub(lambda match: values[match.group(1)], text)


def make_state_dirs(state_dir: str) -> None:
    """Create the directories nginx writes to (it creates the cache levels itself)."""
    for name in ("client-body", "proxy-temp", "fastcgi-temp", "uwsgi-temp", "scgi-temp", "cache"):
        Path(state_dir, name).mkdir(parents=True, exist_ok=True)


def parsed_settings(argv: list[str]) -> tuple[ProxySettings, Path | None]:
    """Settings from the command line, with URNBOUND_PROXY_* environment defaults."""
    env = os.environ.get
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--listen", default=env("URNBOUND_PROXY_LISTEN", "8080"))
    parser.add_argument(
        "--upstream",
        action="append",
        help="gunicorn address host:port (repeat for several instances)",
    )
    parser.add_argument("--state-dir", default=env("URNBOUND_PROXY_STATE_DIR", "/tmp/nginx"))
    parser.add_argument("--access-log", default=env("URNBOUND_PROXY_ACCESS_LOG", "/dev/stdout"))
    parser.add_argument("--worker-processes", default=env("URNBOUND_PROXY_WORKERS", "auto"))
    parser.add_argument("--rate", type=int, default=int(env("URNBOUND_PROXY_RATE", "50")))
    parser.add_argument("--burst", type=int, default=int(env("URNBOUND_PROXY_BURST", "100")))
    parser.add_argument(
        "--unlimited-client",
        action="append",
        default=None,
        help="address or CIDR network exempt from the rate limit (repeatable)",
    )
    parser.add_argument("--cache-max-size", default=env("URNBOUND_PROXY_CACHE_SIZE", "256m"))
    parser.add_argument("--mime-types", default="/etc/nginx/mime.types")
    parser.add_argument("--output", type=Path, help="file to write (default: standard output)")
    args = parser.parse_args(argv)
    upstreams = args.upstream or env("URNBOUND_PROXY_UPSTREAMS", "127.0.0.1:8000").split(",")
    unlimited = args.unlimited_client
    if unlimited is None:
        unlimited = [n for n in env("URNBOUND_PROXY_UNLIMITED", "").split(",") if n.strip()]
    settings = ProxySettings(
        listen=args.listen,
        upstreams=tuple(u.strip() for u in upstreams if u.strip()),
        state_dir=args.state_dir,
        access_log=args.access_log,
        worker_processes=args.worker_processes,
        rate=args.rate,
        burst=args.burst,
        unlimited_clients=tuple(n.strip() for n in unlimited),
        cache_max_size=args.cache_max_size,
        mime_types=args.mime_types,
    )
    return settings, args.output


def main(argv: list[str]) -> int:
    """Write the configuration and make the state directories it names."""
    settings, output = parsed_settings(argv)
    text = rendered(settings)
    make_state_dirs(settings.state_dir)
    if output is None:
        sys.stdout.write(text)
    else:
        output.write_text(text, encoding="utf-8")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
