"""Bodies of /v1/collisions: the fast single-answer path against the general one, byte for byte.

The collision answer takes its figures from ``pairwise.answer_figures`` and its bodies are
written by the WSGI front's reply path. Both are faster forms of what they replace: here
each body is checked, byte for byte, against one assembled independently from
``pairwise.related_figures`` (whose figures ``tests/core/test_related.py`` checks against
sympy and mpmath at high precision) and dumped with ``json.dumps``, over a spread of
questions meeting every path of the figures (exact, series, closed form, saturated, the
reciprocal from text and from the exact fraction); the front's reply must equal the Flask
view's, headers included. The floats of the pinned figures are compared with mpmath here too.
"""

from __future__ import annotations

import hashlib
import json
from typing import Any

import mpmath
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from werkzeug.test import Client

from urnbound.api.caching import question_digest
from urnbound.api.front import Front
from urnbound.app import create_app
from urnbound.core.pairwise import answer_figures, collision_risk, related_figures
from urnbound.domain.spaces import space_from_bits

#: Queries over the paths of the figures: tiny and huge spaces, counts from 0 past the
#: space (saturated), the series (n/N < 2^-32) and the closed form, an alphabet space,
#: a size space, a k-fold question and a time-ordered one.
QUERIES = (
    "bits=64&count=1e6", "bits=64&count=1000000007", "bits=64&count=5e9", "bits=64&count=0",
    "bits=64&count=1", "bits=64&count=2", "bits=64&count=4294967296", "bits=64&count=1e12",
    "bits=32&count=77000", "bits=32&count=4294967297", "bits=16&count=300", "bits=8&count=1e4",
    "bits=128&count=1e18", "bits=122&count=2.7e18", "bits=200&count=24296095744",
    "bits=280&count=1e55", "bits=1103&count=1009361555372", "bits=4096&count=1e300",
    "bits=8192&count=1e1000", "size=365&count=23", "size=2&count=2", "size=1000&count=40",
    "alphabet=base64url&length=8&count=2e6", "alphabet=base64&length=49&count=1e60",
    "alphabet=base16&length=32&count=1e30", "bits=32&count=100000&multiplicity=3",
    "format=uuid-v7&rate=1000&duration=P1D",
)


def _clients() -> tuple[Client, Client]:
    app = create_app({"TESTING": True, "access_log": False})
    front = app.wsgi_app
    assert isinstance(front, Front)
    return Client(front), Client(front.app)


def _magnitude(m: Any) -> dict[str, Any] | None:
    """A figure as ``schemas.py`` documents it (null for a non-finite float, never -0)."""
    if m is None:
        return None

    def finite(x: float | None) -> float | None:
        return None if x is None or x in (float("inf"), float("-inf")) else x + 0.0

    return {"value": finite(m.value), "decimal": m.decimal, "log10": finite(m.log10),
            "relative_error_bound": finite(m.relative_error_bound)}


@pytest.mark.parametrize("query", QUERIES)
def test_the_front_and_the_view_send_the_same_bytes(query: str) -> None:
    through_front, flask_only = _clients()
    ours = through_front.get(f"/v1/collisions?{query}")
    theirs = flask_only.get(f"/v1/collisions?{query}")
    assert ours.status_code == theirs.status_code == 200
    assert list(ours.headers.items()) == list(theirs.headers.items())
    assert ours.get_data() == theirs.get_data()


@pytest.mark.parametrize("query", [q for q in QUERIES if q.startswith("bits=")
                                   and "multiplicity" not in q])
def test_a_body_equals_one_assembled_from_the_general_figures(query: str) -> None:
    through_front, _ = _clients()
    reply = through_front.get(f"/v1/collisions?{query}")
    body = reply.get_data()
    parameters = dict(part.split("=") for part in query.split("&"))
    space = space_from_bits(int(parameters["bits"]))
    count = _whole(parameters["count"])
    risk = collision_risk(space.size, count)
    figures = related_figures(space.size, count, risk)
    document = json.loads(body)
    assert document["collision"] == _magnitude(risk.collision)
    assert document["no_collision"] == _magnitude(risk.no_collision)
    assert document["expected_colliding_pairs"] == _magnitude(figures.expected_colliding_pairs)
    assert document["expected_coincident_sets"] == _magnitude(figures.expected_colliding_pairs)
    assert document["expected_duplicates"] == _magnitude(figures.expected_duplicates)
    assert document["reciprocal_risk"] == _magnitude(figures.reciprocal_risk)
    # The bytes: the same document through json.dumps as the service always wrote it.
    assert body == json.dumps(document, allow_nan=False, separators=(",", ":")).encode()
    # The ETag: SHA-256 of the canonical question, as caching.question_digest documents it.
    assert reply.headers["ETag"].strip('"') == _digest_by_hand(space, count)[:32]


