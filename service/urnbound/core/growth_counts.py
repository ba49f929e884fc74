"""Counts issued by many moments of a growing schedule, each enclosed with MPFR's directed rounding.

With growth g != 1 the count at t is c(t) = issued + rate t phi(x), x = (t/Y) ln g,
phi(x) = expm1(x) / x (``projection.py``). A series asks c(t) at up to 500 moments, and
``IssueSchedule.count_at`` encloses each with ``libmp`` intervals (about 20 us each);
here every moment is enclosed with MPFR (gmpy2) at one precision, each operation
correctly rounded downwards or upwards (two contexts), so that every end is a bound:

* ln g once: [RD(ln RD(g)), RU(ln RU(g))] (ln rises).
* t/Y and rate t from the integers of the fractions: one directed rounding each
  (integers enter MPFR exactly).
* x: the interval product (ln g of either sign, t/Y > 0).
* phi rises in x (phi(x) = integral of e**(xu) over [0, 1]) and d ln phi / dx =
  E[u] <= 1 under the tilted weights, so phi(x_hi) <= phi(x_lo) e**w <= phi(x_lo) (1 + 2w)
  for w = x_hi - x_lo <= 1. One exponential: RD(expm1(x_lo)), whose upward rounding is the
  next value up (expm1 of a non-zero dyadic is irrational, never exact); phi(x_lo) is
  enclosed from those two by directed division (either sign of x_lo), and phi(x_hi) from
  the upper end times RU(1 + 2w).
* c(t) enclosed by directed products and sums; its floor is taken when both ends have
  the same floor, else the moment is left to ``count_at`` (``None``).
"""

from __future__ import annotations

from collections.abc import Sequence
from fractions import Fraction

import gmpy2

#: Seconds in the year the growth factor applies to (``projection.YEAR_SECONDS``).
YEAR_SECONDS = 365 * 86_400


def growth_counts(issued: int, rate: Fraction, growth: Fraction,
                  moments: Sequence[Fraction], prec: int) -> list[int | None]:
    """floor(c(t)) at each moment t > 0 where the enclosure at ``prec`` bits decides it.

    ``None`` where it does not (and for t <= 0, which ``count_at`` answers exactly).

    >>> growth_counts(0, Fraction(1), Fraction(2), [Fraction(YEAR_SECONDS)], 128)
    [45496830]
    """
    enclosure = _Enclosure(issued, rate, growth, prec)
    return [enclosure.count(moment) if moment > 0 else None for moment in moments]


def _context(prec: int, round_mode: int) -> gmpy2.context:
    return gmpy2.context(precision=prec, round=round_mode, emin=gmpy2.get_emin_min(),
                         emax=gmpy2.get_emax_max())


class _Enclosure:
    """The contexts and constants of one schedule's enclosures (not shared)."""

    def __init__(self, issued: int, rate: Fraction, growth: Fraction, prec: int) -> None:
        self.down = down = _context(prec, gmpy2.RoundDown)
        self.up = up = _context(prec, gmpy2.RoundUp)
        zero = gmpy2.mpfr(0)
        self.zero, self.two = zero, gmpy2.mpfr(2)
        ratio = gmpy2.mpq(growth.numerator, growth.denominator)
        self.log_low = down.log(down.add(ratio, zero))
        self.log_high = up.log(up.add(ratio, zero))
        self.rising = growth > 1
        self.issued, self.rate = issued, rate

    def count(self, moment: Fraction) -> int | None:
        low, high = self.bounds(moment)
        floor_low = self.down.floor(low)
        return int(floor_low) if floor_low == self.down.floor(high) else None

    def bounds(self, moment: Fraction) -> tuple[gmpy2.mpfr, gmpy2.mpfr]:
        """Lower and upper bounds of c(moment)."""
        down, up = self.down, self.up
        top, bottom = moment.numerator, moment.denominator
        years_low = down.div(top, bottom * YEAR_SECONDS)
        years_high = up.div(top, bottom * YEAR_SECONDS)
        if self.rising:  # ln g > 0
            x_low, x_high = down.mul(years_low, self.log_low), up.mul(years_high, self.log_high)
        else:  # ln g < 0: the product's ends swap
            x_low, x_high = down.mul(years_high, self.log_low), up.mul(years_low, self.log_high)
        phi_low, phi_high = self.phi_bounds(x_low, x_high)
        rate = self.rate
        linear_low = down.div(rate.numerator * top, rate.denominator * bottom)
        linear_high = up.div(rate.numerator * top, rate.denominator * bottom)
        return (down.add(down.mul(linear_low, phi_low), self.issued),
                up.add(up.mul(linear_high, phi_high), self.issued))

    def phi_bounds(self, x_low: gmpy2.mpfr, x_high: gmpy2.mpfr) -> tuple[gmpy2.mpfr, gmpy2.mpfr]:
        """A lower bound of phi(x_low) and an upper bound of phi(x_high) (module docstring)."""
        down, up = self.down, self.up
        if x_low == 0:
            low = high_at_low = gmpy2.mpfr(1)
        else:
            below = down.expm1(x_low)
            above = down.next_above(below)
            if x_low > 0:
                low, high_at_low = down.div(below, x_low), up.div(above, x_low)
            else:  # both negative: the smaller quotient comes from the value nearer 0
                low, high_at_low = down.div(above, x_low), up.div(below, x_low)
        width = up.sub(x_high, x_low)
        if width > 1:
            width = gmpy2.inf()  # never met at the precisions used; the floor stays open
        return low, up.mul(high_at_low, up.add(1, up.mul(self.two, width)))
