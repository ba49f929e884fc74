"""Pairwise collision risk (the birthday bound) and its related figures, by either path.

Every float ``value`` reported is the float nearest to the true value. A figure computed
with a relative error bound e lies in an interval of relative width e around the true
value; when both ends of that interval round to the same float, that float is the correct
rounding. When they do not, the figure is computed again with twice the bits (at most
ROUNDING_TRIES times), and an undecided risk falls back to exact arithmetic where that is
affordable, and otherwise to the expansion at up to WIDEST_BITS bits. A precision the
expansion cannot reach (NoConvergence) is treated as undecided, never as the end.
"""

from __future__ import annotations

from fractions import Fraction

import gmpy2
from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core import reporting
from urnbound.core.asymptotic import risk_estimate
from urnbound.core.errors import DomainError, NoConvergence
from urnbound.core.exact import (
    digits_estimate,
    exact_risk,
    expected_distinct,
    magnitude_of_fraction,
)
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT, MAX_FRACTION_DIGITS, MAX_SIZE_BITS
from urnbound.core.precision import Real
from urnbound.core.regimes import choose_method, exact_cost_digits
from urnbound.core.results import (
    ASYMPTOTIC,
    EXACT,
    AnswerFigures,
    CollisionRisk,
    Magnitude,
    RelatedFigures,
)

#: Computations of one figure, doubling its bits each time, before its float is given up.
ROUNDING_TRIES = 4
#: Most bits of the last-resort evaluations (under 15 ms each at N = 2**8192), past the
#: doublings: enough for any tie the expected counts can meet short of saturation.
WIDEST_BITS = 16384
#: Largest exact cost (digits of N**n) of the exact fallback for an undecided rounding.
FALLBACK_EXACT_DIGITS = DEFAULT_EXACT_DIGIT_LIMIT
#: First working precision of the expected-value figures.
FIGURES_PREC = 128


def collision_risk(
    size: int,
    count: int,
    *,
    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT,
    target_bits: int = 64,
) -> CollisionRisk:
    """Risk that at least two of ``count`` uniform draws from ``size`` values coincide.

    :param size: N, the number of equally likely values, 1 <= N <= 2**8192.
    :param count: n >= 0; n > N gives risk exactly 1.
    :param exact_digit_limit: largest estimated digit count of N**n taken exactly.
    :param target_bits: relative accuracy asked of the asymptotic path (its first try).
    :raises DomainError: for a size or count outside those ranges.
    :raises NoConvergence: when a float cannot be rounded with certainty (not met in practice).

    >>> r = collision_risk(365, 23)
    >>> r.method, r.collision.decimal
    ('exact', '5.0729723432398540723e-1')
    """
    check_question(size, count)
    if choose_method(size, count, exact_digit_limit) == EXACT:
        return _exact_answer(size, count)
    return _asymptotic_answer(size, count, target_bits)


def check_question(size: int, count: int) -> None:
    """Refuse a size outside 1 .. 2**MAX_SIZE_BITS or a negative count (DomainError)."""
    too_big = size.bit_length() > MAX_SIZE_BITS + 1 or (
        size.bit_length() == MAX_SIZE_BITS + 1 and size & (size - 1) != 0)
    if size < 1 or too_big:
        raise DomainError(f"size must be a whole number from 1 to 2^{MAX_SIZE_BITS}",
                          field="size")
    if count < 0:
        raise DomainError("count must be a whole number of at least 0", field="count")


def _exact_answer(size: int, count: int) -> CollisionRisk:
    risk = exact_risk(size, count)
    fraction = None
    if max(digits_estimate(risk.denominator), 1) <= MAX_FRACTION_DIGITS + 1:
        if len(str(risk.denominator)) <= MAX_FRACTION_DIGITS:
            fraction = Fraction(risk.collision, risk.denominator)
    return CollisionRisk(
        size=size,
        count=count,
        collision=magnitude_of_fraction(risk.collision, risk.denominator),
        no_collision=magnitude_of_fraction(risk.no_collision, risk.denominator),
        method=EXACT,
        relative_error_bound=0.0,
        exact=fraction,
        precision_bits=0,
    )


