"""The ``urnbound`` command: write or check the OpenAPI file, and serve under gunicorn."""

from __future__ import annotations

import os
import sys
import tempfile
from pathlib import Path

import click

#: Where the committed OpenAPI document lives, relative to the repository root.
DEFAULT_OPENAPI_PATH = Path("openapi") / "openapi.yaml"
#: The gunicorn configuration, relative to the repository root.
GUNICORN_CONF = Path("deploy") / "gunicorn.conf.py"
#: The WSGI target gunicorn loads.
WSGI_TARGET = "urnbound.wsgi:app"

_PATH = click.Path(dir_okay=False, path_type=Path)


@click.group()
@click.version_option(package_name="urnbound")
def main() -> None:
    """Urnbound: collision-risk answers for random identifiers."""


@main.group()
def openapi() -> None:
    """The OpenAPI document generated from the code."""


@openapi.command("write")
@click.argument("path", type=_PATH, default=DEFAULT_OPENAPI_PATH)
def openapi_write(path: Path) -> None:
    """Write the document to PATH (default openapi/openapi.yaml)."""
    from urnbound.api.openapi import spec_yaml

    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(spec_yaml(), encoding="utf-8")
    click.echo(f"wrote {path}")


@openapi.command("check")
@click.argument("path", type=_PATH, default=DEFAULT_OPENAPI_PATH)
def openapi_check(path: Path) -> None:
    """Exit non-zero when PATH differs from what the code generates."""
    from urnbound.api.openapi import spec_yaml

    if not path.is_file():
        raise click.ClickException(f"{path} does not exist; run `urnbound openapi write {path}`")
    if path.read_text(encoding="utf-8") != spec_yaml():
        raise click.ClickException(
            f"{path} is out of date with the code; run `urnbound openapi write {path}`"
        )
    click.echo(f"{path} matches the code")


def default_gunicorn_conf() -> Path:
    """``deploy/gunicorn.conf.py`` under the working directory, else beside the source tree."""
    here = Path.cwd() / GUNICORN_CONF
    if here.is_file():
        return here
    return Path(__file__).resolve().parents[2] / GUNICORN_CONF


def gunicorn_argv(config: Path, extra: tuple[str, ...]) -> list[str]:
    """The command line that runs gunicorn with ``config`` on the service."""
    return [sys.executable, "-m", "gunicorn", "--config", str(config), *extra, WSGI_TARGET]


@main.command(context_settings={"ignore_unknown_options": True})
@click.option(
    "--config",
    "config",
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    default=None,
    help="gunicorn configuration file (default deploy/gunicorn.conf.py).",
)
@click.argument("gunicorn_args", nargs=-1, type=click.UNPROCESSED)
def serve(config: Path | None, gunicorn_args: tuple[str, ...]) -> None:
    """Replace this process with gunicorn serving the service.

    Settings come from URNBOUND_* variables; extra arguments go to gunicorn. Unless
    PROMETHEUS_MULTIPROC_DIR is already set, a fresh empty directory is made for it, so
    that /metrics adds up every worker's counts.
    """
    conf = config or default_gunicorn_conf()
    if not conf.is_file():
        raise click.ClickException(f"gunicorn configuration not found at {conf}; use --config")
    if not os.environ.get("PROMETHEUS_MULTIPROC_DIR"):
        os.environ["PROMETHEUS_MULTIPROC_DIR"] = tempfile.mkdtemp(prefix="urnbound-metrics-")
    argv = gunicorn_argv(conf, gunicorn_args)
    os.execv(argv[0], argv)
