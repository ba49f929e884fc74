"""The gunicorn worker class: gthread, with a deadline per request and problem+json errors.

gunicorn's threaded worker (``gthread``) parks idle and kept-alive connections in one
event loop and gives a thread only to a connection that has sent data, so a silent client
costs a file descriptor, not a worker. Two things remain, and :class:`GuardedThreadWorker`
adds them:

* **A deadline per request.** A thread reading a request blocks until the request is
  complete; a client sending its headers a byte a second would hold the thread for
  minutes. Each request (reading it, answering it, writing the answer) gets
  ``URNBOUND_CLIENT_TIMEOUT`` seconds (default 10; the service's own work is bounded far
  below that); past it the worker's event loop shuts the socket down, which ends the read
  with "no more data", and the thread is free again. The loop checks once a second.
* **Problem documents for errors found before the application runs.** gunicorn answers a
  request line too long (414), headers too large (431), a malformed request (400) and the
  like with an HTML page; this worker sends the same status as an RFC 9457
  ``application/problem+json`` body instead, like every other error of the service. A
  connection whose first byte cannot open an HTTP request (a TLS handshake sent to the plain
  port, binary data) is answered 400 at once instead of waiting out the deadline.

deploy/gunicorn.conf.py selects it:
``worker_class = "urnbound.gunicorn_worker.GuardedThreadWorker"``.
"""

from __future__ import annotations

import json
import os
import socket
import threading
import time
from typing import Any

from gunicorn.workers import gthread
from gunicorn.workers.gthread import ThreadWorker

#: Environment variable: seconds one request may take, from its first byte to its answer.
CLIENT_TIMEOUT_ENV = "URNBOUND_CLIENT_TIMEOUT"
DEFAULT_CLIENT_TIMEOUT_S = 10.0


def client_timeout() -> float:
    """Seconds one request may hold a thread (``URNBOUND_CLIENT_TIMEOUT``, 1 to 300)."""
    text = os.environ.get(CLIENT_TIMEOUT_ENV, "").strip()
    if not text:
        return DEFAULT_CLIENT_TIMEOUT_S
    try:
        value = float(text)
    except ValueError:
        message = f"{CLIENT_TIMEOUT_ENV} must be a number of seconds, got {text!r}"
        raise SystemExit(message) from None
    if not 1 <= value <= 300:
        raise SystemExit(f"{CLIENT_TIMEOUT_ENV} must be from 1 to 300 seconds, got {value:g}")
    return value


def problem_detail(status: int, cfg: Any) -> str:
    """What a status found before the application ran means, with the limit that applied."""
    if status == 414:
        return f"The request line is longer than the {cfg.limit_request_line} bytes accepted."
    if status == 431:
        return (
            f"The request has more than {cfg.limit_request_fields} header fields, or one "
            f"longer than {cfg.limit_request_field_size} bytes."
        )
    if status == 400:
        return "The request could not be read as HTTP/1.1: malformed request line or headers."
    if status >= 500:
        return "The server failed while reading or answering this request; it has been logged."
    return "The request was refused before it reached the service."


def problem_response(status: int, reason: str, detail: str) -> bytes:
    """A complete HTTP/1.1 response carrying a problem document; the connection closes.

    The title is gunicorn's reason phrase (``about:blank`` problems are titled by status).

    >>> problem_response(414, "URI Too Long", "Too long.").splitlines()[0]
    b'HTTP/1.1 414 URI Too Long'
    """
    body = json.dumps(
        {"type": "about:blank", "title": reason, "status": status, "detail": detail},
        separators=(",", ":"),
    ).encode("utf-8")
    head = (
        f"HTTP/1.1 {status} {reason}\r\n"
        "Connection: close\r\n"
        "Content-Type: application/problem+json\r\n"
        "Cache-Control: no-store\r\n"
        f"Content-Length: {len(body)}\r\n\r\n"
    ).encode("latin-1")
    return head + body


#: Bytes an HTTP/1.1 request may open with: a method's token characters (RFC 9110 section
#: 5.6.2), or the empty line a server should ignore before the request line (RFC 9112 2.2).
REQUEST_START_BYTES = frozenset(
    b"!#$%&'*+-.^_`|~0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz\r\n"
)


