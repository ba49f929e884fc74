"""Answer caching: a bounded LRU keyed by the normalized question, strong ETags, 304s."""

from __future__ import annotations

import hashlib
import json
import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable, Mapping
from dataclasses import dataclass, field
from typing import Any, Generic, Protocol, TypeVar

from flask import Response, request

from urnbound.api.rendering import CachedAnswer

K = TypeVar("K", bound=Hashable)
V = TypeVar("V")
Q = TypeVar("Q")


class Normalizable(Protocol):
    """A parsed question that can state itself in canonical form."""

    def normalized(self) -> Mapping[str, object]: ...


def question_digest(version: str, endpoint: str, inputs: Mapping[str, object]) -> str:
    """Hex SHA-256 of the service version, the endpoint and the normalized inputs.

    Inputs are written as sorted-key JSON with integers as decimal strings, so two
    requests that parse to the same values (``count=1e6`` and ``count=1000000``) give
    one digest, hence one cache entry and one ETag.
    """
    canonical = json.dumps(_jsonable(inputs), sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(f"{version}\n{endpoint}\n{canonical}".encode()).hexdigest()


@dataclass(frozen=True, slots=True)
class KnownQuestion(Generic[Q]):
    """A parsed question and the digest of its normalized form."""

    question: Q
    digest: str

    @property
    def etag(self) -> str:
        """The unquoted strong entity tag of the answer."""
        return self.digest[:32]


@dataclass(slots=True)
class LruCache(Generic[K, V]):
    """Thread-safe LRU map of at most ``capacity`` entries (0 turns it off)."""

    capacity: int
    _entries: OrderedDict[K, V] = field(default_factory=OrderedDict)
    _lock: threading.Lock = field(default_factory=threading.Lock)

    def get(self, key: K) -> V | None:
        """The value stored under ``key``, marked most recently used, or ``None``."""
        with self._lock:
            value = self._entries.get(key)
            if value is not None:
                self._entries.move_to_end(key)
            return value

    def put(self, key: K, value: V) -> None:
        """Store ``value``, evicting the least recently used entries beyond capacity."""
        if self.capacity <= 0:
            return
        with self._lock:
            self._entries[key] = value
            self._entries.move_to_end(key)
            while len(self._entries) > self.capacity:
                self._entries.popitem(last=False)

    def __len__(self) -> int:
        with self._lock:
            return len(self._entries)


@dataclass(frozen=True, slots=True)
class CachePolicy:
    """The caching state of one app.

    :ivar answers: normalized-question digest -> serialized answer.
    :ivar spellings: (endpoint, raw query string) -> parsed question, so that a repeated
        request skips parsing; parsing is a pure function of the query string.
    :ivar version: service version plus the settings that change an answer's text.
    :ivar max_age: seconds for ``Cache-Control: public, max-age``.
    """

    answers: LruCache[str, CachedAnswer]
    spellings: LruCache[tuple[str, bytes], KnownQuestion[Any]]
    version: str
    max_age: int


def cache_policy(entries: int, version: str, max_age: int) -> CachePolicy:
    """Empty caches of ``entries`` entries each."""
    return CachePolicy(LruCache(entries), LruCache(entries), version, max_age)


def known_question(
    policy: CachePolicy, endpoint: str, query: bytes, load: Callable[[], Normalizable]
) -> KnownQuestion[Any]:
    """The parsed question of this query string, from the spelling cache or ``load``."""
    key = (endpoint, query)
    known = policy.spellings.get(key)
    if known is None:
        question = load()
        digest = question_digest(policy.version, endpoint, question.normalized())
        known = KnownQuestion(question, digest)
        policy.spellings.put(key, known)
    return known


def variant(known: KnownQuestion[Q], media_type: str) -> KnownQuestion[Q]:
    """The same question answered in another representation: its own digest and ETag."""
    digest = hashlib.sha256(f"{known.digest}\n{media_type}".encode()).hexdigest()
    return KnownQuestion(known.question, digest)


def conditional_answer(
    policy: CachePolicy,
    known: KnownQuestion[Any],
    compute: Callable[[], CachedAnswer],
    on_lookup: Callable[[bool], None] | None = None,
) -> tuple[Response, CachedAnswer | None]:
    """Answer ``known`` with caching headers.

    A matching ``If-None-Match`` (weak comparison, RFC 9110) gets a 304 without
    computing or looking up anything. Otherwise the LRU is asked first; ``compute``
    runs only on a miss.

    :returns: the response and, when it was computed now, the fresh answer.
    """
    if request.if_none_match.contains_weak(known.etag):
        return _with_cache_headers(Response(status=304), known.etag, policy.max_age), None
    answer = policy.answers.get(known.digest)
    if on_lookup is not None:
        on_lookup(answer is not None)
    fresh = None
    if answer is None:
        answer = fresh = compute()
        policy.answers.put(known.digest, answer)
    response = Response(answer.body, status=200, mimetype=answer.media_type)
    return _with_cache_headers(response, known.etag, policy.max_age), fresh


def _with_cache_headers(response: Response, etag: str, max_age: int) -> Response:
    # Plain header strings: the structured setters cost more than the whole cached answer.
    response.headers["ETag"] = f'"{etag}"'
    response.headers["Cache-Control"] = f"public, max-age={max_age}"
    return response


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
