"""Benchmark of the costliest requests found: CPU time of each through the whole app.

Run: ``python tests/bench/bench_worst.py`` (not collected by pytest). Prints the README's
"Cost of a request" table. Each request goes through the product app in-process (query
parsing, computation, rendering; the answer cache off, so every run computes), best of
three runs of CPU time. Add a row when a new question or a review finds a costlier one.
"""

from __future__ import annotations

import sys
import time

from urnbound.app import create_app

NINES = "0." + "9" * 198

#: (request, why it is costly)
WORST: list[tuple[str, str]] = [
    ("/v1/collisions?bits=64&count=2555", "at the exact-path limit: fraction, figures exact"),
    ("/v1/collisions?size=1e6&count=8304", "the exact path's costliest space at its limit"),
    ("/v1/collisions?bits=8192&count=" + str(2**8192 - 3), "n close to N at the largest space"),
    ("/v1/collisions?bits=8192&count=" + str(2**8000), "n a large power of the largest space"),
    ("/v1/capacity?size=18446744073709551615&max_risk=1.8e-13",
     "both boundary risks exact at the exact-path limit"),
    ("/v1/capacity?size=1e6&max_risk=0.999999999999999", "the same, next to 1"),
    ("/v1/lengths?alphabet_size=3&count=164&max_risk=1e-300", "the same, a tiny target"),
    ("/v1/capacity?size=1e6&max_risk=0.5", "both boundary risks exact"),
    ("/v1/capacity?bits=8191&max_risk=" + NINES, "a 200-character target next to 1"),
    ("/v1/bits?count=" + str(2**4000) + "&max_risk=" + NINES, "a huge count, the same target"),
    ("/v1/lengths?alphabet=base64&count=1e9&max_risk=0.99999999999999999", "target next to 1"),
    ("/v1/curves?bits=8192&from=1&to=1e2466&points=500", "500 risks and complements"),
    ("/v1/curves?bits=8192&from=" + str(2**8100) + "&to=" + str(2**8192) + "&points=500",
     "500 counts from 2^8100 to N: past the batch's regime"),
    ("/v1/curves?bits=8192&from=1&to=" + str(2**8192) + "&points=500&spacing=linear",
     "the same, evenly spaced to N"),
    ("/v1/curves?bits=64&from=1&to=1e10&points=500", "500 points in the batch's regime"),
    ("/v1/curves?alphabet=base64&length=22&from=1&to=1e30&points=500", "the same, an alphabet"),
    ("/v1/curves?size=1023&from=1&to=1023&points=500&spacing=linear",
     "500 exact risks of the largest space always exact"),
    ("/v1/budgets?tick=PT1S&random_bits=64&rate=5.5e18&growth=1.5&horizon=P365D"
     "&max_risk=0.5&points=500", "a time-ordered layout near half full: ~130 series terms"),
    ("/v1/budgets?tick=PT60S&random_bits=2&rate=0.00125&per=PT1S&horizon=P365D"
     "&max_risk=0.99&points=454&growth=0.104", "a falling rate: the search to its end"),
    ("/v1/budgets?tick=PT60S&random_bits=7422&rate=0.00172&per=P36500D&horizon=P3650D"
     "&max_risk=1e-9&points=191&growth=2.89", "a vast growing layout (was 56 s)"),
]


def best_cpu_ms(client: object, path: str, runs: int = 3) -> tuple[float, int]:
    """Best CPU milliseconds of ``runs`` requests for ``path``, and the last status."""
    best, status = float("inf"), 0
    for _ in range(runs):
        start = time.process_time()
        response = client.get(path)  # type: ignore[attr-defined]
        best = min(best, time.process_time() - start)
        status = response.status_code
    return best * 1e3, status


def main() -> int:
    client = create_app({"cache_entries": 0, "access_log": False}).test_client()
    print("| request | why | status | ms |")
    print("|---|---|---:|---:|")
    for path, why in WORST:
        ms, status = best_cpu_ms(client, path)
        shown = path if len(path) < 90 else path[:60] + "…" + path[-20:]
        print(f"| `{shown}` | {why} | {status} | {ms:.1f} |")
    return 0


if __name__ == "__main__":
    sys.exit(main())