def _asymptotic_answer(size: int, count: int, target_bits: int) -> CollisionRisk:
    """The expansion at target_bits, then at twice as many until both floats are decided."""
    def attempt(bits: int) -> CollisionRisk | None:
        return _asymptotic_try(size, count, bits)

    answer = mp.first_decided(attempt, target_bits, _last_try_bits(target_bits))
    if answer is None and exact_cost_digits(size, count) <= FALLBACK_EXACT_DIGITS:
        answer = _exact_answer(size, count)
    if answer is None:
        # Last resort, reached only for a value within some 2**-500 of a rounding
        # boundary or an expansion failing at one precision: WIDEST_BITS bounds the cost.
        answer = mp.first_decided(attempt, 2 * _last_try_bits(target_bits), WIDEST_BITS)
    if answer is None:
        raise NoConvergence("the risk lies too close to a rounding boundary to round with "
                            "certainty")
    return answer


def _last_try_bits(first_bits: int) -> int:
    """The precision of the last of ROUNDING_TRIES doublings from ``first_bits``."""
    return first_bits << (ROUNDING_TRIES - 1)


def _asymptotic_try(size: int, count: int, bits: int) -> CollisionRisk | None:
    """The answer from one evaluation of the expansion, ``None`` if a float is undecided.

    log10 of a risk of at least 1/2 is log1p(-q) / ln 10 from the complement q, which
    keeps its relative accuracy where the risk itself is 1 to all its bits.
    """
    estimate = risk_estimate(size, count, bits)
    collision_log10 = None
    if mp.magnitude_bits(estimate.collision) >= 0:  # risk >= 1/2
        collision_log10 = reporting.log10_of_complement(estimate.no_collision)
    collision = reporting.bounded_magnitude(estimate.collision, estimate.collision_error,
                                            collision_log10)
    no_collision = reporting.bounded_magnitude_of_log(
        estimate.no_collision, estimate.log_no_collision, estimate.no_collision_error)
    if collision is None or no_collision is None:
        return None
    return CollisionRisk(
        size=size,
        count=count,
        collision=collision,
        no_collision=no_collision,
        method=ASYMPTOTIC,
        relative_error_bound=max(collision.relative_error_bound,
                                 no_collision.relative_error_bound),
        exact=None,
        precision_bits=estimate.prec,
    )


def related_figures(size: int, count: int, risk: CollisionRisk) -> RelatedFigures:
    """Expected colliding pairs, distinct values and duplicates; reciprocal risk; entropy.

    ``risk`` is ``collision_risk(size, count)``.

    >>> f = related_figures(365, 23, collision_risk(365, 23))
    >>> f.expected_colliding_pairs.decimal, round(f.expected_duplicates.value, 6)
    ('6.9315068493150684932e-1', 0.680038)
    >>> f.reciprocal_risk.decimal
    '1.9712309319655189442e0'
    """
    distinct, duplicates = _expected_distinct_and_duplicates(size, count)
    return RelatedFigures(
        expected_colliding_pairs=expected_pairs(size, count),
        expected_distinct=distinct,
        expected_duplicates=duplicates,
        reciprocal_risk=_reciprocal_risk(size, count, risk),
        entropy_bits=mp.log2_of_int(size),
    )


def answer_figures(size: int, count: int, risk: CollisionRisk) -> AnswerFigures:
    """The figures of :func:`related_figures` that a collision answer reports, the same ones.

    The expected number of distinct values is not reported, only tested: its float still
    decides the precision of the expected duplicates (as in :func:`related_figures`), but
    its decimal text and logarithm are not formed.

    >>> a = answer_figures(2**64, 10**9, collision_risk(2**64, 10**9))
    >>> r = related_figures(2**64, 10**9, collision_risk(2**64, 10**9))
    >>> a.expected_duplicates == r.expected_duplicates, a.reciprocal_risk == r.reciprocal_risk
    (True, True)
    """
    return AnswerFigures(
        expected_colliding_pairs=expected_pairs(size, count),
        expected_duplicates=_expected_duplicates(size, count),
        reciprocal_risk=_reciprocal_risk(size, count, risk),
    )


def expected_pairs(size: int, count: int) -> Magnitude:
    """C(n, 2) / N, correctly rounded: n (n - 1) / (2 N)."""
    return magnitude_of_fraction(count * (count - 1), 2 * size)


