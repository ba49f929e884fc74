"""GET /v1/guessing: how likely is an attacker to guess one of the live tokens of a space?

``live`` tokens are valid at once in the space (or format); an attacker makes
``guesses`` guesses, or guesses at ``guess_rate`` per second for a ``window`` (an ISO 8601
duration; the guesses are floor(guess_rate x window)). The answer gives the chance of at
least one hit for distinct guesses (an attacker who never repeats a guess),
1 - C(N - live, G) / C(N, G), and for independent uniform guesses, 1 - (1 - live/N)^G;
the expected number of guesses to the first hit ((N + 1)/(live + 1) and N/live) and,
with a rate, the expected time to it; the entropy of one token; and ``policy``: the
entropy held against ``min_entropy_bits`` (default 64: NIST SP 800-63B, section 7.1, and
the OWASP Session Management Cheat Sheet ask at least 64 bits of session secrets), and
the distinct-guess hit chance (the larger of the two) held against ``max_success`` when
given (RFC 6749, section 10.10 asks at most 2^-128 for generated tokens:
``max_success=2.938735877055718769921841343055614194546663891930218803771879265696043148636817932128906250e-39``).

The figures assume tokens drawn uniformly by a cryptographically secure generator, no
leakage and no rate limiting (``caution``). A UUID is not meant to be a security
capability (RFC 9562, section 8): a format's space is its random bits only.

Example: ``GET /v1/guessing?bits=64&live=1e5&guess_rate=1e4&window=P365D``
"""

from __future__ import annotations

from fractions import Fraction
from typing import Any

from urnbound.core.exact import magnitude_of_fraction
from urnbound.core.guessing import HitChance, distinct_hit, hit_at_most, independent_hit
from urnbound.core.limits import MAX_BIG_TEXT_CHARS, MAX_BITS, MAX_COUNT, MAX_TEXT_CHARS, MIN_BITS
from urnbound.core.results import EXACT, Magnitude
from urnbound.domain import numbers
from urnbound.domain.alternatives import chosen_group
from urnbound.domain.durations import duration_rule, parse_duration
from urnbound.domain.errors import InvalidQuery
from urnbound.domain.inputs import Inputs
from urnbound.domain.parameters import NUMBER_PATTERN, SPACE, Parameter
from urnbound.domain.question import (
    Answer,
    AnswerField,
    Context,
    Question,
    bound_field,
    method_field,
    space_field,
)
from urnbound.domain.rates import parse_rate, rate_rule

#: The default entropy floor of a token, in bits.
DEFAULT_MIN_ENTROPY_BITS = 64
#: Where the default floor comes from.
ENTROPY_SOURCE = ("NIST SP 800-63B, section 7.1 (session secrets of at least 64 bits); "
                  "OWASP Session Management Cheat Sheet (session identifiers of at least "
                  "64 bits of entropy)")
#: A Julian year in seconds, for the expected time in years.
YEAR_SECONDS = 31_557_600
#: Repeated on every answer.
CAUTION = (
    "These figures assume tokens drawn independently and uniformly from the whole space "
    "by a cryptographically secure random generator, no leakage of tokens or of the "
    "generator's state, and no rate limiting or lockout. Follow your organisation's "
    "security policy and the standards that apply to you; these figures do not replace "
    "them."
)

