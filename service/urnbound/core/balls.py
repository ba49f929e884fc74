"""Ball arithmetic for the occupancy engine: working precision, tails, and reporting of balls.

The occupancy engine computes with python-flint's ``arb`` balls: each value is a midpoint
and a radius that encloses the true value, so every rounding error is accounted for by
the library. Precision is flint's ``ctx.prec``, which is process-wide: :func:`precision`
sets it for the duration of a block, restores it, and holds a re-entrant lock meanwhile,
so that threads (gunicorn's gthread workers) never compute at each other's precision.
Every engine computation runs inside such a block. Even a wrong precision could only
change how tight a ball is, never whether it encloses the true value.

Tails of the binomial and Poisson laws are summed from their small end by ratio series:
the ratios of successive terms fall, so once a ratio r < 1 is reached the rest of the
series is below the current term times r / (1 - r), which is added to the radius. Binomial
tails whose first ratio lies between ``SERIES_RATIO`` and 1 (near the bulk of the law,
thousands of terms) are summed in fixed point with integers, each term rounded down,
the rounding and the rest of the series bounded and added (:func:`_fixed_ratio_sum`).
When a series would need too many terms the incomplete gamma and beta functions of flint
are used instead (also rigorous, slower near the bulk of the law).
"""

from __future__ import annotations

import math
import threading
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from fractions import Fraction

from flint import arb, ctx
from mpmath import libmp

from urnbound.core import reporting
from urnbound.core.errors import NoConvergence
from urnbound.core.precision import Real
from urnbound.core.results import Magnitude

#: Most terms of a ratio series before the library's special function is used instead.
MAX_SERIES_TERMS = 1_500
#: A ratio series is used when its first ratio is below this (it then needs at most some
#: prec * ln 2 / -ln(0.9), about 7 prec, terms; usually far fewer, as the ratios fall).
SERIES_RATIO = 0.9
#: The same for Poisson tails, whose incomplete gamma functions are fast (about 0.1 ms):
#: the series is used only where it needs few terms.
POISSON_SERIES_RATIO = 0.5
#: Counts up to this are turned into falling products; above it, log-gamma is used.
MAX_PRODUCT_TERMS = 256
#: Most terms of the fixed-point series of a binomial tail (about 0.12 us a term, so at
#: most some 2.5 ms) before flint's incomplete beta function is used instead; that one
#: takes 2 to 30 ms near the bulk of a law with a mean of 10**5 (bench_occupancy.py).
MAX_FIXED_TERMS = 20_000
#: Terms between two checks of the fixed-point series' remainder.
FIXED_CHUNK = 256
#: Fractional bits of the fixed-point series beyond the working precision: the rounding
#: of at most MAX_FIXED_TERMS terms costs below M**2 / 2 < 2**28 units of the last bit.
FIXED_GUARD_BITS = 48


#: flint's working precision is one setting for the whole process; this lock makes each
#: outermost precision block exclusive, so a thread's block never sees another's setting
#: (re-entrant: blocks nest). The service's gthread workers run answers in threads.
_PRECISION_LOCK = threading.RLock()


@contextmanager
def precision(bits: int) -> Iterator[None]:
    """Run a block at ``bits`` bits of flint precision, restoring the previous setting.

    The block holds a re-entrant lock, so threads take turns at flint (they would take
    turns at the interpreter anyway: the work is CPU-bound).
    """
    with _PRECISION_LOCK:
        previous = ctx.prec
        ctx.prec = bits
        try:
            yield
        finally:
            ctx.prec = previous


def to_real(x: arb) -> Real:
    """The midpoint of ``x`` as an mpmath ``libmp`` value (exact)."""
    mantissa, exponent = x.mid().man_exp()
    return libmp.from_man_exp(int(mantissa), int(exponent))


def _radius_real(x: arb) -> Real:
    mantissa, exponent = x.rad().man_exp()
    return libmp.from_man_exp(int(mantissa), int(exponent))


def relative_radius(x: arb) -> Real | None:
    """e with |mid - x| <= e * x for every x in the ball, or ``None`` if the ball holds 0.

    |mid - x| <= rad and x >= mid - rad > 0, so e = rad / (mid - rad), rounded upwards.

    >>> with precision(80):
    ...     libmp.to_float(relative_radius(arb(1) / 3)) < 2**-70
    True
    """
    if not x.is_finite():
        return None
    mid, rad = to_real(x), _radius_real(x)
    low = libmp.mpf_sub(mid, rad, 64, libmp.round_floor)
    if not libmp.mpf_lt(libmp.fzero, low):
        return None
    return libmp.mpf_div(rad, low, 64, libmp.round_ceiling)


