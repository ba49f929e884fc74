"""ln P(no collision) at counts past the Horner batch's reach, to one shared absolute bound.

``series_risk.RiskBatch`` sums ln(1 - x) as a power series in x = n/N, which is cheap
while x is small (129 n <= N, few terms at the precision |L| asks for). Past that (n up
to N, or for a curve n below N/129 with L so large that the series, at more than 128
bits, would need more than ``series_pairs.MAX_TERMS`` terms) a count took
``pairwise.collision_risk`` alone: some 0.55 ms at 2**8192 values, nearly all of it a
logarithm at ~8,300 bits by libmp's AGM. Here each such count costs one logarithm by
flint's ``arb`` (about 0.09 ms at those bits) and a few products, in ball arithmetic, and
every L so formed is within the one absolute bound d = 2**-LOG_BITS of the true L.

Formula (``asymptotic.py``): with M = N - n >= 1,

    L = -(M + 1/2) t - n + D,   t = ln(1 - x) = log1p(-x) (2n <= N) or ln(M/N) (else),
    D = R(N) - R(M),   R(z) = sum_{j>=1} c_j z**(1-2j),   c_j = B_2j / (2j (2j - 1)).

D is summed to J terms. For real z > 0 the remainder of R after J terms has the sign of
the first omitted term and is smaller (DLMF 5.11.ii; for J = 0 it is R itself, with
0 < R(z) < c_1 / z); the two remainders share that sign, so their difference is below
the larger, |c_(J+1)| M**-(2J+1). J is the least (at most MAX_STIRLING_TERMS) with that
at most 2**-(LOG_BITS + 8), checked in integers with M >= 2**(bits(M) - 1); a count
whose M needs more takes the single answer. The truncation enters L's ball as a radius.

Precision. The count is evaluated at p = bits(n) + LOG_BITS + GUARD_BITS bits, rounded up
to a multiple of PREC_STEP. Every value is an ``arb`` ball that encloses the true value
whatever the roundings (flint), so the true L lies within the radius r of the ball's
midpoint. A priori r is small: |(M + 1/2) t| <= max(1.39 n + 1, N / e) < 2.4 n + 1 (for
x <= 1/2, |t| <= 1.39 x; else M ln(N/M) <= N/e), the condition of t in x is at most 1.45
(x <= 1/2) and t = ln y has an absolute error of the relative error of y (else), so the
products and sums round by some 16 u n with u = 2**-p, below 2**-(LOG_BITS + 5), plus
the truncation of D. The batch checks r <= d / 2 at each count (a count that fails it
takes the single answer, so the bound never rests on the estimate). The midpoint, of at
most p bits, becomes an MPFR number at p bits (a further rounding, below u |L| <=
u (n + 1) < d / 2, would be covered even were it not exact): |L~ - L| <= d.

Bounds of what is reported from L~ (``series_pairs.PairBatch``; w = 2**-128):

* the risk -expm1(L~) rounded once: e^L |expm1(delta)| / (1 - e^L) + u <= d (1 + d) /
  |L| + 2u relative, and as |L| >= 2**-9 (checked at each count; in the regime either
  129 n > N, so |L| >= n (n - 1) / (2N) > (n - 1) / 258, or the series' precision is
  past 128 bits, so 2 bits(n) >= bits(N) + 28 and |L| >= n (n - 1) / (2N) > 2**23) that is
  at most RISK_BOUND = 2**10 d;
* the complement exp(L~) (L~ >= -2**20), rounded once: e^d (1 + u) - 1 <= 2d relative;
  below, its text from t = L~ / ln 10 (ln 10 and the quotient rounded at p bits, so t is
  off by at most (d + 2.01 u (n + 1)) / ln 10 <= 1.02 d / ln 10) and a mantissa
  10**frac(t) at 128 bits (5.8w, ``series_pairs``): within exp(1.02 d + 5.8 w) - 1. Both
  are at most COMPLEMENT_BOUND = 2d + 6w.

Risks alone (budgets, ``series_risk``). A risk without its complement needs L only to a
relative 2**-RELATIVE_BITS: at p = RISK_PREC bits the roundings above come to some
16 u n, and past N/129 |L| > (n - 1) / 258, so below 2**-(RISK_PREC - 14) |L|; the batch
checks r <= 2**-(RELATIVE_BITS + 1) |mid| at each count (so r <= 2**-RELATIVE_BITS |L|;
the conversion rounds by at most u |L~|). With |L~ - L| = delta, the risk moves by
e^L |expm1(delta)| / (1 - e^L) <= (e^|delta| - 1) / (e^|L| - 1) <= |delta| / |L| (the
numerator is convex in |delta| and equal to the denominator at |L|), so the risk
-expm1(L~), rounded once, is within 2**-RELATIVE_BITS + 3u < RELATIVE_RISK_BOUND =
2**-(RELATIVE_BITS - 1), for every |L| (no floor on |L| is needed here).
"""

from __future__ import annotations

import functools
from fractions import Fraction

import gmpy2
from flint import arb, fmpq
from mpmath import libmp

from urnbound.core.balls import precision

