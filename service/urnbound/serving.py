"""``urnbound serve``: gunicorn on the service, with a metrics directory that it cleans up.

Prometheus' multiprocess mode needs a directory shared by every worker, empty at start
(``PROMETHEUS_MULTIPROC_DIR``). When the caller names none, :func:`serve` asks for a private
one by setting :data:`PRIVATE_DIR_REQUEST`, then replaces this process with gunicorn, so that
signals reach gunicorn's master directly and its process id stays the one that was started.
The master makes the directory while it reads ``deploy/gunicorn.conf.py`` (before any worker
or preloaded app imports the Prometheus client) through :func:`claim_private_metrics_dir`,
and removes it when it exits through :meth:`PrivateMetricsDir.remove` (gunicorn's
``on_exit`` hook, with ``atexit`` as a fallback for exits that skip the hook). A directory the
caller named is never created or removed. Only a ``SIGKILL`` of the master can leave one
behind, in the system's temporary directory with the prefix :data:`PRIVATE_DIR_PREFIX`.

A configuration file of one's own (``--config``) gets the same behaviour by calling
:func:`claim_private_metrics_dir` and delegating ``on_exit`` as deploy/gunicorn.conf.py does.
"""

from __future__ import annotations

import atexit
import os
import shutil
import sys
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import NoReturn

#: Environment variable that puts the Prometheus client in multiprocess mode.
MULTIPROC_ENV = "PROMETHEUS_MULTIPROC_DIR"
#: Set to ``1`` by :func:`serve`: the gunicorn master is to make and own the directory.
PRIVATE_DIR_REQUEST = "URNBOUND_PRIVATE_METRICS_DIR"
#: Set by the master to the directory it made, so that only that directory is ever removed.
OWNED_DIR_ENV = "URNBOUND_OWNED_METRICS_DIR"
#: Name prefix of a private directory, under the system's temporary directory.
PRIVATE_DIR_PREFIX = "urnbound-metrics-"
#: The gunicorn configuration, relative to the repository root or the working directory.
GUNICORN_CONF = Path("deploy") / "gunicorn.conf.py"
#: The WSGI target gunicorn loads.
WSGI_TARGET = "urnbound.wsgi:app"


class ServeError(Exception):
    """gunicorn cannot be started as asked (the message says why)."""


@dataclass(slots=True)
class PrivateMetricsDir:
    """A metrics directory made by one gunicorn master, removed by that process alone."""

    path: str
    owner_pid: int

    def remove(self) -> bool:
        """Remove the directory if this is the owning process; whether anything was removed.

        Workers are forked from the owner and inherit its ``atexit`` handlers, hence the
        process check.
        """
        if os.getpid() != self.owner_pid or os.environ.get(OWNED_DIR_ENV) != self.path:
            return False
        if not os.path.isdir(self.path):
            return False
        shutil.rmtree(self.path, ignore_errors=True)
        return True


def claim_private_metrics_dir() -> PrivateMetricsDir | None:
    """In the gunicorn master: make the private directory :func:`serve` asked for, if it did.

    Sets ``PROMETHEUS_MULTIPROC_DIR`` (inherited by every worker) and :data:`OWNED_DIR_ENV`.
    Nothing happens without the request or when a directory is named already, which is also
    the case when gunicorn rereads its configuration on ``SIGHUP``. A master started anew by
    ``SIGUSR2`` gets gunicorn's original environment, hence a directory of its own.
    """
    if os.environ.get(PRIVATE_DIR_REQUEST) != "1" or os.environ.get(MULTIPROC_ENV):
        return None
    owned = PrivateMetricsDir(tempfile.mkdtemp(prefix=PRIVATE_DIR_PREFIX), os.getpid())
    os.environ[MULTIPROC_ENV] = owned.path
    os.environ[OWNED_DIR_ENV] = owned.path
    atexit.register(owned.remove)
    return owned


def default_gunicorn_conf() -> Path:
    """``deploy/gunicorn.conf.py`` under the working directory, else beside the source tree."""
    here = Path.cwd() / GUNICORN_CONF
    if here.is_file():
        return here
    return Path(__file__).resolve().parents[2] / GUNICORN_CONF


def gunicorn_argv(config: Path, extra: tuple[str, ...]) -> list[str]:
    """The command line that runs gunicorn with ``config`` on the service."""
    return [sys.executable, "-m", "gunicorn", "--config", str(config), *extra, WSGI_TARGET]


def serve(config: Path | None, gunicorn_args: tuple[str, ...]) -> NoReturn:
    """Replace this process with gunicorn serving the service; it never returns.

    :param config: gunicorn configuration file; default :func:`default_gunicorn_conf`.
    :param gunicorn_args: passed to gunicorn before the WSGI target.
    :raises ServeError: when the configuration file does not exist.

    Without ``PROMETHEUS_MULTIPROC_DIR`` in the environment, the gunicorn master makes a
    private directory and removes it when it exits (see the module docstring).
    """
    conf = config or default_gunicorn_conf()
    if not conf.is_file():
        raise ServeError(f"gunicorn configuration not found at {conf}; use --config")
    if not os.environ.get(MULTIPROC_ENV):
        os.environ[PRIVATE_DIR_REQUEST] = "1"
    argv = gunicorn_argv(conf, gunicorn_args)
    os.execv(argv[0], argv)