def _reciprocal_risk(size: int, count: int, risk: CollisionRisk) -> Magnitude | None:
    """1 / P(collision): from the exact fraction on the exact path, else with its bound."""
    if risk.collision.log10 is None:
        return None
    if risk.method == EXACT:
        if risk.exact is not None:
            return magnitude_of_fraction(risk.exact.denominator, risk.exact.numerator)
        exact = exact_risk(size, count)  # unreduced: a gcd of the big terms costs ~10 ms
        return magnitude_of_fraction(exact.denominator, exact.collision)
    from_text = _reciprocal_of_text(risk.collision)
    if from_text is not None:
        return from_text

    def attempt(bits: int) -> Magnitude | None:
        estimate = risk_estimate(size, count, bits)
        return _reciprocal_of_real(estimate.collision, estimate.collision_error,
                                   risk.collision.log10)

    found = mp.first_decided(attempt, FIGURES_PREC, WIDEST_BITS)
    if found is None:
        raise NoConvergence("the reciprocal risk lies too close to a rounding boundary")
    return found


def _reciprocal_of_text(probability: Magnitude) -> Magnitude | None:
    """1 / p from p's decimal text d, |d - p| <= e p: |1/d - 1/p| <= e/(1-e) (1/p).

    ``None`` when the float is undecided at that accuracy.

    >>> _reciprocal_of_text(Magnitude(0.25, "2.5000000000000000000e-1", -0.6, 1e-19)).decimal
    '4.0000000000000000000e0'
    """
    mantissa, _, exponent = probability.decimal.partition("e")
    digits = int(mantissa.replace(".", ""))
    shift = int(exponent) - (len(mantissa) - 2)  # p's text = digits * 10**shift, exactly
    numerator, denominator = 10 ** max(-shift, 0), digits * 10 ** max(shift, 0)
    prec = 128
    error = libmp.from_float(probability.relative_error_bound)
    return _reciprocal_of_real(mp.ratio(denominator, numerator, prec), error, probability.log10,
                               prec)


def _reciprocal_of_real(value: Real, error: Real, log10: float | None,
                        prec: int = 128) -> Magnitude | None:
    """1 / value, for a value within a relative ``error`` < 1/2 of the true p.

    The reciprocal is off by at most e/(1-e) <= e (1 + 2e) relative, plus its own rounding
    to ``prec`` bits.
    """
    if not mp.less(error, libmp.from_man_exp(1, -1)):
        return None
    up = libmp.round_ceiling
    spread = libmp.mpf_mul(error, libmp.mpf_add(mp.ONE, libmp.mpf_shift(error, 1), 53, up), 53,
                           up)
    total = libmp.mpf_add(spread, libmp.from_man_exp(1, 1 - prec), 53, up)
    inverse = mp.div(mp.ONE, value, prec)
    reciprocal_log10 = None if log10 is None else 0.0 - log10
    return reporting.bounded_magnitude(inverse, total, reciprocal_log10)


# --- expected distinct values and duplicates ----------------------------------------------


def _expected_distinct_and_duplicates(size: int, count: int) -> tuple[Magnitude, Magnitude]:
    """N (1 - (1 - 1/N)**n) and n minus it, each with a proven relative bound.

    Exact (and correctly rounded) when N**n is small, or when no rounding is decided:
    for N a power of two the figures are binary fractions, sometimes a float midpoint.
    """
    distinct, duplicates = _expected_counts(size, count, with_distinct=True)
    if distinct is None:  # not met: with_distinct reports it
        raise NoConvergence("the expected number of distinct values was not reported")
    return distinct, duplicates


def _expected_duplicates(size: int, count: int) -> Magnitude:
    """n minus N (1 - (1 - 1/N)**n), as :func:`_expected_distinct_and_duplicates` has it."""
    return _expected_counts(size, count, with_distinct=False)[1]


