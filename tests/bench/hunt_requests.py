"""A random search of the occupancy questions for failures and for the costliest requests.

Run: ``python tests/bench/hunt_requests.py [seed] [seconds]`` (not collected by pytest;
default seed 1, 120 s). Draws loads, coverage and k-fold collision questions with sizes
spread on a log scale over the accepted ranges, asks each of the product app in process
(answer cache off, access log off), and prints every 5xx with its query, then the 15
costliest requests by CPU time. Each 5xx it has found became a regression test; the
costliest go into bench_worst.py and the README's "Cost of a request".
"""

from __future__ import annotations

import heapq
import logging
import math
import random
import sys
import time

from urnbound.app import create_app

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


def main() -> int:
    seed = int(sys.argv[1]) if len(sys.argv) > 1 else 1
    seconds = float(sys.argv[2]) if len(sys.argv) > 2 else 120.0
    logging.disable(logging.CRITICAL)  # the 5xx are printed below, without tracebacks
    client = create_app({"cache_entries": 0, "access_log": False}).test_client()
    rng = random.Random(seed)
    costliest: list[tuple[float, str, int]] = []
    asked, failed = 0, 0
    end = time.monotonic() + seconds
    while time.monotonic() < end:
        path = question(rng)
        start = time.process_time()
        response = client.get(path)
        cost = (time.process_time() - start) * 1e3
        asked += 1
        if response.status_code >= 500:
            failed += 1
            print(f"{response.status_code} {path}", flush=True)
        heapq.heappush(costliest, (cost, path, response.status_code))
        if len(costliest) > 15:
            heapq.heappop(costliest)
    print(f"{asked} requests, {failed} failures (5xx)")
    for cost, path, status in sorted(costliest, reverse=True):
        print(f"{cost:8.1f} ms  {status}  {path}")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
