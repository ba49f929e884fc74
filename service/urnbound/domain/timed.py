"""Time-ordered identifiers in the questions: rate and duration in place of a count.

A time-ordered space (``format=uuid-v7``, or ``tick`` + ``random_bits``) is answered with
the tick model (``core/ticks.py``): the load is ``rate`` identifiers per second across all
generators for ``duration`` (ISO 8601), optionally with a ``burst`` factor (peak over mean
rate) on the busiest ``burst_share`` of the ticks, the other ticks slower so that the mean
is kept. A count makes no sense there (the risk depends on how the identifiers spread
over ticks), so a time-ordered space refuses ``count``, and any other space refuses
``rate``, each with a message saying what to give instead.
"""

from __future__ import annotations

from fractions import Fraction
from typing import Any

from urnbound.core.exact import magnitude_of_fraction
from urnbound.core.limits import MAX_BITS, MAX_BURST, MAX_TEXT_CHARS
from urnbound.core.ticks import TickLoad, TickRisk, fewest_tick_bits, steady_loads, tick_risk
from urnbound.domain.alternatives import chosen_group
from urnbound.domain.durations import duration_rule, duration_text, parse_duration
from urnbound.domain.errors import DomainError, InvalidQuery
from urnbound.domain.formats import TimeOrderedSpace, time_ordered_space
from urnbound.domain.inputs import Inputs
from urnbound.domain.parameters import NUMBER_PATTERN, Parameter
from urnbound.domain.question import AnswerField
from urnbound.domain.rates import decimal_rule, parse_decimal_in, parse_rate, rate_rule

RATE = Parameter(
    "rate",
    lambda text: parse_rate(text, field="rate"),
    rate_rule(),
    "Identifiers per second across all generators, with duration (for a time-ordered "
    "space, instead of count).",
    "1e6",
    {"type": "string", "pattern": NUMBER_PATTERN, "maxLength": MAX_TEXT_CHARS},
)
DURATION = Parameter(
    "duration",
    lambda text: parse_duration(text, field="duration"),
    duration_rule(),
    "How long identifiers are made at rate, as an ISO 8601 duration.",
    "P365D",
    {"type": "string", "maxLength": MAX_TEXT_CHARS},
)
BURST = Parameter(
    "burst",
    lambda text: parse_decimal_in(text, "burst", 1, MAX_BURST, decimal_rule(1, MAX_BURST)),
    decimal_rule(1, MAX_BURST),
    "Peak over mean rate in the busiest burst_share of the ticks (with burst_share; the "
    "other ticks are slower, keeping the mean rate); default 1.",
    "10",
    {"type": "string", "pattern": NUMBER_PATTERN, "maxLength": MAX_TEXT_CHARS},
)
BURST_SHARE = Parameter(
    "burst_share",
    lambda text: parse_decimal_in(text, "burst_share", 0, 1, decimal_rule(0, 1, low_open=True),
                                  low_open=True),
    decimal_rule(0, 1, low_open=True),
    "The share of the ticks that run at burst times the mean rate (with burst).",
    "0.01",
    {"type": "string", "pattern": NUMBER_PATTERN, "maxLength": MAX_TEXT_CHARS},
)
#: The load parameters, in documentation order.
LOAD_PARAMETERS = (RATE, DURATION, BURST, BURST_SHARE)
_COUNT_OR_RATE = (("count",), ("rate", "duration"))


def uses_tick_model(inputs: Inputs) -> bool:
    """True when the question is about a time-ordered space with a rate and a duration.

    :raises InvalidQuery: for count and rate both or neither, a rate without a duration,
        a count for a time-ordered space, a rate for any other, or a burst without its
        share.
    """
    group = chosen_group(inputs, _COUNT_OR_RATE)
    timed = isinstance(inputs["space"], TimeOrderedSpace)
    if group == 0 and timed:
        raise InvalidQuery({"count": [
            "the space is time-ordered (identifiers coincide only within a tick): give rate "
            "and duration instead of count"]})
    if group == 1 and not timed:
        raise InvalidQuery({"rate": [
            "rate and duration go with a time-ordered space (format=uuid-v7, or tick with "
            "random_bits); give count for this space"]})
    _check_burst(inputs)
    return group == 1


def _check_burst(inputs: Inputs) -> None:
    given = [name for name in ("burst", "burst_share") if inputs.get(name) is not None]
    if len(given) == 1:
        (other,) = {"burst", "burst_share"} - set(given)
        raise InvalidQuery({other: [f"{other} is required with {given[0]}"]})
    if given and inputs.get("rate") is None:
        raise InvalidQuery({name: [f"{name} goes with rate and duration"] for name in given})


