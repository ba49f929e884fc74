"""Bucket loads and coverage at large N against the Cauchy integral of the generating function.

The chance that every one of N buckets holds an allowed count after n items is
P = n! N^-n [z^n] A(z)^N, with A(z) = sum of z^j / j! over the allowed counts j (a
truncated exponential for a cap, e^z minus one for a floor). The reference here takes the
coefficient as the contour integral

    [z^n] A(z)^N = A(r)^N r^-n (1 / 2 pi) integral over |t| <= pi of
                   exp(N (log A(r e^it) - log A(r)) - i n t) dt,

exact for any radius r > 0 (Cauchy's formula), evaluated by mpmath's quadrature at 60 digits.
The radius is the one where r A'(r) / A(r) = n / N, so that the integrand is a smooth bell
of width about (N v)^-1/2; it is integrated over a window of 40 widths, and the test checks
that the integrand is negligible (below 10^-60 of its peak) on a grid beyond the window. It
shares no code with the engine, whose saddle-point expansion and tail methods are only
asymptotic: this is a direct quadrature of the exact formula (Flajolet and Sedgewick,
"Analytic Combinatorics", 2009, give the formula and the contour, chapters IV and VIII
from memory; the numerical scheme is ours).

Each check asks for 1e-9 relative accuracy on both the probability and its complement, and
that the engine's reported bound is not exceeded.
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import pytest

from urnbound.core.occupancy import occupancy_risk
from urnbound.core.occupancy_results import AT_LEAST, BELOW, OccupancyRisk, Rule

WORK = mpmath.MPContext()
WORK.dps = 60
TOLERANCE = 1e-9
#: Half-width of the integration window, in standard deviations of the tilted law.
WINDOW = 40
#: The integrand beyond the window must stay below this share of its peak.
NEGLIGIBLE = WORK.mpf(10) ** -60


def _terms(rule: Rule, z: mpmath.mpc) -> mpmath.mpc:
    """A(z): sum_{j<k} z^j/j! (BELOW k), or e^z minus that sum for j < a (AT_LEAST a)."""
    ctx = WORK
    head = ctx.mpf(0)
    power = ctx.mpf(1)
    for j in range(rule.level):
        head += power
        power = power * z / (j + 1)
    return head if rule.kind == BELOW else ctx.exp(z) - head


def _log_terms(rule: Rule, z: mpmath.mpc) -> mpmath.mpc:
    """log A(z); for a floor, near 0, from the series of e^z beyond the floor."""
    ctx = WORK
    if rule.kind == AT_LEAST and abs(z) < 1:
        # e^z - sum_{j<a} z^j/j! = z^a/a! (1 + z/(a+1) + ...): no cancellation for small z.
        total, term, j = ctx.mpf(0), ctx.mpf(1), rule.level
        while abs(term) > ctx.mpf(10) ** -(ctx.dps + 5):
            total += term
            j += 1
            term = term * z / j
        return ctx.log(total) + rule.level * ctx.log(z) - ctx.log(ctx.factorial(rule.level))
    return ctx.log(_terms(rule, z))


def _mean_at(rule: Rule, r: mpmath.mpf) -> mpmath.mpf:
    """r A'(r) / A(r): the mean count of one bucket under the law tilted by r."""
    ctx = WORK
    return ctx.diff(lambda x: _log_terms(rule, ctx.exp(x)).real, ctx.log(r))


def _radius(rule: Rule, load: mpmath.mpf) -> mpmath.mpf:
    """The r with r A'(r) / A(r) = load, by bisection on log r (the mean rises with r)."""
    ctx = WORK
    low, high = ctx.mpf(-60), ctx.mpf(60)
    for _ in range(200):
        middle = (low + high) / 2
        if _mean_at(rule, ctx.exp(middle)) < load:
            low = middle
        else:
            high = middle
    return ctx.exp((low + high) / 2)


