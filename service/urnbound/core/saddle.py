"""Saddle-point approximation of ln P(every bucket obeys a rule), in ball arithmetic.

Notation: n items on N buckets, lambda = n / N, allowed counts S (below k, or at least a),
A(z) = sum_{j in S} z**j / j!, and P = n! [z^n] A(z)**N / N**n.

Exact identity. For any y > 0 let X_y be the law on S with P(X_y = j) ~ y**j / j!, that
is Poisson(y) conditioned on S, and S_N the sum of N independent copies. Then
[z^n] A**N = A(y)**N y**-n P(S_N = n). Comparing with the Poisson law, whose
P(Poisson(n) = n) = e**-n n**n / n!, gives

    ln P = N D(y) + ln P(S_N = n) - ln P(Poisson(n) = n),
    D(y) = ln A(y) - lambda ln(y / lambda) - lambda.

The saddle point y solves E X_y = lambda. There -D is the relative entropy of X_y to
Poisson(lambda), and with w = P(Poisson(y) not in S), t = P(Poisson(y) = c) / (1 - w)
(c = k - 1 below k, c = a - 1 at least a; sign s = -1 and +1):

    lambda = y (1 + s t),   D = lambda (u - log1p(u)) + log1p(-w),   u = -s t / (1 + s t),
    sigma**2 / lambda - 1 = s t (c - y - s y t) / (1 + s t).

Every piece is proportional to w or t, so ln P keeps its relative accuracy when P is
near 1 (the risk is then -expm1(ln P)). The cumulants of X_y are y + h_r with h_r
polynomials in (y, t) from the operator y d/dy (y' = y, t' = t (c - y - s y t)).

Expansion. The local Edgeworth expansion of a lattice sum at its mean,
ln P(S_N = n) = -1/2 ln(2 pi N sigma**2) + G_1 + G_2 + G_3 + G_4 + ..., has G_i of
order (N sigma**2)**-i, polynomials in the standardized cumulants (derived once with
sympy: tests/core/test_saddle.py checks them against Stirling's series, which is the
Poisson case, -1/(12 n), 0, 1/(360 n**3), 0). The same truncation of the Poisson side
is subtracted, so both remainders cancel to first order in w:

    ln P = N D - 1/2 log1p(sigma**2/lambda - 1) + (G_1 + 1/(12 n)) + G_2
           + (G_3 - 1/(360 n**3)).

Three correction terms are kept. The truncation is estimated by
4 (|G_4| + |G_3 - 1/(360 n**3)| / (N sigma**2)), the next term with a margin for the
one after it, plus what evaluating a little off the saddle point costs (``_off_saddle``);
this is an estimate, not a theorem, and the tests check it against exact values on a
grid. The expansion is not used when N sigma**2 is below ``MIN_SPREAD``.
Rounding is carried by the balls.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from flint import arb, ctx

from urnbound.core import balls
from urnbound.core import occupancy_guesses as guesses
from urnbound.core.balls import precision
from urnbound.core.errors import NoConvergence
from urnbound.core.occupancy_results import Rule

#: Smallest N sigma**2 (the spread of the sum) at which the expansion is used.
MIN_SPREAD = 40
#: Newton steps of the saddle point (it converges quadratically; the bound is a guard).
MAX_NEWTON_STEPS = 60
#: Highest cumulant needed (G_4 uses the tenth).
TOP_CUMULANT = 10


@dataclass(frozen=True, slots=True)
class SaddleEstimate:
    """ln P(every bucket obeys the rule), as a ball that includes the truncation estimate.

    :ivar log_holds: the ball for ln P.
    :ivar truncation: the estimated truncation error of ln P (absolute).
    :ivar spread: N sigma**2, the expansion's large parameter.
    :ivar prec: working precision in bits.
    """

    log_holds: arb
    truncation: arb
    spread: arb
    prec: int


def log_holds(buckets: int, count: int, rule: Rule, prec: int) -> SaddleEstimate | None:
    """The saddle-point estimate at ``prec`` bits, or ``None`` where it is not used.

    >>> e = log_holds(365, 88, Rule("below", 3), 96)
    >>> round(float(e.log_holds.mid().exp()), 4)  # exact: 0.48893...
    0.4889
    """
    with precision(prec):
        mean = arb(count) / buckets
        y = _saddle(mean, rule, prec)
        return _estimate(buckets, count, rule, mean, y, prec)


def _parts(y: arb, rule: Rule) -> tuple[arb, arb, arb]:
    """(w, 1 - w, t) at y: the removed and kept Poisson masses, each summed from the side
    where it is small, and the conditioned mass at the edge c."""
    if rule.sign < 0:
        small_removed = y.mid() < rule.level
        tail = (balls.poisson_at_least(rule.level, y) if small_removed
                else balls.poisson_below(rule.level, y))
    else:
        small_removed = y.mid() > rule.level
        tail = (balls.poisson_below(rule.level, y) if small_removed
                else balls.poisson_at_least(rule.level, y))
    removed, kept = (tail, 1 - tail) if small_removed else (1 - tail, tail)
    return removed, kept, balls.poisson_pmf(rule.edge, y) / kept


def _spread_ratio(y: arb, t: arb, rule: Rule) -> arb:
    """sigma**2 / lambda - 1 = s t (c - y - s y t) / (1 + s t)."""
    s = rule.sign
    return s * t * (rule.edge - y - s * y * t) / (1 + s * t)


def _saddle(mean: arb, rule: Rule, prec: int) -> arb:
    """y with E X_y = lambda: Newton on ln y at 64 bits, then polished at ``prec`` bits.

    d(E X_y)/d(ln y) = sigma**2 > 0, so E X_y rises with y: a bracket in ln y is kept,
    and a step that would leave it bisects instead (or moves by 2 while one side is open).
    The search starts from the float model's saddle point (``_float_start``); once a
    step moves ln y by less than 2**-NEAR_BITS, the point it reaches is good to about the
    step's square, and the polish goes on from there. Where the saddle point lies within
    2**-NEAR_BITS of ln lambda (the conditioning removes little mass: a tail question,
    or a full coverage), the first Newton step is taken at ``prec`` bits from ln lambda
    and the polish goes on from it (``_near_mean``).
    """
    log_mean = float(mean.log().mid())  # (lambda itself may be below the floats)
    start = _float_start(log_mean, rule)
    if abs(start - log_mean) < 2.0**-NEAR_BITS:
        near = _near_mean(mean, rule, prec)
        if near is not None:
            return near
    low: float | None = None
    high: float | None = None
    with precision(64):
        log_y = start
        for _ in range(MAX_NEWTON_STEPS):
            gap, variance = _gap(arb(log_y).exp(), mean, rule)
            if float(gap.mid()) > 0:
                high = log_y
            else:
                low = log_y
            move = float((gap / variance).mid())
            candidate = log_y - move
            if abs(move) < 2.0**-NEAR_BITS:  # the step leaves about its square (polish)
                good = min(2 * int(-math.log2(max(abs(move), 2.0**-60))) - 8,
                           _ball_step_bits(log_y))
                return _polish(arb((arb(log_y) - gap / variance).mid()), mean, rule, prec,
                               good)
            if low is not None and high is not None and not low < candidate < high:
                candidate = (low + high) / 2
            elif (low is not None and candidate <= low) or (high is not None and candidate >= high):
                candidate = log_y + (2.0 if high is None else -2.0)
            log_y = candidate
    raise NoConvergence("the saddle point did not settle")


def _float_start(log_mean: float, rule: Rule) -> float:
    """ln y where E X_y = lambda in floats: the same bracketed Newton on a float model
    (the Poisson masses of ``occupancy_guesses``), so that the ball Newton starts within
    their error (about 1e-9) of the saddle point: it stops once a step moves ln y by less
    than 2**-FLOAT_START_BITS; ln lambda where floats fail.

    Only where the ball search starts depends on it: every step after it is checked.
    """
    s, c = rule.sign, rule.edge
    low: float | None = None
    high: float | None = None
    mean = math.exp(log_mean) if log_mean < 700 else math.inf
    if not 0.0 < mean < math.inf:
        return log_mean  # lambda past the floats: the ball search starts at ln lambda
    log_y = log_mean
    try:
        for _ in range(MAX_NEWTON_STEPS):
            y = math.exp(log_y)
            kept = (guesses.log_poisson_below(c, y) if s < 0
                    else guesses.log_poisson_at_least(rule.level, y))
            t = math.exp(guesses.log_poisson_pmf(c, y) - kept)
            expected = y * (1 + s * t)
            variance = expected * (1 + s * t * (c - y - s * y * t) / (1 + s * t))
            if not variance > 0:
                break
            if expected > mean:
                high = log_y
            else:
                low = log_y
            move = (expected - mean) / variance
            candidate = log_y - move
            if abs(move) < 2.0**-FLOAT_START_BITS:  # floats carry the model no further
                return candidate
            if low is not None and high is not None and not low < candidate < high:
                candidate = (low + high) / 2
            elif (low is not None and candidate <= low) or (high is not None and candidate >= high):
                candidate = log_y + (2.0 if high is None else -2.0)
            log_y = candidate
    except (OverflowError, ValueError, ZeroDivisionError):
        pass
    return log_mean  # no float model: the ball search starts at ln lambda


def _gap(y: arb, mean: arb, rule: Rule) -> tuple[arb, arb]:
    """(E X_y - lambda, sigma**2 = d E X_y / d ln y) at y, the latter at extra bits."""
    with precision(ctx.prec + _extra_bits(y, rule)):
        _, _, t = _parts(y, rule)
        expected = y * (1 + rule.sign * t)
        gap, variance = expected - mean, expected * (1 + _spread_ratio(y, t, rule))
    return +gap, +variance


def _extra_bits(y: arb, rule: Rule) -> int:
    """Bits lost to cancellation in sigma**2 and the cumulants near a full filling.

    Where the conditioned law sits at the edge of S (y far above k, or far below a),
    sigma**2 / lambda is about k / y or y / a, formed as a difference of terms of size
    1: up to three times log2 of that ratio cancel (1 - t, k - 1 - lambda and
    sigma**2 / lambda each lose about as much); four times is kept.
    """
    if rule.sign < 0:
        far = _exponent(y) - rule.level.bit_length()
    else:
        far = rule.level.bit_length() - _exponent(y)
    return 4 * max(0, far + 1) + 16


#: The first Newton step from ln lambda is kept at full precision when it moves ln y by
#: less than 2**-NEAR_BITS: the point it reaches is then good to about 2**(1 - 2 NEAR_BITS)
#: (the step's error is (kappa_3 / 2 sigma**2) times its square, and kappa_3 / sigma**2
#: is near 1 where the conditioning removes little mass), so the polish starts at
#: 2 NEAR_BITS - 8 good bits.
NEAR_BITS = 24
#: Steps of the float model stop below 2**-FLOAT_START_BITS (its own error is larger).
FLOAT_START_BITS = 32
#: Bits of ln y a float carries (53, less what ln y's size takes): the most a step in
#: floats is credited with.
FLOAT_BITS = 45


def _ball_step_bits(log_y: float) -> int:
    """Bits of ln y that the last 64-bit Newton step carries, taken as a ball's midpoint
    rather than a float (64, less what ln y's size takes and a margin of 4): the polish
    then starts with one step fewer. Only the steps depend on it, never the bound."""
    size = math.frexp(log_y)[1] if log_y else 0
    return max(FLOAT_BITS, 60 - max(0, size))


def _near_mean(mean: arb, rule: Rule, prec: int) -> arb | None:
    """The polished saddle point when one Newton step from ln lambda moves it by less than
    2**-NEAR_BITS, else ``None`` (the bracketed search at 64 bits is then used)."""
    with precision(prec):
        log_y = arb(mean.log().mid())
        gap, variance = _gap(log_y.exp(), mean, rule)
        move = gap / variance
        size = abs(float(move.mid()))
        if not size < 2.0**-NEAR_BITS:
            return None
        if size == 0.0 or math.log2(size) < 16 - prec:  # (2.0 ** (16 - prec) underflows)
            return arb(log_y.exp().mid())
        good = max(2 * int(-math.log2(size)) - 8, 40)
        return _polish(arb((log_y - move).mid()), mean, rule, prec, good)


def _polish(log_y: arb, mean: arb, rule: Rule, prec: int, good: int = 40) -> arb:
    """Newton steps at ``prec`` bits from a saddle point good to 2**-good in ln y.

    Newton converges quadratically, so each step doubles the bits: the steps stop once
    the last one has moved ln y by less than 2**(16 - prec), or once they carry at least
    ``prec`` bits by that doubling. What is left is accounted for by ``_off_saddle``,
    from the ball of N E X_y - n at the point returned.
    """
    if good >= prec:
        return arb(log_y.exp().mid())
    with precision(prec):
        for _ in range(MAX_NEWTON_STEPS):
            gap, variance = _gap(log_y.exp(), mean, rule)
            move = gap / variance
            log_y = arb((log_y - move).mid())
            good *= 2
            if abs(float(move.mid())) < 2.0 ** (16 - prec) or good >= prec:
                return arb(log_y.exp().mid())  # an exact point: no radius to amplify
    raise NoConvergence("the saddle point did not settle at full precision")


def _estimate(buckets: int, count: int, rule: Rule, mean: arb, y: arb,
              prec: int) -> SaddleEstimate | None:
    with precision(prec + _extra_bits(y, rule)):
        return _estimate_at(buckets, count, rule, mean, y, ctx.prec)


def _estimate_at(buckets: int, count: int, rule: Rule, mean: arb, y: arb,
                 prec: int) -> SaddleEstimate | None:
    s = rule.sign
    full = _corrections_bits(y, rule, prec)
    for bits in sorted({min(full, _first_corrections_bits(y, rule, prec)), full}):
        with precision(bits):  # one evaluation of the masses serves both parts
            removed, kept, t = _parts(y, rule)
        ratio = _spread_ratio(y, t, rule)
        spread = buckets * mean * (1 + ratio)
        if spread.upper() < MIN_SPREAD or not spread.lower() > MIN_SPREAD:
            return None
        corrections, truncation = _corrections(buckets, count, y, t, rule, spread, bits)
        if _rounding_is_negligible(corrections, truncation):
            break
    u = -s * t / (1 + s * t)
    entropy = mean * _u_minus_log1p(u)
    log_kept = (-removed).log1p() if removed.mid() < 0.5 else kept.log()
    divergence = buckets * (entropy + log_kept)
    value = divergence - ratio.log1p() / 2 + corrections
    return SaddleEstimate(balls.widened(value, truncation), truncation, spread, prec)


def _first_corrections_bits(y: arb, rule: Rule, prec: int) -> int:
    """The corrections are first formed with half the cancellation allowance of
    :func:`_corrections_bits`; where their rounding is not negligible beside the
    truncation estimate (``_rounding_is_negligible``) they are formed again with all of it.
    """
    scale = max(int(float(y.mid())) + 1, rule.level + 1).bit_length()
    return prec + TOP_CUMULANT * scale // 2 + 32


def _rounding_is_negligible(corrections: arb, truncation: arb) -> bool:
    """The corrections' rounding radius, and the truncation estimate's own, are below
    2**-8 of that estimate: more bits would not narrow the ball by more than that."""
    floor = truncation.lower() / 256
    return bool(corrections.rad() <= floor and truncation.rad() <= floor)


def _u_minus_log1p(u: arb) -> arb:
    """u - log1p(u) with its relative accuracy for small |u|: u**2/2 - u**3/3 + ...

    For |u| < 2**-16 the series alternates with falling terms, so the first omitted term
    bounds the rest (added to the radius); otherwise the closed form at 40 extra bits.
    """
    if _exponent(u) > -16:
        with precision(ctx.prec + 40):
            value = u - u.log1p()
        return +value
    total = arb(0)
    power = u
    floor = arb(2) ** -(ctx.prec + 8)
    for j in range(2, 4 * ctx.prec):
        power = power * u
        term = power / j
        total += term if j % 2 == 0 else -term
        if abs(term).upper() < (floor * abs(total)).lower():
            return balls.widened(total, abs(power * u / (j + 1)))
    raise NoConvergence("the series of u - log1p(u) did not converge")


def _exponent(x: arb) -> int:
    """e with |x| about 2**e (a very negative number for 0).

    :raises NoConvergence: for a ball that is not finite (a step that ran away).
    """
    if not x.mid().is_finite():
        raise NoConvergence("a value of the saddle-point computation is not finite")
    mantissa, exponent = x.mid().man_exp()
    if int(mantissa) == 0:
        return -(10**6)
    return int(exponent) + int(mantissa).bit_length()


def _corrections(buckets: int, count: int, y: arb, t: arb, rule: Rule, spread: arb,
                 bits: int) -> tuple[arb, arb]:
    """(G_1 + 1/(12n)) + G_2 + (G_3 - 1/(360 n**3)), and the truncation estimate, at
    ``bits`` (``t`` carries them: the cumulants cancel many, :func:`_corrections_bits`)."""
    with precision(bits):
        kappas = _cumulants(y, t, rule)
        variance = kappas[2]
        unit = buckets * variance
        scaled = {r: buckets * kappas[r] / unit ** (arb(r) / 2) for r in range(3, TOP_CUMULANT + 1)}
        g1, g2, g3, g4 = _edgeworth(scaled)
        n = arb(count)
        first = g1 + 1 / (12 * n)
        third = g3 - 1 / (360 * n**3)
        truncation = 4 * (abs(g4) + abs(third) / spread) + _off_saddle(
            buckets, count, y, t, rule, spread, scaled[3], _spread_ratio(y, t, rule))
        total = first + g2 + third
    return +total, +truncation


def _corrections_bits(y: arb, rule: Rule, prec: int) -> int:
    """Working bits of the corrections: the cumulants of order r cancel about r times the
    bits of max(y, k) (their polynomials in (y, t) have terms of that size)."""
    scale = max(int(float(y.mid())) + 1, rule.level + 1).bit_length()
    return prec + TOP_CUMULANT * scale + 32


def _off_saddle(buckets: int, count: int, y: arb, t: arb, rule: Rule, spread: arb,
                skew: arb, ratio: arb) -> arb:
    """What evaluating at a point y a little off the saddle point can cost ln P.

    y is an exact point within about 2**-prec of the saddle point, where N E X_y = n
    exactly; the expansion is taken at the mean, so it misses the drift terms at
    d = n - N E X_y: -d**2 / (2 N sigma**2), which the form of N D used here offsets up
    to d**2 |1/(N sigma**2) - 1/n| / 2, and from the third Hermite term about
    |l_3| |d| / (2 sqrt(N sigma**2)); N D also moves by about |d| t. Twice their sum
    (with d / (N sigma**2) for what is left) and |d| from its ball: small beside ln P
    unless P is within some 2**-prec of 1, where it keeps the expansion from claiming
    accuracy it lacks. An estimate of the same standing as the truncation estimate.
    """
    drift = abs(count - buckets * y * (1 + rule.sign * t))
    # 1/(N sigma**2) - 1/n = -v / (N sigma**2) with v = sigma**2 / lambda - 1, formed from
    # v itself (relatively accurate) rather than as a difference of two reciprocals.
    quadratic = drift**2 * abs(ratio) / spread
    return 2 * (quadratic + abs(skew) * drift / spread.sqrt() + drift * abs(t)
                + drift / spread)


def _cumulants(y: arb, t: arb, rule: Rule) -> dict[int, arb]:
    """kappa_1 .. kappa_10 of X_y, from the polynomials in (y, t) of the module docstring.

    Their coefficients are polynomials in the edge c (``CUMULANT_TERMS``), evaluated here
    in integers; the sums over the terms are the only ball arithmetic.
    """
    c = rule.edge
    found: dict[int, arb] = {}
    powers_y = [arb(1)]
    powers_t = [arb(1)]
    for r, terms in enumerate(CUMULANT_TERMS[rule.sign > 0], start=1):
        while len(powers_y) <= r + 1:
            powers_y.append(powers_y[-1] * y)
        while len(powers_t) <= r + 1:
            powers_t.append(powers_t[-1] * t)
        total = arb(0)
        for i, j, coefficients in terms:
            value = 0
            for coefficient in reversed(coefficients):  # Horner in c
                value = value * c + coefficient
            if value:
                total += value * powers_y[i] * powers_t[j]
        found[r] = total
    return found


#: One polynomial in (y, t) whose coefficients are polynomials in c: (i, j) -> the
#: coefficients of c**0, c**1, ... of the term y**i t**j.
_Polynomial = dict[tuple[int, int], tuple[int, ...]]


def _derivative(poly: _Polynomial, s: int) -> _Polynomial:
    """y d/dy of a polynomial in (y, t): y**i t**j -> (i + j c) y**i t**j - j y**(i+1) t**j
    - s j y**(i+1) t**(j+1), with c kept as a variable."""
    out: dict[tuple[int, int], list[int]] = {}

    def add(key: tuple[int, int], coefficients: list[int]) -> None:
        target = out.setdefault(key, [])
        target.extend([0] * (len(coefficients) - len(target)))
        for power, value in enumerate(coefficients):
            target[power] += value

    for (i, j), coefficients in poly.items():
        times_c = [0, *coefficients]  # c times the coefficient polynomial
        add((i, j), [i * a + j * b for a, b in zip([*coefficients, 0], times_c, strict=True)])
        if j:
            add((i + 1, j), [-j * a for a in coefficients])
            add((i + 1, j + 1), [-s * j * a for a in coefficients])
    return {key: _trimmed(values) for key, values in out.items() if any(values)}


def _trimmed(values: list[int]) -> tuple[int, ...]:
    """The coefficients without their zero top powers."""
    while values and values[-1] == 0:
        values.pop()
    return tuple(values)


def _cumulant_terms(s: int) -> tuple[tuple[tuple[int, int, tuple[int, ...]], ...], ...]:
    """For r = 1 .. TOP_CUMULANT: the terms (i, j, coefficients in c) of kappa_r."""
    poly: _Polynomial = {(1, 0): (1,), (1, 1): (s,)}
    found = []
    for _ in range(TOP_CUMULANT):
        found.append(tuple((i, j, values) for (i, j), values in sorted(poly.items())))
        poly = _derivative(poly, s)
    return tuple(found)


#: The cumulant polynomials for "at least a" (index True, s = +1) and "below k" (s = -1),
#: formed once at import (pure integers, immutable).
CUMULANT_TERMS = (_cumulant_terms(-1), _cumulant_terms(1))


def _edgeworth(scaled: dict[int, arb]) -> tuple[arb, arb, arb, arb]:
    """G_1 .. G_4 from the scaled standardized cumulants l_r = N kappa_r / (N sigma**2)**(r/2).

    Coefficients of ln of the Edgeworth series at the mean (module docstring).
    """
    l3, l4, l5, l6, l7, l8, l9, l10 = (scaled[r] for r in range(3, 11))
    g1 = l4 / 8 - 5 * l3**2 / 24
    g2 = (5 * l3**4 / 16 - 25 * l3**2 * l4 / 48 + 7 * l3 * l5 / 48 + l4**2 / 12 - l6 / 48)
    g3 = (-1105 * l3**6 / 1152 + 985 * l3**4 * l4 / 384 - 161 * l3**3 * l5 / 192
          - 445 * l3**2 * l4**2 / 288 + 113 * l3**2 * l6 / 576 + 7 * l3 * l4 * l5 / 12
          - l3 * l7 / 32 + 11 * l4**3 / 96 - 5 * l4 * l6 / 96 - 21 * l5**2 / 640 + l8 / 384)
    g4 = (-l10 / 3840 + 565 * l3**8 / 128 - 12455 * l3**6 * l4 / 768
          + 4319 * l3**5 * l5 / 768 + 40205 * l3**4 * l4**2 / 2304 - 1145 * l3**4 * l6 / 768
          - 10283 * l3**3 * l4 * l5 / 1152 + 175 * l3**3 * l7 / 576
          - 1585 * l3**2 * l4**3 / 288 + 1823 * l3**2 * l4 * l6 / 1152
          + 553 * l3**2 * l5**2 / 576 - 53 * l3**2 * l8 / 1152 + 679 * l3 * l4**2 * l5 / 288
          - 35 * l3 * l4 * l7 / 192 - 371 * l3 * l5 * l6 / 1440 + 11 * l3 * l9 / 2304
          + 17 * l4**4 / 72 - 89 * l4**2 * l6 / 576 - 49 * l4 * l5**2 / 256 + l4 * l8 / 96
          + 11 * l5 * l7 / 640 + 113 * l6**2 / 11520)
    return g1, g2, g3, g4



#: Largest relative gap E X_y / lambda - 1 at which the float saddle point is used.
FLOAT_SADDLE_GAP = 1e-6


def float_log_holds(buckets: int, count: int, rule: Rule) -> float | None:
    """ln P(every bucket obeys the rule) in floats: N D - 1/2 log1p(sigma**2/lambda - 1)
    + G_1 + 1/(12 n) (module docstring) at the float model's saddle point.

    Uncertified, for the first guesses of the inverse searches (few buckets, where the
    clumping heuristic misses); ``None`` where the floats fail.

    >>> round(float_log_holds(365, 88, Rule("below", 3)), 3)  # exact: ln 0.48893 = -0.7155
    -0.716
    """
    try:
        mean = count / buckets
        y = math.exp(_float_start(math.log(mean), rule))
        s, c = rule.sign, rule.edge
        kept = (guesses.log_poisson_below(c, y) if s < 0
                else guesses.log_poisson_at_least(rule.level, y))
        t = math.exp(guesses.log_poisson_pmf(c, y) - kept)
        u = -s * t / (1 + s * t)
        if not abs(y * (1 + s * t) - mean) <= FLOAT_SADDLE_GAP * mean:
            return None  # the float model found no saddle point here
        _, variance, third, fourth = _float_cumulants(y, t, rule)
        first = (fourth / variance**2 / 8 - 5 * third**2 / variance**3 / 24) / buckets
        value = (buckets * (mean * (u - math.log1p(u)) + kept)
                 - math.log(variance / mean) / 2 + first + 1 / (12 * count))
    except (OverflowError, ValueError, ZeroDivisionError):
        return None
    return value if math.isfinite(value) else None


def _float_cumulants(y: float, t: float, rule: Rule) -> list[float]:
    """The first four cumulants of X_y in floats, from kappa_1 = y (1 + s t) by the
    operator y d/dy on polynomials in (y, t) (module docstring: y' = y,
    t' = t (c - y - s y t))."""
    s, c = rule.sign, rule.edge
    terms: dict[tuple[int, int], float] = {(1, 0): 1.0, (1, 1): float(s)}
    found = []
    for _ in range(4):
        found.append(sum(a * y**i * t**j for (i, j), a in terms.items()))
        following: dict[tuple[int, int], float] = {}
        for (i, j), a in terms.items():
            for key, value in (((i, j), a * (i + j * c)), ((i + 1, j), -a * j),
                               ((i + 1, j + 1), -s * a * j)):
                if value:
                    following[key] = following.get(key, 0.0) + value
        terms = following
    return found