LIVE = Parameter(
    "live",
    lambda text: numbers.parse_count(text, field="live", minimum=1),
    numbers.whole_rule(1, MAX_COUNT, scientific=True) + ", and at most the size of the space",
    "How many tokens are valid at once (any of them is a hit).",
    "1e5",
    {"type": "string", "pattern": NUMBER_PATTERN, "maxLength": MAX_BIG_TEXT_CHARS},
)
GUESSES = Parameter(
    "guesses",
    lambda text: numbers.parse_count(text, field="guesses"),
    numbers.whole_rule(0, MAX_COUNT, scientific=True),
    "How many guesses the attacker makes (or give guess_rate and window).",
    "1e9",
    {"type": "string", "pattern": NUMBER_PATTERN, "maxLength": MAX_BIG_TEXT_CHARS},
)
GUESS_RATE = Parameter(
    "guess_rate",
    lambda text: parse_rate(text, field="guess_rate"),
    rate_rule(),
    "Guesses per second, with window (instead of guesses).",
    "1e4",
    {"type": "string", "pattern": NUMBER_PATTERN, "maxLength": MAX_TEXT_CHARS},
)
WINDOW = Parameter(
    "window",
    lambda text: parse_duration(text, field="window"),
    duration_rule(),
    "How long the attacker guesses at guess_rate, as an ISO 8601 duration.",
    "P365D",
    {"type": "string", "maxLength": MAX_TEXT_CHARS},
)
MIN_ENTROPY_BITS = Parameter(
    "min_entropy_bits",
    lambda text: numbers.parse_int_in_range(text, "min_entropy_bits", MIN_BITS, MAX_BITS),
    numbers.whole_rule(MIN_BITS, MAX_BITS, scientific=False),
    f"The entropy a token must have, in bits (default {DEFAULT_MIN_ENTROPY_BITS}).",
    "64",
    {"type": "integer", "minimum": MIN_BITS, "maximum": MAX_BITS},
)
MAX_SUCCESS = Parameter(
    "max_success",
    lambda text: numbers.parse_risk(text, field="max_success"),
    numbers.risk_rule(),
    "The largest acceptable chance that the attacker hits a live token; compared exactly.",
    "1e-9",
    {"type": "string", "pattern": NUMBER_PATTERN, "maxLength": MAX_TEXT_CHARS},
)

_ATTEMPTS = (("guesses",), ("guess_rate", "window"))


def _guesses(inputs: Inputs) -> tuple[int, Fraction | None]:
    """The number of guesses and the rate they come at (``None`` when given as a count)."""
    if chosen_group(inputs, _ATTEMPTS) == 0:
        return inputs["guesses"], None
    rate, window = inputs["guess_rate"], inputs["window"]
    product = rate * window
    return product.numerator // product.denominator, rate


def _expected(numerator: int, denominator: int) -> Magnitude:
    """A ratio of whole numbers, correctly rounded."""
    return magnitude_of_fraction(numerator, denominator)


def _expected_times(size: int, live: int, rate: Fraction | None) -> dict[str, Any]:
    """Expected seconds and Julian years to the first hit at ``rate`` (null without one)."""
    if rate is None:
        return {name: None for name in ("expected_seconds_distinct",
                                        "expected_seconds_independent",
                                        "expected_years_distinct",
                                        "expected_years_independent")}
    distinct = Fraction(size + 1, live + 1) / rate
    independent = Fraction(size, live) / rate
    years = Fraction(1, YEAR_SECONDS)
    return {
        "expected_seconds_distinct": _expected(distinct.numerator, distinct.denominator),
        "expected_seconds_independent": _expected(independent.numerator,
                                                  independent.denominator),
        "expected_years_distinct": _expected((distinct * years).numerator,
                                             (distinct * years).denominator),
        "expected_years_independent": _expected((independent * years).numerator,
                                                (independent * years).denominator),
    }


def _policy(inputs: Inputs, size: int, distinct: HitChance, limit: int) -> dict[str, Any]:
    floor = inputs["min_entropy_bits"] or DEFAULT_MIN_ENTROPY_BITS
    ceiling = inputs["max_success"]
    within = None
    if ceiling is not None:
        within = hit_at_most(distinct, ceiling, distinct=True, exact_digit_limit=limit)
    return {
        "min_entropy_bits": floor,
        "entropy_meets_minimum": size >= 2**floor,
        "entropy_source": ENTROPY_SOURCE if inputs["min_entropy_bits"] is None
        else "the caller's min_entropy_bits",
        "max_success": None if ceiling is None else f"{ceiling.numerator}/{ceiling.denominator}",
        "success_within_max": within,
        "success_source": None if ceiling is None else "the caller's max_success (RFC 6749, "
        "section 10.10 asks at most 2^-128 for generated tokens)",
    }


