"""Benchmark of the occupancy questions: per-answer time at every scale, tails included.

Run: ``python tests/bench/bench_occupancy.py`` (not collected by pytest). Prints two
markdown tables for the README. Target (issue 8): at most 5 ms per answer in-process.
"engine" is ``occupancy_risk`` alone; "answer" is the whole question (load, compute,
the expected figures and the profile, inverse searches included). Times are CPU time of
this process, medians after one warm-up. The second table measures the exact path at
the cost limits the engine uses, to show it is never taken where it would pass 50 ms.
"""

from __future__ import annotations

import sys

from timing import median_seconds

from urnbound.core.occupancy import EXACT_FIRST_COST, EXACT_MAX_COST, occupancy_risk
from urnbound.core.occupancy_exact import allowed_outcomes, exact_cost
from urnbound.core.occupancy_results import AT_LEAST, BELOW, Rule
from urnbound.domain.question import Context
from urnbound.domain.registry import default_registry

TARGET_MS = 5.0
EXACT_LIMIT_MS = 50.0
REPEATS = 7

#: (label, question, query): invented sizing questions of a storage service.
CASES = (
    ("three share one of 365 days, 88 people", "loads",
     {"buckets": "365", "count": "88", "load": "3"}),
    ("hash table 1e4 slots, 1e5 keys, load 30", "loads",
     {"buckets": "1e4", "count": "1e5", "load": "30"}),
    ("1e7 slots, 20 keys, load 3 (tail 1e-12)", "loads",
     {"buckets": "1e7", "count": "20", "load": "3"}),
    ("1e4 slots, 644 keys, load 6 (tail 9e-7)", "loads",
     {"buckets": "1e4", "count": "644", "load": "6"}),
    ("1e7 slots, 1.5e7 keys, load 3 (complement 1e-1772337)", "loads",
     {"buckets": "1e7", "count": "1.5e7", "load": "3"}),
    ("1e7 slots, 2e7 - 10 keys, load 3", "loads",
     {"buckets": "1e7", "count": "19999990", "load": "3"}),
    ("1e12 slots, 1e15 keys, load 1200", "loads",
     {"buckets": "1e12", "count": "1e15", "load": "1200"}),
    ("shards: 1e3, 1e8 rows, smallest load within 1e-6", "loads",
     {"buckets": "1e3", "count": "1e8", "max_risk": "1e-6"}),
    ("1e9 slots, 1e9 keys, smallest load within 1e-9", "loads",
     {"buckets": "1e9", "count": "1e9", "max_risk": "1e-9"}),
    ("5 shards, 5e5 rows, smallest load within 0.5", "loads",
     {"buckets": "5", "count": "5e5", "max_risk": "0.5"}),
    ("20 shards, 2e6 rows, smallest load within 0.5", "loads",
     {"buckets": "20", "count": "2e6", "max_risk": "0.5"}),
    ("10 slots, 1000 keys, load 140 (near a full filling)", "loads",
     {"buckets": "10", "count": "1000", "load": "140"}),
    ("coupon: 50 values, 300 draws", "coverage", {"buckets": "50", "draws": "300"}),
    ("1e7 values, N (ln N - 4) draws (chance 2e-24)", "coverage",
     {"buckets": "1e7", "draws": "121181837"}),
    ("1e6 values, N (ln N + 50) draws (complement 2e-22)", "coverage",
     {"buckets": "1e6", "draws": "63815511"}),
    ("1e3 values, N (ln N + 14) draws (complement 8e-7)", "coverage",
     {"buckets": "1e3", "draws": "20908"}),
    ("1e6 values used twice, 2e7 draws", "coverage",
     {"buckets": "1e6", "draws": "2e7", "at_least": "2"}),
    ("1e12 values, fewest draws for 0.5", "coverage", {"buckets": "1e12", "target": "0.5"}),
    ("1e3 values used 3 times, fewest draws for 1e-9", "coverage",
     {"buckets": "1e3", "target": "1e-9", "at_least": "3"}),
    ("1e12 values used 300 times, fewest draws for 0.999999999", "coverage",
     {"buckets": "1e12", "target": "0.999999999", "at_least": "300"}),
    ("52 values used 499 times, fewest draws for 1e-9", "coverage",
     {"buckets": "52", "target": "1e-9", "at_least": "499"}),
    ("128 bits, 1e25 ids, three sharing", "collisions",
     {"bits": "128", "count": "1e25", "multiplicity": "3"}),
    ("8192 bits, 2^5461 ids, three sharing", "collisions",
     {"bits": "8192", "count": str(2**5461), "multiplicity": "3"}),
    ("64 bits, 1e13 ids, 256 sharing (tail 1e-2092)", "collisions",
     {"bits": "64", "count": "1e13", "multiplicity": "256"}),
)

EXACT_CASES = (
    (2000, 3990, Rule(BELOW, 3)),
    (365, 187, Rule(BELOW, 4)),
    (1000, 400, Rule(BELOW, 4)),
    (200, 6000, Rule(AT_LEAST, 1)),
    (300, 700, Rule(AT_LEAST, 2)),
    (149, 381, Rule(AT_LEAST, 2)),
    (3, 1690, Rule(AT_LEAST, 378)),
)


def main() -> int:
    registry = default_registry()
    context = Context()
    print("| case | method | engine ms | answer ms |")
    print("|---|---|---:|---:|")
    worst = 0.0
    for label, name, query in CASES:
        question = registry[name]
        inputs = question.load({key: [value] for key, value in query.items()})
        answer = question.answer_to(inputs, context)
        total = median_seconds(lambda q=question, i=inputs: q.answer_to(i, context), REPEATS)
        engine = _engine_ms(name, answer.values)
        worst = max(worst, total * 1e3)
        print(f"| {label} | {answer.method} | {engine} | {total * 1e3:.2f} |")
    print()
    print(f"Slowest answer: {worst:.2f} ms (target {TARGET_MS} ms).")
    print()
    print(f"Exact path (first below {EXACT_FIRST_COST:,} bit-operations, at most "
          f"{EXACT_MAX_COST:,}):")
    print()
    print("| buckets | items | rule | estimated cost | exact ms | taken by the engine |")
    print("|---:|---:|---|---:|---:|---|")
    for buckets, count, rule in EXACT_CASES:
        cost = exact_cost(buckets, count, rule)
        seconds = median_seconds(lambda b=buckets, c=count, r=rule: allowed_outcomes(b, c, r), 3)
        taken = "first" if cost <= EXACT_FIRST_COST else (
            "as a fallback" if cost <= EXACT_MAX_COST else "never")
        print(f"| {buckets} | {count} | {rule.kind} {rule.level} | {cost:,} | "
              f"{seconds * 1e3:.2f} | {taken} |")
    return 0


def _engine_ms(name: str, values: object) -> str:
    if name == "collisions" or not isinstance(values, dict):
        return "-"
    buckets = int(values["buckets"])
    if name == "loads":
        count, rule = int(values["count"]), Rule(BELOW, int(values["load"]))
    else:
        count, rule = int(values["draws"]), Rule(AT_LEAST, int(values["at_least"]))
    seconds = median_seconds(lambda: occupancy_risk(buckets, count, rule), REPEATS)
    return f"{seconds * 1e3:.2f}"


if __name__ == "__main__":
    sys.exit(main())
