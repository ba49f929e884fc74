"""Exact occupancy counts by integer polynomial powering, and what they cost.

The outcomes of n items on N buckets in which every bucket's count lies in a set S number
n! [z^n] A(z)**N with A(z) = sum_{j in S} z**j / j!. Scaled by a factorial d so that
its coefficients are integers, the power is formed with python-flint's ``fmpz_poly``
truncated at the degree needed:

* below k (S = {0..k-1}) from the bottom: d A(z) with d = min(k-1, n)!, degree n;
* below k from the top: A(z) = z**(k-1)/(k-1)! * B(1/z) with integer B(w) =
  sum_i (k-1)!/(k-1-i)! w**i, and [z^n] A**N = [w^m] B**N / (k-1)!**N for the
  deficit m = (k-1) N - n: degree m, small when n is near its largest value;
* at least a: A(z) = z**a sum_i z**i / (a+i)!, and [z^n] A**N = [z^m] G**N / (a+m)!**N
  with integer G(z) = sum_{i<=m} (a+m)!/(a+i)! z**i and the excess m = n - a N;
  for a = 1 also inclusion-exclusion, sum_j (-1)**j C(N, j) (N - j)**n (surjections).

:func:`exact_cost` estimates the work of the cheapest of these in bit-operations, the
number of coefficients times their final size in bits (flint's multiplication is
quasi-linear in that product, and powering takes log2 N of them); the engine takes the
exact path only below a cost measured to stay under a few milliseconds
(``tests/bench/bench_occupancy.py``), never by a fixed n.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import gmpy2
from flint import fmpz_poly

from urnbound.core.occupancy_results import BELOW, Rule


@dataclass(frozen=True, slots=True)
class ExactCount:
    """The number of allowed outcomes and the number of all outcomes, N**n."""

    allowed: int
    total: int


def allowed_outcomes(buckets: int, count: int, rule: Rule) -> ExactCount:
    """The number of the N**n outcomes in which every bucket obeys ``rule``.

    >>> allowed_outcomes(365, 3, Rule(BELOW, 3)).allowed == 365**3 - 365
    True
    >>> allowed_outcomes(3, 5, Rule("at_least", 1)).allowed  # 3! S2(5, 3)
    150
    """
    total = int(gmpy2.mpz(buckets) ** count)
    if trivial_holds(buckets, count, rule) is not None:
        return ExactCount(total if trivial_holds(buckets, count, rule) else 0, total)
    if rule.kind == BELOW:
        if _deficit(buckets, count, rule) < count:
            return ExactCount(_below_from_top(buckets, count, rule.level), total)
        return ExactCount(_below_from_bottom(buckets, count, rule.level), total)
    if rule.level == 1 and _surjection_cost(buckets, count) <= _at_least_cost(buckets, count, 1):
        return ExactCount(_surjections(buckets, count), total)
    return ExactCount(_at_least(buckets, count, rule.level), total)


def trivial_holds(buckets: int, count: int, rule: Rule) -> bool | None:
    """True or False when the rule surely holds or surely fails, else ``None``.

    Below k: always holds for n < k, never for n > (k - 1) N (pigeonhole). At least a:
    never for n < a N; always with one bucket (and n >= a).
    """
    if rule.kind == BELOW:
        if count < rule.level:
            return True
        if count > (rule.level - 1) * buckets:
            return False
        return None
    if count < rule.level * buckets:
        return False
    if buckets == 1:
        return True  # the one bucket holds every item
    return None


def _deficit(buckets: int, count: int, rule: Rule) -> int:
    return (rule.level - 1) * buckets - count


def _below_from_bottom(buckets: int, count: int, level: int) -> int:
    top = min(level - 1, count)
    scale = math.factorial(top)
    base = fmpz_poly(_rising_to_one(1, top)[::-1])  # top!/j! for j = 0 .. top
    coefficient = int(base.pow_trunc(buckets, count + 1)[count])
    return _outcomes(count, coefficient, scale, buckets)


def _below_from_top(buckets: int, count: int, level: int) -> int:
    deficit = _deficit(buckets, count, Rule(BELOW, level))
    top = min(level - 1, deficit)
    scale = math.factorial(level - 1)
    base = fmpz_poly(_falling_products(level - 1, top))
    coefficient = int(base.pow_trunc(buckets, deficit + 1)[deficit])
    return _outcomes(count, coefficient, scale, buckets)


def _at_least(buckets: int, count: int, level: int) -> int:
    excess = count - level * buckets
    scale = math.factorial(level + excess)
    base = fmpz_poly(_rising_to_one(level + 1, level + excess)[::-1])
    coefficient = int(base.pow_trunc(buckets, excess + 1)[excess])
    return _outcomes(count, coefficient, scale, buckets)


def _outcomes(count: int, coefficient: int, scale: int, buckets: int) -> int:
    """n! c / d**N, an exact division, in GMP integers (Python's own division of numbers
    of some 10**5 bits is quadratic: 55 ms of the 85 an answer took at 686 buckets and
    25,382 draws; GMP's is not)."""
    quotient, rest = gmpy2.f_divmod(gmpy2.fac(count) * coefficient,
                                    gmpy2.mpz(scale) ** buckets)
    assert rest == 0
    return int(quotient)


def _falling_products(top: int, terms: int) -> list[int]:
    """top!/(top - i)! = top (top - 1) ... (top - i + 1) for i = 0 .. terms, each from the
    one before (forming each factorial and dividing took most of the exact path's time
    with few buckets and a large cap: 16 ms of 16 at two buckets, 3,000 items, cap 1,600).

    >>> _falling_products(5, 3)
    [1, 5, 20, 60]
    """
    products = [1]
    for i in range(terms):
        products.append(products[-1] * (top - i))
    return products


def _rising_to_one(low: int, high: int) -> list[int]:
    """high!/j! for j = high, high - 1, .., low - 1: the products (j + 1) ... high, from 1.

    >>> _rising_to_one(3, 5)  # 5!/5!, 5!/4!, 5!/3!, 5!/2!
    [1, 5, 20, 60]
    """
    return _falling_products(high, high - low + 1)


def _surjections(buckets: int, count: int) -> int:
    """sum_j (-1)**j C(N, j) (N - j)**n: the outcomes that use every bucket."""
    total = gmpy2.mpz(0)
    choose = gmpy2.mpz(1)
    for j in range(buckets + 1):
        term = choose * gmpy2.mpz(buckets - j) ** count
        total += -term if j % 2 else term
        choose = choose * (buckets - j) // (j + 1)
    return int(total)


# --- cost estimates (bit-operations) ------------------------------------------------------


def exact_cost(buckets: int, count: int, rule: Rule) -> int:
    """Estimated bit-operations of the exact count, the final division included.

    >>> exact_cost(365, 88, Rule(BELOW, 3)) < exact_cost(10**6, 10**4, Rule(BELOW, 3))
    True
    """
    if trivial_holds(buckets, count, rule) is not None:
        return 0
    division = count * max(buckets, 2).bit_length()
    if rule.kind == BELOW:
        deficit = _deficit(buckets, count, rule)
        bottom = _below_bottom_cost(buckets, count, rule.level)
        top = _below_top_cost(buckets, deficit, rule.level)
        return min(bottom, top) + division
    cost = _at_least_cost(buckets, count, rule.level)
    if rule.level == 1:
        cost = min(cost, _surjection_cost(buckets, count))
    return cost + division


def _log2_factorial(value: int) -> int:
    return int(math.lgamma(value + 1) / math.log(2)) + 1


def _power_cost(length: int, bits: int, buckets: int) -> int:
    """Coefficients times final bits times the squarings of the powering."""
    return length * max(bits, 1) * max(buckets, 2).bit_length()


def _below_bottom_cost(buckets: int, count: int, level: int) -> int:
    top = min(level - 1, count)
    bits = buckets * (_log2_factorial(top) + 2) + count * max(buckets, 2).bit_length()
    return _power_cost(count + 1, bits, buckets)


def _below_top_cost(buckets: int, deficit: int, level: int) -> int:
    bits = buckets * _log2_factorial(level - 1) + deficit * (buckets * level).bit_length()
    return _power_cost(deficit + 1, bits, buckets)


#: The "at least a" power runs about three times slower per estimated bit-operation than
#: the others (its base already has coefficients of log2 (a+m)! bits; measured).
AT_LEAST_COST_FACTOR = 3


def _at_least_cost(buckets: int, count: int, level: int) -> int:
    excess = count - level * buckets
    bits = buckets * (_log2_factorial(level + excess) + 2) + excess * buckets.bit_length()
    return AT_LEAST_COST_FACTOR * _power_cost(excess + 1, bits, buckets)


def _surjection_cost(buckets: int, count: int) -> int:
    return (buckets + 1) * count * max(buckets, 2).bit_length()
