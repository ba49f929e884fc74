"""Occupancy probabilities near the ends of the range, by recurrences with positive terms.

Both recurrences follow from the differential equation of a power, A P' = N A' P, and
are run in ball arithmetic; their terms are all non-negative in the ranges where they
are used, so nothing cancels and the balls stay tight (bounds are proven by the balls).

Few items, below k (n <= N). With Q_j = P(no bucket reaches k after j items) and
R_j = 1 - Q_j, for j >= 0,

    Q_{j+1} = sum_{i=0}^{k-2} w_i(j) Q_{j-i},
    R_{j+1} = C(j, k-1) / N**(k-1) + sum_{i=0}^{k-2} w_i(j) R_{j-i},
    w_i(j) = C(j, i) / N**i * (1 - (j - i) / ((i + 1) N)),

because sum_i w_i(j) = 1 - C(j, k-1) / N**(k-1) (checked with sympy in the tests).
Every w_i(j) >= 0 for j <= N, and R keeps its relative accuracy however small it is.

Near the other end the count is written from its excess over the nearest filling:

* below k with deficit m = (k-1) N - n: [z^n] A**N = [w^m] B(w)**N / (k-1)!**N,
  B(w) = sum_i (k-1)!/(k-1-i)! w**i;
* at least a with excess m = n - a N: [z^n] A**N = [z^m] B(z)**N / a!**N,
  B(z) = sum_i a!/(a+i)! z**i;

and p_j = [w^j] B**N satisfies (j + 1) p_{j+1} = sum_i b_{i+1} ((i+1) N - (j - i)) p_{j-i},
positive for j < N (past it some terms are negative; short runs are still used, the
balls showing any cancellation). Then ln P = ln n! - N ln b - n ln N + ln p_m (b the
factorial above), at a precision that covers the size of ln n!. Where the recurrence
would take too many steps, p_m comes from B**N by squaring ball polynomials instead
(all coefficients positive: nothing cancels at any gap).
"""

from __future__ import annotations

from flint import arb, arb_poly

from urnbound.core.balls import log_factorial, precision
from urnbound.core.occupancy_results import BELOW, Rule

#: Largest number of inner steps (items times terms) a recurrence is run for.
MAX_STEPS = 4_000
#: Largest number of inner steps of the excess recurrence past a gap of N, where its
#: terms may be negative (``steps_from_top``).
SIGNED_MAX_STEPS = MAX_STEPS


def steps_from_bottom(buckets: int, count: int, rule: Rule) -> int | None:
    """Inner steps of the few-items recurrence, or ``None`` where it does not apply."""
    if rule.kind != BELOW or count > buckets:
        return None
    return count * max(1, min(rule.level - 1, count))


def steps_from_top(buckets: int, count: int, rule: Rule) -> int | None:
    """Inner steps of the excess recurrence, or ``None`` where it does not apply.

    Past a gap of N some terms are negative: the recurrence is still an identity and the
    balls still enclose its value, but terms may cancel, so it is used there only for
    at most ``SIGNED_MAX_STEPS`` steps (a ball too wide to report is declined).
    """
    gap = _gap(buckets, count, rule)
    if gap < 0:
        return None
    terms = min(rule.level - 1, gap) if rule.kind == BELOW else gap
    steps = gap * max(1, terms)
    return None if gap >= buckets and steps > SIGNED_MAX_STEPS else steps


def _gap(buckets: int, count: int, rule: Rule) -> int:
    if rule.kind == BELOW:
        return (rule.level - 1) * buckets - count
    return count - rule.level * buckets


