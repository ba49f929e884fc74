"""The asymptotic path keeps trying when one evaluation cannot decide a float or fails.

A float that one precision leaves undecided, or an expansion that cannot reach one
precision (NoConvergence), must lead to the next precision, then to exact arithmetic
where affordable, then to the widened expansion: never to an error while any of them
can still answer. The evaluations are made to fail on purpose; the answers that come
out are held against mpmath as everywhere else.
"""

from __future__ import annotations

import pytest

from urnbound.core import pairwise
from urnbound.core.errors import NoConvergence
from urnbound.core.results import CollisionRisk

from ._reference import high_precision_risk
from .test_against_references import check_against


def failing_below(monkeypatch: pytest.MonkeyPatch, bits: int, how: str) -> list[int]:
    """Make every evaluation under ``bits`` fail (``how``: "raise" or "undecided")."""
    real_try = pairwise._asymptotic_try
    seen: list[int] = []

    def flaky(size: int, count: int, at: int) -> CollisionRisk | None:
        seen.append(at)
        if at < bits:
            if how == "raise":
                raise NoConvergence("made to fail")
            return None
        return real_try(size, count, at)

    monkeypatch.setattr(pairwise, "_asymptotic_try", flaky)
    return seen


@pytest.mark.parametrize("how", ["raise", "undecided"])
def test_a_failed_precision_leads_to_the_next(monkeypatch: pytest.MonkeyPatch, how: str) -> None:
    # reference: mpmath at 4 log2 N + 200 bits (tests/core/_reference.py); a regression for
    # a NoConvergence at doubled precision that once ended the search with an error
    size, count = 2**121 + 987_654_321, 164_595_498
    seen = failing_below(monkeypatch, 256, how)
    risk = pairwise.collision_risk(size, count, exact_digit_limit=0)
    assert seen[:3] == [64, 128, 256]
    assert risk.method == "asymptotic"
    check_against(risk, high_precision_risk(size, count), size, count)


@pytest.mark.parametrize("how", ["raise", "undecided"])
def test_exact_arithmetic_answers_when_affordable(monkeypatch: pytest.MonkeyPatch,
                                                  how: str) -> None:
    # reference: mpmath at 4 log2 N + 200 bits; N**n has a few hundred digits here
    size, count = 2**64 + 13, 20
    failing_below(monkeypatch, 10**9, how)
    risk = pairwise.collision_risk(size, count, exact_digit_limit=0)
    assert risk.method == "exact"
    check_against(risk, high_precision_risk(size, count), size, count)


@pytest.mark.parametrize("how", ["raise", "undecided"])
def test_the_widened_expansion_answers_last(monkeypatch: pytest.MonkeyPatch, how: str) -> None:
    # reference: mpmath at 4 log2 N + 200 bits; N**n has ~10**29 digits, so no exact fallback
    size, count = 3**300, 2**95 + 7
    seen = failing_below(monkeypatch, 2048, how)
    risk = pairwise.collision_risk(size, count)
    assert max(seen) == 2048 and risk.method == "asymptotic"
    check_against(risk, high_precision_risk(size, count), size, count)


def test_every_precision_failing_is_an_error_not_a_guess(monkeypatch: pytest.MonkeyPatch) -> None:
    # a float no precision up to WIDEST_BITS decides is refused, never reported unrounded
    seen = failing_below(monkeypatch, 10**9, "undecided")
    with pytest.raises(NoConvergence):
        pairwise.collision_risk(3**300, 2**95 + 7)
    assert max(seen) == pairwise.WIDEST_BITS
