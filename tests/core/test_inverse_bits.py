"""Fewest random bits for a count and a risk budget, against published and independent values."""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from urnbound.core.errors import DomainError
from urnbound.core.inverse import fewest_bits
from urnbound.core.limits import MIN_RISK
from urnbound.core.pairwise import collision_risk
from urnbound.core.results import CollisionRisk

from ._reference import exact_risk

SETTINGS = settings(max_examples=40, deadline=None)
#: Half a unit in the 20th significant digit, relative: the rounding of every decimal text.
TEXT_HALF_UNIT = Fraction(5, 10**20)


def reference_context(size: int, target: Fraction) -> mpmath.ctx_mp.MPContext:
    """A private context wide enough for ln N! - ln (N-n)! to resolve ln(1 - target)."""
    mp = mpmath.MPContext()
    mp.prec = 2 * size.bit_length() + 2 * target.denominator.bit_length() + 600
    return mp


def within_budget(size: int, count: int, target: Fraction) -> bool:
    """risk(count, size) <= target, from mpmath log-gamma (independent of the core)."""
    if count <= 1:
        return True
    if count > size:
        return False
    mp = reference_context(size, target)
    ln_keep = mp.loggamma(size + 1) - mp.loggamma(size - count + 1) - count * mp.log(size)
    if 2 * target <= 1:
        ln_budget = mp.log1p(-mp.mpf(target.numerator) / target.denominator)
    else:
        rest = 1 - target
        ln_budget = mp.log(mp.mpf(rest.numerator) / rest.denominator)
    return bool(ln_keep >= ln_budget)


def reported_bounds(risk: CollisionRisk) -> tuple[Fraction, Fraction]:
    """The interval the forward answer's decimal text and error bound allow for the risk."""
    text = Fraction(risk.collision.decimal) if risk.collision.decimal != "0" else Fraction(0)
    slack = Fraction(risk.relative_error_bound) + TEXT_HALF_UNIT
    return text * (1 - slack), text * (1 + slack)


# "Birthday attack" table (Wikipedia): hash bits, probability, items hashed (2 significant
# digits). /work/shared/reference-checks.md: the cells are n = sqrt(2 N ln(1/(1-p))) rounded.
BIRTHDAY_ATTACK_CELLS = [
    (32, Fraction(1, 2), 77_000),
    (64, Fraction(1, 10**12), 6_100),
    (64, Fraction(1, 10**9), 190_000),
    (64, Fraction(1, 10**6), 6_100_000),
    (64, Fraction(1, 1000), 190_000_000),
    (64, Fraction(1, 100), 610_000_000),
    (64, Fraction(1, 2), 5_100_000_000),
    (128, Fraction(1, 10**18), 26_000_000_000),
    (128, Fraction(1, 10**12), 26_000_000_000_000),
    (128, Fraction(1, 10**6), 26_000_000_000_000_000),
    (128, Fraction(1, 2), 22_000_000_000_000_000_000),
]


def rounding_interval(cell: int, digits: int) -> tuple[int, int]:
    """The ends C -+ u/2 of the values that round to ``cell`` at ``digits`` significant digits."""
    half_unit = 10 ** (len(str(cell)) - digits) // 2
    return cell - half_unit, cell + half_unit


@pytest.mark.parametrize(("bits", "probability", "cell"), BIRTHDAY_ATTACK_CELLS)
def test_fewest_bits_against_the_birthday_attack_table(
    bits: int, probability: Fraction, cell: int
) -> None:
    # The cell says the b-bit capacity F lies in [C - u/2, C + u/2]. So a count at the low
    # end fits in b bits (and not in b - 1, whose capacity F / sqrt 2 is far lower), and a
    # count at the high end needs b + 1 (whose capacity sqrt 2 F is far higher). The cell
    # itself may need b or b + 1 bits: the table cannot tell, so neither is asserted.
    low, high = rounding_interval(cell, 2)
    # The formula's value (mpmath, 100 digits) must sit inside the interval by more than
    # the gap between it and the exact capacity (below 2 here: n(n-1)/2N = t + O(t n/N)).
    mp = mpmath.MPContext()
    mp.prec = 340
    formula = mp.sqrt(2 * mp.mpf(2) ** bits * -mp.log1p(-mp.mpf(probability.numerator)
                                                         / probability.denominator))
    assert low + 2 < formula < high - 2
    assert fewest_bits(low, probability).length == bits
    assert fewest_bits(high, probability).length == bits + 1
    assert fewest_bits(cell, probability).length in (bits, bits + 1)


