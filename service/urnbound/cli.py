"""The ``urnbound`` command: every registered question offline, ``serve``, and ``openapi``.

``urnbound <question> --<parameter> <value> ...`` answers a question without a server,
through the same parameter definitions, checks and computation as the API: ``--json``
prints exactly the body the API returns, and the default is an aligned table for a
person. Bad input exits with status 2 and one line naming the parameter and the allowed
form. The commands are generated from a registry, like the HTTP routes.
"""

from __future__ import annotations

import json
import sys
import textwrap
from collections.abc import Iterator, Mapping, Sequence
from pathlib import Path
from typing import Any

import click

from urnbound.config import Settings
from urnbound.domain.errors import DomainError, InvalidQuery, NoConvergence
from urnbound.domain.inputs import parameters_of
from urnbound.domain.parameters import Choice, Parameter
from urnbound.domain.question import Context, Question, prose
from urnbound.domain.registry import Registry, default_registry

#: Where the committed OpenAPI document lives, relative to the repository root.
DEFAULT_OPENAPI_PATH = Path("openapi") / "openapi.yaml"
#: Exit status for input the question does not take (as for a usage error).
BAD_INPUT = 2
#: Exit status when the computation itself failed.
FAILED = 1
#: Width the table's long texts are wrapped to.
TABLE_WIDTH = 96

_PATH = click.Path(dir_okay=False, path_type=Path)


def main() -> None:
    """Entry point of the ``urnbound`` script."""
    build_cli()(prog_name="urnbound")


def build_cli(registry: Registry | None = None) -> click.Group:
    """The command group for ``registry`` (default: the service's questions)."""
    registry = registry or default_registry()
    group = click.Group(
        "urnbound",
        help="Urnbound: collision-risk answers for random identifiers, offline or served.\n\n"
        "Each question command takes the parameters of the API endpoint of the same name.",
    )
    click.version_option(package_name="urnbound")(group)
    for question in registry:
        group.add_command(question_command(question))
    group.add_command(openapi_group(registry))
    group.add_command(serve)
    return group


def question_command(question: Question) -> click.Command:
    """A command that answers ``question`` from options named as its parameters."""
    options: list[click.Parameter] = [
        _option(p) for p in parameters_of((*question.inputs, *question.optional))
    ]
    options.append(click.Option(["--json", "as_json"], is_flag=True,
                                help="Print the API's JSON body instead of a table."))
    if question.chart is not None:
        options.append(click.Option(
            ["--chart", "chart_path"], type=_PATH, default=None, metavar="FILE",
            help="Write the answer's chart to FILE as SVG (the API's image/svg+xml body) "
            "instead of printing the answer."))

    def answer(as_json: bool, chart_path: Path | None = None, **given: tuple[str, ...]) -> None:
        raw = {name: list(texts) for name, texts in given.items() if texts}
        if chart_path is not None:
            chart_path.write_bytes(_rendered(question, raw, chart=True).body)
            click.echo(f"wrote {chart_path}")
            return
        text = _answer_text(question, raw, as_json)
        click.echo(text)

    return click.Command(
        question.name,
        params=options,
        callback=answer,
        help=_help_text(question),
        short_help=question.summary,
        epilog=_forms_epilog(question),
    )


def _option(parameter: Parameter) -> click.Option:
    # multiple=True lets a repeated option reach the same "give this parameter once" check
    # as a repeated query parameter.
    return click.Option(
        [parameter.option, parameter.name],
        multiple=True,
        metavar="TEXT",
        help=f"{parameter.description} Allowed: {parameter.rule}.",
    )


def _help_text(question: Question) -> str:
    return prose(question.description).replace("``", "")


def _forms_epilog(question: Question) -> str:
    lines = []
    for entry in question.inputs:
        if isinstance(entry, Choice):
            forms = "; ".join(
                " + ".join(p.option for p in (form.lead, *form.companions))
                for form in entry.forms
            )
            lines.append(f"Give the {entry.name} as exactly one of: {forms}.")
    example = " ".join(f"--{name.replace('_', '-')} {text}"
                       for name, text in question.example.items())
    lines.append(f"Example: urnbound {question.name} {example}".rstrip())
    return "\n\n".join(lines)


def _answer_text(question: Question, raw: Mapping[str, Sequence[str]], as_json: bool) -> str:
    body = _rendered(question, raw, chart=False).body.decode()
    return body if as_json else table(json.loads(body))


def _rendered(question: Question, raw: Mapping[str, Sequence[str]], chart: bool) -> Any:
    """The API's body for ``raw`` (its chart with ``chart``); exits on bad input."""
    from urnbound.api.rendering import renderer_for  # the answer path, only when answering

    try:
        inputs = question.load(raw)
        context = Context(exact_digit_limit=Settings.from_env().exact_digit_limit)
        renderer = renderer_for(Registry((question,)))
        render = renderer.render_chart if chart else renderer.render
        return render(question, inputs, context)
    except InvalidQuery as error:
        _fail(question, _error_line(error.errors), BAD_INPUT)
    except NoConvergence as error:
        _fail(question, error.detail, FAILED)
    except DomainError as error:
        _fail(question, _error_line({error.field or "question": [error.detail]}), BAD_INPUT)