def _expected_counts(size: int, count: int,
                     with_distinct: bool) -> tuple[Magnitude | None, Magnitude]:
    """Expected distinct values (``None`` unless ``with_distinct``) and duplicates.

    A precision is taken only when both floats are decided there (``interval_float``
    decides exactly when ``bounded_magnitude`` reports), whether or not the distinct
    values are reported, so the duplicates are the same either way.
    """
    if count <= 1 or size == 1 or exact_cost_digits(size, count) <= EXACT_FIGURES_DIGITS:
        return _exact_figures(size, count, with_distinct)
    if _saturated(size, count):
        return _saturated_figures(size, count)

    def attempt(prec: int) -> tuple[Magnitude | None, Magnitude] | None:
        if _ratio_gap(size, count) >= MIN_SERIES_GAP:
            values = _figures_by_series(size, count, prec)
        else:
            values = _figures_by_closed_form(size, count, prec)
        (distinct, distinct_error), (duplicates, duplicates_error) = values
        if reporting.interval_float(distinct, distinct_error) is None:
            return None
        second = reporting.bounded_magnitude(duplicates, duplicates_error)
        if second is None:
            return None
        first = reporting.bounded_magnitude(distinct, distinct_error) if with_distinct else None
        return first, second

    found = mp.first_decided(attempt, FIGURES_PREC, _last_try_bits(FIGURES_PREC))
    if found is None and exact_cost_digits(size, count) <= FALLBACK_EXACT_DIGITS:
        return _exact_figures(size, count, with_distinct)
    if found is None:
        found = mp.first_decided(attempt, 2 * _last_try_bits(FIGURES_PREC), WIDEST_BITS)
    if found is None:
        raise NoConvergence("an expected count lies too close to a rounding boundary")
    return found


def _saturated(size: int, count: int) -> bool:
    """n/N >= 0.7 (log2 N + 70): then e = N (1 - 1/N)**n <= N exp(-n/N) < 2**-70.

    (1.4427 * 0.7 > 1.0098, so log2 e <= log2 N - 1.0098 (log2 N + 70) < -70.) Below it,
    e is above 2**-70 and a tie next to it is decided by at most 70 + log2 n + 40 bits,
    within the doublings up to WIDEST_BITS.
    """
    return 10 * count >= 7 * size * (size.bit_length() + 70)


def _saturated_figures(size: int, count: int) -> tuple[Magnitude, Magnitude]:
    """distinct = N - e and duplicates = n - N + e, e = N (1 - 1/N)**n, for n/N that large.

    There (``_saturated``) e < 2**-70. Every rounding boundary of a float or of 20-digit text
    other than an integer v >= 1 itself (here N or n - N) is at least 2**-68 from v: beyond
    2**53 (floats) and 10**20 (text) the boundaries are integers, and below, half a float
    step is v 2**-54 or more and half a unit in the 20th digit v 5e-21 or more. Yet v itself
    may be a boundary: a tie only e's sign breaks, and no precision decides it, e having
    about n/N bits below the point. Both figures are therefore reported from the rationals
    N - t and n - N + t, t = 2**-160: offsets that, like e, are positive and below 2**-68,
    so they lie on the same side of every boundary as the true values and round exactly as
    those do.
    """
    unit = 1 << 160  # t = 1 / unit
    below = magnitude_of_fraction(size * unit - 1, unit)
    above = magnitude_of_fraction((count - size) * unit + 1, unit)
    return below, above


#: Largest exact cost (digits of N**n) at which the expected figures are formed exactly.
EXACT_FIGURES_DIGITS = 5_000


def _exact_figures(size: int, count: int,
                   with_distinct: bool = True) -> tuple[Magnitude | None, Magnitude]:
    if count <= 1 or size == 1:
        distinct = min(count, size)
        return magnitude_of_fraction(distinct, 1), magnitude_of_fraction(count - distinct, 1)
    numerator, denominator = expected_distinct(size, count)
    duplicates = magnitude_of_fraction(count * denominator - numerator, denominator)
    if not with_distinct:
        return None, duplicates
    return magnitude_of_fraction(numerator, denominator), duplicates


#: The binomial series is used when n/N < 2**-MIN_SERIES_GAP (then it needs few terms).
MIN_SERIES_GAP = 32


def _ratio_gap(size: int, count: int) -> int:
    """g with n/N < 2**-g, from the bit lengths."""
    return size.bit_length() - count.bit_length() - 1


def _context(prec: int) -> gmpy2.context:
    """An MPFR context at ``prec`` bits, rounding to nearest, with the widest exponents."""
    return gmpy2.context(precision=prec, emin=gmpy2.get_emin_min(), emax=gmpy2.get_emax_max())


def _from_mpfr(value: gmpy2.mpfr) -> Real:
    mantissa, exponent = value.as_mantissa_exp()
    return libmp.from_man_exp(int(mantissa), int(exponent))


def _bound(units: int, prec: int) -> Real:
    """units * 2**-prec, as a bound."""
    return libmp.from_man_exp(units, -prec)