def speaks_http(sock: socket.socket) -> bool:
    """Whether the bytes already received could open an HTTP/1.1 request (True if none yet).

    Looks without consuming: a TLS handshake (first byte 0x16) or other binary data is told
    apart at once, rather than after the request deadline.

    >>> left, right = socket.socketpair()
    >>> _ = right.send(b"\\x16\\x03\\x01")
    >>> speaks_http(left)
    False
    >>> left.recv(3) == b"\\x16\\x03\\x01"
    True
    >>> left.close(); right.close()
    """
    try:
        first = sock.recv(1, socket.MSG_PEEK | socket.MSG_DONTWAIT)
    except (BlockingIOError, InterruptedError):
        return True
    except OSError:
        return True  # gunicorn's own handling reports a broken connection
    return not first or first[0] in REQUEST_START_BYTES


class StatusCapture:
    """Stands in for the client socket while gunicorn writes its error page, keeping the bytes.

    gunicorn forms the status and reason (its own choice for each parse error) and writes an
    HTML page; only the status line is kept, and the page is never sent.
    """

    def __init__(self) -> None:
        self.data = bytearray()

    def gettimeout(self) -> float:
        return 0.0

    def setblocking(self, flag: bool) -> None:
        """Nothing to change: no real socket."""

    def sendall(self, data: bytes) -> None:
        self.data += data

    def status(self) -> tuple[int, str]:
        """The status code and reason gunicorn chose (500 if it wrote nothing readable)."""
        line = bytes(self.data).split(b"\r\n", 1)[0].decode("latin-1")
        parts = line.split(" ", 2)
        if len(parts) == 3 and parts[1].isdigit():
            return int(parts[1]), parts[2]
        return 500, "Internal Server Error"


class GuardedThreadWorker(ThreadWorker):  # type: ignore[misc]
    """gthread with a deadline per request and problem+json for gunicorn's own errors."""

    def init_process(self) -> None:
        self.request_timeout = client_timeout()
        # Thread id -> (deadline, socket) for every request a thread is serving now.
        self.in_progress: dict[int, tuple[float, socket.socket]] = {}
        super().init_process()

    def handle(self, conn: Any) -> Any:
        thread = threading.get_ident()
        self.in_progress[thread] = (time.monotonic() + self.request_timeout, conn.sock)
        try:
            if not conn.initialized:
                # gthread's own wait for a new connection's first bytes (a silent one goes
                # back to the event loop), done here so that those bytes can be looked at.
                if not conn.data_ready and not conn.wait_for_data(
                    gthread.DEFAULT_WORKER_DATA_TIMEOUT
                ):
                    return gthread._DEFER
                if not speaks_http(conn.sock):
                    self.refuse_non_http(conn)
                    return False  # gthread closes the connection
            return super().handle(conn)
        finally:
            self.in_progress.pop(thread, None)

    def refuse_non_http(self, conn: Any) -> None:
        """Answer a connection that does not open with an HTTP request line: 400, at once."""
        self.log.warning("Invalid request from ip=%s: not HTTP", conn.client[0])
        detail = "The connection did not open with an HTTP/1.1 request line (TLS to a plain port?)."
        try:
            conn.sock.setblocking(False)
            conn.sock.sendall(problem_response(400, "Bad Request", detail))
        except OSError:
            self.log.debug("Failed to send the problem document.")

    def murder_pending(self) -> None:
        """gthread's check of waiting connections, then the cut of requests past deadline."""
        super().murder_pending()
        now = time.monotonic()
        for deadline, sock in list(self.in_progress.values()):
            if deadline < now:
                self.log.warning("Request not finished within %gs, closed", self.request_timeout)
                try:
                    sock.shutdown(socket.SHUT_RDWR)
                except OSError:
                    pass  # already closed by the thread

    def handle_error(self, req: Any, client: Any, addr: Any, exc: BaseException) -> None:
        """gunicorn's logging and choice of status, answered with a problem document."""
        capture = StatusCapture()
        super().handle_error(req, capture, addr, exc)
        status, reason = capture.status()
        response = problem_response(status, reason, problem_detail(status, self.cfg))
        try:
            client.setblocking(False)
            client.sendall(response)
        except OSError:
            self.log.debug("Failed to send the problem document.")