def magnitude(x: arb, log10: float | None = None) -> Magnitude | None:
    """Report a positive ball: correctly rounded float when decided, text, log10, bound.

    ``None`` when the ball is too wide to decide the float (the caller works at more bits).

    >>> with precision(128):
    ...     magnitude(arb(1) / 3).decimal
    '3.3333333333333333333e-1'
    """
    error = relative_radius(x)
    if error is None:
        return None
    return reporting.bounded_magnitude(to_real(x), error, log10)


def widened(x: arb, radius: arb) -> arb:
    """The ball ``x`` with ``radius`` (an upper bound, taken as such) added to its radius."""
    return x + arb(0, radius.upper())


def between(low: arb, high: arb) -> arb:
    """The smallest ball holding both balls (and so everything between them)."""
    return low.union(high)


def relative_bits(x: arb) -> int:
    """Bits of relative accuracy of a ball (negative when it holds 0)."""
    return int(x.rel_accuracy_bits())


# --- probability mass functions ------------------------------------------------------------


def falling(top: arb, terms: int) -> arb:
    """top (top - 1) ... (top - terms + 1) as a ball."""
    result = arb(1)
    for i in range(terms):
        result *= top - i
    return result


def log_factorial(j: int) -> arb:
    """ln j! as a ball."""
    return arb(j + 1).lgamma()


def poisson_pmf(j: int, mean: arb) -> arb:
    """P(Poisson(mean) = j) = exp(-mean) mean**j / j!, for mean > 0.

    >>> with precision(64):
    ...     round(float(poisson_pmf(2, arb(1)).mid()), 12)
    0.183939720586
    """
    if j == 0:
        return (-mean).exp()
    bits = ctx.prec + max(j, 2).bit_length() + 8
    with precision(bits):
        value = (j * mean.log() - mean - log_factorial(j)).exp()
    return +value


def binomial_pmf(trials: int, j: int, p: arb) -> arb:
    """P(Binomial(trials, p) = j) for 0 < p < 1, 0 <= j <= trials, of any size.

    C(n, j) is a falling product for small j and log-gamma otherwise, at extra bits that
    cover the size of ln n!.
    """
    rest = (trials - j) * (-p).log1p()
    if j <= MAX_PRODUCT_TERMS:
        bits = ctx.prec + 16
        with precision(bits):
            value = falling(arb(trials), j) / arb(j).fac() * p**j * rest.exp()
        return +value
    bits = ctx.prec + 2 * max(trials, 2).bit_length() + 16
    with precision(bits):
        log_choose = log_factorial(trials) - log_factorial(j) - log_factorial(trials - j)
        value = (log_choose + j * p.log() + (trials - j) * (-p).log1p()).exp()
    return +value


# --- tails -----------------------------------------------------------------------------------


def _ratio_sum(first: arb, ratio_at: Callable[[int], arb], terms: int) -> arb | None:
    """first * (1 + r1 + r1 r2 + ...) over at most ``terms`` ratios, with the tail in the radius.

    ``ratio_at(i)`` is the i-th ratio (i >= 1), non-increasing in i and >= 0; ``None``
    when the series would need more than MAX_SERIES_TERMS terms. Once a ratio r < 1 is
    reached every later one is at most r, so the rest is below term * r / (1 - r).
    """
    total = arb(1)
    term = arb(1)
    floor = arb(2) ** -(ctx.prec + 8)
    for i in range(1, min(terms, MAX_SERIES_TERMS) + 1):
        ratio = ratio_at(i)
        term = term * ratio
        total += term
        if ratio.upper() < 1:
            tail = term * ratio / (1 - ratio)
            if tail.upper() < floor.lower():
                return first * widened(total, tail)
    if terms <= MAX_SERIES_TERMS:
        return first * total
    return None


