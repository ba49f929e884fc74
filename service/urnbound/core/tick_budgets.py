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
from urnbound.core.search import RiskInterval, certified_boundary, hazard, log2_of_real
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


@dataclass(frozen=True, slots=True)
class TickSeconds:
    """The tick-model risk at whole seconds 0 .. last from now (rising in time)."""

    random_bits: int
    tick: Fraction
    rate: Fraction
    past: Fraction
    last: int

    @property
    def lowest(self) -> int:
        return 0

    @property
    def highest(self) -> int:
        return self.last

    @property
    def rising(self) -> bool:
        return True

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

    def start_bits(self, index: int) -> int:
        return 64 + index.bit_length()

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        return tick_interval(self.random_bits, steady_loads(self.rate, self.tick,
                                                            self.past + index), bits)

    def exact_first(self, index: int) -> bool:
        return False

    def exact_allowed(self, index: int) -> bool:
        return False

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:  # pragma: no cover
        raise DomainError("the tick model has no exact path", field="space")


@dataclass(frozen=True, slots=True)
class GrowingTickSeconds:
    """The tick-model risk at a growing rate at whole seconds 0 .. last (rising in time)."""

    ticks: GrowingTicks
    last: int

    @property
    def lowest(self) -> int:
        return 0

    @property
    def highest(self) -> int:
        return self.last

    @property
    def rising(self) -> bool:
        return True

    def first_guess(self, max_risk: Fraction) -> int:
        """Where the leading-order hazard, (rate tau)**2 / (2 M tau) per second now, summed
        over the past and Y (g**(2t/Y) - 1) / (2 ln g) seconds ahead, meets max_risk."""
        ticks = self.ticks
        log2_steady = (log2_of_real(hazard(max_risk, 64)) + ticks.random_bits + 1
                       - 2 * _log2(ticks.rate) - _log2(ticks.tick))  # seconds at rate now
        if log2_steady > 1000:
            return self.last
        if ticks.past > 2**62:  # a past that long is over any budget the guess can place
            return 0
        remaining = 2.0**log2_steady - float(ticks.past)
        if remaining <= 0:
            return 0
        twice_log_growth = 2 * math.log1p(float(ticks.growth - 1))
        inside = remaining * twice_log_growth / YEAR_SECONDS
        if inside <= -1:  # a falling rate never gets there at leading order
            return self.last
        seconds = YEAR_SECONDS * math.log1p(inside) / twice_log_growth
        return min(self.last, math.ceil(seconds)) if math.isfinite(seconds) else self.last

    def known(self, index: int) -> Fraction | None:
        return Fraction(0) if self.ticks.past + index == 0 else None

    def start_bits(self, index: int) -> int:
        return 64 + index.bit_length()

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        return growing_tick_interval(self.ticks, Fraction(index), bits)

    def exact_first(self, index: int) -> bool:
        return False

    def exact_allowed(self, index: int) -> bool:
        return False

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:  # pragma: no cover
        raise DomainError("the tick model has no exact path", field="space")


def _log2(value: Fraction) -> float:
    return math.log2(value.numerator) - math.log2(value.denominator)


def project_tick_budget(
    random_bits: int,
    tick: Fraction,
    schedule: IssueSchedule,
    horizon: Fraction,
    max_risk: Fraction,
    points: int,
) -> BudgetProjection:
    """The budget of a time-ordered layout at a steady or growing rate (module docstring).

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
    rate, past = schedule.rate, Fraction(schedule.issued) / schedule.rate
    risk_at, growing, bits = _risks(random_bits, tick, schedule, horizon)

    def point(offset: Fraction) -> ProjectedPoint:
        return ProjectedPoint(offset, schedule.count_at(offset, bits), risk_at(offset))

    family: TickSeconds | GrowingTickSeconds = growing or TickSeconds(
        random_bits, tick, rate, past, TICK_SEARCH_SECONDS)
    moments = series_moments(horizon, points)
    counts = series_counts(schedule, Fraction(0), moments, bits)
    batched: Sequence[PointRisk | None] = (
        steady_series_risks(random_bits, tick, rate, past, moments, counts) if growing is None
        else growing_series_risks(growing.ticks, moments, counts))
    series = tuple(ProjectedPoint(t, count, risk if risk is not None else risk_at(t))
                   for t, count, risk in zip(moments, counts, batched, strict=True))
    now, at_horizon = series[0], series[-1]
    boundary = certified_boundary(family, max_risk)
    first_over = None if boundary is None else boundary.neighbour
    capacity = _capacity(schedule, boundary is None, first_over, risk_at, family.highest)
    exhausted = _exhaustion(first_over, boundary is None, horizon, now, at_horizon, max_risk,
                            point)
    used = Fraction(now.count, max(capacity.count, 1))
    return BudgetProjection(
        size=2**random_bits, max_risk=max_risk, schedule=schedule, horizon=horizon,
        capacity=capacity, now=now, at_horizon=at_horizon, exhausted=exhausted,
        headroom=max(0, capacity.count - now.count), capacity_used=used, series=series,
    )


RiskAt = Callable[[Fraction], "TickRisk | GrowingTickRisk"]


def _risks(random_bits: int, tick: Fraction, schedule: IssueSchedule, horizon: Fraction
           ) -> tuple[RiskAt, GrowingTickSeconds | None, int | None]:
    """The risk at an offset, the search family with growth (else ``None``), and the
    precision of the counts' first enclosure (``None`` at a steady rate)."""
    rate, past = schedule.rate, Fraction(schedule.issued) / schedule.rate
    if schedule.growth == 1:
        return (lambda offset: tick_risk(random_bits, steady_loads(rate, tick, past + offset)),
                None, None)
    ticks = GrowingTicks(random_bits, tick, rate, schedule.growth, past)
    if ticks.load_now >= HIGHEST_LOAD:
        raise DomainError(over_half_now(ticks), field="rate")
    last = ticks.last_second()
    if horizon > last:
        raise DomainError(past_half(ticks), field="horizon")
    highest = TICK_SEARCH_SECONDS if last > TICK_SEARCH_SECONDS else math.floor(last) - 1
    return ((lambda offset: growing_tick_risk(ticks, offset)),
            GrowingTickSeconds(ticks, max(0, highest)), schedule.first_bits(horizon))


def _capacity(schedule: IssueSchedule, already: bool, first_over: int | None,
              risk_at: RiskAt, last_second: int) -> TickCapacity:
    if already:  # over now: the count issued now is past the capacity
        return TickCapacity(schedule.issued, risk_at(Fraction(0)), None, True)
    if first_over is None:
        last = Fraction(last_second)
        return TickCapacity(schedule.count_at(last), risk_at(last), None, False)
    last_within = Fraction(first_over - 1)
    return TickCapacity(schedule.count_at(last_within), risk_at(last_within),
                        risk_at(Fraction(first_over)), True)


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
