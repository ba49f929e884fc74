"""A random search of the pairwise, time-ordered, security and budget questions for failures
and for the costliest requests (``hunt_requests.py`` does the occupancy questions).

Run: ``python tests/bench/hunt_questions.py [seed] [seconds]`` (not collected by pytest;
default seed 1, 120 s). Draws collisions, lengths, capacity, bits, rates, guessing,
prefixes, reviews, budgets and curves questions with their figures spread on a log scale
over the accepted ranges (edges included: risks next to 0 and 1, counts up to the space,
spaces up to 2^8192) and asks them through ``hunting.hunt``: every 5xx is printed with its
query, then the 15 costliest requests by CPU time.
A 4xx is an answer too (a refusal naming the field); only 5xx count as failures.
"""

from __future__ import annotations

import math
import random
import sys
from collections.abc import Callable

from hunting import hunt

RISKS = ("0.5", "1e-6", "1e-18", "1e-300", "0.999999999999", "0.99", "1e-9")
DURATIONS = ("PT1S", "PT1H", "P1D", "P30D", "P365D", "P3650D", "P36500D")
TICKS = ("PT0.001S", "PT1S", "PT0.000001S", "PT60S")
ALPHABETS = ("base64", "base32", "base16", "lowercase-alphanumeric", "decimal")


class Draw:
    """Random figures on a log scale, one generator for a whole search."""

    def __init__(self, rng: random.Random) -> None:
        self.rng = rng

    def spread(self, low: float, high: float) -> float:
        return math.exp(self.rng.uniform(math.log(low), math.log(high)))

    def whole(self, low: int, high: int) -> int:
        return max(low, min(high, int(round(self.spread(low, high)))))

    def count_for(self, bits: int) -> str:
        """A count from 1 to past the space, as a power of ten or of two."""
        if self.rng.random() < 0.5:
            return f"1e{self.rng.randint(0, max(1, int(bits * 0.30103) + 1))}"
        exponent = self.rng.uniform(0, bits + 1)
        return str(int(2 ** min(exponent, 60.0))) if exponent < 60 else (
            str(2 ** int(exponent)))

    def space(self) -> str:
        kind = self.rng.random()
        if kind < 0.5:
            return f"bits={self.whole(1, 8192)}"
        if kind < 0.8:
            return f"alphabet={self.rng.choice(ALPHABETS)}&length={self.whole(1, 300)}"
        if kind < 0.9:
            return f"size={self.whole(2, 10**15)}"
        return "format=uuid-v4"

    def space_bits(self, space: str) -> int:
        if space.startswith("bits="):
            return int(space[5:])
        if space.startswith("size="):
            return int(space[5:]).bit_length()
        if space == "format=uuid-v4":
            return 122
        length = int(space.rsplit("=", 1)[1])
        return min(8192, length * 6)

    def risk(self) -> str:
        return self.rng.choice(RISKS)

    def time_ordered(self) -> str:
        if self.rng.random() < 0.5:
            return "format=uuid-v7"
        return f"tick={self.rng.choice(TICKS)}&random_bits={self.whole(1, 8192)}"

    def rate(self) -> str:
        return f"{self.spread(1e-3, 1e30):.3g}"


def collisions(d: Draw) -> str:
    if d.rng.random() < 0.2:
        return (f"/v1/collisions?{d.time_ordered()}&rate={d.rate()}"
                f"&duration={d.rng.choice(DURATIONS)}")
    space = d.space()
    return f"/v1/collisions?{space}&count={d.count_for(d.space_bits(space))}"


def lengths(d: Draw) -> str:
    return (f"/v1/lengths?alphabet={d.rng.choice(ALPHABETS)}&count={d.count_for(4096)}"
            f"&max_risk={d.risk()}")


def capacity(d: Draw) -> str:
    return f"/v1/capacity?{d.space()}&max_risk={d.risk()}"