def _fixed_ratio_sum(top: int, base: int, rho: arb) -> arb | None:
    """1 + sum over i >= 1 of prod_{j <= i} r_j, r_j = rho (top - j + 1) / (base + j).

    For rho > 0, top >= 0, base >= 0 and r_1 < 1: the ratios fall with j (and vanish past
    top), so every term is below the one before it. With an exact point m = P / Q of
    rho's ball (the simplest fraction in it with Q < 2**32 if there is one, as for
    rho = 1/(N - 1), else its binary midpoint) the terms are formed in integers scaled by
    2**F, each rounded down: the computed term is below the true one at m by at most j
    units (the error of the term before times r_j < 1, plus one), so the first M + 1
    terms lose at most M (M + 1) / 2 units. Past M the rest is below the M-th term times
    R / (1 - R), R the next ratio. Any rho in the ball is within d = e m of m, which
    scales the i-th term by at most (1 +- e)**i, i <= M; the rest is bounded at the top
    of the ball. ``None`` when more than MAX_FIXED_TERMS terms would be needed, or the
    first ratio at m is not below 1.

    >>> with precision(64):  # P(Binomial(3, 1/2) >= 2) = P(= 2) (1 + 1/3) = 3/8 * 4/3
    ...     round(float(_fixed_ratio_sum(1, 2, arb(1)).mid()), 12)
    1.333333333333
    """
    if not rho.lower() > 0:
        return None
    point, spread = _exact_point(rho)
    prec: int = ctx.prec
    scale = prec + FIXED_GUARD_BITS
    term: int = 1 << scale
    total: int = term
    step_down, step_up = point.numerator, point.denominator
    numerator, denominator = top * step_down, (base + 1) * step_up
    if numerator >= denominator:
        return None  # the first ratio at the point is not below 1
    done = 0
    while done < MAX_FIXED_TERMS:
        for _ in range(min(FIXED_CHUNK, MAX_FIXED_TERMS - done)):
            if numerator <= 0:
                break
            term = term * numerator // denominator
            total += term
            numerator -= step_down
            denominator += step_up
            done += 1
        if numerator <= 0:  # the series ended at j = top: nothing is left
            return _fixed_ball(total, 0, done, scale, spread, None)
        # rest <= (term + done) * R / (1 - R) units, R = numerator / denominator at m
        if (term + done) * numerator << (prec + 16) <= total * (denominator - numerator):
            return _fixed_ball(total, term + done, done, scale, spread,
                               arb(rho.upper()) * (top - done) / (base + done + 1))
    return None


def _exact_point(rho: arb) -> tuple[Fraction, arb]:
    """An exact point m of the ball (docstring of :func:`_fixed_ratio_sum`) and a ball
    holding e = max |rho - m| / m over the ball."""
    low, high = _fraction_of(rho.lower()), _fraction_of(rho.upper())
    middle = _fraction_of(rho.mid())
    point = middle.limit_denominator(2**32)
    if not low <= point <= high:
        point = middle
    spread = max(high - point, point - low) / point
    return point, arb(spread.numerator) / spread.denominator


def _fraction_of(x: arb) -> Fraction:
    """The midpoint of a ball (an end or the midpoint of another: an exact ball) as a
    fraction."""
    mantissa, exponent = x.mid().man_exp()
    value, power = int(mantissa), int(exponent)
    return Fraction(value << power) if power >= 0 else Fraction(value, 1 << -power)