def _holds(buckets: int, count: int, rule: Rule) -> mpmath.mpf:
    """P(every bucket obeys ``rule``) by the contour integral of the module docstring."""
    ctx = WORK
    r = _radius(rule, ctx.mpf(count) / buckets)
    log_peak = _log_terms(rule, r).real
    variance = ctx.diff(lambda x: _log_terms(rule, ctx.exp(x)).real, ctx.log(r), 2)
    width = 1 / ctx.sqrt(buckets * variance)

    def integrand(t: mpmath.mpf) -> mpmath.mpc:
        z = r * ctx.expj(t)
        # ctx.j, not Python's 1j: 1j * count would round a count past 2^53 to a float.
        return ctx.exp(buckets * (_log_terms(rule, z) - log_peak) - ctx.j * (count * t))

    edge = min(WINDOW * width, ctx.pi)
    if edge < ctx.pi:
        for step in range(1, 41):  # beyond the window the integrand must be negligible
            t = edge + (ctx.pi - edge) * step / 40
            assert abs(integrand(t)) < NEGLIGIBLE
    pieces = ctx.linspace(-edge, edge, 9)
    integral = ctx.quad(integrand, pieces).real / (2 * ctx.pi)
    log_coefficient = buckets * log_peak - count * ctx.log(r) + ctx.log(integral)
    return ctx.exp(ctx.loggamma(count + 1) - count * ctx.log(buckets) + log_coefficient)


def _check(answer: OccupancyRisk, holds: mpmath.mpf) -> None:
    fails = 1 - holds
    for figure, true in ((answer.holds, holds), (answer.fails, fails)):
        error = abs(WORK.mpf(figure.decimal) - true) / true
        assert error <= max(answer.relative_error_bound, 1e-19)
        assert error <= TOLERANCE


CASES = [
    (10**4, 10**5, Rule(BELOW, 30)),  # a hash table at mean load 10, no bucket at 30
    (10**4, 10**5, Rule(BELOW, 25)),
    (10**5, 10**6, Rule(BELOW, 21)),
    (10**6, 5 * 10**6, Rule(BELOW, 12)),
    (10**7, 10**7, Rule(BELOW, 8)),  # mean load 1, none at 8
    (10**7, 10**7, Rule(BELOW, 10)),
    (10**7, 10**7, Rule(BELOW, 13)),  # some bucket at 13: about 6e-4
    (10**7, 10**8, Rule(BELOW, 40)),  # some bucket at 40: about 7e-6
    (10**7, 5 * 10**7, Rule(BELOW, 16)),
    (10**6, 10**6 * 20, Rule(AT_LEAST, 3)),  # every bucket used three times
    (10**5, 10**5 * 16, Rule(AT_LEAST, 4)),
    (10**7, 10**7 * 21, Rule(AT_LEAST, 3)),
    (10**6, 10**6 * 40, Rule(AT_LEAST, 3)),  # some bucket used under three times: 4e-9
    (2**128, 10**25, Rule(BELOW, 3)),  # three identifiers sharing a 128-bit value: 1.4e-3
    (10**12, 30 * 10**12, Rule(AT_LEAST, 2)),
]


@pytest.mark.parametrize(("buckets", "count", "rule"), CASES)
def test_loads_and_coverage_against_the_contour_integral(buckets: int, count: int,
                                                         rule: Rule) -> None:
    _check(occupancy_risk(buckets, count, rule), _holds(buckets, count, rule))


def test_the_contour_reference_reproduces_an_exact_small_case() -> None:
    # The reference itself against exact integer arithmetic for 365 days, 88 people, no day
    # shared by three: [z^88] (2 + 2z + z^2)^365 * 88! / (2^365 * 365^88), the power
    # expanded term by term in Python integers, truncated at degree 88.
    degree = 88
    power = [1] + [0] * degree
    for _ in range(365):
        power = [2 * power[j] + (2 * power[j - 1] if j >= 1 else 0)
                 + (power[j - 2] if j >= 2 else 0) for j in range(degree + 1)]
    exact = Fraction(power[degree] * math.factorial(degree), 2**365 * 365**degree)
    reference = _holds(365, degree, Rule(BELOW, 3))
    truth = WORK.mpf(exact.numerator) / exact.denominator
    assert abs(reference - truth) < WORK.mpf(10) ** -40 * truth
    # Diaconis and Mosteller (1989, JASA 84): about 88 people give an even chance of three
    # sharing a day, so P(no day shared by three) is near one half here.
    assert 0.45 < float(truth) < 0.55
