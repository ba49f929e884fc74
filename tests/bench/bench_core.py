"""Benchmark of the numerical core: forward and inverse answers, and the exact path's cost.

Run: ``python tests/bench/bench_core.py`` (not collected by pytest). Prints markdown
tables for the README. Targets (issue 2): forward median <= 100 us at any scale,
inverse <= 2 ms, the exact path never taken where it would cost more than 50 ms.
Times are CPU time of this process (time.process_time), medians over repeats, so a
busy second core disturbs them less than wall-clock time would.
"""

from __future__ import annotations

import statistics
import sys
import time
from collections.abc import Callable
from fractions import Fraction

from urnbound.core.exact import exact_risk
from urnbound.core.inverse import fewest_bits, largest_count, shortest_length
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT
from urnbound.core.pairwise import collision_risk
from urnbound.core.regimes import exact_cost_digits

FORWARD_TARGET_US = 100.0
INVERSE_TARGET_US = 2000.0
EXACT_TARGET_MS = 50.0


def median_seconds(action: Callable[[], object], repeats: int) -> float:
    """Median CPU seconds of ``action`` over ``repeats`` runs (after one warm-up)."""
    action()
    samples = []
    for _ in range(repeats):
        start = time.process_time()
        action()
        samples.append(time.process_time() - start)
    return statistics.median(samples)


FORWARD_CASES: list[tuple[str, int, int]] = [
    ("365 values, 23 draws", 365, 23),
    ("2^32, 77,000", 2**32, 77_000),
    ("2^64, 1e9", 2**64, 10**9),
    ("2^64, 5e9", 2**64, 5 * 10**9),
    ("62^10, 1e9", 62**10, 10**9),
    ("2^122 (UUID v4), 2^61", 2**122, 2**61),
    ("2^128, 1e18", 2**128, 10**18),
    ("2^200, 2^199", 2**200, 2**199),
    ("2^1024, 1e60", 2**1024, 10**60),
    ("2^8192, 100", 2**8192, 100),
    ("2^8192, 1e60", 2**8192, 10**60),
]

INVERSE_CASES: list[tuple[str, Callable[[], object]]] = [
    ("length: 62 symbols, 1e9 ids, 1e-12",
     lambda: shortest_length(62, 10**9, Fraction(1, 10**12))),
    ("length: 64 symbols, 1e60 ids, 1e-300",
     lambda: shortest_length(64, 10**60, Fraction(1, 10**300))),
    ("bits: 1e9 ids, 1e-12", lambda: fewest_bits(10**9, Fraction(1, 10**12))),
    ("capacity: 2^64, 1e-12", lambda: largest_count(2**64, Fraction(1, 10**12))),
    ("capacity: 2^64, 1/2", lambda: largest_count(2**64, Fraction(1, 2))),
    ("capacity: 2^128, 1e-18", lambda: largest_count(2**128, Fraction(1, 10**18))),
    ("capacity: 2^1024, 1e-6", lambda: largest_count(2**1024, Fraction(1, 10**6))),
    ("capacity: 2^8192, 1/2", lambda: largest_count(2**8192, Fraction(1, 2))),
    ("capacity: 365, 1/2", lambda: largest_count(365, Fraction(1, 2))),
    ("capacity: 1e6, 1/2", lambda: largest_count(10**6, Fraction(1, 2))),
]


def forward_table() -> list[float]:
    print("| forward question | method | median µs | target µs | ratio to target |")
    print("|---|---|---:|---:|---:|")
    medians = []
    for label, size, count in FORWARD_CASES:
        method = collision_risk(size, count).method
        seconds = median_seconds(lambda s=size, c=count: collision_risk(s, c), 300)
        medians.append(seconds * 1e6)
        print(f"| {label} | {method} | {seconds * 1e6:.1f} | {FORWARD_TARGET_US:.0f} | "
              f"{seconds * 1e6 / FORWARD_TARGET_US:.2f} |")
    return medians


def inverse_table() -> list[float]:
    print("\n| inverse question | median µs | target µs | ratio to target |")
    print("|---|---:|---:|---:|")
    medians = []
    for label, action in INVERSE_CASES:
        seconds = median_seconds(action, 30)
        medians.append(seconds * 1e6)
        print(f"| {label} | {seconds * 1e6:.0f} | {INVERSE_TARGET_US:.0f} | "
              f"{seconds * 1e6 / INVERSE_TARGET_US:.2f} |")
    return medians


def exact_edge_table() -> float:
    """The costliest questions the exact path still takes, beside the asymptotic answer."""
    print(f"\n| at the exact limit ({DEFAULT_EXACT_DIGIT_LIMIT:,} digits) | exact ms | "
          "asymptotic ms | exact / asymptotic | exact / 50 ms |")
    print("|---|---:|---:|---:|---:|")
    worst = 0.0
    for label, size in [("N = 2^64", 2**64), ("N = 2^1024", 2**1024), ("N = 10^6", 10**6)]:
        count = _largest_exact_count(size)
        exact = median_seconds(lambda s=size, c=count: collision_risk(s, c), 5)
        asym = median_seconds(
            lambda s=size, c=count: collision_risk(s, c, exact_digit_limit=0), 50)
        worst = max(worst, exact * 1e3)
        print(f"| {label}, n = {count:,} | {exact * 1e3:.2f} | {asym * 1e3:.3f} | "
              f"{exact / asym:.0f} | {exact * 1e3 / EXACT_TARGET_MS:.2f} |")
    rational = median_seconds(lambda: exact_risk(2**64, _largest_exact_count(2**64)), 5)
    print(f"\n(forming and reducing the fraction alone, N = 2^64: {rational * 1e3:.2f} ms)")
    return worst


def _largest_exact_count(size: int) -> int:
    """Largest n whose estimated exact cost is within the default limit."""
    low, high = 2, 10**7
    while high - low > 1:
        middle = (low + high) // 2
        if exact_cost_digits(size, middle) <= DEFAULT_EXACT_DIGIT_LIMIT:
            low = middle
        else:
            high = middle
    return min(low, size)


def main() -> int:
    forward = forward_table()
    inverse = inverse_table()
    worst_exact = exact_edge_table()
    print(f"\nforward median of medians: {statistics.median(forward):.1f} µs "
          f"(worst {max(forward):.1f} µs); inverse worst {max(inverse):.0f} µs; "
          f"exact path worst {worst_exact:.1f} ms")
    return 0


if __name__ == "__main__":
    sys.exit(main())