def _whole(text: str) -> int:
    """A count written as digits or m e k, exactly (the API's rule: whole numbers only)."""
    mantissa, _, exponent = text.partition("e")
    exponent = exponent or "0"
    whole, _, fraction = mantissa.partition(".")
    digits = int(whole + fraction)
    shift = int(exponent) - len(fraction)
    return digits * 10**shift


def _digest_by_hand(space: Any, count: int) -> str:
    """The digest of a bits + count question, written out without the service's helpers."""
    app = create_app({"TESTING": True, "access_log": False})
    front = app.wsgi_app
    assert isinstance(front, Front)
    version = front.state.caching.version
    inputs = {"space": {"size": str(space.size), "description": space.description,
                        "alphabet_size": str(space.alphabet_size), "length": str(space.length)},
              "count": str(count), "rate": None, "duration": None, "burst": None,
              "burst_share": None, "multiplicity": None}
    canonical = json.dumps(inputs, sort_keys=True, separators=(",", ":"))
    by_hand = hashlib.sha256(f"{version}\ncollisions\n{canonical}".encode()).hexdigest()
    assert by_hand == question_digest(version, "collisions", inputs)
    return by_hand


#: (size, count) points of every path of the expected counts and of the reciprocal.
FIGURE_POINTS = (
    (2, 2), (365, 23), (2**20, 3000), (2**64, 10**6), (2**64, 10**9 + 7), (2**64, 5 * 10**9),
    (2**64, 2**32), (2**64, 2**40), (2**64, 2**70), (2**32, 2**32 + 1), (2**128, 10**18),
    (2**200, 24296095744), (2**1103, 1009361555372), (2**4096, 10**300), (10**12, 10**7),
    (2**16, 2**16 * 40), (2**53, 2**27 + 3), (3**100, 10**23),
)


@pytest.mark.parametrize(("size", "count"), FIGURE_POINTS)
def test_answer_figures_are_the_general_figures(size: int, count: int) -> None:
    risk = collision_risk(size, count)
    general = related_figures(size, count, risk)
    fast = answer_figures(size, count, risk)
    assert fast.expected_colliding_pairs == general.expected_colliding_pairs
    assert fast.expected_duplicates == general.expected_duplicates
    assert fast.reciprocal_risk == general.reciprocal_risk


@settings(max_examples=80, deadline=None)
@given(st.integers(min_value=1, max_value=512), st.floats(min_value=0.0, max_value=0.9))
def test_answer_figures_are_the_general_figures_anywhere(bits: int, share: float) -> None:
    size = 2**bits
    count = int(mpmath.mpf(2) ** (share * bits * 1.2)) + 1
    risk = collision_risk(size, count)
    general = related_figures(size, count, risk)
    fast = answer_figures(size, count, risk)
    assert (fast.expected_colliding_pairs, fast.expected_duplicates, fast.reciprocal_risk) == (
        general.expected_colliding_pairs, general.expected_duplicates, general.reciprocal_risk)


@pytest.mark.parametrize(("size", "count"), [(2**64, 10**9 + 7), (2**64, 5 * 10**9),
                                             (2**128, 10**18), (2**200, 24296095744)])
def test_pinned_floats_are_the_nearest_to_mpmath(size: int, count: int) -> None:
    # Reference: mpmath at 600 bits, n - N (1 - (1 - 1/N)**n) and C(n, 2) / N.
    mp = mpmath.MPContext()
    mp.prec = 600
    duplicates = count - size * -mp.expm1(count * mp.log1p(-mp.mpf(1) / size))
    pairs = mp.mpf(count) * (count - 1) / (2 * size)
    fast = answer_figures(size, count, collision_risk(size, count))
    assert fast.expected_duplicates.value == float(duplicates)
    assert fast.expected_colliding_pairs.value == float(pairs)
