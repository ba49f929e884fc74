"""Benchmark of the security-review questions: formats, prefixes, guessing, ticks, reviews.

Run: ``python tests/bench/bench_security.py`` (not collected by pytest). Prints a markdown
table for the README. Target (issue 7): each answer in at most 2 ms in-process at any
scale, tails included. Each row is one whole answer (parameters loaded from their texts,
computed, every member present), the median CPU time (time.process_time) over repeats
after one warm-up; the ratio is that to the target. The rows run from small exact
questions to the largest spaces and counts the limits allow, with risks and
complements far below the float range.
"""

from __future__ import annotations

import sys

from timing import median_seconds

from urnbound.domain.question import Answer, Context, Question
from urnbound.domain.registry import default_registry

TARGET_US = 2000.0
REPEATS = 31

#: (label, question, query texts)
CASES: list[tuple[str, str, dict[str, str]]] = [
    ("formats: the listing", "formats", {}),
    ("prefixes: 12 hex of SHA-256, 1e6 items, max_risk 1e-6", "prefixes",
     {"digest_bits": "256", "prefix_chars": "12", "count": "1e6", "max_risk": "1e-6"}),
    ("prefixes: 8 bits, 1,000 items (exact)", "prefixes",
     {"digest_bits": "256", "prefix_bits": "8", "count": "1000"}),
    ("prefixes: 8192 bits, 2^4000 items, max_risk 1e-300", "prefixes",
     {"digest_bits": "8192", "prefix_bits": "8192", "count": str(2**4000),
      "max_risk": "1e-300"}),
    ("prefixes: 40 bits, 1e30 items (ambiguity next to 1)", "prefixes",
     {"digest_bits": "256", "prefix_bits": "40", "count": "1e30", "max_risk": "0.5"}),
    ("guessing: 64 bits, 1e5 live, 1e4/s for a year", "guessing",
     {"bits": "64", "live": "1e5", "guess_rate": "1e4", "window": "P365D"}),
    ("guessing: size 1e6, 10 live, 1e5 guesses (exact)", "guessing",
     {"size": "1e6", "live": "10", "guesses": "1e5"}),
    ("guessing: uuid-v4, one guess, max_success 2^-128", "guessing",
     {"format": "uuid-v4", "live": "1", "guesses": "1",
      "max_success": "2.938735877055718769921841343055614194546663891930218803771879265696"
                     "043148636817932128906250e-39"}),
    ("guessing: 2^8192, 2^8000 live, 2^8100 guesses (miss e^-2^8000)", "guessing",
     {"size": str(2**8192), "live": str(2**8000), "guesses": str(2**8100)}),
    ("guessing: 2^8192, 2^8192 - 2000 live, 1000 guesses", "guessing",
     {"size": str(2**8192), "live": str(2**8192 - 2000), "guesses": "1000"}),
    ("guessing: 2^64, 2^63 live, 2^63 guesses", "guessing",
     {"size": str(2**64), "live": str(2**63), "guesses": str(2**63)}),
    ("collisions, tick model: uuid-v7, 1e6/s for a year", "collisions",
     {"format": "uuid-v7", "rate": "1e6", "duration": "P365D"}),
    ("collisions, tick model: 1 random bit, 1e30/s for 1e12 s", "collisions",
     {"tick": "PT1S", "random_bits": "1", "rate": "1e30", "duration": "P11574074D"}),
    ("collisions, tick model: 8192 bits, burst 1e6 on 1e-6 of ticks", "collisions",
     {"tick": "PT0.000000001S", "random_bits": "8192", "rate": "1e30",
      "duration": "P365D", "burst": "1e6", "burst_share": "1e-6"}),
    ("bits, tick model: 1e6/s for a year, max_risk 1e-9", "bits",
     {"tick": "PT0.001S", "rate": "1e6", "duration": "P365D", "max_risk": "1e-9"}),
    ("bits, tick model: 1e30/s for 1e12 s, max_risk 1e-300", "bits",
     {"tick": "PT0.000000001S", "rate": "1e30", "duration": "P11574074D",
      "max_risk": "1e-300"}),
    ("rates: uuid-v7 for a year, max_risk 1e-9", "rates",
     {"format": "uuid-v7", "duration": "P365D", "max_risk": "1e-9"}),
    ("rates: 8192 bits a 1 ns tick, 1 ns, max_risk 0.5 (at the 1e30 cap)", "rates",
     {"tick": "PT0.000000001S", "random_bits": "8192", "duration": "PT0.000000001S",
      "max_risk": "0.5"}),
    ("reviews: 16 base64url, 1e9 ids, attacker 1e4/s for a year, both ceilings", "reviews",
     {"alphabet": "base64url", "length": "16", "count": "1e9", "live": "1e5",
      "guess_rate": "1e4", "window": "P365D", "max_risk": "1e-12", "max_success": "1e-9"}),
    ("reviews: uuid-v7, 5e4/s for ten years, attacker, both ceilings", "reviews",
     {"format": "uuid-v7", "rate": "5e4", "duration": "P3650D", "max_risk": "1e-9",
      "live": "1e6", "guess_rate": "1e3", "window": "P1D", "max_success": "1e-12"}),
    ("reviews: 2^8192 bits, 2^4000 ids, 2^4000 guesses, 1e-300 ceilings", "reviews",
     {"bits": "8192", "count": str(2**4000), "live": str(2**4000), "guesses": str(2**4000),
      "max_risk": "1e-300", "max_success": "1e-300"}),
]


def main() -> int:
    registry, context = default_registry(), Context()
    print(f"| request | median µs | ratio to {TARGET_US:.0f} µs |")
    print("|---|---:|---:|")
    worst = 0.0
    for label, name, texts in CASES:
        question = registry[name]
        raw = {key: [value] for key, value in texts.items()}

        def answer(question: Question = question, raw: dict[str, list[str]] = raw) -> Answer:
            return question.answer_to(question.load(raw), context)

        seconds = median_seconds(answer, REPEATS)
        micro = seconds * 1e6
        worst = max(worst, micro)
        print(f"| {label} | {micro:.0f} | {micro / TARGET_US:.2f} |")
    print(f"\nworst median: {worst:.0f} µs ({worst / TARGET_US:.2f} of the target)")
    return 0 if worst <= TARGET_US else 1


if __name__ == "__main__":
    sys.exit(main())
