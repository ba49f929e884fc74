"""Risk budgets of time-ordered layouts: the tick model's risk accrued over time at a rate.

Two time-ordered identifiers can be equal only within one tick (``core/ticks.py``), so a
budget accrues risk per tick, not per identifier: with ``rate`` identifiers a second, the
risk over a duration d is the tick model's, 1 - exp(-(d/tau) M g(rate tau / M)). The
identifiers already issued are taken to have been issued at the same steady rate, over
the ``issued / rate`` seconds before now; so the risk at offset t is that of the duration
issued / rate + t, and the count issued by then is floor(issued + rate t).

With growth (the rate now multiplied by ``growth`` each year), the arrivals are a Poisson
process of rising (or falling) intensity and the hazard accrued is the integral of the
per-tick hazard over the ticks to t, plus that of the identifiers already issued, taken
as issued at the rate in force now over the issued / rate seconds before now
(``core/tick_growth.py``: a series with a proven bound, summed while the identifiers per
tick stay within half the values per tick; a horizon past that is refused). The count
issued by t is that of the growing schedule (``IssueSchedule.count_at``, enclosed).

A schedule counted some time before now (a watched scheme) is projected from its count:
now is ``start`` seconds into it, every moment t from now is the schedule's start + t, and
the search runs over whole seconds from now.

When the budget runs out: the risk rises with the duration (the per-tick hazard is never
negative, whatever the growth), so the first whole second with risk > max_risk is found
by the certified search (``search.certified_boundary``) over whole seconds, each compared
through the tick model's interval evaluation. The search runs up to
``TICK_SEARCH_SECONDS`` (with growth above 1, only up to where the series is summed) so
that the capacity (the count issued by the last second within budget) is known even when
the horizon ends first; a risk that stays within budget to the search's end (a falling
rate may keep it bounded) gives no moment and a capacity known only from below.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from fractions import Fraction

from urnbound.core.errors import DomainError
from urnbound.core.growth_counts import YEAR_SECONDS
from urnbound.core.projection import (
    BudgetProjection,
    Exhaustion,
    IssueSchedule,
    PointRisk,
    ProjectedPoint,
    series_counts,
    series_moments,
)
from urnbound.core.search import (
    RisingSeconds,
    RiskInterval,
    certified_boundary,
    hazard,
    log2_of_real,
)
from urnbound.core.tick_growth import (
    HIGHEST_LOAD,
    GrowingTickRisk,
    GrowingTicks,
    growing_tick_interval,
    growing_tick_risk,
    over_half_now,
    past_half,
)
from urnbound.core.tick_series import growing_series_risks, steady_series_risks
from urnbound.core.ticks import TickRisk, steady_loads, tick_interval, tick_risk

#: The last whole second the search looks at (some 32 million years).
TICK_SEARCH_SECONDS = 10**15


@dataclass(frozen=True, slots=True)
class TickCapacity:
    """The count issued by the last whole second within budget, and the risks either side.

    :ivar bounded: False when the risk stays within budget up to ``TICK_SEARCH_SECONDS``:
        ``count`` is then the count issued by then, a lower bound.
    """

    count: int
    at_count: TickRisk | GrowingTickRisk
    one_more: TickRisk | GrowingTickRisk | None
    bounded: bool


class _TickModelSeconds(RisingSeconds):
    """What the tick-model families over whole seconds from now share: no exact path."""

    __slots__ = ()

    def start_bits(self, index: int) -> int:
        return 64 + index.bit_length()

    def exact_first(self, index: int) -> bool:
        return False

    def exact_allowed(self, index: int) -> bool:
        return False

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:  # pragma: no cover
        raise DomainError("the tick model has no exact path", field="space")


@dataclass(frozen=True, slots=True)
class TickSeconds(_TickModelSeconds):
    """The tick-model risk at whole seconds 0 .. last from now (rising in time)."""

    random_bits: int
    tick: Fraction
    rate: Fraction
    past: Fraction
    last: int
    first: int = 0

    def first_guess(self, max_risk: Fraction) -> int:
        """d = t / lambda for lambda ~ rate**2 tau / (2M) (leading order), minus the past."""
        log2_hazard = log2_of_real(hazard(max_risk, 64))
        log2_duration = (log2_hazard + self.random_bits + 1 - 2 * _log2(self.rate)
                         - _log2(self.tick))
        if log2_duration > 60:
            return self.last
        if self.past > 2**62:  # a past that long is over any budget the guess can place
            return 0
        guess: int = math.ceil(2.0**log2_duration - float(self.past))
        return max(0, guess)

    def known(self, index: int) -> Fraction | None:
        return Fraction(0) if self.past + index == 0 else None

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        return tick_interval(self.random_bits, steady_loads(self.rate, self.tick,
                                                            self.past + index), bits)


@dataclass(frozen=True, slots=True)
class GrowingTickSeconds(_TickModelSeconds):
    """The tick-model risk at a growing rate at whole seconds 0 .. last from now (rising in
    time); now is ``origin`` seconds after the moment the schedule's rate holds."""

    ticks: GrowingTicks
    last: int
    origin: Fraction = Fraction(0)
    first: int = 0

    def first_guess(self, max_risk: Fraction) -> int:
        """Where the leading-order hazard, (rate tau)**2 / (2 M tau) per second at the
        schedule's start, summed over the past and Y (g**(2t/Y) - 1) / (2 ln g) seconds
        ahead, meets max_risk (then less the origin)."""
        ticks = self.ticks
        log2_steady = (log2_of_real(hazard(max_risk, 64)) + ticks.random_bits + 1
                       - 2 * _log2(ticks.rate) - _log2(ticks.tick))  # seconds at rate now
        if ticks.past > 2**62:  # a past that long is over any budget the guess can place
            return 0
        twice_log_growth = 2 * math.log1p(float(ticks.growth - 1))
        if log2_steady > 64:  # the past (below 2**62 s) is negligible; in logarithms
            if twice_log_growth < 0:  # a falling rate never gets there at leading order
                return self.last
            ln_inside = log2_steady * math.log(2) + math.log(twice_log_growth / YEAR_SECONDS)
            grown = ln_inside if ln_inside > 40 else math.log1p(math.exp(ln_inside))
        else:
            remaining = 2.0**log2_steady - float(ticks.past)
            if remaining <= 0:
                return 0
            inside = remaining * twice_log_growth / YEAR_SECONDS
            if inside <= -1:  # a falling rate never gets there at leading order
                return self.last
            grown = math.log1p(inside)
        seconds = YEAR_SECONDS * grown / twice_log_growth - float(self.origin)
        return min(self.last, max(0, math.ceil(seconds))) if math.isfinite(seconds) \
            else self.last

    def known(self, index: int) -> Fraction | None:
        return Fraction(0) if self.ticks.past + self.origin + index == 0 else None

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        return growing_tick_interval(self.ticks, self.origin + index, bits)


