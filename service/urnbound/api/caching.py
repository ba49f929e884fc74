"""Answer caching: a bounded LRU keyed by the normalized question, strong ETags, 304s."""

from __future__ import annotations

import hashlib
import json
import threading
from collections import OrderedDict
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

from flask import Response, request

#: Media type of every answer body.
JSON_MEDIA_TYPE = "application/json"


@dataclass(frozen=True, slots=True)
class CachedAnswer:
    """A serialized answer body and the core method that produced it (if any)."""

    body: bytes
    method: str | None = None


@dataclass(frozen=True, slots=True)
class Question:
    """A normalized question: the endpoint plus canonical JSON of its parsed inputs.

    Two requests that parse to the same values (``count=1e6`` and ``count=1000000``)
    give equal questions, hence one cache entry and one ETag.
    """

    endpoint: str
    canonical: str

    @classmethod
    def of(cls, endpoint: str, inputs: Mapping[str, object]) -> Question:
        """Build from plain JSON-able inputs (ints are written as decimal strings)."""
        text = json.dumps(_jsonable(inputs), sort_keys=True, separators=(",", ":"))
        return cls(endpoint, text)

    def digest(self, version: str) -> str:
        """Hex SHA-256 of the service version and the question."""
        payload = f"{version}\n{self.endpoint}\n{self.canonical}".encode()
        return hashlib.sha256(payload).hexdigest()


@dataclass(slots=True)
class AnswerCache:
    """Thread-safe LRU of answers, at most ``capacity`` entries (0 turns caching off)."""

    capacity: int
    _entries: OrderedDict[str, CachedAnswer] = field(default_factory=OrderedDict)
    _lock: threading.Lock = field(default_factory=threading.Lock)

    def get(self, key: str) -> CachedAnswer | None:
        """The answer stored under ``key``, marked most recently used, or ``None``."""
        with self._lock:
            answer = self._entries.get(key)
            if answer is not None:
                self._entries.move_to_end(key)
            return answer

    def put(self, key: str, answer: CachedAnswer) -> None:
        """Store ``answer``, evicting the least recently used entries beyond capacity."""
        if self.capacity <= 0:
            return
        with self._lock:
            self._entries[key] = answer
            self._entries.move_to_end(key)
            while len(self._entries) > self.capacity:
                self._entries.popitem(last=False)

    def __len__(self) -> int:
        with self._lock:
            return len(self._entries)


@dataclass(frozen=True, slots=True)
class CachePolicy:
    """What the caching layer needs: the store, the version and the max-age."""

    cache: AnswerCache
    version: str
    max_age: int


def strong_etag(question: Question, version: str) -> str:
    """The unquoted strong entity tag of the answer to ``question``."""
    return question.digest(version)[:32]


def conditional_answer(
    policy: CachePolicy,
    question: Question,
    compute: Callable[[], CachedAnswer],
    on_lookup: Callable[[bool], None] | None = None,
) -> tuple[Response, CachedAnswer | None]:
    """Answer ``question`` with caching headers.

    A matching ``If-None-Match`` (weak comparison, RFC 9110) gets a 304 without
    computing or looking up anything. Otherwise the LRU is asked first; ``compute``
    runs only on a miss.

    :returns: the response and, when it was computed now, the fresh answer.
    """
    etag = strong_etag(question, policy.version)
    if request.if_none_match.contains_weak(etag):
        return _with_cache_headers(Response(status=304), etag, policy.max_age), None
    key = question.digest(policy.version)
    answer = policy.cache.get(key)
    if on_lookup is not None:
        on_lookup(answer is not None)
    fresh = None
    if answer is None:
        answer = fresh = compute()
        policy.cache.put(key, answer)
    response = Response(answer.body, status=200, mimetype=JSON_MEDIA_TYPE)
    return _with_cache_headers(response, etag, policy.max_age), fresh


def _with_cache_headers(response: Response, etag: str, max_age: int) -> Response:
    response.set_etag(etag, weak=False)
    response.cache_control.public = True
    response.cache_control.max_age = max_age
    return response


def json_body(document: Mapping[str, object]) -> bytes:
    """Serialize an answer as strict JSON (no NaN or Infinity)."""
    return json.dumps(document, allow_nan=False, separators=(",", ":")).encode()


def _jsonable(value: object) -> object:
    if isinstance(value, bool) or value is None or isinstance(value, (str, float)):
        return value
    if isinstance(value, int):
        return str(value)
    if isinstance(value, Mapping):
        return {str(key): _jsonable(item) for key, item in value.items()}
    if isinstance(value, (list, tuple)):
        return [_jsonable(item) for item in value]
    return str(value)