def _fixed_ball(total: int, last: int, terms: int, scale: int, spread: arb,
                next_ratio: arb | None) -> arb | None:
    """The ball of :func:`_fixed_ratio_sum` from its integer sum (docstring there)."""
    unit = arb(2) ** -scale
    grow = (1 + spread) ** terms
    low = arb(total) * unit * (1 - spread) ** terms
    high = arb(total + terms * (terms + 1) // 2) * unit * grow
    if next_ratio is not None:
        if not next_ratio.upper() < 1:
            return None
        high += arb(last) * unit * grow * next_ratio / (1 - next_ratio)
    return between(arb(low.lower()), arb(high.upper()))


#: Most terms a Poisson ratio series is forecast to take before the incomplete gamma
#: function is used instead: at thousands of bits the series needs hundreds of terms of
#: that size (13 ms at 8,200 bits, the upper gamma function 0.9 ms).
POISSON_SERIES_TERMS = 200


def _short_series(first_ratio: arb) -> bool:
    """A series whose ratios start at ``first_ratio`` (< 1, falling) reaches the working
    precision within POISSON_SERIES_TERMS terms, by the geometric forecast."""
    ratio = float(first_ratio.upper())
    if not ratio > 0:
        return True
    return (ctx.prec + 8) <= POISSON_SERIES_TERMS * -math.log2(ratio)


def poisson_at_least(k: int, mean: arb) -> arb:
    """P(Poisson(mean) >= k), with its full relative accuracy when it is small.

    >>> with precision(64):
    ...     round(float(poisson_at_least(3, arb(1)).mid()), 12)
    0.080301397071
    """
    if k <= 0:
        return arb(1)
    if mean.upper() < POISSON_SERIES_RATIO * (k + 1) and _short_series(mean.upper() / (k + 1)):
        found = _ratio_sum(poisson_pmf(k, mean), lambda i: mean / (k + i), 10**9)
        if found is not None:
            return found
    # flint's regularized lower gamma is not reliable here (it may return an unbounded
    # ball); the upper one is, and 1 - Q loses -log2 of the result, at most -log2 of the
    # first term P(Poisson = k): that many bits are added.
    y = float(mean.mid())
    log_first = k * math.log(y) - y - math.lgamma(k + 1) if y > 0 else 0.0
    with precision(ctx.prec + 32 + max(0, int(-log_first / math.log(2)))):
        value = 1 - mean.gamma_upper(k, regularized=1)
    return +value


def poisson_below(a: int, mean: arb) -> arb:
    """P(Poisson(mean) < a) = P(Poisson(mean) <= a - 1), full relative accuracy when small.

    >>> with precision(64):
    ...     round(float(poisson_below(1, arb(2)).mid()), 12)
    0.135335283237
    """
    if a <= 0:
        return arb(0)
    if (a - 1) < POISSON_SERIES_RATIO * mean.lower() and _short_series((a - 1) / mean.lower()):
        found = _ratio_sum(poisson_pmf(a - 1, mean), lambda i: (a - i) / mean, a - 1)
        if found is not None:
            return found
    return mean.gamma_upper(a, regularized=1)


def binomial_at_least(trials: int, p: arb, k: int, *, turned: bool = False) -> arb:
    """P(Binomial(trials, p) >= k), full relative accuracy when small.

    Where k lies below the mean, so that the chance is over 1/2, it is 1 - P(< k) from the
    left tail's series (an absolute error of that small tail is a relative one here), not
    from the incomplete beta function, which costs up to some 0.3 s there.

    >>> with precision(64):
    ...     float(binomial_at_least(3, arb(1) / 2, 2).mid())
    0.5
    """
    if k <= 0:
        return arb(1)
    if k > trials:
        return arb(0)
    if not turned and k < trials * p.lower():
        return 1 - binomial_below(trials, p, k, turned=True)
    q = 1 - p
    first_ratio = (trials - k) * p / ((k + 1) * q)
    if first_ratio.upper() < SERIES_RATIO:
        found = _ratio_sum(binomial_pmf(trials, k, p),
                           lambda i: (trials - k - i + 1) * p / ((k + i) * q), trials - k)
        if found is not None:
            return found
    elif first_ratio.upper() < 1:
        series = _fixed_ratio_sum(trials - k, k, p / q)
        if series is not None:
            return binomial_pmf(trials, k, p) * series
    return p.beta_lower(k, trials - k + 1, regularized=1)


def binomial_below(trials: int, p: arb, a: int, *, turned: bool = False) -> arb:
    """P(Binomial(trials, p) < a), full relative accuracy when small.

    Where a - 1 lies above the mean (the chance over 1/2), it is 1 - P(>= a) from the
    right tail's series, as :func:`binomial_at_least` turns the other way.

    >>> with precision(64):
    ...     float(binomial_below(2, arb(1) / 2, 1).mid())
    0.25
    """
    if a <= 0:
        return arb(0)
    if a > trials:
        return arb(1)
    if not turned and a - 1 > trials * p.upper():
        return 1 - binomial_at_least(trials, p, a, turned=True)
    q = 1 - p
    top = a - 1
    first_ratio = top * q / ((trials - top + 1) * p)
    if first_ratio.upper() < SERIES_RATIO:
        found = _ratio_sum(binomial_pmf(trials, top, p),
                           lambda i: (top - i + 1) * q / ((trials - top + i) * p), top)
        if found is not None:
            return found
    elif first_ratio.upper() < 1:
        series = _fixed_ratio_sum(top, trials - top, q / p)
        if series is not None:
            return binomial_pmf(trials, top, p) * series
    # 1 - P(>= a) loses -log2 of the result, at most -log2 of the term P(= a - 1).
    chance = float(p.mid())
    log_first = (math.lgamma(trials + 1) - math.lgamma(a) - math.lgamma(trials - a + 2)
                 + (a - 1) * math.log(chance) + (trials - a + 1) * math.log1p(-chance))
    with precision(ctx.prec + 32 + max(0, int(-log_first / math.log(2)))):
        value = 1 - p.beta_lower(a, trials - a + 1, regularized=1)
    return +value


def require_bits(x: arb, bits: int, what: str) -> arb:
    """``x`` if it has at least ``bits`` bits of relative accuracy, else NoConvergence."""
    if relative_bits(x) < bits:
        raise NoConvergence(f"{what} not resolved at this precision")
    return x
