"""Truncated digests: strength after NIST SP 800-107 Rev. 1, ambiguity, the fewest safe bits."""

from __future__ import annotations

from fractions import Fraction

import mpmath
import pytest
import sympy
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from urnbound.core.prefixes import ambiguity, fewest_unambiguous_bits, truncation_strength


@pytest.mark.parametrize(("digest", "collision", "preimage"), [
    # NIST SP 800-107 Rev. 1, table 1: collision / preimage strength of the full digest
    (160, 80, 160),  # SHA-1
    (224, 112, 224),  # SHA-224
    (256, 128, 256),  # SHA-256
    (384, 192, 384),  # SHA-384
    (512, 256, 512),  # SHA-512
])
def test_full_digest_strengths_of_the_published_table(digest: int, collision: int,
                                                      preimage: int) -> None:
    strength = truncation_strength(digest, digest)
    assert (strength.collision_bits, strength.preimage_bits) == (collision, preimage)


@pytest.mark.parametrize(("digest", "kept"), [(256, 128), (512, 64), (256, 96), (160, 41)])
def test_truncation_gives_half_against_collisions_and_all_against_preimages(
        digest: int, kept: int) -> None:
    # NIST SP 800-107 Rev. 1, section 5.1: a digest truncated to lambda bits offers about
    # lambda/2 bits of collision resistance and lambda bits of preimage resistance
    strength = truncation_strength(digest, kept)
    assert strength.collision_bits == kept / 2
    assert strength.preimage_bits == kept


def test_truncation_never_exceeds_the_full_digest() -> None:
    # same source, section 4: no more than the full function's strength
    assert truncation_strength(256, 300).preimage_bits == 256


@pytest.mark.parametrize(("bits", "count"), [(4, 2), (8, 100), (12, 200), (16, 3)])
def test_ambiguity_is_the_exact_rational(bits: int, count: int) -> None:
    expected = 1 - (1 - sympy.Rational(1, 2**bits)) ** count  # sympy, exact
    chance = ambiguity(bits, count)
    assert chance.exact == Fraction(int(expected.p), int(expected.q))


@pytest.mark.parametrize(("bits", "count"), [(48, 10**6), (64, 10**9), (128, 2**64), (32, 2**40)])
def test_ambiguity_at_scale_against_mpmath(bits: int, count: int) -> None:
    ctx = mpmath.MPContext()
    ctx.prec = 500
    true = -ctx.expm1(count * ctx.log1p(-ctx.mpf(2) ** -bits))  # independent: log1p form
    chance = ambiguity(bits, count, exact_digit_limit=0)
    error = abs(ctx.mpf(chance.hit.decimal) - true) / true
    assert error <= chance.hit.relative_error_bound


def _ambiguity_mp(bits: int, count: int) -> mpmath.mpf:
    """1 - (1 - 2^-t)^count by mpmath's log1p at 400 bits."""
    ctx = mpmath.MPContext()
    ctx.prec = 400
    return -ctx.expm1(count * ctx.log1p(-ctx.mpf(2) ** -bits))


def _fraction_mp(value: Fraction) -> mpmath.mpf:
    ctx = mpmath.MPContext()
    ctx.prec = 400
    return ctx.mpf(value.numerator) / value.denominator


@pytest.mark.parametrize(("count", "target"), [
    (10**6, Fraction(1, 10**6)), (10**9, Fraction(1, 10**12)), (1, Fraction(1, 2)),
    (2**40, Fraction(1, 2**30)), (10**12, Fraction(9, 10)), (7, Fraction(1, 10**300)),
])
def test_fewest_unambiguous_bits_is_tight(count: int, target: Fraction) -> None:
    bits = fewest_unambiguous_bits(count, target)
    assert bits is not None
    assert _ambiguity_mp(bits, count) <= _fraction_mp(target)
    if bits > 1:
        assert _ambiguity_mp(bits - 1, count) > _fraction_mp(target)


def test_an_exact_boundary_is_decided_exactly() -> None:
    # one stored item: the ambiguity is exactly 2^-t, so a target of 2^-20 is met at 20 bits
    assert fewest_unambiguous_bits(1, Fraction(1, 2**20)) == 20
    assert fewest_unambiguous_bits(1, Fraction(1, 2**20) - Fraction(1, 10**30)) == 21


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(count=st.integers(1, 2**80), exponent=st.integers(1, 200),
       limit=st.sampled_from([0, 50_000]))
def test_inverse_agrees_with_the_forward_risk_at_its_boundary(count: int, exponent: int,
                                                              limit: int) -> None:
    target = Fraction(1, 10**exponent)
    bits = fewest_unambiguous_bits(count, target, exact_digit_limit=limit)
    assert bits is not None
    ctx = mpmath.MPContext()
    ctx.prec = 200  # 60 digits: a 20-digit text and its bound stay apart
    limit_value = ctx.mpf(target.numerator) / target.denominator
    at = ambiguity(bits, count, exact_digit_limit=limit)
    assert ctx.mpf(at.hit.decimal) * (1 - ctx.mpf(at.hit.relative_error_bound)) <= limit_value
    assert _ambiguity_mp(bits, count) <= limit_value
    if bits > 1:
        shorter = ambiguity(bits - 1, count, exact_digit_limit=limit)
        assert ctx.mpf(shorter.hit.decimal) * (1 + ctx.mpf(shorter.hit.relative_error_bound)) > (
            limit_value)
        assert _ambiguity_mp(bits - 1, count) > limit_value
