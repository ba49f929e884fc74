"""A short HTML page at each problem type's URI, saying what the problem means."""

from __future__ import annotations

from collections.abc import Iterable
from typing import TYPE_CHECKING

from flask import Flask, Response, abort
from markupsafe import escape

if TYPE_CHECKING:
    from urnbound.api.problems import ProblemType

#: Every problem type URI with a page starts with this path.
PAGE_PREFIX = "/problems/"
#: The pages change only with a release.
PAGE_MAX_AGE = 86_400
#: Shown when a problem type has no explanation of its own.
FALLBACK_EXPLANATION = (
    "The detail member of the response says what went wrong with this particular request."
)

_PAGE = """<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<title>{title} (Urnbound problem type)</title>
</head>
<body>
<h1>{title}</h1>
<p>HTTP status <strong>{status}</strong>. Problem type <code>{uri}</code>.</p>
<p>{explanation}</p>
<p>Urnbound sends every error as problem details (RFC 9457, media type
<code>application/problem+json</code>): <code>type</code> is the address of this page,
<code>title</code> and <code>status</code> are the ones above, <code>detail</code> explains this
occurrence, <code>instance</code> is the path that was asked, and <code>errors</code>, when
present, maps each query parameter at fault to its messages.</p>
</body>
</html>
"""


def page_name(kind: ProblemType) -> str | None:
    """The last path segment of the type's URI, or ``None`` when it has no page here."""
    if not kind.uri.startswith(PAGE_PREFIX):
        return None
    name = kind.uri.removeprefix(PAGE_PREFIX)
    return name if name and "/" not in name else None


def page_html(kind: ProblemType) -> str:
    """The HTML page describing ``kind``."""
    return _PAGE.format(
        title=escape(kind.title),
        status=kind.status,
        uri=escape(kind.uri),
        explanation=escape(kind.explanation or FALLBACK_EXPLANATION),
    )


def rendered_pages(kinds: Iterable[ProblemType]) -> dict[str, bytes]:
    """Page name -> encoded page, for every kind whose URI lies under :data:`PAGE_PREFIX`."""
    pages: dict[str, bytes] = {}
    for kind in kinds:
        name = page_name(kind)
        if name is not None:
            pages[name] = page_html(kind).encode("utf-8")
    return pages


def init_problem_pages(app: Flask, kinds: Iterable[ProblemType]) -> None:
    """Serve ``GET /problems/<name>`` for each of ``kinds``; other names are a 404 problem."""
    pages = rendered_pages(kinds)

    def problem_page(name: str) -> Response:
        page = pages.get(name)
        if page is None:
            abort(404, description=f"There is no problem type named {name!r}.")
        response = Response(page, status=200, mimetype="text/html")
        response.headers["Cache-Control"] = f"public, max-age={PAGE_MAX_AGE}"
        return response

    app.add_url_rule(
        PAGE_PREFIX + "<name>", endpoint="problem_page", view_func=problem_page, methods=["GET"]
    )
