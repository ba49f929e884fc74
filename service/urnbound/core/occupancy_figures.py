"""Expected counts of the occupancy model: empty, used and loaded buckets, k-sets, N H_N.

Each figure is an expectation over one bucket times N (linearity), so it needs only the
binomial law of one bucket's count, Binomial(n, 1/N). Figures are exact fractions,
correctly rounded, when their terms are small (``EXACT_BITS``), else arb balls whose
radius is the proven bound.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction
from functools import partial

import gmpy2
from flint import arb

from urnbound.core import balls
from urnbound.core.balls import precision
from urnbound.core.errors import NoConvergence
from urnbound.core.exact import magnitude_of_fraction
from urnbound.core.occupancy import ball_magnitude
from urnbound.core.results import Magnitude

#: Exact fractions are formed when their terms have at most this many bits.
EXACT_BITS = 20_000
#: Largest N for which N H_N is formed as an exact fraction.
EXACT_HARMONIC = 2_000
#: Terms of the harmonic sum added one by one before the halves are combined.
HARMONIC_RUN = 32
#: Most rows of a load profile.
MAX_PROFILE_ROWS = 64
#: Working precision of the ball figures, and how often it is doubled.
FIGURE_BITS = 128
TRIES = 3


@dataclass(frozen=True, slots=True)
class ProfileRow:
    """The expected number of buckets that hold exactly ``load`` items."""

    load: int
    buckets: Magnitude


def _from_ball(compute: Callable[[], arb]) -> Magnitude:
    """Report a ball computed by ``compute``, at doubled precision until decided."""
    bits = FIGURE_BITS
    for _ in range(TRIES):
        with precision(bits):
            value = compute()
            if value.is_zero():
                return Magnitude(0.0, "0", None)
            found = ball_magnitude(value)
        if found is not None:
            return found
        bits *= 2
    raise NoConvergence("an expected count was not resolved")


def expected_empty(buckets: int, count: int) -> Magnitude:
    """N (1 - 1/N)**n: buckets that no item falls on.

    >>> expected_empty(2, 2).decimal
    '5.0000000000000000000e-1'
    """
    if count * max(buckets, 2).bit_length() <= EXACT_BITS:
        return magnitude_of_fraction((buckets - 1) ** count * buckets, buckets**count)
    return _from_ball(lambda: buckets * (count * (-arb(1) / buckets).log1p()).exp())


def expected_used(buckets: int, count: int) -> Magnitude:
    """N (1 - (1 - 1/N)**n): buckets used at least once.

    >>> expected_used(2, 2).decimal
    '1.5000000000000000000e0'
    """
    if count * max(buckets, 2).bit_length() <= EXACT_BITS:
        total = buckets**count
        return magnitude_of_fraction((total - (buckets - 1) ** count) * buckets, total)
    return _from_ball(lambda: -buckets * (count * (-arb(1) / buckets).log1p()).expm1())


def expected_at_least(buckets: int, count: int, load: int) -> Magnitude:
    """N P(Binomial(n, 1/N) >= k): buckets holding at least k items.

    >>> expected_at_least(365, 23, 2).decimal[:8]
    '6.671028'
    """
    if load <= 0:
        return magnitude_of_fraction(buckets, 1)
    if load > count:
        return Magnitude(0.0, "0", None)
    return _from_ball(lambda: buckets * balls.binomial_at_least(count, arb(1) / buckets, load))


def expected_sets(buckets: int, count: int, size: int) -> Magnitude:
    """C(n, k) / N**(k-1): expected number of k-sets of items that share a bucket.

    >>> expected_sets(365, 23, 2).decimal
    '6.9315068493150684932e-1'
    """
    if count < size:
        return Magnitude(0.0, "0", None)
    if size * (max(count, 2).bit_length() + max(buckets, 2).bit_length()) <= EXACT_BITS:
        return magnitude_of_fraction(int(gmpy2.comb(count, size)), buckets ** (size - 1))
    return _from_ball(lambda: balls.falling(arb(count), size) / arb(size).fac()
                      / arb(buckets) ** (size - 1))


def expected_draws_to_cover(buckets: int) -> Magnitude:
    """N H_N = N (1 + 1/2 + ... + 1/N): expected draws until every bucket is used.

    >>> expected_draws_to_cover(50).decimal
    '2.2496026691647125288e2'
    """
    if buckets <= EXACT_HARMONIC:
        numerator, denominator = _harmonic(1, buckets + 1)
        return magnitude_of_fraction(int(buckets * numerator), int(denominator))
    return _from_ball(lambda: buckets * ((arb(buckets) + 1).digamma() + arb.const_euler()))


def _harmonic(low: int, high: int) -> tuple[gmpy2.mpz, gmpy2.mpz]:
    """1/low + ... + 1/(high - 1) as an unreduced fraction (p, q), by binary splitting:
    the halves' sums are combined, so the integers grow evenly; runs of up to
    ``HARMONIC_RUN`` terms are added one by one (small integers).

    >>> [int(part) for part in _harmonic(1, 4)]  # 1 + 1/2 + 1/3 = 11/6
    [11, 6]
    """
    if high - low <= HARMONIC_RUN:
        numerator, denominator = gmpy2.mpz(0), gmpy2.mpz(1)
        for j in range(low, high):
            numerator, denominator = numerator * j + denominator, denominator * j
        return numerator, denominator
    middle = (low + high) // 2
    first, second = _harmonic(low, middle), _harmonic(middle, high)
    return first[0] * second[1] + second[0] * first[1], first[1] * second[1]


def likely_maximum(buckets: int, count: int) -> int:
    """The smallest j with N P(Binomial(n, 1/N) > j) < 1/2.

    Found by bisection over j on a float estimate of the tail, then settled by at most
    MAX_SETTLE_STEPS unit steps on the ball figures (decided on their 20-digit texts);
    above MAX_SETTLED_COUNT items the estimate is kept unsettled.

    >>> likely_maximum(365, 23)
    2
    """
    if count == 0:
        return 0
    low, high = 0, count  # N P(> count) = 0 < 1/2
    for _ in range(count.bit_length() + 2):
        if high - low <= 1:
            break
        middle = (low + high) // 2
        if _log_expected_above(buckets, count, middle) < math.log(0.5):
            high = middle
        else:
            low = middle
    guess = high if _log_expected_above(buckets, count, low) >= math.log(0.5) else low
    if count > MAX_SETTLED_COUNT:
        return guess  # each settling step would cost a bulk binomial tail of milliseconds
    return _settled_maximum(buckets, count, guess)


#: Unit steps that settle the float estimate of the likely maximum on the ball figures.
MAX_SETTLE_STEPS = 16
#: Above this many items the float estimate is kept as it is (off by a few loads at most:
#: the normal tail with a continuity correction, whose error is O(1/sigma) in the tail).
MAX_SETTLED_COUNT = 10**7


def _settled_maximum(buckets: int, count: int, guess: int) -> int:
    """Move the estimate by unit steps until N P(> j) < 1/2 <= N P(> j - 1) (at most 16).

    Each step is decided on the 20-digit text of N P(>= j + 1), as :func:`expected_at_least`
    reports it; the tails are formed from one bulk tail and the terms between
    (``_TailWalk``), and the text is formed only where a ball is too close to 1/2 to say.
    """
    walk = _TailWalk(buckets, count)

    def above_half(j: int) -> bool:
        found = walk.decided(j + 1)
        if found is not None:
            return found
        return Fraction(expected_at_least(buckets, count, j + 1).decimal) >= Fraction(1, 2)

    top = guess
    for _ in range(MAX_SETTLE_STEPS):
        if above_half(top):
            top += 1
        elif top > 0 and not above_half(top - 1):
            top -= 1
        else:
            break
    return top


#: A tail ball within this share of 1/2 is decided on its 20-digit text instead (a value
#: under 1/2 by less than half a unit of the 20th digit has the text 5.0000000000000000000e-1).
HALF_MARGIN = Fraction(1, 10**18)


class _TailWalk:
    """N P(Binomial(n, 1/N) >= j) for neighbouring j from one tail and the terms between:
    T(j + 1) = T(j) - N P(= j), each a ball at FIGURE_BITS (one bulk tail costs some
    0.5 ms at a mean of 10**5, a term some 20 us)."""

    __slots__ = ("buckets", "count", "tails")

    def __init__(self, buckets: int, count: int) -> None:
        self.buckets = buckets
        self.count = count
        self.tails: dict[int, arb] = {}

    def tail(self, j: int) -> arb:
        """The ball of N P(>= j): from the nearest one formed, else a tail of its own."""
        if j in self.tails:
            return self.tails[j]
        with precision(FIGURE_BITS):
            p = arb(1) / self.buckets
            if j - 1 in self.tails:
                found = self.tails[j - 1] - _bucket_share(self.buckets, self.count, j - 1)
            elif j + 1 in self.tails:
                found = self.tails[j + 1] + _bucket_share(self.buckets, self.count, j)
            else:
                found = self.buckets * balls.binomial_at_least(self.count, p, j)
        self.tails[j] = found
        return found

    def decided(self, j: int) -> bool | None:
        """Whether the text of N P(>= j) is at least 1/2, when the ball says so; ``None``
        when it lies within HALF_MARGIN of 1/2 (or j is past the count)."""
        if not 0 < j <= self.count:
            return None
        value = self.tail(j)
        with precision(FIGURE_BITS):
            half = arb(1) / 2
            margin = half * arb(HALF_MARGIN.numerator) / HALF_MARGIN.denominator
            if value.lower() >= half:
                return True
            if value.upper() < half - margin:
                return False
        return None


def _log_expected_above(buckets: int, count: int, j: int) -> float:
    """ln(N P(Binomial(n, 1/N) > j)), roughly: the first term and a geometric tail."""
    if j >= count:
        return -math.inf
    p = 1.0 / buckets
    k = j + 1
    log_pmf = (math.lgamma(count + 1) - math.lgamma(k + 1) - math.lgamma(count - k + 1)
               + k * math.log(p) + (count - k) * math.log1p(-p))
    ratio = (count - k) * p / ((k + 1) * (1 - p))
    if ratio > 0.9:  # near the bulk: the normal tail with a continuity correction
        spread = math.sqrt(count * p * (1 - p))
        upper = 0.5 * math.erfc((j + 0.5 - count * p) / (spread * math.sqrt(2)))
        return math.log(buckets) + math.log(max(upper, 1e-300))
    tail = -math.log1p(-ratio)
    return math.log(buckets) + log_pmf + tail


def load_profile(buckets: int, count: int) -> tuple[ProfileRow, ...]:
    """Expected buckets holding exactly j items, j up to the likely maximum.

    At most MAX_PROFILE_ROWS rows, the last at the likely maximum.

    >>> [row.buckets.decimal[:6] for row in load_profile(365, 23)]
    ['3.4268', '2.1652', '6.5434']
    """
    top = likely_maximum(buckets, count)
    start = max(0, top - MAX_PROFILE_ROWS + 1)
    bits = FIGURE_BITS
    for _ in range(TRIES):
        rows = _profile_rows(buckets, count, start, top, bits)
        if rows is not None:
            return rows
        bits *= 2
    return tuple(ProfileRow(j, _from_ball(partial(_bucket_share, buckets, count, j)))
                 for j in range(start, top + 1))


def _profile_rows(buckets: int, count: int, start: int, top: int,
                  bits: int) -> tuple[ProfileRow, ...] | None:
    """The rows from the first by the ratio of successive terms, (n - j) p / ((j + 1) q).

    One log-gamma evaluation instead of one a row; the balls carry the rounding of every
    step. ``None`` when a row cannot be reported at these bits.
    """
    rows = []
    with precision(bits + 16):
        p = arb(1) / buckets
        ratio_scale = p / (1 - p)
        share = _bucket_share(buckets, count, start)
        for j in range(start, top + 1):
            if share.is_zero():
                rows.append(ProfileRow(j, Magnitude(0.0, "0", None)))
            else:
                found = ball_magnitude(share)
                if found is None:
                    return None
                rows.append(ProfileRow(j, found))
            share = share * (count - j) * ratio_scale / (j + 1)
    return tuple(rows)


def _bucket_share(buckets: int, count: int, load: int) -> arb:
    """N P(Binomial(n, 1/N) = j)."""
    return buckets * balls.binomial_pmf(count, load, arb(1) / buckets)
