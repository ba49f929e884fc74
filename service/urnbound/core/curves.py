"""Risk curves: counts spread over a range (log or evenly spaced) and a chance at each count.

The chance is the pairwise collision risk, or an occupancy chance (some bucket reaching
a load, some bucket used too few times; ``occupancy.occupancy_risk``).

The counts are sample points, not answers: they are formed once, rounded to whole
numbers. The pairwise risks and their complements come in MPFR batches under proven
bounds (``series_pairs``; its counts' texts may differ from ``/v1/collisions`` in the last
digit, within the bound), the others as ``/v1/collisions`` answers them
(``pairwise.collision_risk``), with the exact path up to ``SERIES_EXACT_DIGIT_LIMIT``
digits so that 500 counts cost what a few answers do. Log spacing places count i of k at
low (high/low)^(i/(k-1)), rounded to nearest, worked in binary at the bits of ``high``
plus 32 + STEP_GUARD_BITS so that every count of any size is placed to within one. The
ratio r = (high/low)^(1/(k-1)) is formed once, off by some 3 z u + u relative (u the unit
of the precision, z = ln(high/low) / (k-1)), and count i is low r^i by i multiplications,
off by i (3 z u + 2u) <= (3 ln(high/low) + 2 k) u < 2^15 u relative, which the guard bits
keep below 2^-40 absolutely (one exponential per count cost 0.4 ms at 2^8192 values).
Even spacing places count i at low + floor((high - low) i / (k - 1)) in integers. Counts
that round to the same whole number are given once, so a narrow range gives fewer than k
points; the first is always ``low`` and the last ``high``.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass

from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core.errors import DomainError
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT, MAX_ITEMS, SERIES_EXACT_DIGIT_LIMIT
from urnbound.core.occupancy import occupancy_risk
from urnbound.core.occupancy_results import Rule
from urnbound.core.results import Magnitude
from urnbound.core.series_pairs import series_pairs

#: The two spacings of a curve's counts.
SPACINGS = ("log", "linear")
#: Bits added to a log spacing's precision for the roundings of its ratio's powers.
STEP_GUARD_BITS = 24


@dataclass(frozen=True, slots=True)
class CurvePoint:
    """One count of a curve and the chance of the event at it.

    :ivar risk: P(the event: some two equal, some bucket at the load, some bucket short).
    :ivar complement: 1 - risk, with its own relative accuracy.
    """

    count: int
    risk: Magnitude
    complement: Magnitude
    relative_error_bound: float
    method: str


@dataclass(frozen=True, slots=True)
class RiskCurve:
    """The chance of one event at each of a range of counts, in rising order of count.

    :ivar methods: the methods used, each once, in the order first met.
    """

    size: int
    points: tuple[CurvePoint, ...]
    methods: tuple[str, ...]

    @property
    def counts(self) -> tuple[int, ...]:
        return tuple(point.count for point in self.points)


def curve_counts(low: int, high: int, points: int, spacing: str = "log") -> tuple[int, ...]:
    """Up to ``points`` distinct whole counts from ``low`` to ``high``, both included.

    :raises DomainError: (field ``to``) unless high > low; (field ``from``) for log
        spacing from 0; (field ``spacing``) for an unknown spacing.

    >>> curve_counts(1, 10**6, 7)
    (1, 10, 100, 1000, 10000, 100000, 1000000)
    >>> curve_counts(0, 10, 3, "linear"), curve_counts(1, 3, 5)
    ((0, 5, 10), (1, 2, 3))
    """
    if high <= low:
        raise DomainError("to must be above from", field="to")
    if points < 2:
        raise DomainError("points must be at least 2", field="points")
    if spacing == "linear":
        found: Iterable[int] = (low + (high - low) * i // (points - 1) for i in range(points))
    elif spacing == "log":
        if low < 1:
            raise DomainError("from must be at least 1 for log spacing (or give "
                              "spacing=linear)", field="from")
        found = _log_spaced(low, high, points)
    else:
        raise DomainError(f"spacing must be one of {', '.join(SPACINGS)}", field="spacing")
    return tuple(sorted({low, high, *found}))


def _log_spaced(low: int, high: int, points: int) -> Iterable[int]:
    """low r**i for 0 < i < k - 1, r = (high/low)**(1/(k-1)) formed once (module docstring)."""
    prec = high.bit_length() + 32 + STEP_GUARD_BITS
    ratio = mp.exp(mp.div(mp.log(mp.ratio(high, low, prec), prec), mp.real(points - 1, prec),
                          prec), prec)
    value = mp.real(low, prec)
    for _ in range(1, points - 1):
        value = mp.mul(value, ratio, prec)
        yield min(max(int(libmp.to_int(value, mp.NEAREST)), low), high)


def risk_curve(
    size: int,
    low: int,
    high: int,
    points: int,
    spacing: str = "log",
    *,
    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT,
) -> RiskCurve:
    """The pairwise collision risk at up to ``points`` counts from ``low`` to ``high``.

    >>> curve = risk_curve(365, 10, 70, 3, "linear")
    >>> curve.counts, [p.risk.decimal[:6] for p in curve.points]
    ((10, 40, 70), ['1.1694', '8.9123', '9.9915'])
    """
    limit = min(exact_digit_limit, SERIES_EXACT_DIGIT_LIMIT)
    counts = curve_counts(low, high, points, spacing)
    found = tuple(
        CurvePoint(count, risk.collision, risk.no_collision, risk.relative_error_bound,
                   risk.method)
        for count, risk in zip(counts, series_pairs(size, counts, exact_digit_limit=limit),
                               strict=True))
    return RiskCurve(size, found, tuple(dict.fromkeys(p.method for p in found)))


def occupancy_curve(buckets: int, low: int, high: int, points: int, spacing: str,
                    rule: Rule) -> RiskCurve:
    """P(some bucket breaks ``rule``) at up to ``points`` counts of items on ``buckets``.

    A load k is the rule "below k" (the risk: some bucket holds k or more); coverage is
    "at least a" (the risk: some bucket is used fewer than a times).

    >>> from urnbound.core.occupancy_results import BELOW
    >>> curve = occupancy_curve(365, 50, 150, 3, "linear", Rule(BELOW, 3))
    >>> curve.counts, [p.risk.decimal[:6] for p in curve.points]
    ((50, 100, 150), ['1.2637', '6.4586', '9.6476'])
    """
    if high > MAX_ITEMS:
        raise DomainError(f"to must be at most {MAX_ITEMS:.0e} for loads and coverage",
                          field="to")

    def at(count: int) -> CurvePoint:
        risk = occupancy_risk(buckets, count, rule)
        return CurvePoint(count, risk.fails, risk.holds, risk.relative_error_bound, risk.method)

    return _curve(buckets, curve_counts(low, high, points, spacing), at)


def _curve(size: int, counts: tuple[int, ...], at: Callable[[int], CurvePoint]) -> RiskCurve:
    found = tuple(at(count) for count in counts)
    return RiskCurve(size, found, tuple(dict.fromkeys(p.method for p in found)))
