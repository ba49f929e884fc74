"""A random search of the occupancy questions for failures and for the costliest requests.

Run: ``python tests/bench/hunt_requests.py [seed] [seconds]`` (not collected by pytest;
default seed 1, 120 s). Draws loads, coverage and k-fold collision questions with sizes
spread on a log scale over the accepted ranges and asks them through ``hunting.hunt``
(the product app in process, answer cache off): every 5xx is printed with its query, then
the 15 costliest requests by CPU time. Each 5xx it has found became a regression test; the
costliest go into bench_worst.py and the README's "Cost of a request".
"""

from __future__ import annotations

import math
import random
import sys

from hunting import hunt

TARGETS = ("0.5", "1e-9", "0.999999999", "1e-100", "0.99")


def question(rng: random.Random) -> str:
    """One random request path with its query."""

    def spread(low: int, high: int) -> int:
        return int(round(math.exp(rng.uniform(math.log(low), math.log(high)))))

    kind = rng.choice(("loads", "loads_inverse", "coverage", "coverage_inverse", "multiple"))
    buckets = spread(2, 10**12)
    count = spread(1, buckets * 10**5)
    if kind == "loads":
        load = spread(1, max(2, 3 * count // buckets + 50))
        return f"/v1/loads?buckets={buckets}&count={count}&load={load}"
    if kind == "loads_inverse":
        return f"/v1/loads?buckets={buckets}&count={count}&max_risk=1e-{rng.randint(1, 300)}"
    if kind == "coverage":
        return f"/v1/coverage?buckets={buckets}&draws={count}&at_least={spread(1, 1000)}"
    if kind == "coverage_inverse":
        return (f"/v1/coverage?buckets={buckets}&target={rng.choice(TARGETS)}"
                f"&at_least={spread(1, 1000)}")
    bits = rng.randint(8, 8192)
    return (f"/v1/collisions?bits={bits}&count=1e{rng.randint(1, int(bits * 0.30103))}"
            f"&multiplicity={spread(3, 256)}")


if __name__ == "__main__":
    sys.exit(hunt(question, sys.argv))
