"""Pairwise collision risks of many counts of one space, in one batch with one shared bound.

A budget's series asks the risk at up to 500 counts of one space and reports only the
risk itself (not its complement). ``pairwise.collision_risk`` certifies each count on its
own (about 35 us each); here every count in the regime below is evaluated with MPFR
(gmpy2) at ``PREC`` bits, rounding to nearest, so that each operation is off by at most
u = 2**-PREC relative, and one relative bound e on the risk, proven for the whole batch,
serves every count. Counts past N/129 (n < N, M = N - n large enough for its Stirling
terms) come from ``series_wide.WideLogs``, one logarithm each at RISK_PREC bits, each risk
within RELATIVE_RISK_BOUND = 2**-117 (proven there). A count whose float is undecided at
its batch's bound, and every other count, takes ``collision_risk``.

Regime: the expansion's counts (``regimes.choose_method`` gives ``asymptotic``, so
N >= 1024 and 2 <= n) with 129 n <= N, that is x = n/N < 2**-7.

Formula. With M = N - n, ln P(no collision) is (``asymptotic.py``)

    L = -(M + 1/2) log1p(-x) - n + D,   D = R(N) - R(M),

and as n = N x the two leading terms are -x S(x), with

    S(y) = n P(y) - Q(y)/2,   P(y) = sum_{k>=2} y**(k-2) / (k (k-1)),
                              Q(y) = sum_{k>=2} y**(k-2) / (k-1) = -log1p(-y) / y,

two series of positive terms with fixed coefficients, summed by Horner's rule to K terms
each. D is summed to J Stirling terms, the first as -n / (12 N M), the others as
c_j (N**-(2j-1) - M**-(2j-1)). The risk is -expm1(L).

Error bound, for 0 < y < 2**-7 (1 + 4u), n >= 2. Write S = sum a_k y**(k-2),
a_k = (2n - k) / (2k (k-1)); |a_k| <= n / (k-1). Then S >= (n-1)/2 - n y / (2(1-y)) >= n/5,
S <= 0.51 n, and y |S'| <= n y / (1 - y) <= n / 127.

* x = n/N formed from n and N each rounded (at most three roundings): off by 4u. The
  condition of ln(y S(y)) in ln y is 1 + y S'/S <= 1.04, so x S(x) moves by 4.4u.
* Horner on positive terms: P and Q off by 2K u each (K coefficients, each rounded);
  n P - Q/2 off by (2K + 2.01) u (n P + Q/2) + u S absolutely, and (n P + Q/2) <= 3.83 S:
  (7.7K + 8.7) u relative. The tails beyond K terms are below 5.04 y**K / (K+1) of S;
  K is the least with y**K <= 2**-(PREC + 4) at the batch's largest count (K >= 2), so
  they are below 0.11u. The product x S, one more u: the main term m is off by
  (7.7K + 14.3) u.
* |L| >= |m| = x S >= n**2 / (5N). The Stirling remainder after J terms is below the first
  omitted term for both N and M, of one sign (DLMF 5.11.ii), so below |c_(J+1)| M**-(2J+1)
  and, with M >= 128N/129, below 1.48 |c_(J+1)| N**-2J of |L|; J is the least with that
  under 2**-(PREC + 4). The first term (off by 7u) is 5 / (12 n M) <= 1/4000 of |L|, the
  others (off by (2k + 6) u of M**-k each, k = 2j - 1 >= 3) and the J - 1 additions below
  u/60 of |L| together: D is off by under u/8 of |L|.
* m and D are both negative, so their sum, rounded once, is off by (7.7K + 15.5) u of |L|
  (``series_pairs`` states it as (8K + 16) u, the bound of L from which it forms exp(L)).
* d ln(-expm1(L)) / dL = 1 / (e**|L| - 1) <= 1 / |L|, so a relative error d in L moves the
  risk by a factor within exp(d / (1 - d)); expm1 rounds once more. The risk is off by
  e = (8K + 32) u relative, with room for every second-order term.

Nothing above uses the value of PREC beyond u = 2**-PREC <= 2**-128, and K and J formed for
it: a batch at p >= 128 bits (``RiskBatch(..., prec=p)``, K and J from ``horner_terms`` and
``stirling_terms`` at p) has the bound (8K + 32) 2**-p. Budgets run at PREC.

The float of a risk r computed as v is decided as ``reporting.interval_float`` decides it:
r lies in [v (1 - e), v (1 + e (1 + 2e))], both ends rounded outwards; when both round to
the same float (nearest, subnormals included), that is the float of r. The decimal text is
v rounded to 20 digits, nearest (its bound ``reporting.text_bound(e)``); log10 is that of
the float, or for a risk of 1/2 and more log1p(-q) / ln 10 from the complement q.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction

import gmpy2
from mpmath import libmp

from urnbound.core import reporting
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT
from urnbound.core.pairwise import collision_risk
from urnbound.core.regimes import choose_method
from urnbound.core.results import ASYMPTOTIC, CollisionRisk, Magnitude, Method
from urnbound.core.series_batches import HORNER, WIDE, batched_answers
from urnbound.core.series_wide import (
    RELATIVE_RISK_BOUND,
    RISK_PREC,
    WideLogs,
    rest_terms,
    stirling_coefficient,
)

#: Working precision of the batch, in bits (u = 2**-PREC).
PREC = 128
#: A count is in the batch's regime when RATIO_LIMIT n <= N (x < 2**-7).
RATIO_LIMIT = 129
#: Most Stirling terms of D; a space needing more (never above 1,024 values) is left out.
MAX_STIRLING_TERMS = 8
#: The truncation targets: 2**-(PREC + TAIL_BITS), u / 16.
TAIL_BITS = 4
#: Smallest positive normal float64.
_SMALLEST_NORMAL = 2.0**-1022
#: Below this L, e**L < 2**-1076 and log10(1 - e**L) rounds to 0 in floats.
_UNDERFLOW_LOG = -746
#: The least complement 1 - risk taken from the risk itself (else from exp(L)).
_COMPLEMENT_FLOOR = 2.0**-40
_LN10 = math.log(10)


@dataclass(frozen=True, slots=True)
class SeriesRisk:
    """The risk of one count of a batch (its complement is not formed).

    :ivar collision: P(some two of ``count`` identifiers are equal).
    :ivar relative_error_bound: the bound of ``collision.decimal`` (the batch's).
    """

    count: int
    collision: Magnitude
    method: Method
    relative_error_bound: float


def series_risks(
    size: int,
    counts: Sequence[int],
    *,
    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT,
) -> tuple[CollisionRisk | SeriesRisk, ...]:
    """The collision risk at each of ``counts`` (in their order) in a space of ``size``.

    Counts in the batch's regime come from one MPFR evaluation each (module docstring);
    the others, and any whose float the batch leaves undecided, from
    ``collision_risk(size, count, exact_digit_limit=...)``.

    >>> risks = series_risks(2**64, [10**9, 5 * 10**9, 10])
    >>> [r.collision.decimal for r in risks]  # doctest: +NORMALIZE_WHITESPACE
    ['2.6741008874431358990e-2', '4.9217905181125277130e-1', '2.4394548880923849740e-18']
    >>> [r.method for r in risks]
    ['asymptotic', 'asymptotic', 'exact']
    """
    def key_of(count: int) -> str | None:
        return batch_kind(size, count, exact_digit_limit)

    def batch(kind: str, group: list[int]) -> dict[int, SeriesRisk]:
        return _batch(size, group) if kind == HORNER else _wide_batch(size, group)

    def single(count: int) -> CollisionRisk:
        return collision_risk(size, count, exact_digit_limit=exact_digit_limit)

    return batched_answers(size, counts, key_of, batch, single)


def batch_kind(size: int, count: int, exact_digit_limit: int) -> str | None:
    """HORNER (129 n <= N), WIDE (past it: ``series_wide``), or ``None`` (alone).

    >>> batch_kind(2**64, 10**9, 0), batch_kind(2**64, 2**63, 0), batch_kind(2**64, 2**64, 0)
    ('horner', 'wide', None)
    """
    if count < 2 or choose_method(size, count, exact_digit_limit) != ASYMPTOTIC:
        return None
    if RATIO_LIMIT * count <= size:
        return HORNER
    if count < size and rest_terms(size - count) is not None:
        return WIDE
    return None


def horner_terms(size: int, largest: int, prec: int = PREC) -> int:
    """K: the least number of terms with y**K <= 2**-(prec + TAIL_BITS), at least 2.

    y < 2**-g for every count up to ``largest``, g from the bit lengths (and g >= 7).

    >>> horner_terms(2**64, 10**9), horner_terms(2**8192, 2)
    (4, 2)
    """
    gap = max(7, size.bit_length() - largest.bit_length() - 1)
    return max(2, -(-(prec + TAIL_BITS) // gap))


def stirling_terms(size: int, prec: int = PREC) -> int | None:
    """J: the least number of Stirling terms of D whose remainder is negligible, or ``None``.

    1.48 |c_(J+1)| N**-2J <= 2**-(prec + TAIL_BITS), with N >= 2**(b-1), checked in integers.

    >>> stirling_terms(2**64), stirling_terms(62**8), stirling_terms(1024)
    (1, 2, 7)
    """
    low_bits = size.bit_length() - 1
    for terms in range(1, MAX_STIRLING_TERMS + 1):
        following = stirling_coefficient(terms + 1)
        if (148 * abs(following.numerator) << (prec + TAIL_BITS)
                <= 100 * following.denominator << (2 * terms * low_bits)):
            return terms
    return None


def risk_bound(terms: int, prec: int = PREC) -> Fraction:
    """e = (8K + 32) 2**-prec, the relative bound of every risk of a batch of K terms."""
    return Fraction(8 * terms + 32, 2**prec)


def _batch(size: int, ordered: list[int]) -> dict[int, SeriesRisk]:
    """count -> risk for each count (rising) whose float is decided at the batch's bound."""
    stirling = stirling_terms(size)
    if stirling is None:  # pragma: no cover - every space of the regime has N >= 1024
        return {}
    batch = RiskBatch(size, horner_terms(size, ordered[-1]), stirling)
    found = {}
    with batch.ctx:  # the current context (of this thread): what ``digits`` rounds by
        for count in ordered:
            collision = batch.magnitude(count)
            if collision is not None:
                found[count] = SeriesRisk(count, collision, ASYMPTOTIC, batch.text_bound)
    return found


def _wide_batch(size: int, ordered: list[int]) -> dict[int, SeriesRisk]:
    """count -> risk past N/129, L from ``series_wide.WideLogs`` to a relative bound."""
    logs = WideLogs(size, RISK_PREC, relative=True)
    batch = ReportedBatch(RELATIVE_RISK_BOUND, RISK_PREC)
    found = {}
    with batch.ctx:
        for count in ordered:
            log_no = logs.log_no_collision(count)
            collision = None if log_no is None else batch.risk_magnitude(log_no)
            if collision is not None:
                found[count] = SeriesRisk(count, collision, ASYMPTOTIC, batch.text_bound)
    return found


def _context(round_mode: int, prec: int = PREC) -> gmpy2.context:
    return gmpy2.context(precision=prec, round=round_mode, emin=gmpy2.get_emin_min(),
                         emax=gmpy2.get_emax_max())


class ReportedBatch:
    """A batch's contexts and its one relative bound on every risk, and the reporting of a
    risk from L = ln P(no collision) under that bound (see the module docstring's last
    paragraph); the batches of pairwise and of tick-model risks derive from it.

    :param bound: e, proven for every risk the batch forms from its L.
    :param prec: the working precision.
    """

    def __init__(self, bound: Fraction, prec: int) -> None:
        self.prec = prec
        self.ctx = _context(gmpy2.RoundToNearest, prec)
        self.down, self.up = _context(gmpy2.RoundDown, prec), _context(gmpy2.RoundUp, prec)
        self.double = gmpy2.ieee(64)  # round to nearest, subnormals as float64 has them
        self.zero, self.half = gmpy2.mpfr(0), gmpy2.mpfr(0.5)
        self.bound = bound
        self.shrink = self.down.sub(1, gmpy2.mpq(bound.numerator, bound.denominator))
        stretch = bound * (1 + 2 * bound)
        self.stretch = self.up.add(1, gmpy2.mpq(stretch.numerator, stretch.denominator))
        self.text_bound = reporting.text_bound(
            libmp.from_rational(bound.numerator, bound.denominator, 53, libmp.round_ceiling))

    def risk(self, log_no: gmpy2.mpfr) -> gmpy2.mpfr:
        """-expm1(L) rounded to nearest: within ``bound`` (relative) of the true risk."""
        return self.ctx.minus(self.ctx.expm1(log_no))

    def risk_magnitude(self, log_no: gmpy2.mpfr) -> Magnitude | None:
        """The risk reported from L, or ``None`` when its float is undecided (as above)."""
        risk = self.risk(log_no)
        value = self.rounded_float(risk)
        if value is None:
            return None
        return Magnitude(value, _decimal(risk), self.log10(risk, log_no, value),
                         self.text_bound)

    def rounded_float(self, risk: gmpy2.mpfr) -> float | None:
        """The float of the true risk, if every value within the bound rounds to it."""
        return self.bounded_float(risk, self.shrink, self.stretch)

    def bounded_float(self, value: gmpy2.mpfr, shrink: gmpy2.mpfr,
                      stretch: gmpy2.mpfr) -> float | None:
        """The float of every real in [value shrink, value stretch], if they share one."""
        low = self.double.plus(self.down.mul(value, shrink))
        high = self.double.plus(self.up.mul(value, stretch))
        return float(low) if low == high else None

    def log10(self, risk: gmpy2.mpfr, log_no: gmpy2.mpfr, value: float) -> float:
        """log10 of the risk, as a float (``Magnitude.log10``).

        For a risk of 1/2 or more, log1p(-q) / ln 10 from the complement q = e**L: taken
        as 1 - risk when q >= 2**-40 (then off by e / q <= 2**-80 relative), else as
        exp(L); below e**-746 < 2**-1076 the quotient rounds to 0 in floats.
        """
        if risk < self.half:
            return math.log10(value) if value >= _SMALLEST_NORMAL else float(
                self.ctx.log10(risk))
        if log_no < _UNDERFLOW_LOG:
            return 0.0
        ctx = self.ctx
        complement = ctx.sub(1, risk)
        if complement < _COMPLEMENT_FLOOR:
            # log1p(-q) = -q (1 + q/2 + ...), q = e**L < 2**-40: -q / ln 10 rounded once to
            # a float, subnormals included (a float q, then a float division, rounded twice
            # and gave 0 for q near 1e-323).
            quotient = ctx.div(-ctx.exp(log_no), ctx.log(gmpy2.mpfr(10)))
            return float(self.double.plus(quotient)) + 0.0
        return math.log1p(-float(complement)) / _LN10 + 0.0


class RiskBatch(ReportedBatch):
    """One batch: its contexts, coefficients, N and bound (made per call, never shared).

    :param terms: K, Horner terms (``horner_terms`` of the largest count).
    :param stirling: J, Stirling terms (``stirling_terms``).
    :param prec: the working precision (u = 2**-prec; K and J formed for it).
    """

    def __init__(self, size: int, terms: int, stirling: int, prec: int = PREC) -> None:
        super().__init__(risk_bound(terms, prec), prec)
        ctx = self.ctx
        self.size = size
        self.big = ctx.add(size, self.zero)  # N rounded once
        self.twelve_big = ctx.mul(self.big, 12)
        # Horner's rule runs from the highest coefficient down.
        self.p_coefficients = tuple(ctx.div(1, k * (k - 1)) for k in range(terms + 1, 1, -1))
        self.q_coefficients = tuple(ctx.div(1, k - 1) for k in range(terms + 1, 1, -1))
        # (c_j, N**-k rounded, k) for the Stirling terms j = 2 .. J, k = 2j - 1
        self.stirling = tuple(
            (ctx.add(gmpy2.mpq(c.numerator, c.denominator), self.zero),
             ctx.pow(self.big, 1 - 2 * j), 2 * j - 1)
            for j in range(2, stirling + 1) for c in (stirling_coefficient(j),))

    def magnitude(self, count: int) -> Magnitude | None:
        """The risk at ``count`` reported, or ``None`` when its float is undecided.

        Run inside ``with batch.ctx`` (the decimal digits round as the current context).
        """
        return self.risk_magnitude(self.log_no_collision(count))

    def log_no_collision(self, count: int) -> gmpy2.mpfr:
        """L at ``count`` (module docstring), rounded to nearest at the batch's bits.

        Integers are converted as they enter an operation (each rounded at most once);
        ``fma``/``fms`` round once where the bound allows two roundings.
        """
        ctx = self.ctx
        x = ctx.div(count, self.big)
        series = ctx.fms(count, _horner(ctx, self.p_coefficients, x),
                         ctx.mul(_horner(ctx, self.q_coefficients, x), self.half))
        rest = self.size - count
        stirling = ctx.div(count, ctx.mul(self.twelve_big, rest))  # -D, first term
        if self.stirling:
            stirling = ctx.sub(stirling, self.higher_stirling(ctx.add(rest, self.zero)))
        return ctx.minus(ctx.fma(x, series, stirling))

    def higher_stirling(self, rest: gmpy2.mpfr) -> gmpy2.mpfr:
        """sum_{j=2..J} c_j (N**-k - M**-k), k = 2j - 1."""
        ctx = self.ctx
        total = self.zero
        for coefficient, big_power, power in self.stirling:
            difference = ctx.sub(big_power, ctx.pow(rest, -power))
            total = ctx.fma(coefficient, difference, total)
        return total


def _horner(ctx: gmpy2.context, coefficients: tuple[gmpy2.mpfr, ...],
            y: gmpy2.mpfr) -> gmpy2.mpfr:
    total = coefficients[0]
    for coefficient in coefficients[1:]:
        total = ctx.fma(total, y, coefficient)
    return total


def _decimal(risk: gmpy2.mpfr) -> str:
    """20 significant digits of ``risk`` (> 0), rounded as the current context rounds."""
    digits, exponent, _prec = risk.digits(10, reporting.DECIMAL_DIGITS)
    return reporting.scientific_text(digits, int(exponent) - 1)
