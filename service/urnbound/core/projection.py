"""Risk budgets over time: identifiers issued at a rate, projected risk, when the budget runs out.

An issue schedule starts from ``issued`` identifiers at time 0 and adds identifiers at
``rate`` per second, the rate multiplied by ``growth`` each year (a year is
``YEAR_SECONDS``, 365 days). The cumulative count at time t (seconds) is

    c(t) = issued + rate t                                   (growth 1),
    c(t) = issued + rate Y (g**(t/Y) - 1) / ln g             (growth g != 1)
         = issued + rate t phi(x),  x = (t/Y) ln g,  phi(x) = expm1(x) / x,

and the identifiers issued by then are n(t) = floor(c(t)), a whole number. The risk at t
is the pairwise risk of n(t) identifiers (``pairwise.collision_risk``).

Exact and certified. With growth 1, c(t) is rational and n(t) is exact. Otherwise c(t)
is enclosed in an interval: ln g with outward rounding (``libmp`` directed rounding,
widened by 2**(6 - p) on each side), x as the interval product, phi at both ends of x
(phi rises in x, phi(x) = integral of e**(xu) over [0, 1]), each value widened by the same
margin, then products and the sum rounded outward. n(t) is taken only when both ends
of the enclosure have the same floor; the precision doubles otherwise (at most
``MAX_COUNT_TRIES`` times, then ``NoConvergence``). For t > 0 and g != 1, c(t) is
irrational (ln g is transcendental for rational g != 1), so it is never an integer and
the doubling settles unless c(t) lies within about 2**-(p - log2 c) of one.

When the budget runs out. n(t) rises with t and the risk rises with n, so the risk is a
monotone family over whole seconds, searched by the generic certified search
(``search.certified_boundary``) with the risk at each second compared with max_risk
through the count family (interval, then exact). Its first guess is the second at
which c(t) first reaches the capacity plus one, solved in floats (a guess only). The
answer T is the first whole second with risk > max_risk; the risk one second earlier is
proven within max_risk. Already over at time 0 gives T = 0 and a flag; a horizon that
ends first gives no T.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from typing import TYPE_CHECKING, Union

from mpmath import libmp
from mpmath.libmp import libmpi

from urnbound.core import precision as mp
from urnbound.core.errors import DomainError, NoConvergence
from urnbound.core.growth_counts import YEAR_SECONDS, growth_counts
from urnbound.core.inverse import CountFamily, largest_count
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT, SERIES_EXACT_DIGIT_LIMIT
from urnbound.core.pairwise import collision_risk
from urnbound.core.precision import Real
from urnbound.core.results import CapacityAnswer, CollisionRisk
from urnbound.core.search import RisingSeconds, RiskInterval, certified_boundary
from urnbound.core.series_risk import SeriesRisk, series_risks

if TYPE_CHECKING:
    from urnbound.core.tick_budgets import TickCapacity
    from urnbound.core.tick_growth import GrowingTickRisk
    from urnbound.core.ticks import TickRisk

#: Doublings of the precision of one count enclosure before giving up.
MAX_COUNT_TRIES = 8
#: Bits added to the precision a count needs (its own bits) for the first enclosure.
COUNT_GUARD_BITS = 64
#: Each transcendental value is widened by 2**(WIDENING_BITS - p) relative on each side.
WIDENING_BITS = 6

Interval = tuple[Real, Real]
#: The risk at a moment: pairwise (alone, or one of a series' batch), or the tick model's
#: for a time-ordered layout (at a steady or a growing rate).
PointRisk = Union[CollisionRisk, SeriesRisk, "TickRisk", "GrowingTickRisk"]


@dataclass(frozen=True, slots=True)
class IssueSchedule:
    """Identifiers issued from time 0 on.

    :ivar issued: identifiers already issued at time 0.
    :ivar rate: identifiers per second at time 0 (> 0).
    :ivar growth: the factor the rate is multiplied by each year (> 0; 1 for a steady rate).

    >>> IssueSchedule(10, Fraction(3, 2)).count_at(Fraction(7))
    20
    >>> IssueSchedule(0, Fraction(1), Fraction(2)).count_at(Fraction(YEAR_SECONDS))
    45496830
    """

    issued: int
    rate: Fraction
    growth: Fraction = Fraction(1)

    def __post_init__(self) -> None:
        if self.issued < 0:
            raise DomainError("issued must be at least 0", field="issued")
        if self.rate <= 0:
            raise DomainError("rate must be above 0", field="rate")
        if self.growth <= 0:
            raise DomainError("growth must be above 0", field="growth")

    def count_at(self, seconds: Fraction, first_bits: int | None = None) -> int:
        """n(t) = floor(c(t)): the identifiers issued by ``seconds`` (>= 0), exactly.

        :param first_bits: the precision of the first enclosure (default: from the size of
            c(t)); a projection passes that of its horizon for every earlier moment.
        """
        if seconds < 0:
            raise DomainError("a moment before now", field="horizon")
        if seconds == 0:
            return self.issued
        if self.growth == 1:  # floor(issued + rate t), in integers
            rate = self.rate
            step = rate.numerator * seconds.numerator
            return self.issued + step // (rate.denominator * seconds.denominator)
        return _settled(lambda prec: _floor_if_decided(self._enclosure(seconds, prec)),
                        first_bits or self.first_bits(seconds))

    def reaches(self, seconds: Fraction, target: int) -> bool:
        """c(t) >= target, decided with certainty (n(t) >= target is the same test)."""
        return self.count_at(seconds) >= target

    def first_bits(self, seconds: Fraction) -> int:
        """Bits of c(t), plus those ln g loses near g = 1, plus guard; a multiple of 64.

        (phi is evaluated with expm1, which keeps its relative accuracy at tiny x.)
        """
        bits = (max(1, math.ceil(self.log2_count(seconds))) + COUNT_GUARD_BITS
                + _inverse_bits(self.growth - 1))
        return -(-bits // 64) * 64

    def log2_count(self, seconds: Fraction) -> float:
        """log2 c(t), roughly (floats; for precisions and guesses only)."""
        linear = _log2(self.rate) + _log2(seconds)
        if self.growth != 1:
            x = 2.0 ** (_log2(seconds) - math.log2(YEAR_SECONDS)) * _ln(self.growth)
            linear += _log2_phi(x)
        if self.issued == 0:
            return linear
        issued = mp.log2_of_int(self.issued)
        high, low = max(linear, issued), min(linear, issued)
        return high + math.log2(1 + 2.0 ** max(low - high, -1000))

    def _enclosure(self, seconds: Fraction, prec: int) -> Interval:
        """An interval holding c(t) for t > 0, g != 1 (module docstring)."""
        log_growth = _log_growth(self.growth.numerator, self.growth.denominator, prec)
        years = _enclose_ratio(seconds.numerator, seconds.denominator * YEAR_SECONDS, prec)
        x = libmpi.mpi_mul(years, log_growth, prec)
        phi = (_phi(x[0], prec, libmp.round_floor), _phi(x[1], prec, libmp.round_ceiling))
        linear = _enclose_ratio(self.rate.numerator * seconds.numerator,
                                self.rate.denominator * seconds.denominator, prec)
        # phi > 0 and rate t > 0: the product's ends are the products of the ends.
        low = libmp.mpf_mul(linear[0], phi[0], prec, libmp.round_floor)
        high = libmp.mpf_mul(linear[1], phi[1], prec, libmp.round_ceiling)
        if self.issued:
            low = libmp.mpf_add(low, libmp.from_int(self.issued), prec, libmp.round_floor)
            high = libmp.mpf_add(high, libmp.from_int(self.issued), prec, libmp.round_ceiling)
        return low, high

    def first_second_reaching(self, target: int) -> int:
        """A float guess of the first whole second t with c(t) >= target (never trusted).

        Solved in logarithms, so that no float overflows: with growth g,
        rate Y (g^(t/Y) - 1) / ln g = missing gives t = Y ln(1 + s) / ln g for
        s = missing ln g / (rate Y); a shrinking rate with s <= -1 never gets there.
        """
        missing = target - self.issued
        if missing <= 0:
            return 0
        log_steady = _ln(Fraction(missing)) - _ln(self.rate)  # ln(missing / rate)
        log_g = _ln(self.growth)
        if self.growth == 1 or abs(log_g) < 1e-12:
            return _whole_seconds(log_steady)
        log_s = log_steady - math.log(YEAR_SECONDS) + math.log(abs(log_g))  # ln |s|
        if log_s < -700:  # the rate barely changes before then
            return _whole_seconds(log_steady)
        if log_g < 0 and log_s >= 0:
            return _NEVER
        if log_s > 30:
            inside = log_s + math.log1p(math.exp(-log_s))
        else:
            inside = math.log1p(math.copysign(math.exp(log_s), log_g))
        return _whole_seconds(math.log(YEAR_SECONDS * inside / log_g))


#: A guess for a moment that never comes (the search clamps it to its range).
_NEVER = 2**62


def _whole_seconds(log_seconds: float) -> int:
    """ceil(e**log_seconds), clamped to [0, _NEVER]."""
    if log_seconds > math.log(_NEVER):
        return _NEVER
    return max(0, math.ceil(math.exp(log_seconds)))


@functools.lru_cache(maxsize=64)
def _log_growth(numerator: int, denominator: int, prec: int) -> Interval:
    """ln g enclosed at ``prec`` bits (cached: one projection asks it at a few precisions)."""
    low, high = _widened(libmpi.mpi_log(_enclose(Fraction(numerator, denominator), prec), prec),
                         prec)
    return low, high


def _settled(attempt: Callable[[int], int | None], first_bits: int) -> int:
    bits = first_bits
    for _ in range(MAX_COUNT_TRIES):
        found = attempt(bits)
        if found is not None:
            return found
        bits *= 2
    raise NoConvergence("the projected count lies too close to a whole number to settle")


def _floor_if_decided(interval: Interval) -> int | None:
    low, high = interval
    if not (libmp.mpf_lt(libmp.fninf, low) and libmp.mpf_lt(high, libmp.finf)):
        return None
    floor_low = int(libmp.to_int(low, libmp.round_floor))
    floor_high = int(libmp.to_int(high, libmp.round_floor))
    return floor_low if floor_low == floor_high else None


def _enclose(value: Fraction, prec: int) -> Interval:
    """``value`` rounded down and up to ``prec`` bits."""
    return _enclose_ratio(value.numerator, value.denominator, prec)


def _enclose_ratio(numerator: int, denominator: int, prec: int) -> Interval:
    """numerator / denominator (> 0) rounded down and up to ``prec`` bits."""
    return (libmp.from_rational(numerator, denominator, prec, libmp.round_floor),
            libmp.from_rational(numerator, denominator, prec, libmp.round_ceiling))


def _margin(value: Real, prec: int) -> Real:
    """|value| 2**(WIDENING_BITS - prec), rounded up."""
    return libmp.mpf_shift(libmp.mpf_abs(value), WIDENING_BITS - prec)


def _widened(interval: Interval, prec: int) -> Interval:
    low, high = interval
    return (libmp.mpf_sub(low, _margin(low, prec), prec, libmp.round_floor),
            libmp.mpf_add(high, _margin(high, prec), prec, libmp.round_ceiling))


def _phi(x: Real, prec: int, direction: str) -> Real:
    """phi(x) = expm1(x) / x (1 at x = 0), pushed ``direction`` by the widening margin.

    expm1 keeps its relative accuracy for tiny |x| (``precision.expm1``), and the quotient
    adds one rounding: a few units in ``prec``, well inside the margin.
    """
    if mp.is_zero(x):
        value = mp.ONE
    else:
        value = mp.div(mp.expm1(x, prec + 8), x, prec + 8)
    if direction == libmp.round_floor:
        return libmp.mpf_sub(value, _margin(value, prec), prec, libmp.round_floor)
    return libmp.mpf_add(value, _margin(value, prec), prec, libmp.round_ceiling)


def _inverse_bits(value: Fraction) -> int:
    """About log2(1 / |value|) when |value| < 1, else 0 (bits lost to cancellation)."""
    value = abs(value)
    if value == 0 or value >= 1:
        return 0
    return value.denominator.bit_length() - value.numerator.bit_length() + 1


def _ln(value: Fraction) -> float:
    """ln of a positive fraction of any size, as a float."""
    return (mp.log2_of_int(value.numerator) - mp.log2_of_int(value.denominator)) * math.log(2)


def _log2(value: Fraction) -> float:
    return _ln(value) / math.log(2)


def _log2_phi(x: float) -> float:
    """log2 phi(x) in floats, for any x (phi(x) ~ e**x / x for large x, 1/|x| for x << 0)."""
    if abs(x) < 1e-12:
        return 0.0
    if x > 700:
        return (x - math.log(x)) / math.log(2)
    return math.log2(math.expm1(x) / x)


# --- the projection ------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class ProjectedPoint:
    """The count issued by a moment and its risk.

    :ivar seconds: the moment, in seconds from now (exact).
    :ivar count: n(t), the identifiers issued by then.
    :ivar risk: the pairwise risk of ``count`` identifiers (for a series moment, often
        from the batch of ``series_risk.py``, which reports the risk alone; for a
        time-ordered layout, the tick model's risk of the identifiers issued by then).
    """

    seconds: Fraction
    count: int
    risk: PointRisk


@dataclass(frozen=True, slots=True)
class Exhaustion:
    """When the risk first exceeds max_risk, at whole-second resolution.

    :ivar seconds: the first whole second with risk > max_risk (0 when already over; the
        horizon itself when it ends inside the second that crosses).
    :ivar already: True when the risk exceeds max_risk now.
    :ivar before: the moment one second earlier (risk <= max_risk), ``None`` when already.
    :ivar at: the moment ``seconds`` (risk > max_risk).
    """

    seconds: Fraction
    already: bool
    before: ProjectedPoint | None
    at: ProjectedPoint


@dataclass(frozen=True, slots=True)
class BudgetProjection:
    """The risk budget of one space under one issue schedule, up to a horizon.

    :ivar capacity: the largest count within max_risk, certified (``inverse.largest_count``).
    :ivar headroom: identifiers left before max_risk is passed: capacity - issued, or 0.
    :ivar capacity_used: issued / capacity, exactly.
    """

    size: int
    max_risk: Fraction
    schedule: IssueSchedule
    horizon: Fraction
    capacity: CapacityAnswer | TickCapacity
    now: ProjectedPoint
    at_horizon: ProjectedPoint
    exhausted: Exhaustion | None
    headroom: int
    capacity_used: Fraction
    series: tuple[ProjectedPoint, ...]


def series_moments(horizon: Fraction, points: int) -> tuple[Fraction, ...]:
    """``points`` evenly spaced moments from 0 to ``horizon``, each rounded down to 1 ns.

    The first is 0 and the last the horizon itself.

    >>> series_moments(Fraction(10), 3)
    (Fraction(0, 1), Fraction(5, 1), Fraction(10, 1))
    >>> series_moments(Fraction(1), 4)[1]
    Fraction(333333333, 1000000000)
    """
    if points < 2:
        raise DomainError("points must be at least 2", field="points")
    scale = 10**9 * horizon.numerator  # nanoseconds * horizon.denominator
    steps = (points - 1) * horizon.denominator
    moments = [Fraction(scale * i // steps, 10**9) for i in range(points - 1)]
    return (*moments, horizon)


def project_budget(
    size: int,
    schedule: IssueSchedule,
    horizon: Fraction,
    max_risk: Fraction,
    points: int,
    *,
    start: Fraction = Fraction(0),
    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT,
) -> BudgetProjection:
    """The risk now, at the horizon and at ``points`` moments between; when it runs out.

    Now is ``start`` seconds into the schedule (0: the schedule starts now; a watched
    scheme counted some time ago starts earlier); every reported moment is an offset from
    now. The series' risks come from one batch (``series_risk.series_risks``: one MPFR
    evaluation per count with a shared bound, the certified path for the rest); each takes
    the exact path only up to ``SERIES_EXACT_DIGIT_LIMIT`` digits, so that 500 moments cost
    what a few answers do; the capacity and the search keep ``exact_digit_limit``.

    >>> p = project_budget(2**64, IssueSchedule(0, Fraction(1000)), Fraction(86400 * 365),
    ...                    Fraction(1, 10**6), 3)
    >>> p.capacity.count, p.exhausted.seconds, p.exhausted.before.count, p.exhausted.at.count
    (6074003, Fraction(6075, 1), 6074000, 6075000)
    >>> later = project_budget(2**64, IssueSchedule(0, Fraction(1000)), Fraction(86400),
    ...                        Fraction(1, 10**6), 2, start=Fraction(5000))
    >>> later.now.count, later.exhausted.seconds
    (5000000, Fraction(1075, 1))
    """
    if horizon <= 0:
        raise DomainError("horizon must be above 0", field="horizon")
    if start < 0:
        raise DomainError("the schedule starts after now", field="start")
    point_limit = min(exact_digit_limit, SERIES_EXACT_DIGIT_LIMIT)
    bits = schedule.first_bits(start + horizon) if schedule.growth != 1 else None

    def count_at(offset: Fraction) -> int:
        return schedule.count_at(start + offset if start else offset, bits)  # <= c(horizon)

    capacity = largest_count(size, max_risk, exact_digit_limit=exact_digit_limit)
    moments = series_moments(horizon, points)
    counts = series_counts(schedule, start, moments, bits)
    risks: dict[int, PointRisk] = dict(zip(
        counts, series_risks(size, counts, exact_digit_limit=point_limit), strict=True))

    def point(offset: Fraction) -> ProjectedPoint:
        count = count_at(offset)
        risk = risks.get(count)
        if risk is None:
            risk = risks[count] = collision_risk(size, count, exact_digit_limit=point_limit)
        return ProjectedPoint(offset, count, risk)

    series = tuple(ProjectedPoint(t, count, risks[count]) for t, count in zip(
        moments, counts, strict=True))
    now, at_horizon = series[0], series[-1]
    family = SecondsFamily(CountFamily(size, exact_digit_limit), schedule,
                           math.floor(start + horizon), capacity.count, math.floor(start))
    exhausted = _exhaustion(family, max_risk, start, horizon, point, now, at_horizon)
    return BudgetProjection(
        size=size, max_risk=max_risk, schedule=schedule, horizon=horizon, capacity=capacity,
        now=now, at_horizon=at_horizon, exhausted=exhausted,
        headroom=max(0, capacity.count - now.count),
        capacity_used=Fraction(now.count, capacity.count), series=series,
    )


def series_counts(schedule: IssueSchedule, start: Fraction, moments: Sequence[Fraction],
                  bits: int | None) -> list[int]:
    """n(start + t) at each moment: with growth, one MPFR batch (``growth_counts``) first."""
    times = [start + t for t in moments] if start else list(moments)
    if bits is None:
        return [schedule.count_at(t) for t in times]
    found = growth_counts(schedule.issued, schedule.rate, schedule.growth, times, bits)
    return [schedule.count_at(t, bits) if count is None else count
            for t, count in zip(times, found, strict=True)]


def _exhaustion(
    family: SecondsFamily,
    max_risk: Fraction,
    start: Fraction,
    horizon: Fraction,
    point: Callable[[Fraction], ProjectedPoint],
    now: ProjectedPoint,
    at_horizon: ProjectedPoint,
) -> Exhaustion | None:
    """The first whole second over budget by the certified search, or ``None``.

    The search runs over whole seconds of the schedule; the answer is given as an offset
    from now, and the moment one second earlier is never before now.
    """
    if now.count > family.capacity:
        return Exhaustion(Fraction(0), True, None, now)
    boundary = certified_boundary(family, max_risk)
    if boundary is None:  # pragma: no cover - the whole second before now passes as now does
        return Exhaustion(Fraction(0), True, None, now)
    if boundary.neighbour is not None:
        offset = boundary.neighbour - start
    elif at_horizon.count > family.capacity:  # crosses after the last whole second
        offset = horizon
    else:
        return None
    return Exhaustion(offset, False, point(max(offset - 1, Fraction(0))), point(offset))


@dataclass(frozen=True, slots=True)
class SecondsFamily(RisingSeconds):
    """The risk at whole seconds first .. last of an issue schedule (rising in time).

    The risk at second t is that of the count family at n(t); every comparison goes
    through the count family's own certified steps. ``capacity`` (the certified largest
    count within the target) serves the first guess only.
    """

    counts: CountFamily
    schedule: IssueSchedule
    last: int
    capacity: int
    first: int = 0
    _seen: dict[int, int] = field(default_factory=dict, compare=False, repr=False)

    def first_guess(self, max_risk: Fraction) -> int:
        return self.schedule.first_second_reaching(self.capacity + 1) - 1

    def _count(self, index: int) -> int:
        count = self._seen.get(index)
        if count is None:
            count = self._seen[index] = self.schedule.count_at(Fraction(index))
        return count

    def known(self, index: int) -> Fraction | None:
        return self.counts.known(self._count(index))

    def start_bits(self, index: int) -> int:
        return self.counts.start_bits(self._count(index))

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        return self.counts.interval(self._count(index), bits)

    def exact_first(self, index: int) -> bool:
        return self.counts.exact_first(self._count(index))

    def exact_allowed(self, index: int) -> bool:
        return self.counts.exact_allowed(self._count(index))

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:
        return self.counts.exact_at_most(self._count(index), max_risk)
