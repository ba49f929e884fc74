"""Benchmark of the numerical core's forward answers at every scale, and the exact path's cost.

Run: ``python tests/bench/bench_core.py`` (not collected by pytest). Prints markdown
tables for the README. Targets: the forward risk at most 60 µs (median over the counts
asked at each scale, from 100 draws to N + 1), the exact path never taken where it
would cost more than 50 ms. Each count is timed twice: the risk alone
(``collision_risk``) and the whole answer of GET /v1/collisions (the risk plus its
related figures). Inverse answers have their own script, ``bench_inverse.py``.
Times are CPU time, medians over repeats (``timing.py``).
"""

from __future__ import annotations

import statistics
import sys
from math import isqrt

from timing import median_seconds

from urnbound.core.exact import exact_risk
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT
from urnbound.core.pairwise import collision_risk, related_figures
from urnbound.core.regimes import exact_cost_digits

FORWARD_TARGET_US = 60.0
EXACT_TARGET_MS = 50.0
REPEATS = 200

#: (label, N) for every scale: days of a year to the largest space the service takes.
SCALES: list[tuple[str, int]] = [
    ("365", 365),
    ("10^6", 10**6),
    ("2^32", 2**32),
    ("2^64", 2**64),
    ("62^10", 62**10),
    ("2^122 (UUID v4)", 2**122),
    ("2^128", 2**128),
    ("2^256", 2**256),
    ("2^512", 2**512),
    ("2^1024", 2**1024),
    ("2^4096", 2**4096),
    ("2^8192", 2**8192),
]


def counts_at(size: int) -> list[tuple[str, int]]:
    """The counts asked at one scale: every regime from a few draws to past the space."""
    root = isqrt(size)
    picks = [("100", 100), ("√N/10", root // 10), ("√N", root), ("10√N", 10 * root),
             ("N/2", size // 2), ("N−1", size - 1), ("N+1", size + 1)]
    seen: set[int] = set()
    kept = []
    for label, count in picks:
        if 2 <= count <= size + 1 and count not in seen:
            seen.add(count)
            kept.append((label, count))
    return kept


def whole_answer(size: int, count: int) -> object:
    risk = collision_risk(size, count)
    return related_figures(size, count, risk)


def forward_table() -> tuple[list[float], list[float]]:
    """Per scale: the median and worst of the risk alone and of the whole answer."""
    print("| N | counts | methods | risk median µs | risk worst µs (count) | "
          "answer median µs | answer worst µs | risk median / 60 µs |")
    print("|---|---:|---|---:|---:|---:|---:|---:|")
    medians, answers = [], []
    for label, size in SCALES:
        risk_us, answer_us, methods = [], [], set()
        for _name, count in counts_at(size):
            methods.add(collision_risk(size, count).method)
            risk_us.append(median_seconds(lambda s=size, c=count: collision_risk(s, c),
                                          REPEATS) * 1e6)
            answer_us.append(median_seconds(lambda s=size, c=count: whole_answer(s, c),
                                            REPEATS // 4) * 1e6)
        names = [name for name, _ in counts_at(size)]
        worst = max(range(len(risk_us)), key=risk_us.__getitem__)
        median = statistics.median(risk_us)
        medians.append(median)
        answers.append(statistics.median(answer_us))
        print(f"| {label} | {len(risk_us)} | {', '.join(sorted(methods))} | {median:.1f} | "
              f"{risk_us[worst]:.0f} ({names[worst]}) | {statistics.median(answer_us):.1f} | "
              f"{max(answer_us):.0f} | {median / FORWARD_TARGET_US:.2f} |")
    return medians, answers


def exact_edge_table() -> float:
    """The costliest questions the exact path still takes, beside the asymptotic answer."""
    print(f"\n| at the exact limit ({DEFAULT_EXACT_DIGIT_LIMIT:,} digits) | exact ms | "
          "asymptotic ms | exact / asymptotic | exact / 50 ms |")
    print("|---|---:|---:|---:|---:|")
    worst = 0.0
    for label, size in [("N = 2^64", 2**64), ("N = 2^1024", 2**1024), ("N = 10^6", 10**6)]:
        count = _largest_exact_count(size)
        exact = median_seconds(lambda s=size, c=count: whole_answer(s, c), 5)
        asym = median_seconds(
            lambda s=size, c=count: collision_risk(s, c, exact_digit_limit=0), 50)
        worst = max(worst, exact * 1e3)
        print(f"| {label}, n = {count:,} | {exact * 1e3:.2f} | {asym * 1e3:.3f} | "
              f"{exact / asym:.0f} | {exact * 1e3 / EXACT_TARGET_MS:.2f} |")
    rational = median_seconds(lambda: exact_risk(2**64, _largest_exact_count(2**64)), 5)
    print(f"\n(forming the exact terms alone, N = 2^64: {rational * 1e3:.2f} ms)")
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
    medians, answers = forward_table()
    worst_exact = exact_edge_table()
    print(f"\nrisk: worst per-scale median {max(medians):.1f} µs (target "
          f"{FORWARD_TARGET_US:.0f}); whole answer: worst per-scale median "
          f"{max(answers):.1f} µs; exact path worst {worst_exact:.1f} ms (target "
          f"{EXACT_TARGET_MS:.0f})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
