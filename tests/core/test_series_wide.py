"""The wide batch (counts past N/129, or past the Horner sums' reach) against mpmath.

The same for a budget's risks alone (``relative=True``): L within 2**-118 |L|, the risk
within RELATIVE_RISK_BOUND, each bound no wider than the single answer's.

Every L is held against ln P(no collision) from mpmath's log-gamma in a private context
of 4 log2 N + 200 bits (tests/core/_reference.py): within d = 2**-120 absolutely, the risk
within RISK_BOUND and the complement within COMPLEMENT_BOUND relatively (the bounds the
module docstring proves), and the answers reported from them (floats correctly rounded,
texts within bounds no wider than the single certified answer's) as in
tests/core/test_series_pairs.py.
"""

from __future__ import annotations

import mpmath
import pytest
from hypothesis import HealthCheck, example, given, settings
from tests.core._reference import high_precision_risk
from tests.core._series_checks import (
    as_mpf,
    assert_magnitude,
    record_single_answers,
    spaces_and_counts,
)
from tests.core.test_series_pairs import assert_matches_reference

import urnbound.core.series_pairs as series_pairs_module
import urnbound.core.series_risk as series_risk_module
from urnbound.core.pairwise import collision_risk
from urnbound.core.series_pairs import EXP_LOG_BITS, WIDE, batch_key, series_pairs
from urnbound.core.series_risk import RATIO_LIMIT, ReportedBatch, SeriesRisk, series_risks
from urnbound.core.series_wide import (
    COMPLEMENT_BOUND,
    LOG_BITS,
    RELATIVE_BITS,
    RELATIVE_RISK_BOUND,
    RISK_BOUND,
    RISK_PREC,
    WideLogs,
    rest_terms,
    wide_prec,
)

#: Spaces from the smallest the expansion serves to the largest the service takes.
SIZES = (1024, 10**6, 62**8, 2**64, 2**256, 10**300, 2**8192)


