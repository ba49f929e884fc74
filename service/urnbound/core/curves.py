"""Risk curves: counts spread over a range (log or evenly spaced) and the pairwise risk at each.

The counts are sample points, not answers: they are formed once, rounded to whole
numbers, and each risk is then computed at its count exactly as ``/v1/collisions`` would
(``pairwise.collision_risk``), with the exact path up to ``SERIES_EXACT_DIGIT_LIMIT``
digits so that 500 counts cost what a few answers do. Log spacing places count i of k at
low (high/low)^(i/(k-1)), rounded to nearest, worked in binary at the bits of ``high``
plus 32 so that every count of any size is placed to within one; even spacing places it
at low + floor((high - low) i / (k - 1)) in integers. Counts that round to the same
whole number are given once, so a narrow range gives fewer than k points; the first is
always ``low`` and the last ``high``.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core.errors import DomainError
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT, SERIES_EXACT_DIGIT_LIMIT
from urnbound.core.pairwise import collision_risk
from urnbound.core.results import CollisionRisk

#: The two spacings of a curve's counts.
SPACINGS = ("log", "linear")


@dataclass(frozen=True, slots=True)
class RiskCurve:
    """The pairwise risk at each of ``counts`` draws from ``size`` values.

    :ivar risks: one per count, in rising order of count.
    :ivar methods: the methods used, each once, in the order first met.
    """

    size: int
    counts: tuple[int, ...]
    risks: tuple[CollisionRisk, ...]
    methods: tuple[str, ...]


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
    prec = high.bit_length() + 32
    ratio_log = mp.log(mp.ratio(high, low, prec), prec)
    start = mp.real(low, prec)
    for i in range(1, points - 1):
        step = mp.div(mp.mul(ratio_log, mp.real(i, prec), prec), mp.real(points - 1, prec), prec)
        value = mp.mul(start, mp.exp(step, prec), prec)
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
    """The pairwise risk at up to ``points`` counts from ``low`` to ``high``.

    >>> curve = risk_curve(365, 10, 70, 3, "linear")
    >>> curve.counts, [r.collision.decimal[:6] for r in curve.risks]
    ((10, 40, 70), ['1.1694', '8.9123', '9.9915'])
    """
    counts = curve_counts(low, high, points, spacing)
    limit = min(exact_digit_limit, SERIES_EXACT_DIGIT_LIMIT)
    risks = tuple(collision_risk(size, n, exact_digit_limit=limit) for n in counts)
    methods = tuple(dict.fromkeys(r.method for r in risks))
    return RiskCurve(size, counts, risks, methods)