def test_fewest_bits_at_one_percent_for_610_million() -> None:
    # "Birthday attack" table: 64 bits, p = 1 %, 6.1e8 items. The cell rounds a capacity in
    # [6.05e8, 6.15e8]; 6.05e8 items therefore fit in 64 bits, 6.15e8 need 65.
    assert fewest_bits(605_000_000, Fraction(1, 100)).length == 64
    assert fewest_bits(615_000_000, Fraction(1, 100)).length == 65


def test_uuid_version_4_half_chance() -> None:
    # encyclopedia article "Universally unique identifier": 2.71e18 version-4 UUIDs (122
    # random bits, RFC 9562 section 5.4) give a 50 % risk (3 significant digits)
    low, high = rounding_interval(2_710_000_000_000_000_000, 3)
    assert fewest_bits(low, Fraction(1, 2)).length == 122
    assert fewest_bits(high, Fraction(1, 2)).length == 123


@SETTINGS
@given(
    st.integers(0, 60),
    st.one_of(
        st.integers(1, 300).map(lambda k: Fraction(1, 10**k)),
        st.integers(1, 198).map(lambda k: 1 - Fraction(1, 10**k)),
        st.integers(1, 10**6).flatmap(
            lambda q: st.integers(1, q).map(lambda p: Fraction(p, q + 1))),
    ),
)
@example(2, Fraction(1, 2))
@example(2, Fraction(1, 2) - MIN_RISK)
@example(60, 1 - Fraction(1, 10**198))
@example(3, MIN_RISK)
def test_fewest_bits_boundary_in_exact_rationals(count: int, target: Fraction) -> None:
    # reference: sympy exact rationals, risk(2**b) <= r < risk(2**(b-1))
    answer = fewest_bits(count, target)
    bits = answer.length
    assert exact_risk(2**bits, count) <= target
    if bits > 1:
        assert exact_risk(2 ** (bits - 1), count) > target
    else:
        assert answer.one_shorter is None


@SETTINGS
@given(
    st.one_of(st.integers(61, 10**9), st.integers(10**9, 10**60), st.integers(2, 2**3500)),
    st.one_of(
        st.integers(1, 300).map(lambda k: Fraction(1, 10**k)),
        st.integers(1, 198).map(lambda k: 1 - Fraction(1, 10**k)),
        st.sampled_from([Fraction(1, 2), Fraction(1, 100), Fraction(99, 100)]),
    ),
)
@example(10**9, Fraction(1, 10**12))
@example(10**60, MIN_RISK)
@example(2**3500, 1 - Fraction(1, 10**198))
@example(2**3500, MIN_RISK)
def test_fewest_bits_boundary_against_mpmath_and_the_forward_risk(
    count: int, target: Fraction
) -> None:
    # reference: mpmath log-gamma in a private context; and the forward answers the inverse
    # reports, which must sit on the right side of the target within their stated bounds
    answer = fewest_bits(count, target)
    bits = answer.length
    assert within_budget(2**bits, count, target)
    assert answer.at_length == collision_risk(2**bits, count)
    assert reported_bounds(answer.at_length)[0] <= target
    if bits == 1:  # two values: only counts 0 to 2 get here
        assert answer.one_shorter is None
        return
    assert not within_budget(2 ** (bits - 1), count, target)
    assert answer.one_shorter == collision_risk(2 ** (bits - 1), count)
    assert reported_bounds(answer.one_shorter)[1] >= target


def test_fewest_bits_needs_about_twice_the_log_of_the_count() -> None:
    # common practice (the birthday bound): n ids at risk r need about 2 log2 n - log2 2r bits
    count, target = 10**12, Fraction(1, 10**6)
    expected = 2 * math.log2(count) - math.log2(2 * float(target))
    assert abs(fewest_bits(count, target).length - expected) <= 1


@pytest.mark.parametrize(("count", "target"), [(2**4097, Fraction(1, 2)), (2**3700, MIN_RISK)])
def test_no_bits_suffice_past_the_largest_space(count: int, target: Fraction) -> None:
    # reference: mpmath log-gamma says even 2**8192 values are over budget for this count
    assert not within_budget(2**8192, count, target)
    with pytest.raises(DomainError) as caught:
        fewest_bits(count, target)
    assert caught.value.field == "count"
