"""The batch of a series' risks against mpmath at high precision, and its fallbacks.

Every risk of the batch is held against the pairwise risk from mpmath's log-gamma (or the
direct product) in a private context of 4 log2 N + 200 bits (tests/core/_reference.py):
the unrounded MPFR value within the batch's shared bound, the float equal to the correct
rounding of the reference, the decimal text within its reported bound, log10 close.
Counts outside the batch's regime, and any whose float it leaves open, are the answers
of ``pairwise.collision_risk`` itself.
"""

from __future__ import annotations

from fractions import Fraction

import pytest
from hypothesis import HealthCheck, example, given, settings
from tests.core._reference import high_precision_risk
from tests.core._series_checks import (
    SIZES,
    as_mpf,
    assert_magnitude,
    assert_order_with_repeats,
    assert_single_answers_outside,
    counts_of,
    spaces_and_counts,
)

from urnbound.core.pairwise import collision_risk
from urnbound.core.results import CollisionRisk
from urnbound.core.series_risk import (
    RATIO_LIMIT,
    RiskBatch,
    SeriesRisk,
    horner_terms,
    risk_bound,
    series_risks,
    stirling_terms,
)


def assert_within_bound(size: int, count: int, batch: RiskBatch) -> None:
    """|MPFR risk - reference| <= bound * reference, at the reference's precision."""
    ref = high_precision_risk(size, count)
    mp = ref.mp
    ours = as_mpf(mp, batch.risk(batch.log_no_collision(count)))
    gap = abs(ours / mp.exp(ref.ln_risk) - 1)
    assert gap <= mp.mpf(batch.bound.numerator) / batch.bound.denominator


def assert_reported(size: int, risk: SeriesRisk | CollisionRisk) -> None:
    """Float correctly rounded, text within its bound, log10 near, all from the reference."""
    ref = high_precision_risk(size, risk.count)
    assert risk.collision.relative_error_bound <= risk.relative_error_bound
    assert_magnitude(ref.mp, risk.collision, ref.ln_risk, risk.collision.relative_error_bound)


@pytest.mark.parametrize("size", SIZES, ids=lambda size: f"{size.bit_length()}-bits")
def test_every_risk_of_a_batch_is_within_the_shared_bound(size: int) -> None:
    counts = counts_of(size)
    stirling = stirling_terms(size)
    assert stirling is not None
    batch = RiskBatch(size, horner_terms(size, counts[-1]), stirling)
    for count in counts:
        assert_within_bound(size, count, batch)


@pytest.mark.parametrize("size", SIZES, ids=lambda size: f"{size.bit_length()}-bits")
def test_batch_answers_match_the_reference(size: int) -> None:
    counts = counts_of(size)
    risks = series_risks(size, counts, exact_digit_limit=0)  # every count takes the batch
    assert [r.count for r in risks] == counts
    for risk in risks:
        assert isinstance(risk, SeriesRisk) and risk.method == "asymptotic"
        assert_reported(size, risk)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(case=spaces_and_counts())
@example(case=(2**64, 2**64 // RATIO_LIMIT))  # 2**64 and its largest count in the regime
def test_random_spaces_and_counts_match_the_reference(case: tuple[int, int]) -> None:
    size, count = case
    stirling = stirling_terms(size)
    assert stirling is not None
    assert_within_bound(size, count, RiskBatch(size, horner_terms(size, count), stirling))
    (risk,) = series_risks(size, [count], exact_digit_limit=0)
    assert_reported(size, risk)


def test_the_bound_is_the_stated_one_and_tight_enough_to_decide_floats() -> None:
    # K terms give e = (8K + 32) 2**-128: below 2**-120 for every K the regime allows
    assert horner_terms(2**64, 2**64 // RATIO_LIMIT) == 19
    assert risk_bound(19) == Fraction(184, 2**128) < Fraction(1, 2**120)
    (risk,) = series_risks(2**64, [10**9])
    assert isinstance(risk, SeriesRisk)
    assert 5e-20 < risk.relative_error_bound < 5.0000001e-20


def test_counts_outside_the_regime_are_the_certified_answers() -> None:
    assert_single_answers_outside(lambda size, counts: series_risks(size, counts))
    size = 2**64
    past = [size // RATIO_LIMIT + 1, size // 2, size - 300]  # past N / 129: series_wide
    for risk in series_risks(size, past):
        assert isinstance(risk, SeriesRisk)
        assert_reported(size, risk)


def test_small_spaces_never_take_the_batch() -> None:
    # below 1,024 values every count is exact (birthday bound: 23 of 365, OEIS A033810)
    (risk,) = series_risks(365, [23], exact_digit_limit=0)
    assert isinstance(risk, CollisionRisk) and risk.method == "exact"
    assert risk.collision.value >= 0.5


def test_an_undecided_float_falls_back_to_the_certified_path(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    monkeypatch.setattr(RiskBatch, "rounded_float", lambda self, risk: None)
    counts = [10**9, 2 * 10**9]
    for count, risk in zip(counts, series_risks(2**64, counts), strict=True):
        assert isinstance(risk, CollisionRisk)
        assert risk == collision_risk(2**64, count, exact_digit_limit=2_000)


def test_answers_follow_the_given_order_with_repeats() -> None:
    assert_order_with_repeats(lambda size, counts: series_risks(size, counts))


def test_risks_near_one_take_log10_from_the_complement() -> None:
    # 2.9e10 of 2**64: L ~ -22.8, risk 1 - 1.3e-10; log10 ~ -5.7e-11 (reference: log1p)
    (risk,) = series_risks(2**64, [29 * 10**9])
    assert isinstance(risk, SeriesRisk) and 0.5 < risk.collision.value < 1.0
    assert -1e-10 < risk.collision.log10 < -1e-11
    assert_reported(2**64, risk)
    # 2**40 of 2**64: L ~ -2**15, the risk 1 to every digit shown, its log10 below any float
    (risk,) = series_risks(2**64, [2**40])
    assert isinstance(risk, SeriesRisk)
    assert risk.collision.value == 1.0 and risk.collision.decimal == "1.0000000000000000000e0"
    assert risk.collision.log10 == 0.0
    assert_reported(2**64, risk)


def test_log10_of_a_risk_within_a_subnormal_of_one() -> None:
    # A case hypothesis found: L near -744, so 1 - risk = e**L is about 1e-323 and log10
    # of the risk is -e**L / ln 10, the smallest subnormal float; forming e**L as a float
    # first, then dividing, rounded twice and gave 0.0. Reference: mpmath log-gamma at
    # 4 log2 N + 200 bits (tests/core/_reference.py).
    size, count = 38_652_988_462_895_802_263_131, 7_584_083_474_129
    (risk,) = series_risks(size, [count], exact_digit_limit=0)
    ref = high_precision_risk(size, count)
    assert risk.collision.log10 == float(ref.ln_risk / ref.mp.ln10) == -5e-324
    assert_reported(size, risk)