#: d = 2**-LOG_BITS: the absolute bound on every L of the batch.
LOG_BITS = 120
#: Bits of p beyond those of n and LOG_BITS.
GUARD_BITS = 10
#: Precisions are rounded up to a multiple of this (fewer batches).
PREC_STEP = 128
#: Most Stirling terms of D.
MAX_STIRLING_TERMS = 12
#: The risk's bound needs |L| >= 2**-LOG_FLOOR_BITS.
LOG_FLOOR_BITS = 9
#: e = 2**10 d, the relative bound of every risk.
RISK_BOUND = Fraction(1, 2 ** (LOG_BITS - 10))
#: E = 2d + 6 2**-128, the relative bound of every complement (and of its text's value).
COMPLEMENT_BOUND = Fraction(2, 2**LOG_BITS) + Fraction(6, 2**128)
#: Risks alone: L within 2**-RELATIVE_BITS |L|, at RISK_PREC bits.
RELATIVE_BITS = 118
RISK_PREC = 192
#: The relative bound of every risk formed alone (module docstring).
RELATIVE_RISK_BOUND = Fraction(1, 2 ** (RELATIVE_BITS - 1))


@functools.cache
def stirling_coefficient(j: int) -> Fraction:
    """c_j = B_2j / (2j (2j - 1)), the j-th coefficient of the Stirling series R(z)."""
    numerator, denominator = libmp.bernfrac(2 * j)
    return Fraction(int(numerator), int(denominator) * 2 * j * (2 * j - 1))


def wide_prec(count: int) -> int:
    """p for ``count``: bits(n) + LOG_BITS + GUARD_BITS, up to a multiple of PREC_STEP.

    >>> wide_prec(2**64 // 3), wide_prec(2**8191)
    (256, 8448)
    """
    wanted = count.bit_length() + LOG_BITS + GUARD_BITS
    return -(-wanted // PREC_STEP) * PREC_STEP


def rest_terms(rest: int) -> int | None:
    """J for M = ``rest``: the least with |c_(J+1)| M**-(2J+1) <= 2**-(LOG_BITS + 8).

    >>> rest_terms(2**200), rest_terms(2**40), rest_terms(300), rest_terms(2)
    (0, 1, 8, None)
    """
    if rest < 1:
        return None
    low_bits = rest.bit_length() - 1
    for terms in range(MAX_STIRLING_TERMS + 1):
        following = stirling_coefficient(terms + 1)
        if (abs(following.numerator) << (LOG_BITS + 8)
                <= following.denominator << ((2 * terms + 1) * low_bits)):
            return terms
    return None


class WideLogs:
    """L = ln P(no collision) at counts of one space, each at the batch's precision.

    :param size: N >= 1024.
    :param prec: p (``wide_prec`` of the batch's largest count, or more; RISK_PREC when
        ``relative``).
    :param relative: L within 2**-RELATIVE_BITS |L| (risks alone) instead of within d.
    """

    def __init__(self, size: int, prec: int, relative: bool = False) -> None:
        self.size = size
        self.prec = prec
        self.relative = relative
        self.ctx = gmpy2.context(precision=prec, emin=gmpy2.get_emin_min(),
                                 emax=gmpy2.get_emax_max())
        self.big = arb(size)  # exact, as every integer made a ball here
        with precision(prec):  # powers of two exact; 2**-9 + d within one ball
            self.truncation = arb(0, arb(2) ** -(LOG_BITS + 8))
            self.largest_radius = arb(2) ** -(LOG_BITS + 1)
            self.floor = arb(2) ** -LOG_FLOOR_BITS + arb(2) ** -LOG_BITS
            self.relative_radius = arb(2) ** -(RELATIVE_BITS + 1)

    def log_no_collision(self, count: int) -> gmpy2.mpfr | None:
        """L~ within d of L at ``count`` (2 <= count < N, ``rest_terms`` defined), or
        ``None`` when the ball is wider than d / 2 or |L| may be below 2**-9 (relative:
        within 2**-RELATIVE_BITS |L|, or ``None`` when the ball is wider)."""
        terms = rest_terms(self.size - count)
        if terms is None:
            return None
        with precision(self.prec):
            ball = self.ball(count, terms)
            if not self.narrow(ball):
                return None
            mantissa, exponent = ball.mid().man_exp()
        return self.ctx.mul_2exp(gmpy2.mpz(int(mantissa)), int(exponent))

    def narrow(self, ball: arb) -> bool:
        """Whether the ball meets the batch's check (module docstring)."""
        middle = abs(ball.mid())
        if self.relative:
            return bool(ball.rad() <= middle * self.relative_radius)
        return bool(ball.rad() <= self.largest_radius and middle >= self.floor)

    def ball(self, count: int, terms: int) -> arb:
        """L as a ball at flint's current precision (module docstring)."""
        rest = self.size - count
        if 2 * count <= self.size:
            logarithm = (-(arb(count) / self.big)).log1p()
        else:
            logarithm = (arb(rest) / self.big).log()
        leading = arb(2 * rest + 1) * logarithm / -2 - count + self.truncation
        return leading + self.stirling_difference(rest, terms) if terms else leading

    def stirling_difference(self, rest: int, terms: int) -> arb:
        """sum_{j=1..J} c_j (N**(1-2j) - M**(1-2j)), J = ``terms`` >= 1."""
        total = arb(0)
        for j in range(1, terms + 1):
            coefficient = stirling_coefficient(j)
            power = 1 - 2 * j
            total += arb(fmpq(coefficient.numerator, coefficient.denominator)) * (
                arb(self.size) ** power - arb(rest) ** power)
        return total
