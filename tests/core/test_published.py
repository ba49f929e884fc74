"""Published values of the birthday bound that the core must reproduce."""

from __future__ import annotations

import math
from decimal import ROUND_HALF_EVEN, Decimal
from fractions import Fraction

import mpmath
import pytest

from urnbound.core.inverse import largest_count
from urnbound.core.pairwise import collision_risk

from ._reference import fraction_of_text


def percent(text: str, places: str) -> Decimal:
    """A decimal text of the core as a percentage, rounded half-even to ``places``."""
    return (Decimal(text) * 100).quantize(Decimal(places), rounding=ROUND_HALF_EVEN)


def two_significant(n: int) -> int:
    """``n`` rounded half-even to two significant digits."""
    unit = 10 ** max(len(str(n)) - 2, 0)
    return round(Fraction(n, unit)) * unit


def test_two_significant_helper() -> None:
    assert two_significant(6074) == 6100
    assert two_significant(192_068) == 190_000
    assert two_significant(5_056_937_541) == 5_100_000_000


def test_birthday_23_of_365() -> None:
    # encyclopedia table, "Birthday problem" (Wikipedia): 23 people, 365 days -> 0.5072972
    risk = collision_risk(365, 23)
    assert Decimal(risk.collision.decimal).quantize(Decimal("1e-7")) == Decimal("0.5072972")
    assert round(risk.collision.value, 7) == 0.5072972
    assert Decimal(risk.no_collision.decimal).quantize(Decimal("1e-7")) == Decimal("0.4927028")


@pytest.mark.parametrize(
    ("count", "published", "places"),
    [
        # encyclopedia table, "Birthday problem" (Wikipedia), 365 days, percent as printed
        (10, "11.7", "0.1"),
        (20, "41.1", "0.1"),
        (23, "50.7", "0.1"),
        (30, "70.6", "0.1"),
        (40, "89.1", "0.1"),
        (50, "97.0", "0.1"),
        (57, "99.0", "0.1"),
        (60, "99.4", "0.1"),
        (70, "99.9", "0.1"),
        (100, "99.99997", "0.00001"),
    ],
)
def test_birthday_table_rows(count: int, published: str, places: str) -> None:
    risk = collision_risk(365, count)
    assert percent(risk.collision.decimal, places) == Decimal(published)


def test_pigeonhole_366_of_365() -> None:
    # pigeonhole: 366 draws from 365 values must repeat one, risk exactly 1
    risk = collision_risk(365, 366)
    assert fraction_of_text(risk.collision.decimal) == 1
    assert risk.collision.value == 1.0
    assert risk.collision.log10 == 0.0
    assert risk.no_collision.decimal == "0"
    assert risk.no_collision.value == 0.0
    assert risk.no_collision.log10 is None
    assert risk.exact == Fraction(1)


def test_365_draws_still_below_one() -> None:
    # pigeonhole bound is sharp: 365 draws can all differ (365!/365**365 > 0)
    risk = collision_risk(365, 365)
    assert risk.no_collision.decimal != "0"
    assert risk.no_collision.log10 is not None and risk.no_collision.log10 < -150
    assert risk.exact is not None and risk.exact < 1


def test_smallest_count_reaching_half_for_365() -> None:
    # OEIS A033810: a(365) = 23, the smallest count whose risk reaches 1/2.
    # largest_count answers the largest n with risk <= r, hence 22 here.
    half = Fraction(1, 2)
    answer = largest_count(365, half)
    assert answer.count == 22
    assert fraction_of_text(collision_risk(365, 23).collision.decimal) >= half
    assert fraction_of_text(collision_risk(365, 22).collision.decimal) < half
    assert answer.at_count.count == 22
    assert answer.one_more.count == 23


# "Birthday attack" table (Wikipedia): hash bits, probability -> number of hashed items,
# printed to two significant digits.
BIRTHDAY_ATTACK_ROWS = [
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


@pytest.mark.parametrize(("bits", "probability", "published"), BIRTHDAY_ATTACK_ROWS)
def test_birthday_attack_table(bits: int, probability: Fraction, published: int) -> None:
    # "Birthday attack" table (Wikipedia); the cells are rounded to 2 significant digits
    answer = largest_count(2**bits, probability)
    assert two_significant(answer.count) == published
    # the smallest count reaching the probability rounds the same way
    assert two_significant(answer.count + 1) == published


def test_uuid_version_4_even_chance() -> None:
    # encyclopedia article "Universally unique identifier", collisions section:
    # about 2.71e18 version-4 UUIDs (122 random bits, RFC 9562 section 5.4) for a 50 % risk
    answer = largest_count(2**122, Fraction(1, 2))
    assert Decimal(answer.count).quantize(Decimal("1e16")) == Decimal("2.71e18")


def test_shortcut_pitfall_23_of_365() -> None:
    # reference-checks: the shortcut 1 - exp(-n**2 / 2N) gives 0.516 at 23 of 365; the true
    # value is 0.507 (encyclopedia table, "Birthday problem")
    shortcut = -math.expm1(-(23**2) / (2 * 365))
    assert round(shortcut, 3) == 0.516
    ours = collision_risk(365, 23)
    assert Decimal(ours.collision.decimal).quantize(Decimal("0.001")) == Decimal("0.507")
    assert abs(ours.collision.value - shortcut) > 0.008


def test_half_the_bits_is_not_an_even_chance() -> None:
    # reference-checks "Traps": 2**(L/2) inputs to an L-bit space give 1 - e**(-1/2) ~ 0.3935,
    # not "greater than 1/2"; the limit value from mpmath at 200 bits
    mp = mpmath.MPContext()
    mp.prec = 200
    limit = -mp.expm1(mp.mpf(-1) / 2)
    for bits in (128, 256, 1024):
        risk = collision_risk(2**bits, 2 ** (bits // 2))
        # the finite-N correction is about n / (2N) = 2**-(bits/2 + 1) relative
        assert abs(risk.collision.value - float(limit)) <= 1e-15
        assert risk.collision.value < 0.5