def _answer(inputs: Inputs, context: Context) -> Answer:
    space = inputs["space"]
    size, live = space.size, inputs["live"]
    if live > size:
        raise InvalidQuery({"live": [f"live must be at most the size of the space "
                                     f"({numbers.bound_text(size)} values)"]})
    guesses, rate = _guesses(inputs)
    limit = context.exact_digit_limit
    distinct = distinct_hit(size, live, guesses, exact_digit_limit=limit)
    independent = independent_hit(size, live, guesses, exact_digit_limit=limit)
    method = EXACT if distinct.method == independent.method == EXACT else "asymptotic"
    return Answer(
        {
            "hit_distinct": distinct.hit,
            "hit_independent": independent.hit,
            "miss_distinct": distinct.miss,
            "miss_independent": independent.miss,
            "guesses": guesses,
            "expected_guesses_distinct": _expected(size + 1, live + 1),
            "expected_guesses_independent": _expected(size, live),
            **_expected_times(size, live, rate),
            "entropy_bits": space.bits,
            "policy": _policy(inputs, size, distinct, limit),
            "space": space,
            "live": live,
            "method": method,
            "relative_error_bound": max(distinct.relative_error_bound,
                                        independent.relative_error_bound),
            "caution": CAUTION,
        },
        method,
    )


def _time_field(name: str, unit: str, model: str) -> AnswerField:
    return AnswerField(name, "magnitude",
                       f"Expected {unit} to the first hit for {model} guesses at guess_rate; "
                       "null when guesses is given instead.", nullable=True)


POLICY_MEMBERS = (
    AnswerField("min_entropy_bits", "integer", "The entropy floor applied, in bits."),
    AnswerField("entropy_meets_minimum", "boolean",
                "True when the space holds at least 2^min_entropy_bits values."),
    AnswerField("entropy_source", "text", "Where the floor comes from."),
    AnswerField("max_success", "text", "The ceiling on the hit chance, as an exact fraction; "
                "null when not given.", nullable=True),
    AnswerField("success_within_max", "boolean",
                "True when the distinct-guess hit chance is at most max_success, decided "
                "with certainty; null when max_success is not given.", nullable=True),
    AnswerField("success_source", "text", "Where the ceiling comes from; null when not "
                "given.", nullable=True),
)

QUESTION = Question(
    name="guessing",
    path="/v1/guessing",
    summary="Chance that guesses hit one of the live tokens of a space, against a policy.",
    description=__doc__ or "",
    inputs=(SPACE, LIVE),
    optional=(GUESSES, GUESS_RATE, WINDOW, MIN_ENTROPY_BITS, MAX_SUCCESS),
    answer=(
        AnswerField("hit_distinct", "probability",
                    "P(at least one hit) for distinct guesses: 1 - C(N - live, G) / C(N, G)."),
        AnswerField("hit_independent", "probability",
                    "P(at least one hit) for independent uniform guesses: "
                    "1 - (1 - live/N)^G."),
        AnswerField("miss_distinct", "probability",
                    "The complement of hit_distinct, with its own accuracy."),
        AnswerField("miss_independent", "probability",
                    "The complement of hit_independent, with its own accuracy."),
        AnswerField("guesses", "whole", "The guesses made: guesses, or "
                    "floor(guess_rate x window)."),
        AnswerField("expected_guesses_distinct", "magnitude",
                    "Expected guesses to the first hit, distinct guesses: (N + 1)/(live + 1)."),
        AnswerField("expected_guesses_independent", "magnitude",
                    "Expected guesses to the first hit, independent guesses: N / live."),
        _time_field("expected_seconds_distinct", "seconds", "distinct"),
        _time_field("expected_seconds_independent", "seconds", "independent"),
        _time_field("expected_years_distinct", "Julian years (365.25 days)", "distinct"),
        _time_field("expected_years_independent", "Julian years (365.25 days)",
                    "independent"),
        AnswerField("entropy_bits", "number", "log2 N: the entropy of one token, in bits."),
        AnswerField("policy", "object", "The entropy and the hit chance against their "
                    "thresholds, each with its source.", members=POLICY_MEMBERS),
        space_field("The space tokens are drawn from."),
        AnswerField("live", "whole", "Tokens valid at once."),
        method_field("the hit chances"),
        bound_field("the four probabilities"),
        AnswerField("caution", "text", "What every figure assumes, and what it does not "
                    "replace."),
    ),
    compute=_answer,
    example={"bits": "64", "live": "1e5", "guess_rate": "1e4", "window": "P365D"},
    premise=None,
)
