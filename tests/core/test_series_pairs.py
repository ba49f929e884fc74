"""A curve's risks and complements from the batches, against mpmath at high precision.

Every answer is held against the pairwise risk and its complement from mpmath's log-gamma
(or the direct product) in a private context of 4 log2 N + 200 bits
(tests/core/_reference.py): both floats equal to the correct rounding of the reference,
both decimal texts within their reported bounds, both log10 close; the unrounded L and
exp(L) within the bounds the module docstring proves. Counts the batches leave to
``pairwise.collision_risk`` (outside the regime, too many Horner terms, a float left
open) are that function's answers.
"""

from __future__ import annotations

from collections.abc import Sequence

import mpmath
import pytest
from hypothesis import HealthCheck, example, given, settings
from tests.core._reference import high_precision_risk
from tests.core._series_checks import (
    SIZES,
    allowed,
    as_mpf,
    assert_magnitude,
    assert_order_with_repeats,
    assert_single_answers_outside,
    counts_of,
    record_single_answers,
    spaces_and_counts,
)

import urnbound.core.series_pairs as series_pairs_module
from urnbound.core.curves import risk_curve
from urnbound.core.pairwise import collision_risk
from urnbound.core.results import CollisionRisk
from urnbound.core.series_pairs import (
    EXP_LOG_BITS,
    HORNER,
    MAX_TERMS,
    PairBatch,
    batch_key,
    complement_bound,
    horner_batch,
    log_bits,
    pair_prec,
    series_pairs,
)
from urnbound.core.series_risk import (
    RATIO_LIMIT,
    ReportedBatch,
    RiskBatch,
    horner_terms,
    stirling_terms,
)


def assert_matches_reference(size: int, pair: CollisionRisk) -> None:
    """Both floats correctly rounded, both texts within their bounds, both log10 close."""
    ref = high_precision_risk(size, pair.count)  # mpmath log-gamma at 4 log2 N + 200 bits
    for figure, ln_true in ((pair.collision, ref.ln_risk),
                            (pair.no_collision, ref.ln_no_collision)):
        assert figure.relative_error_bound <= pair.relative_error_bound
        assert_magnitude(ref.mp, figure, ln_true, allowed(pair.method,
                                                          figure.relative_error_bound))


def batch_of(size: int, counts: Sequence[int], prec: int) -> PairBatch:
    stirling = stirling_terms(size, prec)
    assert stirling is not None
    return horner_batch(size, max(counts), stirling, prec)


def assert_within_proven_bounds(size: int, count: int) -> None:
    """L within (8K + 16) u |L|; exp(L) as formed (L >= -2**20) within E; risk within e."""
    prec = pair_prec(size, count)
    batch = batch_of(size, [count], prec)
    risks = batch.risks
    assert isinstance(risks, RiskBatch)
    ref = high_precision_risk(size, count)
    mp = ref.mp
    with risks.ctx:
        log_no = risks.log_no_collision(count)
        risk = risks.risk(log_no)
        complement = risks.ctx.exp(log_no) if log_no >= -(2**EXP_LOG_BITS) else None
    terms = horner_terms(size, count, prec)
    log_bound = mp.mpf(8 * terms + 16) / mp.mpf(2) ** prec
    assert abs(as_mpf(mp, log_no) - ref.ln_no_collision) <= log_bound * abs(ref.ln_no_collision)
    assert abs(as_mpf(mp, log_no)) < mp.mpf(2) ** log_bits(size, count)
    bound = mp.mpf(batch.bound.numerator) / batch.bound.denominator
    assert batch.bound == complement_bound(size, count, terms, prec)
    risk_bound = mp.mpf(risks.bound.numerator) / risks.bound.denominator
    assert abs(as_mpf(mp, risk) / mp.exp(ref.ln_risk) - 1) <= risk_bound
    if complement is not None:
        assert abs(as_mpf(mp, complement) / mp.exp(ref.ln_no_collision) - 1) <= bound


@pytest.mark.parametrize("size", SIZES, ids=lambda size: f"{size.bit_length()}-bits")
def test_batched_pairs_match_the_reference(size: int, monkeypatch: pytest.MonkeyPatch) -> None:
    counts = counts_of(size)
    called = record_single_answers(monkeypatch, series_pairs_module)
    pairs = series_pairs(size, counts, exact_digit_limit=0)
    assert [p.count for p in pairs] == counts
    for pair in pairs:
        if pair.count not in called:
            assert pair.method == "asymptotic"
            key = batch_key(size, pair.count, 0)
            assert key is not None and pair.precision_bits == key[1]
        assert_matches_reference(size, pair)
    assert called == []  # a Horner sum longer than MAX_TERMS: the wide batch