def bits(d: Draw) -> str:
    if d.rng.random() < 0.3:
        return (f"/v1/bits?tick={d.rng.choice(TICKS)}&rate={d.rate()}"
                f"&duration={d.rng.choice(DURATIONS)}&max_risk={d.risk()}")
    return f"/v1/bits?count={d.count_for(8192)}&max_risk={d.risk()}"


def rates(d: Draw) -> str:
    burst = "" if d.rng.random() < 0.7 else (
        f"&burst={d.whole(1, 1000)}&burst_share={d.spread(1e-6, 1e-3):.3g}")
    return (f"/v1/rates?{d.time_ordered()}&duration={d.rng.choice(DURATIONS)}"
            f"&max_risk={d.risk()}{burst}")


def guessing(d: Draw) -> str:
    attack = (f"guesses={d.count_for(200)}" if d.rng.random() < 0.5 else
              f"guess_rate={d.rate()}&window={d.rng.choice(DURATIONS)}")
    return (f"/v1/guessing?{d.space()}&live={d.count_for(100)}&{attack}"
            f"&max_success={d.risk()}")


def prefixes(d: Draw) -> str:
    digest = d.rng.choice((128, 160, 256, 512))
    keep = (f"prefix_bits={d.whole(1, digest)}" if d.rng.random() < 0.5 else
            f"prefix_chars={d.whole(1, digest // 4)}&encoding=base16")
    return (f"/v1/prefixes?digest_bits={digest}&count={d.count_for(digest)}&{keep}"
            f"&max_risk={d.risk()}")


def reviews(d: Draw) -> str:
    space = d.space()
    return (f"/v1/reviews?{space}&count={d.count_for(d.space_bits(space))}"
            f"&live={d.count_for(60)}&guesses={d.count_for(120)}&max_risk={d.risk()}"
            f"&max_success={d.risk()}")


def budgets(d: Draw) -> str:
    timed = d.rng.random() < 0.3
    space = d.time_ordered() if timed else d.space()
    growth = "" if d.rng.random() < 0.5 else f"&growth={d.spread(0.1, 10):.3g}"
    top = 60 if timed else d.space_bits(space)
    issued = "" if d.rng.random() < 0.3 else f"&issued={d.count_for(top)}"
    return (f"/v1/budgets?{space}&rate={d.rate()}&per={d.rng.choice(DURATIONS)}"
            f"&horizon={d.rng.choice(DURATIONS)}&max_risk={d.risk()}"
            f"&points={d.whole(2, 500)}{growth}{issued}")


def curves(d: Draw) -> str:
    kind = d.rng.choice(("collisions", "collisions", "loads", "coverage"))
    points = d.whole(2, 500 if kind == "collisions" else 100)
    spacing = d.rng.choice(("log", "linear"))
    if kind == "collisions":
        space = d.space()
        top = d.space_bits(space)
        low, high = sorted((d.count_for(top), d.count_for(top)), key=lambda t: float(t))
        return (f"/v1/curves?{space}&from={low}&to={high}&points={points}"
                f"&spacing={spacing}")
    buckets = d.whole(2, 10**12)
    low = d.whole(1, buckets * 1000)
    high = d.whole(low, max(low, buckets * 10**5))
    extra = (f"&load={d.whole(1, 3 * high // buckets + 50)}" if kind == "loads" else
             f"&at_least={d.whole(1, 1000)}")
    return (f"/v1/curves?question={kind}&size={buckets}&from={low}&to={high}"
            f"&points={points}&spacing={spacing}{extra}")


QUESTIONS: tuple[Callable[[Draw], str], ...] = (
    collisions, lengths, capacity, bits, rates, guessing, prefixes, reviews, budgets, curves)


def question(rng: random.Random) -> str:
    """One random request path with its query."""
    draw = Draw(rng)
    return rng.choice(QUESTIONS)(draw)


if __name__ == "__main__":
    sys.exit(hunt(question, sys.argv))