def loads_of(inputs: Inputs, tick: Fraction) -> tuple[TickLoad, ...]:
    """The tick classes of the request's load at this tick.

    :raises InvalidQuery: (burst) when burst x burst_share exceeds 1.
    """
    burst = inputs.get("burst") or Fraction(1)
    share = inputs.get("burst_share") or Fraction(0)
    try:
        return steady_loads(inputs["rate"], tick, inputs["duration"], burst, share)
    except DomainError as error:
        raise InvalidQuery({"burst": [error.detail], "burst_share": [error.detail]}) from None


def expected_count(inputs: Inputs) -> int:
    """The whole number nearest to rate x duration (half to even)."""
    return int(round(inputs["rate"] * inputs["duration"]))


def tick_model_record(inputs: Inputs, tick: Fraction) -> dict[str, Any]:
    """The ``tick_model`` member: the load as the model sees it."""
    rate, duration = inputs["rate"], inputs["duration"]
    ticks, mean, count = duration / tick, rate * tick, rate * duration
    return {
        "tick": duration_text(tick),
        "ticks": magnitude_of_fraction(ticks.numerator, ticks.denominator),
        "mean_per_tick": magnitude_of_fraction(mean.numerator, mean.denominator),
        "expected_count": magnitude_of_fraction(count.numerator, count.denominator),
        "duration": duration_text(duration),
        "burst": _fraction_text(inputs.get("burst") or Fraction(1)),
        "burst_share": _fraction_text(inputs.get("burst_share") or Fraction(0)),
    }


def _fraction_text(value: Fraction) -> str:
    return str(value.numerator) if value.denominator == 1 else (
        f"{value.numerator}/{value.denominator}")


def collision_values(inputs: Inputs, risk: TickRisk) -> dict[str, Any]:
    """The members of the collisions answer from the tick model."""
    space: TimeOrderedSpace = inputs["space"]
    return {
        "collision": risk.collision,
        "no_collision": risk.no_collision,
        "expected_colliding_pairs": risk.expected_colliding_pairs,
        "expected_duplicates": risk.expected_duplicates,
        "reciprocal_risk": risk.reciprocal_risk,
        "space": space,
        "count": expected_count(inputs),
        "method": risk.method,
        "relative_error_bound": risk.relative_error_bound,
        "exact": None,
        "tick_model": tick_model_record(inputs, space.tick_seconds),
    }


TICK_MODEL_FIELD = AnswerField(
    "tick_model", "object",
    "For a time-ordered space given rate and duration: the load as the tick model sees it "
    "(P(no collision) = (e^-mu (1 + mu/M)^M)^ticks); null otherwise.",
    nullable=True,
    members=(
        AnswerField("tick", "text", "The tick, as an ISO 8601 duration."),
        AnswerField("ticks", "magnitude", "duration / tick."),
        AnswerField("mean_per_tick", "magnitude", "mu = rate x tick, identifiers per tick."),
        AnswerField("expected_count", "magnitude", "rate x duration (count is the nearest "
                    "whole number)."),
        AnswerField("duration", "text", "The duration, in ISO 8601 seconds."),
        AnswerField("burst", "text", "Peak over mean rate of the busiest ticks, exactly."),
        AnswerField("burst_share", "text", "The share of the ticks at that peak, exactly."),
    ),
)


# --- inverse questions -------------------------------------------------------------------


_COUNT_OR_LAYOUT_LOAD = (("count",), ("rate", "duration", "tick"))


def uses_tick_bits(inputs: Inputs) -> bool:
    """True when the bits question is asked for a tick, a rate and a duration.

    :raises InvalidQuery: for count and rate both or neither, or a load half given.
    """
    group = chosen_group(inputs, _COUNT_OR_LAYOUT_LOAD)
    _check_burst(inputs)
    return group == 1


def tick_bits_values(inputs: Inputs) -> dict[str, Any]:
    """The members of the bits answer for a time-ordered layout: fewest random bits a tick.

    :raises DomainError: (field ``rate``) when no layout up to 8192 random bits keeps the
        risk within max_risk.
    """
    tick = inputs["tick"]
    loads = loads_of(inputs, tick)
    bits = fewest_tick_bits(loads, inputs["max_risk"], MAX_BITS)
    if bits is None:
        raise DomainError(f"no layout up to {MAX_BITS} random bits a tick keeps the risk of "
                          "this rate and duration within max_risk", field="rate")
    at_bits = tick_risk(bits, loads)
    one_fewer = tick_risk(bits - 1, loads) if bits > 1 else None
    bounds = [at_bits.relative_error_bound]
    if one_fewer is not None:
        bounds.append(one_fewer.relative_error_bound)
    return {
        "bits": bits,
        "collision": at_bits.collision,
        "collision_one_fewer": None if one_fewer is None else one_fewer.collision,
        "space": time_ordered_space("custom time-ordered layout", bits, tick),
        "count": expected_count(inputs),
        "method": at_bits.method,
        "relative_error_bound": max(bounds),
        "tick_model": tick_model_record(inputs, tick),
    }