@pytest.mark.parametrize("size", SIZES, ids=lambda size: f"{size.bit_length()}-bits")
def test_every_batch_value_is_within_its_proven_bound(size: int) -> None:
    for count in counts_of(size):
        if (batch_key(size, count, 0) or ("", 0))[0] == HORNER:
            assert_within_proven_bounds(size, count)


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(case=spaces_and_counts())
@example(case=(2**64, 2**64 // RATIO_LIMIT))  # 2**64 and its largest count in the regime
def test_random_spaces_and_counts_match_the_reference(case: tuple[int, int]) -> None:
    size, count = case
    if (batch_key(size, count, 0) or ("", 0))[0] == HORNER:
        assert_within_proven_bounds(size, count)
    (pair,) = series_pairs(size, [count], exact_digit_limit=0)
    assert_matches_reference(size, pair)


def count_for_risk(size: int, risk: str | float) -> int:
    """n with n**2 / (2N) near ``risk`` (the leading term of a small risk), from mpmath."""
    mp = mpmath.MPContext()
    mp.prec = 2 * size.bit_length() + 64
    return int(mp.nint(mp.sqrt(2 * mp.mpf(size) * mp.mpf(risk))))


def count_for_log(size: int, log_no: float) -> int:
    """n with n**2 / (2N) near -``log_no`` (a complement near e**log_no), from mpmath."""
    return count_for_risk(size, -log_no)


@pytest.mark.parametrize(("size", "risk"), [
    (2**1024, "1e-300"), (2**8192, "1e-300"), (2**1100, "1e-310"), (2**1100, "3e-320"),
    (2**8192, "1e-2000"),
], ids=["1e-300-of-2^1024", "1e-300-of-2^8192", "subnormal", "deep-subnormal", "1e-2000"])
def test_tails_keep_full_relative_accuracy(size: int, risk: str,
                                           monkeypatch: pytest.MonkeyPatch) -> None:
    count = count_for_risk(size, risk)
    called = record_single_answers(monkeypatch, series_pairs_module)
    (pair,) = series_pairs(size, [count], exact_digit_limit=0)
    assert called == []
    assert_matches_reference(size, pair)
    # 1 - risk rounds to 1 in floats and in 20 digits; its log10 (-risk / ln 10) keeps them
    assert pair.no_collision.value == 1.0
    assert pair.no_collision.decimal == "1.0000000000000000000e0"
    expected = float(-mpmath.mpf(risk) / mpmath.log(10))  # 0.0 past the floats
    assert pair.no_collision.log10 == pytest.approx(expected, rel=1e-3, abs=0)


@pytest.mark.parametrize("log_no", [-30.0, -700.0, -720.0, -744.0, -745.5, -800.0,
                                    -(2.0**20) + 10, -(2.0**20) - 10, -1e12, -1e300])
@pytest.mark.parametrize("size", [2**64, 2**8192], ids=["64-bits", "8192-bits"])
def test_risks_near_one_have_their_tiny_complements(size: int, log_no: float,
                                                   monkeypatch: pytest.MonkeyPatch) -> None:
    # complements e**-30 down to e**-1e300: normal, subnormal (e**-720, e**-744), the
    # last subnormal's neighbourhood (e**-745.5), zero floats; formed by exp(L) down to
    # e**-2**20 and from L / ln 10 below (both sides of that line); log10 past the floats
    count = count_for_log(size, log_no)
    if RATIO_LIMIT * count > size:
        pytest.skip("not in the regime at this size")
    called = record_single_answers(monkeypatch, series_pairs_module)
    (pair,) = series_pairs(size, [count], exact_digit_limit=0)
    assert called == []
    assert pair.collision.value == 1.0 or log_no > -40
    assert_matches_reference(size, pair)


def test_counts_outside_the_regime_are_the_certified_answers() -> None:
    assert_single_answers_outside(lambda size, counts: series_pairs(size, counts))


def test_small_spaces_never_take_the_batch() -> None:
    # below 1,024 values every count is exact (birthday bound: 23 of 365, OEIS A033810)
    (pair,) = series_pairs(365, [23], exact_digit_limit=0)
    assert pair.method == "exact" and pair == collision_risk(365, 23)
    assert pair.collision.value >= 0.5


def test_long_horner_sums_take_the_wide_batch(monkeypatch: pytest.MonkeyPatch) -> None:
    # n = N / 200 at 2**8192: |L| ~ 2**8170, p ~ 8300 bits, K ~ 1,040 terms: one logarithm
    size = 2**8192
    count = size // 200
    assert horner_terms(size, count, pair_prec(size, count)) > MAX_TERMS
    called = record_single_answers(monkeypatch, series_pairs_module)
    (pair,) = series_pairs(size, [count])
    assert called == []
    single = collision_risk(size, count, exact_digit_limit=2_000)
    assert pair.method == single.method == "asymptotic"
    assert pair.relative_error_bound <= single.relative_error_bound
    assert_matches_reference(size, pair)


@pytest.mark.parametrize("undecided", ["risk", "complement"])
def test_an_undecided_float_falls_back_to_the_certified_path(
    undecided: str, monkeypatch: pytest.MonkeyPatch,
) -> None:
    if undecided == "risk":
        monkeypatch.setattr(ReportedBatch, "risk_magnitude", lambda self, log_no: None)
    else:
        monkeypatch.setattr(PairBatch, "complement", lambda self, log_no: None)
    counts = [10**9, 2 * 10**9, 2**40, 2**63]  # the last from the wide batch
    for count, pair in zip(counts, series_pairs(2**64, counts), strict=True):
        assert pair == collision_risk(2**64, count)


def test_answers_follow_the_given_order_with_repeats() -> None:
    assert_order_with_repeats(lambda size, counts: series_pairs(size, counts))


def test_bounds_stay_next_to_the_text_rounding() -> None:
    # the batches' bounds are 2**-90 or less: the texts' bounds just above 5e-20
    for size in (2**64, 2**1024, 2**8192):
        for pair in series_pairs(size, counts_of(size), exact_digit_limit=0):
            if pair.precision_bits == pair_prec(size, pair.count):
                assert 5e-20 < pair.relative_error_bound < 5.0000001e-20


@pytest.mark.parametrize(("bits", "low", "high"), [
    (8192, 1, 10**2466), (64, 1, 10**10), (1024, 10**10, 10**300),
])
def test_log_spaced_curves_match_the_reference(bits: int, low: int, high: int) -> None:
    size = 2**bits
    curve = risk_curve(size, low, high, 40)
    for point in curve.points:
        pair = CollisionRisk(size, point.count, point.risk, point.complement, point.method,
                             point.relative_error_bound, None, 0)
        if point.count >= 2:
            assert_matches_reference(size, pair)
