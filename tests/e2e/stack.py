"""Start and stop the production front on loopback: gunicorn instances and nginx before them.

Used by the end-to-end tests beside this file and by the benchmarks under tests/bench/.
Every process runs in a session of its own, on a free port of 127.0.0.1, with its files in a
directory the caller owns; :meth:`Stack.close` stops each one by its process id (SIGTERM,
then SIGKILL to its process group after a bounded wait). Nothing here waits without a bound.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import signal
import socket
import subprocess
import sys
import tempfile
import time
import urllib.error
import urllib.request
from dataclasses import dataclass, field
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parents[2]
GUNICORN_CONF = REPO_ROOT / "deploy" / "gunicorn.conf.py"
NGINX_TEMPLATE_RENDERER = REPO_ROOT / "deploy" / "render_nginx.py"
HOST = "127.0.0.1"
STARTUP_TIMEOUT_S = 60.0
SHUTDOWN_TIMEOUT_S = 20.0


def nginx_binary() -> str | None:
    """The nginx executable, on PATH or where Debian puts it; None when not installed."""
    found = shutil.which("nginx")
    if found:
        return found
    debian = Path("/usr/sbin/nginx")
    return str(debian) if debian.is_file() and os.access(debian, os.X_OK) else None


def free_loopback_port() -> int:
    """A TCP port on 127.0.0.1 that was free a moment ago."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as probe:
        probe.bind((HOST, 0))
        port: int = probe.getsockname()[1]
        return port


@dataclass(frozen=True, slots=True)
class Server:
    """One started process: what it is, its process, its port and its log."""

    name: str
    process: subprocess.Popen[bytes]
    port: int
    log_path: Path
    metrics_dir: Path | None = None

    @property
    def base_url(self) -> str:
        return f"http://{HOST}:{self.port}"

    @property
    def address(self) -> str:
        return f"{HOST}:{self.port}"

    def log(self) -> str:
        return self.log_path.read_text(encoding="utf-8", errors="replace")

    def worker_pids(self) -> list[int]:
        """Process ids of the master's children (gunicorn's workers), from /proc."""
        children = Path(f"/proc/{self.process.pid}/task/{self.process.pid}/children")
        try:
            return [int(pid) for pid in children.read_text().split()]
        except OSError:
            return []


def spawn(
    name: str, command: list[str], env: dict[str, str], log_path: Path
) -> subprocess.Popen[bytes]:
    """Start ``command`` in a session of its own, its output to ``log_path``."""
    with log_path.open("wb") as log:
        return subprocess.Popen(
            command,
            cwd=REPO_ROOT,
            env=env,
            stdin=subprocess.DEVNULL,
            stdout=log,
            stderr=subprocess.STDOUT,
            start_new_session=True,
        )


def wait_until_answering(server: Server, path: str = "/healthz") -> None:
    """Poll ``path`` until it answers 200; raise with the server's log if it never does."""
    deadline = time.monotonic() + STARTUP_TIMEOUT_S
    while time.monotonic() < deadline and server.process.poll() is None:
        try:
            with urllib.request.urlopen(server.base_url + path, timeout=2) as response:
                if response.status == 200:
                    return
        except (OSError, urllib.error.URLError):
            pass
        time.sleep(0.1)
    raise RuntimeError(
        f"{server.name} did not answer (exit code {server.process.poll()}):\n{server.log()}"
    )


def stop(process: subprocess.Popen[bytes]) -> None:
    """SIGTERM by process id; SIGKILL to its process group if it outlives the bound."""
    if process.poll() is None:
        with contextlib.suppress(ProcessLookupError):
            process.terminate()
    try:
        process.wait(timeout=SHUTDOWN_TIMEOUT_S)
    except subprocess.TimeoutExpired:
        with contextlib.suppress(ProcessLookupError):
            os.killpg(process.pid, signal.SIGKILL)
        process.wait(timeout=SHUTDOWN_TIMEOUT_S)
    # Workers that outlived a killed master would hold the port; their group goes too.
    with contextlib.suppress(ProcessLookupError, PermissionError):
        os.killpg(process.pid, signal.SIGKILL)


