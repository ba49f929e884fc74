"""Float estimates that place the first guesses of the inverse occupancy searches.

Nothing here is certified: a guess decides only where ``core/search.py`` starts, and so
how many engine answers a search costs, never the answer.

* :func:`log_expected_at_least`: ln(N P(Binomial(n, 1/N) >= k)), the union bound that the
  clumping heuristic 1 - exp(-N P(>= k)) turns into a risk. In the tail, the term at k
  and a geometric bound on the rest; near the bulk of the law (first ratio above 0.9),
  the Lugannani-Rice saddle-point formula with the continuity correction for a lattice
  law (k - 1/2 in the saddle-point equation and u = 2 sinh(s/2) sqrt(K''(s))), whose
  relative error there is a small fraction of the step from k to k + 1.
* :func:`log_expected_below`: ln(N P(Binomial(n, 1/N) < a)), the coverage heuristic.
* :func:`log_hazard`: ln(-ln P(the rule holds)) from an engine answer, the quantity both
  heuristics estimate.
"""

from __future__ import annotations

import math
from fractions import Fraction

from urnbound.core.occupancy_results import OccupancyRisk

#: Counts from which ln(n!/m!) is formed by Stirling's series (``log_choose``).
STIRLING_FROM = 10**6
#: First ratio of the binomial tail above which the saddle-point formula is used.
BULK_RATIO = 0.9
#: |w| below which the saddle-point formula is replaced by the normal tail (its two last
#: terms cancel near the mean).
NEAR_MEAN = 0.05


def log_expected_at_least(buckets: int, count: int, k: int) -> float:
    """ln(N P(Binomial(n, 1/N) >= k)) in floats (module docstring).

    >>> round(log_expected_at_least(365, 23, 2), 2)  # exactly ln(0.6671...) = -0.4048
    -0.4
    """
    if k > count:
        return -math.inf
    if k <= 0:
        return math.log(buckets)
    p = 1.0 / buckets
    ratio = (count - k) * p / ((k + 1) * (1 - p))
    if ratio > BULK_RATIO:
        return math.log(buckets) + _log_bulk_tail(count, p, k)
    log_pmf = log_binomial_pmf(count, p, k)
    tail = -math.log1p(-ratio)
    return math.log(buckets) + min(log_pmf + tail, 0.0)


def _log_bulk_tail(count: int, p: float, k: int) -> float:
    """ln P(Binomial(n, p) >= k) by the continuity-corrected Lugannani-Rice formula.

    K(s) = n ln(1 - p + p e**s); with x = k - 1/2 the saddle point solves K'(s) = x,
    e**s = x (1 - p) / ((n - x) p), where K(s) = n ln(n (1 - p) / (n - x)) and
    K''(s) = x (n - x) / n. Then w = sign(s) sqrt(2 (s x - K(s))), u = 2 sinh(s/2)
    sqrt(K''(s)) and P = Q(w) + phi(w) (1/u - 1/w), Q the standard normal upper tail.
    """
    n = float(count)
    x = k - 0.5
    mean = n * p
    spread = math.sqrt(n * p * (1 - p))
    if x <= 0 or x >= n:
        return 0.0
    s = math.log(x * (1 - p) / ((n - x) * p))
    cumulant = n * math.log(n * (1 - p) / (n - x))
    w_squared = max(2 * (s * x - cumulant), 0.0)
    w = math.copysign(math.sqrt(w_squared), s)
    if abs(w) < NEAR_MEAN:
        upper = 0.5 * math.erfc((x - mean) / (spread * math.sqrt(2)))
        return math.log(max(upper, 1e-300))
    u = 2 * math.sinh(s / 2) * math.sqrt(x * (n - x) / n)
    density = math.exp(-w_squared / 2) / math.sqrt(2 * math.pi)
    upper = 0.5 * math.erfc(w / math.sqrt(2)) + density * (1 / u - 1 / w)
    return math.log(max(upper, 1e-300))


def log_expected_below(buckets: int, count: int, level: int) -> float:
    """ln(N P(Binomial(n, 1/N) < a)) in floats: the term at a - 1 by log-gamma, the
    others by the ratios of successive terms (an estimate for the first guess).

    >>> round(log_expected_below(50, 214, 1), 3)  # ln(50 (49/50)**214)
    -0.411
    """
    top = min(level - 1, count)
    if top < 0:
        return -math.inf
    return math.log(buckets) + log_binomial_pmf(count, 1.0 / buckets, top) + math.log(
        _downward_sum(count, 1.0 / buckets, top))


def log_binomial_pmf(count: int, p: float, j: int) -> float:
    """ln P(Binomial(n, p) = j) in floats, for 0 <= j <= n.

    >>> round(log_binomial_pmf(10**15, 1e-12, 1000), 6)  # mpmath: -4.3728995060258
    -4.3729
    """
    return log_choose(count, j) + j * math.log(p) + (count - j) * math.log1p(-p)


def log_choose(count: int, j: int) -> float:
    """ln C(n, j) in floats. For n - j >= STIRLING_FROM the two large log-gammas are not
    subtracted (each near n ln n, their difference would lose n ln n 2**-53): with
    m = n - j and L = log1p(-j/n), Stirling's series gives
    ln(n! / m!) = j ln n - (m + 1/2) L - j + 1/(12 n) - 1/(12 m) + O(1/m**3)."""
    rest = count - j
    if rest < STIRLING_FROM:
        return math.lgamma(count + 1) - math.lgamma(j + 1) - math.lgamma(rest + 1)
    shrink = math.log1p(-j / count)
    falling = (j * math.log(count) - (rest + 0.5) * shrink - j
               + 1 / (12 * count) - 1 / (12 * rest))
    return falling - math.lgamma(j + 1)


