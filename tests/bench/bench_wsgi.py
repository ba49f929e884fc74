"""Benchmark: per-request CPU time of the WSGI apps in process, without a server.

Run: ``python tests/bench/bench_wsgi.py`` (not collected by pytest). Each app of
``empty_app.py`` is called directly with a minimal WSGI environ, as gunicorn would call it,
so the figures show what the app itself costs per request, without HTTP parsing and
sockets (``bench_http.py`` measures those, under gunicorn). Rows: the bare Flask floor's
empty endpoint; the product's empty endpoint (which Flask serves, with the product's
hooks); a cached answer (the WSGI front replies from the caches); a first answer (a count
never asked before: load, compute, dump, JSON); and a refused query (a 422 problem from
Flask's handlers). Access lines go to /dev/null. Times are CPU time of this process
(``time.process_time``), medians of per-batch means after one warm-up batch.
"""

from __future__ import annotations

import io
import itertools
import os
import sys
from collections.abc import Callable, Iterable
from typing import Any

from empty_app import EMPTY_PATH, create_bare_app, create_product_app
from timing import median_seconds

BATCH = 500
REPEATS = 9

Environ = dict[str, Any]


def environ(path: str, query: str) -> Environ:
    """A GET request's WSGI environ, as gunicorn builds it for a loopback client."""
    return {
        "REQUEST_METHOD": "GET", "PATH_INFO": path, "QUERY_STRING": query,
        "SERVER_NAME": "127.0.0.1", "SERVER_PORT": "8080", "SERVER_PROTOCOL": "HTTP/1.1",
        "wsgi.url_scheme": "http", "wsgi.input": io.BytesIO(b""), "wsgi.errors": sys.stderr,
        "wsgi.multithread": True, "wsgi.multiprocess": True, "wsgi.run_once": False,
        "REMOTE_ADDR": "127.0.0.1", "HTTP_HOST": "127.0.0.1:8080", "HTTP_USER_AGENT": "bench",
    }


def _start_response(status: str, headers: list[tuple[str, str]], exc_info: object = None) -> None:
    return None


def batch(app: Callable[[Environ, Any], Iterable[bytes]], path: str,
          queries: Iterable[str]) -> Callable[[], None]:
    """One batch of BATCH requests to ``app``, the queries taken in turn."""
    def run() -> None:
        for query in itertools.islice(queries, BATCH):
            body = app(environ(path, query), _start_response)
            b"".join(body)
            close = getattr(body, "close", None)
            if close is not None:
                close()
    return run


def main() -> None:
    os.environ.setdefault("URNBOUND_ACCESS_LOG", "1")
    bare, product = create_bare_app(), create_product_app()
    fresh = (f"bits=64&count={count}" for count in itertools.count(10**9 + 1))
    rows = (
        ("bare Flask, empty endpoint", bare, EMPTY_PATH, itertools.repeat("")),
        ("product, empty endpoint", product, EMPTY_PATH, itertools.repeat("")),
        ("product, cached answer", product, "/v1/collisions",
         itertools.repeat("bits=64&count=1000000000")),
        ("product, first answer", product, "/v1/collisions", fresh),
        ("product, refused query (422)", product, "/v1/collisions",
         itertools.repeat("bits=0&count=1")),
    )
    stdout, sys.stdout = sys.stdout, open(os.devnull, "w")  # the access lines
    try:
        figures = [(label, median_seconds(batch(app, path, queries), REPEATS) / BATCH * 1e6)
                   for label, app, path, queries in rows]
    finally:
        sys.stdout.close()
        sys.stdout = stdout
    floor = figures[0][1]
    print("| request | CPU µs per request | vs bare floor |")
    print("|---|---:|---:|")
    for label, micros in figures:
        print(f"| {label} | {micros:.1f} | {micros / floor:.2f} |")


if __name__ == "__main__":
    main()
