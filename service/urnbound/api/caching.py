"""Answer caching: a bounded LRU keyed by the normalized question, strong ETags, 304s.

No Flask here: the WSGI front (``front.py``) and the Flask view both reply through it.
"""

from __future__ import annotations

import functools
import hashlib
import json
import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable, Mapping
from dataclasses import dataclass, field
from typing import Any, Generic, Protocol, TypeVar, cast

from werkzeug.http import parse_etags
from werkzeug.utils import get_content_type

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
    canonical = _CANONICAL_JSON.encode(_jsonable(inputs))
    return hashlib.sha256(f"{version}\n{endpoint}\n{canonical}".encode()).hexdigest()


#: ``json.dumps(..., sort_keys=True, separators=(",", ":"))``, built once (``dumps`` with
#: arguments builds a new encoder on every call).
_CANONICAL_JSON = json.JSONEncoder(sort_keys=True, separators=(",", ":"))


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


@dataclass(frozen=True, slots=True)
class Reply:
    """An answer ready to send, with what the metrics need to know about it.

    :ivar headers: in the order they are sent; a 304 carries only the validators.
    :ivar cache_hit: whether the answer cache held the answer (``None`` for a 304, which
        looks nothing up).
    :ivar fresh: the answer when it was computed for this request.
    """

    status: int
    headers: list[tuple[str, str]]
    body: bytes
    cache_hit: bool | None
    fresh: CachedAnswer | None


def conditional_reply(
    policy: CachePolicy,
    known: KnownQuestion[Any],
    compute: Callable[[], CachedAnswer],
    if_none_match: str | None,
    vary: str | None = None,
) -> Reply:
    """The reply to ``known``, with caching headers.

    A matching ``If-None-Match`` (weak comparison, RFC 9110) gets a 304 without
    computing or looking up anything. Otherwise the LRU is asked first; ``compute``
    runs only on a miss.

    :param vary: the ``Vary`` header, when the representation depends on request headers.
    """
    validators = [("ETag", f'"{known.etag}"'),
                  ("Cache-Control", f"public, max-age={policy.max_age}")]
    if vary is not None:
        validators.append(("Vary", vary))
    if if_none_match and parse_etags(if_none_match).contains_weak(known.etag):
        return Reply(304, validators, b"", None, None)
    answer = policy.answers.get(known.digest)
    hit = answer is not None
    fresh = None
    if answer is None:
        answer = fresh = compute()
        policy.answers.put(known.digest, answer)
    headers = [("Content-Type", content_type(answer.media_type)),
               ("Content-Length", str(len(answer.body))), *validators]
    return Reply(200, headers, answer.body, hit, fresh)


@functools.cache
def content_type(media_type: str) -> str:
    """The ``Content-Type`` Werkzeug would send for ``media_type`` (a charset for text)."""
    return get_content_type(media_type, "utf-8")


def _jsonable(value: object) -> object:
    """Integers as decimal strings, everything else as JSON takes it (keys as strings).

    The exact built-in types of a normalized question are told apart by ``type`` first,
    which gives the same result as the ``isinstance`` chain below at a fraction of its cost;
    anything else (a subclass, a tuple) takes the chain.
    """
    kind = type(value)
    if kind is str or kind is float or kind is bool or value is None:
        return value
    if kind is int:
        return str(value)
    if kind is dict:
        return {str(key): _jsonable(item) for key, item in cast(dict[Any, Any], value).items()}
    return _jsonable_generic(value)


def _jsonable_generic(value: object) -> object:
    if isinstance(value, bool) or value is None or isinstance(value, (str, float)):
        return value
    if isinstance(value, int):
        return str(value)
    if isinstance(value, Mapping):
        return {str(key): _jsonable(item) for key, item in value.items()}
    if isinstance(value, (list, tuple)):
        return [_jsonable(item) for item in value]
    return str(value)
