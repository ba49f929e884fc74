"""A curve's risks and their complements, in MPFR batches under proven bounds.

A curve reports at each of up to 500 counts the risk and its complement P(no collision),
each as a float, a 20-digit text with its bound and a log10. ``pairwise.collision_risk``
certifies each count on its own (at 2**8192 values some 0.5 ms, mostly forming L at
thousands of bits); here each count of the expansion (``regimes.choose_method``) is put
into one of two kinds of batch, of one precision each (``series_batches``):

* HORNER: counts with 129 n <= N whose power series needs at most MAX_TERMS Horner
  terms (or any number at PREC bits) come from ``series_risk.RiskBatch`` at a precision
  p chosen for the count (below);
* WIDE: the other counts with 2 <= n < N (n past N/129, or a series too long) come from
  ``series_wide.WideLogs``, one logarithm each in ball arithmetic, L within 2**-120
  absolutely; that module states the bounds of their risks and complements.

Every other count, and any whose float is left open, is ``collision_risk``'s answer,
exact path included. The rest of this docstring is about the HORNER batches; their
complements are reported as the WIDE ones are (``PairBatch``).

Precision. |L| = |ln P(no collision)| is below 0.52 n**2 / N < 2**b with
b = max(0, 2 bits(n) - bits(N) + 1), from the bit lengths (``series_risk``:
|L| <= 0.51 n**2 / N plus |D| < |L| / 4000; n < 2**bits(n), N >= 2**(bits(N) - 1)). The count is
evaluated at p = max(128, b + GUARD_BITS) bits rounded up to a multiple of PREC_STEP (u = 2**-p);
counts of one p share one batch, K and J formed at p for its largest count. Its risks keep
the bound (8K + 32) u of ``series_risk``, and L is off by e_L = (8K + 16) u relative
(the module docstring there: (7.7K + 15.5) u), so by at most d = 2**b (8K + 16) u, with
K <= MAX_TERMS (K <= 19 at p = 128, b <= 28): d < 2**-90.

Complement bound. Write w = 2**-128 and E = 2**b (8K + 20) u + 6 w; E is every complement's
relative bound in the batch, as reported in ``relative_error_bound`` (with the 20-digit
rounding, ``reporting.text_bound``).

* For L >= -2**20, c = exp(L) is formed by MPFR at p bits (one rounding u): it is
  exp(L + delta) (1 + eta) with |delta| <= d, |eta| <= u, so off by at most
  expm1(d) + u e**d <= d (1 + d) + u (1 + 2d) <= E. Its float is decided from E as the
  risk's is; its text is c rounded to 20 digits; its log10 is L / ln 10 in floats, as a
  single answer forms it.
* Below, c < e**(-2**20) is 0 as a float (decided), and its text is formed from
  t = L / ln 10: ln 10 and the quotient each rounded once at p bits, so t is off by at
  most |t| (e_L + 3u), that is |L| (e_L + 3u) / ln 10 absolutely. As |t| > 2**20 and
  p > bits of t, the whole part W = floor(t) and f = t - W in [0, 1) are exact. The
  mantissa 10**f is exp(f ln 10) at 128 bits (ln 10 and the product rounded, off by
  4.7 w absolutely; exp rounded once, w). The text's value m 10**W is then within
  exp(2**b (8K + 19) u + 5.8 w) - 1 <= E relative of c.

The texts are within their reported bounds; as for budgets, the last digit may differ
from the one ``/v1/collisions`` prints for the same count (both within their bounds).
Every float is correctly rounded (decided from the bound, else the single answer's).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from fractions import Fraction

import gmpy2
from mpmath import libmp

from urnbound.core import reporting
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT
from urnbound.core.pairwise import collision_risk
from urnbound.core.regimes import choose_method
from urnbound.core.results import ASYMPTOTIC, CollisionRisk, Magnitude
from urnbound.core.series_batches import HORNER, WIDE, batched_answers
from urnbound.core.series_risk import (
    PREC,
    RATIO_LIMIT,
    ReportedBatch,
    RiskBatch,
    horner_terms,
    stirling_terms,
)
from urnbound.core.series_wide import (
    COMPLEMENT_BOUND,
    RISK_BOUND,
    WideLogs,
    rest_terms,
    wide_prec,
)

#: Bits of p beyond those of |L| (then d < 2**-90 for every K up to MAX_TERMS).
GUARD_BITS = 100
#: Precisions are rounded up to a multiple of this (fewer batches).
PREC_STEP = 128
#: Most Horner terms of a batch above PREC bits (at PREC, K <= 19 for every count): a
#: count needing more (n near N / 129 with |L| past hundreds of bits) costs more here
#: than its logarithm, and takes the WIDE batch (a 500-point curve to 1e2466 at 2**8192
#: values: 37 ms with 48 terms, 31 with 8).
MAX_TERMS = 8
#: Below -2**EXP_LOG_BITS, exp(L) is not formed; the complement's text comes from L / ln 10.
EXP_LOG_BITS = 20
#: Bits of the mantissa 10**f of a complement's text formed from its logarithm.
MANTISSA_PREC = 128
_LN10 = math.log(10)


def log_bits(size: int, count: int) -> int:
    """b = max(0, 2 bits(n) - bits(N) + 1): n**2 / N < 2**b, so |L| < 2**b.

    >>> log_bits(2**64, 10**9), log_bits(2**64, 2**40), log_bits(2**64, 2**40 - 1)
    (0, 18, 16)
    """
    return max(0, 2 * count.bit_length() - size.bit_length() + 1)


def pair_prec(size: int, count: int) -> int:
    """p: the batch precision of ``count`` (at least PREC, a multiple of PREC_STEP).

    >>> pair_prec(2**64, 10**9), pair_prec(2**8192, 2**8000)
    (128, 7936)
    """
    wanted = log_bits(size, count) + GUARD_BITS
    return max(PREC, -(-wanted // PREC_STEP) * PREC_STEP)


def complement_bound(size: int, largest: int, terms: int, prec: int) -> Fraction:
    """E = 2**b (8K + 20) 2**-prec + 6 2**-128, b = ``log_bits`` of the largest count."""
    return (Fraction(8 * terms + 20, 2 ** (prec - log_bits(size, largest)))
            + Fraction(6, 2**MANTISSA_PREC))


def series_pairs(
    size: int,
    counts: Sequence[int],
    *,
    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT,
) -> tuple[CollisionRisk, ...]:
    """The risk and its complement at each of ``counts`` (in their order), ``size`` values.

    Counts of the regime come from the batches (module docstring); the others, and any
    the batches leave open, from ``collision_risk(size, count, exact_digit_limit=...)``.

    >>> pairs = series_pairs(2**64, [10**9, 2**40, 10, 2**63])
    >>> [p.no_collision.decimal for p in pairs]  # doctest: +NORMALIZE_WHITESPACE
    ['9.7325899112556864101e-1', '1.0917778104985178856e-14231',
     '9.9999999999999999756e-1', '9.7404695203158311959e-1229147935885106816']
    >>> [p.method for p in pairs]
    ['asymptotic', 'asymptotic', 'exact', 'asymptotic']
    """
    def key_of(count: int) -> tuple[str, int] | None:
        return batch_key(size, count, exact_digit_limit)

    def batch(key: tuple[str, int], members: list[int]) -> dict[int, CollisionRisk]:
        return _batch(size, members, key)

    def single(count: int) -> CollisionRisk:
        return collision_risk(size, count, exact_digit_limit=exact_digit_limit)

    return batched_answers(size, counts, key_of, batch, single)


def batch_key(size: int, count: int, exact_digit_limit: int) -> tuple[str, int] | None:
    """The batch of ``count``: (HORNER or WIDE, its precision), or ``None`` (alone).

    >>> batch_key(2**64, 10**9, 0), batch_key(2**64, 2**63, 0), batch_key(2**64, 10, 2000)
    (('horner', 128), ('wide', 256), None)
    """
    if count < 2 or choose_method(size, count, exact_digit_limit) != ASYMPTOTIC:
        return None
    if RATIO_LIMIT * count <= size:
        prec = pair_prec(size, count)
        if prec == PREC or horner_terms(size, count, prec) <= MAX_TERMS:
            return HORNER, prec
    if count < size and rest_terms(size - count) is not None:
        return WIDE, wide_prec(count)
    return None


def _batch(size: int, counts: list[int], key: tuple[str, int]) -> dict[int, CollisionRisk]:
    """count -> risk and complement, for each count whose two floats the batch decides."""
    kind, prec = key
    if kind == HORNER:
        stirling = stirling_terms(size, prec)
        if stirling is None:  # pragma: no cover - p > 128 only where N > 2**40, J <= 4
            return {}
        batch = horner_batch(size, counts[-1], stirling, prec)
    else:
        batch = wide_batch(size, prec)
    found = {}
    with batch.risks.ctx:  # the current context: what the decimal digits round by
        for count in counts:
            pair = batch.pair(count)
            if pair is not None:
                found[count] = pair
    return found


def horner_batch(size: int, largest: int, stirling: int, prec: int) -> PairBatch:
    """The batch of the counts up to ``largest`` at ``prec`` by ``series_risk.RiskBatch``."""
    terms = horner_terms(size, largest, prec)
    risks = RiskBatch(size, terms, stirling, prec)
    return PairBatch(size, risks, complement_bound(size, largest, terms, prec),
                     risks.log_no_collision)


def wide_batch(size: int, prec: int) -> PairBatch:
    """The batch of counts of ``wide_prec`` up to ``prec`` by ``series_wide.WideLogs``."""
    return PairBatch(size, ReportedBatch(RISK_BOUND, prec), COMPLEMENT_BOUND,
                     WideLogs(size, prec).log_no_collision)


@dataclass(frozen=True, slots=True)
class _Interval:
    """The factors 1 - E and 1 + E (1 + 2E), rounded outwards, and E's text bound."""

    shrink: gmpy2.mpfr
    stretch: gmpy2.mpfr
    text_bound: float