def _downward_sum(count: int, p: float, top: int) -> float:
    """1 + sum over j < top of P(= j) / P(= top), by the ratios j q / ((n - j + 1) p)."""
    total, term = 1.0, 1.0
    ratio_scale = (1 - p) / p
    for j in range(top, 0, -1):
        term *= j * ratio_scale / (count - j + 1)
        total += term
        if term < 1e-17 * total:
            break
    return total


def log_hazard(answer: OccupancyRisk) -> float | None:
    """ln(-ln P(the rule holds)) from an engine answer; ``None`` when either side is 0."""
    holds, fails = answer.holds, answer.fails
    if holds.log10 is None or fails.log10 is None:
        return None
    if fails.log10 < -8:  # -ln(1 - r) = r (1 + r/2 + ...)
        return fails.log10 * math.log(10)
    return math.log(-holds.log10 * math.log(10))


def log_hazard_of(max_risk: Fraction) -> float:
    """ln(-ln(1 - max_risk)): the clumping heuristic's target for N P(bucket breaks it).

    >>> round(log_hazard_of(Fraction(1, 2)), 6)  # ln(ln 2)
    -0.366513
    """
    if max_risk < Fraction(1, 2):
        return math.log(max(-math.log1p(-float(max_risk)), 1e-300))
    rest = 1 - max_risk  # possibly tiny
    natural = -math.log(float(rest)) if rest > Fraction(1, 10**300) else 700.0
    return math.log(natural)


# --- Poisson masses in floats, where the saddle point's ball Newton starts ------------------

#: Ratio below which a Poisson tail is summed term by term from its edge (in floats).
SERIES_RATIO = 0.9
#: |w| from which the normal tail in the saddle-point formula is taken in log space.
LOG_TAIL_FROM = 20.0


def log_poisson_pmf(j: int, mean: float) -> float:
    """ln P(Poisson(mean) = j) in floats."""
    return j * math.log(mean) - mean - math.lgamma(j + 1)


def log_poisson_below(c: int, mean: float) -> float:
    """ln P(Poisson(mean) <= c) in floats: by its terms from c down where they fall by
    c / mean <= SERIES_RATIO or less, as 1 minus the upper tail where that one is the
    short series, else by the continuity-corrected Lugannani-Rice formula.

    >>> round(math.exp(log_poisson_below(2, 1.0)), 12)  # (1 + 1 + 1/2) / e
    0.919698602929
    """
    if c < 0:
        return -math.inf
    if c <= SERIES_RATIO * mean:
        total, term = 1.0, 1.0
        for j in range(c, 0, -1):
            term *= j / mean
            total += term
            if term < 1e-17 * total:
                break
        return log_poisson_pmf(c, mean) + math.log(total)
    if mean <= SERIES_RATIO * (c + 2):
        return math.log1p(-math.exp(log_poisson_at_least(c + 1, mean)))
    upper = _poisson_bulk_upper(c + 1, mean)
    return math.log1p(-math.exp(upper)) if upper < -1e-300 else -math.inf


def log_poisson_at_least(a: int, mean: float) -> float:
    """ln P(Poisson(mean) >= a) in floats (the mirror of :func:`log_poisson_below`).

    >>> round(math.exp(log_poisson_at_least(3, 1.0)), 12)
    0.080301397071
    """
    if a <= 0:
        return 0.0
    if mean <= SERIES_RATIO * (a + 1):
        total, term = 1.0, 1.0
        for i in range(1, 100_000):
            term *= mean / (a + i)
            total += term
            if term < 1e-17 * total:
                break
        return log_poisson_pmf(a, mean) + math.log(total)
    if a - 1 <= SERIES_RATIO * mean:
        return math.log1p(-math.exp(log_poisson_below(a - 1, mean)))
    return _poisson_bulk_upper(a, mean)


def _poisson_bulk_upper(a: int, mean: float) -> float:
    """ln P(Poisson(mean) >= a) by Lugannani-Rice with x = a - 1/2: s = ln(x / mean),
    K(s) = x - mean, w = sign(s) sqrt(2 (s x - x + mean)), u = 2 sinh(s/2) sqrt(x),
    P = Q(w) + phi(w) (1/u - 1/w); past |w| = LOG_TAIL_FROM in log space, with
    Q(w) / phi(w) = 1/w - 1/w**3 + 3/w**5 - 15/w**7 (the first terms of its series)."""
    x = a - 0.5
    s = math.log(x / mean)
    w_squared = max(2 * (s * x - x + mean), 0.0)
    w = math.copysign(math.sqrt(w_squared), s)
    if abs(w) < NEAR_MEAN:
        return math.log(0.5 * math.erfc((x - mean) / math.sqrt(2 * mean)))
    u = 2 * math.sinh(s / 2) * math.sqrt(x)
    log_density = -w_squared / 2 - 0.5 * math.log(2 * math.pi)
    if w > LOG_TAIL_FROM:
        ratio = 1 / w - 1 / w**3 + 3 / w**5 - 15 / w**7
        return log_density + math.log(ratio + 1 / u - 1 / w)
    upper = 0.5 * math.erfc(w / math.sqrt(2)) + math.exp(log_density) * (1 / u - 1 / w)
    return math.log(max(upper, 1e-300))