@dataclass
class Stack:
    """The processes started so far, stopped together, newest first."""

    work: Path
    servers: list[Server] = field(default_factory=list)
    scratch: list[Path] = field(default_factory=list)

    def gunicorn(
        self,
        name: str,
        workers: int = 2,
        env: dict[str, str] | None = None,
        args: tuple[str, ...] = (),
    ) -> Server:
        """A gunicorn instance with deploy/gunicorn.conf.py and its own metrics directory."""
        port = free_loopback_port()
        metrics_dir = self.work / f"{name}-metrics"
        metrics_dir.mkdir()
        environment = dict(os.environ)
        inherited = environment.get("PYTHONPATH")
        source = str(REPO_ROOT / "service")
        environment.update(
            {
                "URNBOUND_HOST": HOST,
                "URNBOUND_PORT": str(port),
                "URNBOUND_WORKERS": str(workers),
                "URNBOUND_GRACEFUL_TIMEOUT": "5",
                "PROMETHEUS_MULTIPROC_DIR": str(metrics_dir),
                "PYTHONPATH": source + (os.pathsep + inherited if inherited else ""),
            }
        )
        environment.pop("URNBOUND_PRIVATE_METRICS_DIR", None)
        environment.update(env or {})
        command = [
            sys.executable,
            "-m",
            "gunicorn",
            "--config",
            str(GUNICORN_CONF),
            *args,
            "urnbound.wsgi:app",
        ]
        log_path = self.work / f"{name}.log"
        process = spawn(name, command, environment, log_path)
        server = Server(name, process, port, log_path, metrics_dir)
        self.servers.append(server)
        wait_until_answering(server)
        return server

    def nginx(
        self,
        upstreams: list[Server],
        rate: int = 50,
        burst: int = 100,
        unlimited: tuple[str, ...] = (),
        worker_processes: int = 1,
    ) -> Server:
        """nginx from deploy/nginx.conf.in in front of ``upstreams``."""
        binary = nginx_binary()
        if binary is None:
            raise RuntimeError("nginx is not installed")
        port = free_loopback_port()
        # Started as root, nginx runs its workers as an unprivileged user, which must be able
        # to reach the cache: a directory of its own that others may traverse (pytest's
        # temporary directories are private to their owner).
        state = Path(tempfile.mkdtemp(prefix="urnbound-nginx-"))
        state.chmod(0o711)
        self.scratch.append(state)
        config = self.work / "nginx.conf"
        render = [
            sys.executable,
            str(NGINX_TEMPLATE_RENDERER),
            "--listen",
            f"{HOST}:{port}",
            "--state-dir",
            str(state),
            "--access-log",
            str(self.work / "nginx-access.log"),
            "--worker-processes",
            str(worker_processes),
            "--rate",
            str(rate),
            "--burst",
            str(burst),
            "--output",
            str(config),
        ]
        for upstream in upstreams:
            render += ["--upstream", upstream.address]
        for network in unlimited:
            render += ["--unlimited-client", network]
        subprocess.run(render, check=True, timeout=60, stdin=subprocess.DEVNULL)
        command = [binary, "-e", "stderr", "-c", str(config), "-g", "daemon off;"]
        log_path = self.work / "nginx.log"
        process = spawn("nginx", command, dict(os.environ), log_path)
        server = Server("nginx", process, port, log_path)
        self.servers.append(server)
        wait_until_answering(server)
        return server

    @property
    def access_log(self) -> Path:
        return self.work / "nginx-access.log"

    def close(self) -> None:
        """Stop every process started, newest first (nginx before the instances behind it)."""
        while self.servers:
            stop(self.servers.pop().process)
        while self.scratch:
            shutil.rmtree(self.scratch.pop(), ignore_errors=True)