def _log2(value: Fraction) -> float:
    return math.log2(value.numerator) - math.log2(value.denominator)


def project_tick_budget(
    random_bits: int,
    tick: Fraction,
    schedule: IssueSchedule,
    horizon: Fraction,
    max_risk: Fraction,
    points: int,
    *,
    start: Fraction = Fraction(0),
) -> BudgetProjection:
    """The budget of a time-ordered layout at a steady or growing rate (module docstring).

    Now is ``start`` seconds into the schedule (a watched scheme counted some time ago);
    every reported moment is an offset from now, and the search runs over whole seconds
    from now.

    >>> p = project_tick_budget(74, Fraction(1, 1000), IssueSchedule(0, Fraction(10**6)),
    ...                         Fraction(86400 * 365), Fraction(1, 10**9), 2)
    >>> p.at_horizon.risk.collision.decimal[:6], p.exhausted.seconds
    ('8.3475', Fraction(37779, 1))
    >>> g = project_tick_budget(74, Fraction(1, 1000), IssueSchedule(0, Fraction(10**6),
    ...                         Fraction(3, 2)), Fraction(86400 * 365), Fraction(1, 10**9), 2)
    >>> g.at_horizon.risk.collision.decimal[:6], g.exhausted.seconds
    ('1.2867', Fraction(37761, 1))
    """
    if horizon <= 0:
        raise DomainError("horizon must be above 0", field="horizon")
    if start < 0:
        raise DomainError("the schedule starts after now", field="start")
    model = _tick_model(random_bits, tick, schedule, horizon, start)

    def count_at(offset: Fraction) -> int:
        return schedule.count_at(start + offset, model.bits)

    def point(offset: Fraction) -> ProjectedPoint:
        return ProjectedPoint(offset, count_at(offset), model.risk_at(offset))

    moments = series_moments(horizon, points)
    counts = series_counts(schedule, start, moments, model.bits)
    series = tuple(ProjectedPoint(t, count, risk if risk is not None else model.risk_at(t))
                   for t, count, risk in zip(moments, counts, model.batch(moments, counts),
                                             strict=True))
    now, at_horizon = series[0], series[-1]
    boundary = certified_boundary(model.family, max_risk)
    first_over = None if boundary is None else boundary.neighbour
    capacity = _capacity(boundary is None, first_over, model.family.highest, count_at,
                         model.risk_at)
    exhausted = _exhaustion(first_over, boundary is None, horizon, now, at_horizon, max_risk,
                            point)
    used = Fraction(now.count, max(capacity.count, 1))
    return BudgetProjection(
        size=2**random_bits, max_risk=max_risk, schedule=schedule, horizon=horizon,
        capacity=capacity, now=now, at_horizon=at_horizon, exhausted=exhausted,
        headroom=max(0, capacity.count - now.count), capacity_used=used, series=series,
    )


