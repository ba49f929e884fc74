"""Chooses between the exact and the asymptotic path by estimated cost.

The exact path forms N(N-1)...(N-n+1) and N**n as integers. Its cost is governed by the
size of N**n, about n * log10(N) decimal digits: the product tree, the gcd and the
correctly rounded division are all near-linear in that size with GMP. So the exact path
is taken when that digit count is at most the configured limit (default 50,000, about
20 ms on one core; see tests/bench/bench_core.py), never by a fixed count.

Below ``asymptotic.MIN_SIZE`` (1,024 values) N**n has at most ~3,100 digits for any
n <= N, so those spaces are always answered exactly whatever the limit. Counts 0 and 1
(risk 0) and n > N (risk 1, pigeonhole) are exact without any arithmetic.
"""

from __future__ import annotations

from urnbound.core.asymptotic import MIN_SIZE
from urnbound.core.results import ASYMPTOTIC, EXACT, Method


def exact_cost_digits(size: int, count: int) -> int:
    """Estimated decimal digits of N**n, the size of the exact computation.

    Taken from the bit length of N, so slightly high.

    >>> exact_cost_digits(2**64, 1000)
    19566
    """
    return count * size.bit_length() * 30103 // 100000


def is_trivial(size: int, count: int) -> bool:
    """True when the answer is 0 or 1 without arithmetic (n <= 1 or n > N)."""
    return count <= 1 or count > size


def choose_method(size: int, count: int, exact_digit_limit: int) -> Method:
    """``"exact"`` when cheap enough (or unavoidable), else ``"asymptotic"``.

    >>> choose_method(365, 23, 0), choose_method(2**128, 10**9, 50_000)
    ('exact', 'asymptotic')
    """
    if is_trivial(size, count) or size < MIN_SIZE:
        return EXACT
    if exact_cost_digits(size, count) <= exact_digit_limit:
        return EXACT
    return ASYMPTOTIC
