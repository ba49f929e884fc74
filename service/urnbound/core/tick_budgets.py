"""Risk budgets of time-ordered layouts: the tick model's risk accrued over time at a rate.

Two time-ordered identifiers can be equal only within one tick (``core/ticks.py``), so a
budget accrues risk per tick, not per identifier: with ``rate`` identifiers a second, the
risk over a duration d is the tick model's, 1 - exp(-(d/tau) M g(rate tau / M)). The
identifiers already issued are taken to have been issued at the same steady rate, over
the ``issued / rate`` seconds before now; so the risk at offset t is that of the duration
issued / rate + t, and the count issued by then is floor(issued + rate t). Growth is not
modelled here (a rate that changes makes the ticks' means differ; refused).

When the budget runs out: the risk rises with the duration, so the first whole second
with risk > max_risk is found by the certified search (``search.certified_boundary``)
over whole seconds, each compared through the tick model's interval evaluation. The
search runs up to ``TICK_SEARCH_SECONDS`` so that the capacity (the count issued by the
last second within budget) is known even when the horizon ends first.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction

from urnbound.core.errors import DomainError
from urnbound.core.projection import (
    BudgetProjection,
    Exhaustion,
    IssueSchedule,
    ProjectedPoint,
    series_moments,
)
from urnbound.core.search import RiskInterval, certified_boundary, hazard, log2_of_real
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
    at_count: TickRisk
    one_more: TickRisk | None
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
    """The budget of a time-ordered layout at a steady rate (see the module docstring).

    >>> p = project_tick_budget(74, Fraction(1, 1000), IssueSchedule(0, Fraction(10**6)),
    ...                         Fraction(86400 * 365), Fraction(1, 10**9), 2)
    >>> p.at_horizon.risk.collision.decimal[:6], p.exhausted.seconds
    ('8.3475', Fraction(37779, 1))
    """
    if schedule.growth != 1:
        raise DomainError("a time-ordered layout is projected at a steady rate: leave out "
                          "growth (or give 1)", field="growth")
    if horizon <= 0:
        raise DomainError("horizon must be above 0", field="horizon")
    rate, past = schedule.rate, Fraction(schedule.issued) / schedule.rate

    def risk_at(offset: Fraction) -> TickRisk:
        return tick_risk(random_bits, steady_loads(rate, tick, past + offset))

    def point(offset: Fraction) -> ProjectedPoint:
        return ProjectedPoint(offset, schedule.count_at(offset), risk_at(offset))

    series = tuple(point(t) for t in series_moments(horizon, points))
    now, at_horizon = series[0], series[-1]
    family = TickSeconds(random_bits, tick, rate, past, TICK_SEARCH_SECONDS)
    boundary = certified_boundary(family, max_risk)
    first_over = None if boundary is None else boundary.neighbour
    capacity = _capacity(schedule, boundary is None, first_over, risk_at)
    exhausted = _exhaustion(first_over, boundary is None, horizon, now, at_horizon, max_risk,
                            point)
    used = Fraction(now.count, max(capacity.count, 1))
    return BudgetProjection(
        size=2**random_bits, max_risk=max_risk, schedule=schedule, horizon=horizon,
        capacity=capacity, now=now, at_horizon=at_horizon, exhausted=exhausted,
        headroom=max(0, capacity.count - now.count), capacity_used=used, series=series,
    )


def _capacity(schedule: IssueSchedule, already: bool, first_over: int | None,
              risk_at: Callable[[Fraction], TickRisk]) -> TickCapacity:
    if already:  # over now: the count issued now is past the capacity
        return TickCapacity(schedule.issued, risk_at(Fraction(0)), None, True)
    if first_over is None:
        last = Fraction(TICK_SEARCH_SECONDS)
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