def from_bottom(buckets: int, count: int, rule: Rule, prec: int) -> tuple[arb, arb]:
    """(Q_n, R_n) by the few-items recurrence, for n <= N (module docstring).

    >>> q, r = from_bottom(365, 3, Rule("below", 3), 80)
    >>> float(r.mid()) == 1 / 365**2
    True
    """
    with precision(prec):
        size = arb(buckets)
        depth = rule.level - 1
        holds = [arb(1)]
        fails = [arb(0)]
        for j in range(count):
            weight = arb(1)  # C(j, i) / N**i
            new_holds = arb(0)
            new_fails = arb(0)
            for i in range(min(depth, j + 1)):
                w = weight * (1 - (j - i) / ((i + 1) * size))
                new_holds += w * holds[-1 - i]
                new_fails += w * fails[-1 - i]
                weight = weight * (j - i) / ((i + 1) * size)
            if j >= depth:
                new_fails += _choose_over_power(j, depth, size)
            holds.append(new_holds)
            fails.append(new_fails)
            if len(holds) > depth:
                del holds[0], fails[0]
        return +holds[-1], +fails[-1]


def _choose_over_power(j: int, depth: int, size: arb) -> arb:
    """C(j, depth) / N**depth."""
    value = arb(1)
    for i in range(depth):
        value = value * (j - i) / ((i + 1) * size)
    return value


def power_pairs(buckets: int, count: int, rule: Rule) -> int | None:
    """Coefficient products of [w^m] B**N by squaring (:func:`log_from_top` with
    ``by_powers``): (m + 1)**2 per multiplication, bit_length(N) + popcount(N) - 2 of
    them; ``None`` where the excess form does not apply (a negative gap)."""
    gap = _gap(buckets, count, rule)
    if gap < 0:
        return None
    multiplications = buckets.bit_length() + bin(buckets).count("1") - 2
    return max(1, multiplications) * (gap + 1) ** 2


def log_from_top(buckets: int, count: int, rule: Rule, prec: int, *,
                 by_powers: bool = False) -> arb:
    """ln P(every bucket obeys the rule) by the excess recurrence (module docstring), or
    with ``by_powers`` from B**N formed by squaring ball polynomials truncated at degree m
    (python-flint ``arb_poly``): every coefficient of B is positive, so no product or sum
    cancels, at any gap.

    The ball is returned at the raised precision it was formed at: its absolute accuracy
    is what P's relative accuracy needs.
    """
    gap = _gap(buckets, count, rule)
    extra = 2 * max(count, 2).bit_length() + 16
    with precision(prec + extra):
        if rule.kind == BELOW:
            top = rule.level - 1
            coefficients = [arb(1)]
            for i in range(1, min(top, gap) + 1):
                coefficients.append(coefficients[-1] * (top - i + 1))
            base = log_factorial(top)
        else:
            coefficients = [arb(1)]
            for i in range(1, gap + 1):
                coefficients.append(coefficients[-1] / (rule.level + i))
            base = log_factorial(rule.level)
        power = (_power_by_squaring(coefficients, buckets, gap) if by_powers
                 else _power_coefficient(coefficients, buckets, gap))
        return (log_factorial(count) - buckets * base - count * arb(buckets).log()
                + power.log())


def _power_coefficient(coefficients: list[arb], buckets: int, degree: int) -> arb:
    """[w^degree] B(w)**N for B = sum_i coefficients[i] w**i, coefficients[0] = 1."""
    values = [arb(1)]
    for j in range(degree):
        total = arb(0)
        for i in range(min(j + 1, len(coefficients) - 1)):
            total += coefficients[i + 1] * ((i + 1) * buckets - (j - i)) * values[j - i]
        values.append(total / (j + 1))
    return values[degree]


def _power_by_squaring(coefficients: list[arb], buckets: int, degree: int) -> arb:
    """[w^degree] B(w)**N by binary powering of ball polynomials truncated at ``degree``."""
    power = arb_poly(coefficients)
    result: arb_poly | None = None
    exponent = buckets
    while True:
        if exponent & 1:
            result = power if result is None else (result * power).truncate(degree + 1)
        exponent >>= 1
        if not exponent:
            break
        power = (power * power).truncate(degree + 1)
    assert result is not None  # N >= 1
    found = result.coeffs()
    return found[degree] if degree < len(found) else arb(0)
