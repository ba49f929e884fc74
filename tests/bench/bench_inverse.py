"""Benchmark of the inverse questions: the certified search alone and the whole answer.

Run: ``python tests/bench/bench_inverse.py`` (not collected by pytest). Prints a markdown
table for the README. Target (issue 2): an inverse answer in at most 2 ms (median) for
ordinary questions. Times are CPU time of this process (time.process_time), medians over
repeats after one warm-up. For each question the table gives what the search spent
(certified comparisons, interval evaluations, exact comparisons), the median of the
search alone, and the median of the whole answer, which adds the two forward risks it
reports (at the answer and at its neighbour); the ratio is that of the whole answer to
the target.

The rows in the last group are the costliest requests found (sizes and counts up to
2**8192, targets of up to 200 characters from 1e-300 to just below 1): there the search
takes well under a millisecond and the time is the forward path's, whose exact branch
reports both risks at up to ``DEFAULT_EXACT_DIGIT_LIMIT`` digits.
"""

from __future__ import annotations

import statistics
import sys
from collections.abc import Callable
from decimal import Decimal
from fractions import Fraction

import mpmath
from timing import median_seconds

from urnbound.core.inverse import (
    CountFamily,
    LengthFamily,
    fewest_bits,
    largest_count,
    longest_length,
    shortest_length,
)
from urnbound.core.search import Boundary, certified_boundary

INVERSE_TARGET_US = 2000.0
REPEATS = 21


def nines(digits: int) -> Fraction:
    return Fraction("0." + "9" * digits)


def copied_risk(size: int, count: int, digits: int) -> Fraction:
    """The risk at (size, count) written to ``digits`` significant digits (mpmath)."""
    mp = mpmath.MPContext()
    mp.prec = 2 * size.bit_length() + 800
    ln_keep = mp.loggamma(size + 1) - mp.loggamma(size - count + 1) - count * mp.log(size)
    return Fraction(Decimal(mp.nstr(-mp.expm1(ln_keep), digits)))


Case = tuple[str, str, tuple[int, ...], Fraction]
#: (label, question, integers, max_risk); question "length" takes (alphabet, count),
#: "bits" takes (count,), "capacity" takes (size,).
ORDINARY: list[Case] = [
    ("length: 62 symbols, 1e9 ids, 1e-12", "length", (62, 10**9), Fraction(1, 10**12)),
    ("length: 64 symbols, 1e60 ids, 1e-300", "length", (64, 10**60), Fraction(1, 10**300)),
    ("bits: 1e9 ids, 1e-12", "bits", (10**9,), Fraction(1, 10**12)),
    ("bits: 6.1e8 ids, 1 %", "bits", (610_000_000,), Fraction(1, 100)),
    ("bits: 2^4000 ids, 1/2", "bits", (2**4000,), Fraction(1, 2)),
    ("capacity: 2^64, 1e-12", "capacity", (2**64,), Fraction(1, 10**12)),
    ("capacity: 2^64, 1/2", "capacity", (2**64,), Fraction(1, 2)),
    ("capacity: 2^128, 1e-18", "capacity", (2**128,), Fraction(1, 10**18)),
    ("capacity: 2^1024, 1e-6", "capacity", (2**1024,), Fraction(1, 10**6)),
    ("capacity: 2^8192, 1/2", "capacity", (2**8192,), Fraction(1, 2)),
    ("capacity: 365, 1/2", "capacity", (365,), Fraction(1, 2)),
    ("capacity: 1e6, 1/2", "capacity", (10**6,), Fraction(1, 2)),
]
REVIEWED: list[Case] = [
    ("length: 64 symbols, 1e9 ids, 0.(17 nines)", "length", (64, 10**9), nines(17)),
    ("capacity: 2^64, 0.(40 nines)", "capacity", (2**64,), nines(40)),
    ("capacity: 2, 0.(198 nines)", "capacity", (2,), nines(198)),
    ("capacity: 2^8191, 0.(198 nines) (was ~1 s)", "capacity", (2**8191,), nines(198)),
    ("capacity: 2^8192, 0.(198 nines)", "capacity", (2**8192,), nines(198)),
    ("capacity: 2^8192, 1e-300", "capacity", (2**8192,), Fraction(1, 10**300)),
    ("capacity: 1000, 0.(198 nines)", "capacity", (1000,), nines(198)),
]
HARDEST: list[Case] = [
    ("capacity: 2^64, target = risk at 6,074,003 to 190 digits", "capacity", (2**64,),
     copied_risk(2**64, 6_074_003, 190)),
    ("length: 62 symbols, 1e9 ids, target = risk at 62^17 to 190 digits", "length",
     (62, 10**9), copied_risk(62**17, 10**9, 190)),
    ("capacity: 2^64 - 1, 1.8e-13 (exact reports at the limit)", "capacity", (2**64 - 1,),
     Fraction(18, 10**14)),
    ("capacity: 1e6, 1 - 1e-15 (exact reports at the limit)", "capacity", (10**6,),
     1 - Fraction(1, 10**15)),
    ("length: 3 symbols, 164 ids, 1e-300 (exact reports at the limit)", "length", (3, 164),
     Fraction(1, 10**300)),
]


def answer_of(case: Case) -> Callable[[], object]:
    _, question, numbers, target = case
    if question == "length":
        return lambda: shortest_length(numbers[0], numbers[1], target)
    if question == "bits":
        return lambda: fewest_bits(numbers[0], target)
    return lambda: largest_count(numbers[0], target)


def search_of(case: Case) -> Callable[[], Boundary | None]:
    _, question, numbers, target = case
    if question == "length":
        alphabet, count = numbers
        family = LengthFamily(alphabet, count, longest_length(alphabet))
        return lambda: certified_boundary(family, target)
    if question == "bits":
        family = LengthFamily(2, numbers[0], longest_length(2))
        return lambda: certified_boundary(family, target)
    counts = CountFamily(numbers[0])
    return lambda: certified_boundary(counts, target)


def table(title: str, cases: list[Case]) -> list[float]:
    print(f"\n| {title} | comparisons | intervals | exact | search µs | answer µs | "
          "target µs | ratio to target |")
    print("|---|---:|---:|---:|---:|---:|---:|---:|")
    medians = []
    for case in cases:
        search = search_of(case)
        boundary = search()
        assert boundary is not None
        cost = boundary.cost
        search_us = median_seconds(search, REPEATS) * 1e6
        answer_us = median_seconds(answer_of(case), REPEATS) * 1e6
        medians.append(answer_us)
        print(f"| {case[0]} | {cost.comparisons} | {cost.intervals} | {cost.exact} | "
              f"{search_us:.0f} | {answer_us:.0f} | {INVERSE_TARGET_US:.0f} | "
              f"{answer_us / INVERSE_TARGET_US:.2f} |")
    return medians


def main() -> int:
    ordinary = table("inverse question", ORDINARY)
    reviewed = table("reviewed request", REVIEWED)
    hardest = table("costliest requests found", HARDEST)
    print(f"\nordinary: median {statistics.median(ordinary):.0f} µs, worst "
          f"{max(ordinary):.0f} µs; reviewed worst {max(reviewed):.0f} µs; "
          f"costliest found {max(hardest):.0f} µs")
    return 0


if __name__ == "__main__":
    sys.exit(main())