RiskAt = Callable[[Fraction], "TickRisk | GrowingTickRisk"]


@dataclass(frozen=True, slots=True)
class _TickModel:
    """A schedule as the tick model sees it from now: the certified risk at an offset, the
    series' batch, the search family, and the precision of the counts' first enclosure
    (``None`` at a steady rate)."""

    risk_at: RiskAt
    batch: Callable[[Sequence[Fraction], Sequence[int]], Sequence[PointRisk | None]]
    family: TickSeconds | GrowingTickSeconds
    bits: int | None


def _tick_model(random_bits: int, tick: Fraction, schedule: IssueSchedule, horizon: Fraction,
                start: Fraction) -> _TickModel:
    rate, past = schedule.rate, Fraction(schedule.issued) / schedule.rate
    if schedule.growth == 1:
        since = past + start  # the steady hazard depends on the duration alone

        def steady_batch(moments: Sequence[Fraction], counts: Sequence[int]
                         ) -> Sequence[PointRisk | None]:
            return steady_series_risks(random_bits, tick, rate, since, moments, counts)

        return _TickModel(
            lambda offset: tick_risk(random_bits, steady_loads(rate, tick, since + offset)),
            steady_batch, TickSeconds(random_bits, tick, rate, since, TICK_SEARCH_SECONDS),
            None)
    ticks = GrowingTicks(random_bits, tick, rate, schedule.growth, past)
    if ticks.load_now >= HIGHEST_LOAD:
        raise DomainError(over_half_now(ticks), field="rate")
    last = ticks.last_second()
    if start + horizon > last:
        raise DomainError(past_half(ticks, start), field="horizon")
    ahead = last - float(start)
    highest = TICK_SEARCH_SECONDS if ahead > TICK_SEARCH_SECONDS else math.floor(ahead) - 1

    def growing_batch(moments: Sequence[Fraction], counts: Sequence[int]
                      ) -> Sequence[PointRisk | None]:
        return growing_series_risks(ticks, [start + t for t in moments], counts)

    return _TickModel(lambda offset: growing_tick_risk(ticks, start + offset), growing_batch,
                      GrowingTickSeconds(ticks, max(0, highest), start),
                      schedule.first_bits(start + horizon))


def _capacity(already: bool, first_over: int | None, last_second: int,
              count_at: Callable[[Fraction], int], risk_at: RiskAt) -> TickCapacity:
    """The capacity from the search's verdict (offsets from now)."""
    if already:  # over now: the count issued now is past the capacity
        return TickCapacity(count_at(Fraction(0)), risk_at(Fraction(0)), None, True)
    if first_over is None:
        last = Fraction(last_second)
        return TickCapacity(count_at(last), risk_at(last), None, False)
    within = Fraction(first_over - 1)
    return TickCapacity(count_at(within), risk_at(within), risk_at(Fraction(first_over)), True)


def _exhaustion(first_over: int | None, already: bool, horizon: Fraction,
                now: ProjectedPoint, at_horizon: ProjectedPoint, max_risk: Fraction,
                point: Callable[[Fraction], ProjectedPoint]) -> Exhaustion | None:
    if already:
        return Exhaustion(Fraction(0), True, None, now)
    if first_over is not None and first_over <= horizon:
        seconds = Fraction(first_over)
    elif _exceeds(at_horizon, max_risk):  # crosses in the last fraction of a second
        seconds = horizon
    else:
        return None
    return Exhaustion(seconds, False, point(max(seconds - 1, Fraction(0))), point(seconds))


def _exceeds(found: ProjectedPoint, max_risk: Fraction) -> bool:
    """The reported risk at ``found`` is above max_risk (decided on its decimal text and
    bound: only used for a horizon inside the second that crosses)."""
    risk = found.risk.collision
    if risk.log10 is None:
        return False
    value = Fraction(risk.decimal)
    margin = Fraction(risk.relative_error_bound)
    return value * (1 - margin) > max_risk