def _error_line(errors: Mapping[str, list[str]]) -> str:
    """``--count: count must be ...``: every field at fault, on one line."""
    parts = []
    for name in sorted(errors):
        label = "--" + name.replace("_", "-")
        parts.append(f"{label}: {' '.join(errors[name])}")
    return "; ".join(parts)


def _fail(question: Question, message: str, status: int) -> Any:
    click.echo(f"urnbound {question.name}: error: {message}", err=True)
    sys.exit(status)


def table(document: Mapping[str, Any]) -> str:
    """An answer document as aligned ``label  value`` lines, long texts wrapped.

    >>> print(table({"count": "22", "collision": {"value": 0.47, "decimal": "4.7e-1",
    ...     "log10": -0.33, "relative_error_bound": 0.0}, "exact": None}))
    count      22
    collision  4.7e-1  (log10 -0.33)
    exact      none
    """
    grids = {key: value for key, value in document.items() if _is_grid(value)}
    rows = [row for key, value in document.items() if key not in grids
            for row in _rows(key, value)]
    width = max((len(label) for label, _ in rows), default=0)
    lines = [line for key, value in grids.items() for line in _grid(key, value)]
    for label, text in rows:
        wrapped = textwrap.wrap(text, max(TABLE_WIDTH - width - 2, 20)) or [""]
        lines.append(f"{label.ljust(width)}  {wrapped[0]}".rstrip())
        lines += [" " * (width + 2) + more for more in wrapped[1:]]
    return "\n".join(lines)


def _is_grid(value: Any) -> bool:
    """A non-empty list of flat records, shown as columns."""
    return isinstance(value, list) and bool(value) and all(
        isinstance(item, Mapping) and not any(isinstance(v, (Mapping, list)) for v in item.values())
        for item in value
    )


def _grid(label: str, records: list[Mapping[str, Any]]) -> list[str]:
    """``label`` and then the records as aligned columns under a header line."""
    columns = list(records[0])
    cells = [columns] + [[_scalar_text(record.get(c)) for c in columns] for record in records]
    widths = [max(len(row[i]) for row in cells) for i in range(len(columns))]
    lines = [f"{label}:"]
    for row in cells:
        padded = (cell.ljust(width) for cell, width in zip(row, widths, strict=True))
        lines.append(("  " + "  ".join(padded)).rstrip())
    return lines


def _rows(label: str, value: Any) -> Iterator[tuple[str, str]]:
    if isinstance(value, Mapping) and "decimal" in value:
        yield label, _magnitude_text(value)
    elif isinstance(value, Mapping):
        for key, item in value.items():
            yield from _rows(f"{label}.{key}" if label else key, item)
    elif isinstance(value, list):
        for index, item in enumerate(value):
            yield from _rows(f"{label}[{index}]", item)
    else:
        yield label, _scalar_text(value)


def _magnitude_text(value: Mapping[str, Any]) -> str:
    text = str(value["decimal"])
    notes = []
    if value.get("log10") is not None:
        notes.append(f"log10 {value['log10']:.6g}")
    bound = value.get("relative_error_bound")
    if bound:
        notes.append(f"relative error < {bound:.3g}")
    return f"{text}  ({', '.join(notes)})" if notes else text


def _scalar_text(value: Any) -> str:
    if value is None:
        return "none"
    if isinstance(value, bool):
        return "yes" if value else "no"
    return str(value)


def openapi_group(registry: Registry) -> click.Group:
    """``urnbound openapi write|check`` for ``registry``'s document."""
    group = click.Group("openapi", help="The OpenAPI document generated from the code.")

    @group.command("write")
    @click.argument("path", type=_PATH, default=DEFAULT_OPENAPI_PATH)
    def openapi_write(path: Path) -> None:
        """Write the document to PATH (default openapi/openapi.yaml)."""
        from urnbound.api.openapi import spec_yaml

        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(spec_yaml(registry), encoding="utf-8")
        click.echo(f"wrote {path}")

    @group.command("check")
    @click.argument("path", type=_PATH, default=DEFAULT_OPENAPI_PATH)
    def openapi_check(path: Path) -> None:
        """Exit non-zero when PATH differs from what the code generates."""
        from urnbound.api.openapi import spec_yaml

        if not path.is_file():
            raise click.ClickException(
                f"{path} does not exist; run `urnbound openapi write {path}`")
        if path.read_text(encoding="utf-8") != spec_yaml(registry):
            raise click.ClickException(
                f"{path} is out of date with the code; run `urnbound openapi write {path}`"
            )
        click.echo(f"{path} matches the code")

    return group


@click.command(context_settings={"ignore_unknown_options": True})
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
    PROMETHEUS_MULTIPROC_DIR is already set, a fresh directory is made for it and removed
    when gunicorn exits, so that /metrics adds up every worker's counts.
    """
    from urnbound.serving import ServeError
    from urnbound.serving import serve as run_gunicorn

    try:
        run_gunicorn(config, gunicorn_args)
    except ServeError as error:
        raise click.ClickException(str(error)) from error
