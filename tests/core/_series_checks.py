"""Checks shared by the tests of the series batches (budgets' risks, curves' pairs).

Each reported figure is held against the pairwise risk and its complement from mpmath's
log-gamma (or the direct product) in a private context of 4 log2 N + 200 bits
(tests/core/_reference.py): the float equal to the correct rounding of the reference,
the decimal text within the reported bound, log10 close.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from types import ModuleType

import gmpy2
import mpmath
import pytest
from hypothesis import strategies as st
from tests.core._reference import (
    TEXT_ROUNDING,
    ln_of_text,
    nearest_float,
    relative_gap,
    rounding_is_settled,
)

from urnbound.core.pairwise import collision_risk
from urnbound.core.results import CollisionRisk, Magnitude
from urnbound.core.series_risk import RATIO_LIMIT

#: Spaces from the smallest the expansion serves to the largest the service takes.
SIZES = (1024, 10**6, 2**32, 62**8, 2**64, 36**14, 2**122, 2**256, 10**300, 2**8192)
#: Below this ln P, P < 2**-1075 and its float is 0.
UNDERFLOW_LN = -746


def counts_of(size: int) -> list[int]:
    """2, 3, the regime's end floor(N / 129) and its neighbour, and a dozen counts between,
    spread over the bit lengths (not powers of two: 3 * 2**k + 1)."""
    top = size // RATIO_LIMIT
    found = {2, 3, top, max(2, top - 1)}
    bits = top.bit_length()
    for step in range(12):
        count = 3 * 2 ** (2 + (bits - 4) * step // 11) + 1
        if count < top:
            found.add(count)
    return sorted(found)


@st.composite
def spaces_and_counts(draw: st.DrawFn, past_ratio: bool = False) -> tuple[int, int]:
    """A space of 2**9 to 2**8192 values (at least 1,024) and a count up to N / 129, or
    (``past_ratio``) from just past N / 129 to N - 1."""
    bits = draw(st.one_of(st.integers(10, 200), st.integers(200, 8192)))
    size = draw(st.integers(max(1024, 2 ** (bits - 1)), 2**bits))
    low, high = (size // RATIO_LIMIT + 1, size - 1) if past_ratio else (2, size // RATIO_LIMIT)
    return size, draw(st.integers(low, high))


def as_mpf(mp: mpmath.ctx_mp.MPContext, value: gmpy2.mpfr) -> mpmath.mpf:
    """An MPFR number exactly, in the reference context."""
    numerator, denominator = value.as_integer_ratio()
    return mp.mpf(numerator) / denominator


def assert_magnitude(mp: mpmath.ctx_mp.MPContext, figure: Magnitude, ln_true: mpmath.mpf,
                     allowed: float) -> None:
    """The float correctly rounded, the text within ``allowed``, log10 close (rel 1e-12)."""
    if ln_true < UNDERFLOW_LN:
        assert figure.value == 0.0
    else:
        true = mp.exp(ln_true)
        if rounding_is_settled(mp, true, 16):
            assert figure.value == nearest_float(true)
    assert relative_gap(mp, ln_of_text(mp, figure.decimal), ln_true) <= allowed
    tenth = float(ln_true / mp.ln10)  # -inf past the float range, as a single answer has it
    if math.isfinite(tenth):
        assert figure.log10 == pytest.approx(tenth, rel=1e-12, abs=0)
    else:
        assert figure.log10 == -math.inf


def allowed(method: str, bound: float) -> float:
    """The reported bound; 5e-20 (20-digit rounding) for the exact path's bound 0."""
    return max(bound, float(TEXT_ROUNDING)) if method == "exact" else bound


def record_single_answers(monkeypatch: pytest.MonkeyPatch, module: ModuleType) -> list[int]:
    """The counts ``module`` hands to ``collision_risk`` (its single answers), recorded."""
    called: list[int] = []

    def recorded(size: int, count: int, **kwargs: int) -> CollisionRisk:
        called.append(count)
        return collision_risk(size, count, **kwargs)

    monkeypatch.setattr(module, "collision_risk", recorded)
    return called


def assert_single_answers_outside(answers: Callable[[int, list[int]], tuple[object, ...]],
                                  ) -> None:
    """Counts no batch takes (0, 1, exact, past N, N itself) are the certified answers."""
    size = 2**64
    outside = [0, 1, 10, 100, size - 1, size, size + 1]  # 10, 100: exact by default
    for count, answer in zip(outside, answers(size, outside), strict=True):
        assert answer == collision_risk(size, count)


def assert_order_with_repeats(answers: Callable[[int, list[int]], tuple[object, ...]],
                              ) -> None:
    """Answers follow the counts given, a repeated count answered once."""
    counts = [5 * 10**9, 10**9, 5 * 10**9, 0, 2**63, 2**63]
    found = answers(2**64, counts)
    assert [answer.count for answer in found] == counts  # type: ignore[attr-defined]
    assert found[0] is found[2] and found[4] is found[5]