def wide_counts(size: int) -> list[int]:
    """Counts of the wide batch: from just past N/129 to N - 300, with M = N - n both
    large and small (N - 2**k), the halfway line 2n = N on both sides, and below N/129
    the counts whose power series is too long (at the largest spaces)."""
    top = size // RATIO_LIMIT
    found = {top + 1, top + 2, size // 100, size // 10, size // 3, size // 2, size // 2 + 1,
             2 * size // 3, 9 * size // 10, size - size // 1000, size - 300}
    found |= {size - 2**k - 1 for k in range(9, size.bit_length() - 1, 37)}
    found |= {size // 2**k + 5 for k in (8, 12, 20, 40, 90, 150)}
    return sorted(c for c in found if 2 <= c < size
                  and (batch_key(size, c, 0) or ("", 0))[0] == WIDE)


def assert_within_proven_bounds(size: int, count: int) -> None:
    """|L~ - L| <= d; the risk within RISK_BOUND; exp(L~) within COMPLEMENT_BOUND."""
    prec = wide_prec(count)
    logs = WideLogs(size, prec)
    risks = ReportedBatch(RISK_BOUND, prec)
    log_no = logs.log_no_collision(count)
    assert log_no is not None  # the ball is narrow enough at every count of the grid
    ref = high_precision_risk(size, count)  # mpmath log-gamma at 4 log2 N + 200 bits
    mp = ref.mp
    ours = as_mpf(mp, log_no)
    assert abs(ours - ref.ln_no_collision) <= mp.mpf(2) ** -LOG_BITS
    with risks.ctx:
        risk = as_mpf(mp, risks.risk(log_no))
        complement = risks.ctx.exp(log_no) if log_no >= -(2**EXP_LOG_BITS) else None
    assert abs(risk / mp.exp(ref.ln_risk) - 1) <= fraction(mp, RISK_BOUND)
    if complement is not None:
        gap = abs(as_mpf(mp, complement) / mp.exp(ref.ln_no_collision) - 1)
        assert gap <= fraction(mp, COMPLEMENT_BOUND)


def fraction(mp: mpmath.ctx_mp.MPContext, value: object) -> mpmath.mpf:
    return mp.mpf(value.numerator) / value.denominator  # type: ignore[attr-defined]


def assert_no_worse_than_single(size: int, count: int, exact_digit_limit: int = 0) -> None:
    """The batch's answer within the reference, its bound at most the single answer's."""
    (pair,) = series_pairs(size, [count], exact_digit_limit=exact_digit_limit)
    single = collision_risk(size, count, exact_digit_limit=exact_digit_limit)
    assert pair.method == single.method == "asymptotic"
    assert pair.collision.value == single.collision.value
    assert pair.no_collision.value == single.no_collision.value
    assert pair.collision.relative_error_bound <= single.collision.relative_error_bound
    assert pair.no_collision.relative_error_bound <= single.no_collision.relative_error_bound
    assert_matches_reference(size, pair)


@pytest.mark.parametrize("size", SIZES, ids=lambda size: f"{size.bit_length()}-bits")
def test_every_wide_value_is_within_its_proven_bound(size: int) -> None:
    counts = wide_counts(size)
    assert len(counts) >= 8
    for count in counts:
        assert_within_proven_bounds(size, count)


@pytest.mark.parametrize("size", SIZES, ids=lambda size: f"{size.bit_length()}-bits")
def test_wide_answers_match_the_reference(size: int, monkeypatch: pytest.MonkeyPatch) -> None:
    counts = wide_counts(size)
    called = record_single_answers(monkeypatch, series_pairs_module)
    pairs = series_pairs(size, counts, exact_digit_limit=0)
    assert called == []
    for pair in pairs:
        assert pair.method == "asymptotic" and pair.precision_bits == wide_prec(pair.count)
        assert 5e-20 < pair.relative_error_bound < 5.0000001e-20
        assert_matches_reference(size, pair)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(case=spaces_and_counts(past_ratio=True))
@example(case=(2**64, 2**64 // RATIO_LIMIT + 1))  # 2**64, the first count past N / 129
def test_random_wide_counts_match_the_reference(case: tuple[int, int]) -> None:
    size, count = case
    if rest_terms(size - count) is not None:
        assert_within_proven_bounds(size, count)
    (pair,) = series_pairs(size, [count], exact_digit_limit=0)
    assert_matches_reference(size, pair)


@pytest.mark.parametrize(("size", "count"), [
    (1024, 8), (1024, 9), (1024, 20), (2**64, 2**64 // 128),
], ids=["1024-of-8", "1024-of-9", "1024-of-20", "2^64-first-past-N/129"])
def test_the_smallest_risks_of_the_batch(size: int, count: int) -> None:
    # the least risks past N/129: 8 of 1,024 values, about 2.7e-2 (|L| >= (n - 1) / 258)
    assert (batch_key(size, count, 0) or ("", 0))[0] == WIDE
    assert_within_proven_bounds(size, count)
    assert_no_worse_than_single(size, count)


@pytest.mark.parametrize("size", [2**64, 10**300, 2**8192], ids=["64", "997", "8192"])
def test_risks_next_to_one_and_complements_past_every_float(size: int) -> None:
    # n = N/2 and n = N - 300: the risk 1 to every digit, the complement e**-(0.15 N) and
    # e**-(N - 0.5 ln(2 pi N)...): a text with an exponent of up to 2,466 digits
    for count in (size // 2, size - 300):
        assert_within_proven_bounds(size, count)
        assert_no_worse_than_single(size, count)
        (pair,) = series_pairs(size, [count], exact_digit_limit=0)
        assert pair.collision.value == 1.0 and pair.collision.log10 == 0.0
        assert pair.no_collision.value == 0.0


def test_counts_up_to_n_plus_one(monkeypatch: pytest.MonkeyPatch) -> None:
    # M = N - n too small for the Stirling terms (N - 2, N - 1), n = N and n = N + 1:
    # the single certified answers (small-remainder form, exact 0 and 1)
    size = 2**64
    counts = [size - 300, size - 2, size - 1, size, size + 1]
    called = record_single_answers(monkeypatch, series_pairs_module)
    pairs = series_pairs(size, counts, exact_digit_limit=0)
    assert called == counts[1:]
    for count, pair in zip(counts[1:], pairs[1:], strict=True):
        assert pair == collision_risk(size, count, exact_digit_limit=0)
    assert pairs[-1].collision.value == 1.0 and pairs[-1].no_collision.decimal == "0"
    assert_matches_reference(size, pairs[0])


def test_a_small_l_or_a_wide_ball_is_left_to_the_single_answer() -> None:
    # |L| below 2**-9 (10 of 2**64) would void the risk's bound; at 256 bits a count of
    # 2**8191 cannot be placed within d: both give None, never a worse bound
    assert WideLogs(2**64, 256).log_no_collision(10) is None
    assert WideLogs(2**8192, 256).log_no_collision(2**8191) is None
    assert WideLogs(2**64, 256).log_no_collision(2**63) is not None


def test_the_bounds_are_the_stated_ones() -> None:
    # d = 2**-120, e = 2**10 d, E = 2d + 6 * 2**-128 (module docstring)
    assert RISK_BOUND * 2**110 == 1
    assert COMPLEMENT_BOUND * 2**128 == 2 * 2**8 + 6
    assert rest_terms(1) is None and rest_terms(2**126) == 0


def assert_relative_within_proven_bound(size: int, count: int) -> None:
    """Risks alone: |L~ - L| <= 2**-118 |L| and the risk within RELATIVE_RISK_BOUND."""
    logs = WideLogs(size, RISK_PREC, relative=True)
    risks = ReportedBatch(RELATIVE_RISK_BOUND, RISK_PREC)
    log_no = logs.log_no_collision(count)
    assert log_no is not None
    ref = high_precision_risk(size, count)  # mpmath log-gamma at 4 log2 N + 200 bits
    mp = ref.mp
    gap = abs(as_mpf(mp, log_no) - ref.ln_no_collision)
    assert gap <= mp.mpf(2) ** -RELATIVE_BITS * abs(ref.ln_no_collision)
    with risks.ctx:
        risk = as_mpf(mp, risks.risk(log_no))
    assert abs(risk / mp.exp(ref.ln_risk) - 1) <= fraction(mp, RELATIVE_RISK_BOUND)


def assert_risk_no_worse_than_single(size: int, risk: SeriesRisk) -> None:
    """A budget's risk: reference held, its bound at most the single answer's."""
    single = collision_risk(size, risk.count, exact_digit_limit=0)
    assert risk.collision.value == single.collision.value
    assert risk.relative_error_bound <= single.collision.relative_error_bound
    ref = high_precision_risk(size, risk.count)
    assert_magnitude(ref.mp, risk.collision, ref.ln_risk, risk.relative_error_bound)


@pytest.mark.parametrize("size", SIZES, ids=lambda size: f"{size.bit_length()}-bits")
def test_risks_alone_are_within_their_proven_bound(
    size: int, monkeypatch: pytest.MonkeyPatch,
) -> None:
    counts = [c for c in wide_counts(size) if RATIO_LIMIT * c > size]
    assert len(counts) >= 6
    for count in counts:
        assert_relative_within_proven_bound(size, count)
    called = record_single_answers(monkeypatch, series_risk_module)
    risks = series_risks(size, counts, exact_digit_limit=0)
    assert called == []
    for risk in risks:
        assert isinstance(risk, SeriesRisk) and risk.method == "asymptotic"
        assert 5e-20 < risk.relative_error_bound < 5.0000001e-20
        assert_risk_no_worse_than_single(size, risk)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(case=spaces_and_counts(past_ratio=True))
@example(case=(1024, 8))  # the least risk past N / 129 (about 2.7e-2)
def test_random_risks_alone_match_the_reference(case: tuple[int, int]) -> None:
    size, count = case
    if rest_terms(size - count) is not None:
        assert_relative_within_proven_bound(size, count)
    (risk,) = series_risks(size, [count], exact_digit_limit=0)
    ref = high_precision_risk(size, count)
    assert_magnitude(ref.mp, risk.collision, ref.ln_risk, risk.relative_error_bound)


def test_budget_counts_up_to_n_plus_one(monkeypatch: pytest.MonkeyPatch) -> None:
    size = 2**64
    counts = [size // 128, size - 300, size - 2, size - 1, size, size + 1]
    called = record_single_answers(monkeypatch, series_risk_module)
    risks = series_risks(size, counts, exact_digit_limit=0)
    assert called == counts[2:]
    for risk in risks[:2]:
        assert isinstance(risk, SeriesRisk)
        assert_risk_no_worse_than_single(size, risk)
    for count, risk in zip(counts[2:], risks[2:], strict=True):
        assert risk == collision_risk(size, count, exact_digit_limit=0)