def _figures_by_series(size: int, count: int, prec: int) -> tuple[tuple[Real, Real], ...]:
    """duplicates = sum_{j>=2} (-1)**j C(n, j) / N**(j-1), for x = n/N < 2**-32.

    With t_2 = n(n-1)/(2N) and t_(j+1) = t_j (n-j) / ((j+1) N), each term falls by a factor
    below x. Every MPFR operation rounds correctly (relative d = 2**-prec each): t_2 is off
    by 3d, each later term by 4d more than the one before, so t_j by (4j-5)d. The terms
    are added while above 2**-(prec+8) t_2 (the alternating tail is below the first
    omitted term), each addition off by d of a partial sum below t_2 (1 + x). With J <= 8
    terms and x < 2**-32 the sum, at least t_2 (1 - x), is off by under (J + 6) d relative:
    14 d; 16 d is stated. distinct = n - sum: n and the difference rounded once each, and
    16 d of the sum is below 16 x d of n, so 4 d bounds it relative to distinct > n/2.
    """
    ctx = _context(prec)
    big = gmpy2.mpfr(gmpy2.mpz(size), prec, ctx)
    term = ctx.div(gmpy2.mpfr(gmpy2.mpz(count) * (count - 1) // 2, prec, ctx), big)
    floor = ctx.mul_2exp(term, -(prec + 8))
    total = term
    for j in range(2, MAX_FIGURE_TERMS + 2):
        step = ctx.div(gmpy2.mpfr(gmpy2.mpz(count - j), prec, ctx), ctx.mul(big, j + 1))
        term = ctx.mul(term, step)
        if term < floor or count - j <= 0:
            distinct = ctx.sub(gmpy2.mpfr(gmpy2.mpz(count), prec, ctx), total)
            return (_from_mpfr(distinct), _bound(4, prec)), (_from_mpfr(total), _bound(16, prec))
        total = ctx.sub(total, term) if j % 2 == 0 else ctx.add(total, term)
    raise NoConvergence("the series of expected duplicates did not converge")


#: Most terms of that series: (prec + 8) / 32 + 2 at the first precision.
MAX_FIGURE_TERMS = 8


def _figures_by_closed_form(size: int, count: int, prec: int) -> tuple[tuple[Real, Real], ...]:
    """distinct = -N expm1(n log1p(-1/N)), duplicates = n - distinct, for x >= 2**-32.

    Work at w = prec + 40 bits, d = 2**-w, every MPFR operation correctly rounded: 1/N is
    off by d; log1p(-u) has relative condition u / ((1-u) |log1p(-u)|) <= 2 (u <= 1/2), so
    3d; n rounded and the product, 5d; expm1(y) has condition |y| e**y / (1 - e**y) <= 1
    for y < 0, so 6d; N rounded and the product, 8d, stated as 9d for second-order terms.
    duplicates = n - distinct is off by at most d (10 n + duplicates) absolutely (n
    rounded, distinct <= n off by 9d, the difference rounded); that is turned into a
    relative bound from the computed value, which is at least n x / 3 here.
    """
    work = prec + 40
    ctx = _context(work)
    big = gmpy2.mpfr(gmpy2.mpz(size), work, ctx)
    many = gmpy2.mpfr(gmpy2.mpz(count), work, ctx)
    keep = ctx.log1p(ctx.div(-1, big))
    distinct = ctx.mul(big, ctx.minus(ctx.expm1(ctx.mul(many, keep))))
    duplicates = ctx.sub(many, distinct)
    return ((_from_mpfr(distinct), _bound(9, work)),
            (_from_mpfr(duplicates), _relative_of_absolute(count, _from_mpfr(duplicates), work)))


def _relative_of_absolute(count: int, duplicates: Real, work: int) -> Real:
    """A relative bound from the absolute one a = 2**-work (10 n + duplicates): a / (dup - a).

    Every step rounds away from the value it bounds.
    """
    up, down = libmp.round_ceiling, libmp.round_floor
    absolute = libmp.mpf_shift(libmp.mpf_add(libmp.from_int(10 * count, 64, up), duplicates,
                                             64, up), -work)
    low = libmp.mpf_sub(duplicates, absolute, 64, down)
    if not mp.less(mp.ZERO, low):
        raise NoConvergence("expected duplicates not resolved at this precision")
    return libmp.mpf_div(absolute, low, 64, up)