class PairBatch:
    """One batch of one precision: a way to L, and the reporting of the risk (the
    ``ReportedBatch`` of the risks' bound) and of the complement (its bound E).

    :param log_no: count -> L~ within the batch's proven bound, or ``None`` (undecided).
    """

    def __init__(self, size: int, risks: ReportedBatch, bound: Fraction,
                 log_no: Callable[[int], gmpy2.mpfr | None]) -> None:
        self.size = size
        self.risks = risks
        self.bound = bound
        self.log_no = log_no
        stretch = bound * (1 + 2 * bound)
        self.interval = _Interval(
            risks.down.sub(1, gmpy2.mpq(bound.numerator, bound.denominator)),
            risks.up.add(1, gmpy2.mpq(stretch.numerator, stretch.denominator)),
            reporting.text_bound(libmp.from_rational(bound.numerator, bound.denominator, 53,
                                                     libmp.round_ceiling)))
        self.ln10 = risks.ctx.log(10)
        self.mantissa_ctx = gmpy2.context(precision=MANTISSA_PREC)
        self.mantissa_ln10 = self.mantissa_ctx.log(10)

    def pair(self, count: int) -> CollisionRisk | None:
        """The answer at ``count``, or ``None`` when a float is undecided."""
        risks = self.risks
        log_no = self.log_no(count)
        if log_no is None:
            return None
        collision = risks.risk_magnitude(log_no)
        no_collision = self.complement(log_no)
        if collision is None or no_collision is None:
            return None
        return CollisionRisk(
            size=self.size, count=count, collision=collision, no_collision=no_collision,
            method=ASYMPTOTIC,
            relative_error_bound=max(collision.relative_error_bound,
                                     no_collision.relative_error_bound),
            exact=None, precision_bits=risks.prec)

    def complement(self, log_no: gmpy2.mpfr) -> Magnitude | None:
        """exp(L) reported (module docstring), or ``None`` when its float is undecided."""
        natural = float(log_no)
        if log_no >= -(2**EXP_LOG_BITS):
            value = self.risks.ctx.exp(log_no)
            rounded = self.risks.bounded_float(value, self.interval.shrink,
                                               self.interval.stretch)
            if rounded is None:
                return None
            return Magnitude(rounded, _decimal(value), natural / _LN10 + 0.0,
                             self.interval.text_bound)
        tenth = self.risks.ctx.div(log_no, self.ln10)
        log10 = natural / _LN10 if math.isfinite(natural) else float(tenth)
        return Magnitude(0.0, self.text_of_power(tenth), log10, self.interval.text_bound)

    def text_of_power(self, tenth: gmpy2.mpfr) -> str:
        """The 20-digit text of 10**t, t < -2**20 known at the batch's bits."""
        whole = self.risks.ctx.floor(tenth)
        fraction = self.risks.ctx.sub(tenth, whole)  # exact: t's last bit is above 2**-p
        low = self.mantissa_ctx
        mantissa = low.exp(low.mul(fraction, self.mantissa_ln10))
        digits, exponent, _prec = mantissa.digits(10, reporting.DECIMAL_DIGITS)
        # the exponent (thousands of digits) is written by GMP: a Python int's str took
        # 60 us at 2,460 digits, 10 us by GMP
        power = gmpy2.mpz(whole) + (int(exponent) - 1)
        return f"{digits[0]}.{digits[1:]}e{power}"  # as reporting.scientific_text


def _decimal(value: gmpy2.mpfr) -> str:
    """20 significant digits of ``value`` (> 0), rounded as the current context rounds."""
    digits, exponent, _prec = value.digits(10, reporting.DECIMAL_DIGITS)
    return reporting.scientific_text(digits, int(exponent) - 1)
