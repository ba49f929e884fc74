"""GET /v1/reviews: one answer that a security review of an identifier scheme can attach.

Give the space (or format), the lifetime volume (``count``, or ``rate`` + ``duration`` for
a time-ordered space), optionally an attacker (``live`` tokens, and ``guesses`` or
``guess_rate`` + ``window``) and the policy thresholds (``max_risk`` for collisions,
``min_entropy_bits``, default 64 after NIST SP 800-63B and OWASP, and ``max_success`` for
guessing). The answer gathers the collision risk, the guessing risk, the entropy, each
verdict with its threshold and source (decided with certainty), the shortest length over
the same alphabet that meets every threshold given, and the cautions. The command line
prints it as a sheet: ``urnbound reviews ...``.

Example: ``GET /v1/reviews?bits=96&count=1e9&live=1e5&guesses=1e12&max_success=1e-9``
"""

from __future__ import annotations

from fractions import Fraction
from typing import Any

from urnbound.core.exact import magnitude_of_fraction
from urnbound.core.guess_lengths import shortest_unguessable_length
from urnbound.core.guessing import distinct_hit, hit_at_most, independent_hit
from urnbound.core.inverse import CountFamily, LengthFamily, longest_length
from urnbound.core.limits import REVIEW_EXACT_DIGIT_LIMIT
from urnbound.core.pairwise import collision_risk
from urnbound.core.precision import log2_of_int
from urnbound.core.search import certified_at_most, certified_boundary
from urnbound.core.ticks import fewest_tick_bits, tick_risk, tick_risk_at_most
from urnbound.domain.alternatives import chosen_group
from urnbound.domain.errors import InvalidQuery
from urnbound.domain.formats import TimeOrderedSpace
from urnbound.domain.inputs import Inputs
from urnbound.domain.parameters import COUNT, MAX_RISK, SPACE
from urnbound.domain.question import (
    ASSUMPTION,
    Answer,
    AnswerField,
    Context,
    Question,
    bound_field,
    space_field,
)
from urnbound.domain.questions.guessing import (
    CAUTION,
    DEFAULT_MIN_ENTROPY_BITS,
    ENTROPY_SOURCE,
    GUESS_RATE,
    GUESSES,
    LIVE,
    MAX_SUCCESS,
    MIN_ENTROPY_BITS,
    WINDOW,
    YEAR_SECONDS,
)
from urnbound.domain.timed import LOAD_PARAMETERS, loads_of, uses_tick_model

#: Repeated on every review: the collision premise, then the guessing one.
CAUTIONS = f"{ASSUMPTION} {CAUTION}"
_ATTEMPTS = (("guesses",), ("guess_rate", "window"))
_ATTACKER = ("guesses", "guess_rate", "window")


def _fraction_text(value: Fraction) -> str:
    return f"{value.numerator}/{value.denominator}"


def _collision(inputs: Inputs, limit: int) -> tuple[dict[str, Any], float]:
    space, ceiling = inputs["space"], inputs["max_risk"]
    within = None
    if uses_tick_model(inputs):
        loads = loads_of(inputs, space.tick_seconds)
        ticked = tick_risk(space.random_bits, loads)
        risk, method, bound = ticked.collision, ticked.method, ticked.relative_error_bound
        if ceiling is not None:
            within = tick_risk_at_most(space.random_bits, loads, ceiling)
    else:
        found = collision_risk(space.size, inputs["count"], exact_digit_limit=limit)
        risk, method, bound = found.collision, found.method, found.relative_error_bound
        if ceiling is not None:
            within = certified_at_most(CountFamily(space.size, limit), inputs["count"], ceiling)
    record = {"risk": risk, "method": method, "max_risk": None if ceiling is None
              else _fraction_text(ceiling), "within_max": within}
    return record, bound


def _attack(inputs: Inputs) -> tuple[int, Fraction | None] | None:
    """(guesses, rate) of the attacker, or ``None`` when no attacker is given."""
    if inputs["live"] is None:
        given = [name for name in _ATTACKER if inputs[name] is not None]
        if given:
            raise InvalidQuery({"live": [f"live is required with {' and '.join(given)}"]})
        return None
    if inputs["live"] > inputs["space"].size:
        raise InvalidQuery({"live": ["live must be at most the size of the space"]})
    if chosen_group(inputs, _ATTEMPTS) == 0:
        return inputs["guesses"], None
    product = inputs["guess_rate"] * inputs["window"]
    return product.numerator // product.denominator, inputs["guess_rate"]


def _guessing(inputs: Inputs, attack: tuple[int, Fraction | None] | None,
              limit: int) -> tuple[dict[str, Any] | None, float]:
    if attack is None:
        return None, 0.0
    space, live, ceiling = inputs["space"], inputs["live"], inputs["max_success"]
    guesses, rate = attack
    distinct = distinct_hit(space.size, live, guesses, exact_digit_limit=limit)
    independent = independent_hit(space.size, live, guesses, exact_digit_limit=limit)
    years = None
    if rate is not None:
        value = Fraction(space.size, live) / rate / YEAR_SECONDS
        years = magnitude_of_fraction(value.numerator, value.denominator)
    within = None
    if ceiling is not None:
        within = hit_at_most(distinct, ceiling, distinct=True, exact_digit_limit=limit)
    record = {"hit_distinct": distinct.hit, "hit_independent": independent.hit,
              "guesses": guesses, "live": live, "expected_years_independent": years,
              "max_success": None if ceiling is None else _fraction_text(ceiling),
              "within_max": within}
    return record, max(distinct.relative_error_bound, independent.relative_error_bound)


def _verdicts(inputs: Inputs, collision: dict[str, Any], guessing: dict[str, Any] | None
              ) -> list[dict[str, Any]]:
    floor = inputs["min_entropy_bits"] or DEFAULT_MIN_ENTROPY_BITS
    verdicts = [{"check": "entropy", "threshold": f"at least {floor} bits",
                 "passes": inputs["space"].size >= 2**floor,
                 "source": ENTROPY_SOURCE if inputs["min_entropy_bits"] is None
                 else "the caller's min_entropy_bits"}]
    if collision["within_max"] is not None:
        verdicts.append({"check": "collision", "threshold": f"at most {collision['max_risk']}",
                         "passes": collision["within_max"],
                         "source": "the caller's max_risk"})
    if guessing is not None and guessing["within_max"] is not None:
        verdicts.append({"check": "guessing", "threshold": f"at most {guessing['max_success']}",
                         "passes": guessing["within_max"],
                         "source": "the caller's max_success (RFC 6749, section 10.10 asks "
                                   "at most 2^-128 for generated tokens)"})
    return verdicts


def _shortest(inputs: Inputs, attack: tuple[int, Fraction | None] | None,
              limit: int) -> dict[str, Any] | None:
    """The shortest length over the space's alphabet meeting every threshold given."""
    space = inputs["space"]
    if space.alphabet_size is None:
        return None
    symbols = space.alphabet_size
    longest = longest_length(symbols)
    floor = inputs["min_entropy_bits"] or DEFAULT_MIN_ENTROPY_BITS
    lengths: list[int | None] = [_entropy_length(symbols, floor)]
    if inputs["max_risk"] is not None:
        lengths.append(_collision_length(inputs, symbols, longest, limit))
    if attack is not None and inputs["max_success"] is not None:
        lengths.append(shortest_unguessable_length(symbols, inputs["live"], attack[0],
                                                   inputs["max_success"], longest,
                                                   exact_digit_limit=limit))
    if any(length is None for length in lengths):
        return {"length": None, "alphabet_size": symbols, "entropy_bits": None}
    length = max(length for length in lengths if length is not None)
    if length > longest:
        return {"length": None, "alphabet_size": symbols, "entropy_bits": None}
    return {"length": length, "alphabet_size": symbols,
            "entropy_bits": log2_of_int(symbols**length)}


def _entropy_length(symbols: int, floor: int) -> int:
    """Smallest L with symbols**L >= 2**floor, settled with integers."""
    length = max(1, -(-floor // max(1, symbols.bit_length() - 1)))
    while length > 1 and symbols ** (length - 1) >= 2**floor:
        length -= 1
    while symbols**length < 2**floor:
        length += 1
    return length


def _collision_length(inputs: Inputs, symbols: int, longest: int, limit: int) -> int | None:
    space = inputs["space"]
    if isinstance(space, TimeOrderedSpace):
        return fewest_tick_bits(loads_of(inputs, space.tick_seconds), inputs["max_risk"],
                                longest)
    # the boundary alone: the risks at it are not reported here
    family = LengthFamily(symbols, inputs["count"], longest, limit)
    boundary = certified_boundary(family, inputs["max_risk"])
    return None if boundary is None else boundary.index


def _answer(inputs: Inputs, context: Context) -> Answer:
    limit = min(context.exact_digit_limit, REVIEW_EXACT_DIGIT_LIMIT)
    collision, collision_bound = _collision(inputs, limit)
    attack = _attack(inputs)
    guessing, guessing_bound = _guessing(inputs, attack, limit)
    verdicts = _verdicts(inputs, collision, guessing)
    return Answer(
        {
            "passes": all(verdict["passes"] for verdict in verdicts),
            "verdicts": verdicts,
            "collisions": collision,
            "guessing": guessing,
            "entropy_bits": inputs["space"].bits,
            "shortest_compliant_length": _shortest(inputs, attack, limit),
            "space": inputs["space"],
            "relative_error_bound": max(collision_bound, guessing_bound),
            "cautions": CAUTIONS,
        },
        collision["method"],
    )


def _probability(name: str, description: str) -> AnswerField:
    return AnswerField(name, "probability", description)


QUESTION = Question(
    name="reviews",
    path="/v1/reviews",
    summary="One review of an identifier scheme: collision and guessing risk against a "
            "policy, the shortest compliant length, the cautions.",
    description=__doc__ or "",
    inputs=(SPACE,),
    optional=(COUNT, *LOAD_PARAMETERS, LIVE, GUESSES, GUESS_RATE, WINDOW, MAX_RISK,
              MIN_ENTROPY_BITS, MAX_SUCCESS),
    answer=(
        AnswerField("passes", "boolean", "True when every verdict passes."),
        AnswerField("verdicts", "records", "Each check with its threshold, outcome (decided "
                    "with certainty) and source.", members=(
                        AnswerField("check", "text", "What is checked.",
                                    enum=("entropy", "collision", "guessing")),
                        AnswerField("threshold", "text", "The threshold, exactly."),
                        AnswerField("passes", "boolean", "True when the scheme meets it."),
                        AnswerField("source", "text", "Where the threshold comes from."),
                    )),
        AnswerField("collisions", "object", "The lifetime collision risk.", members=(
            _probability("risk", "P(some two identifiers are equal) over the volume given."),
            AnswerField("method", "text", "The method that computed it."),
            AnswerField("max_risk", "text", "The budget, exactly; null when not given.",
                        nullable=True),
            AnswerField("within_max", "boolean", "True when the risk is within max_risk; "
                        "null when not given.", nullable=True),
        )),
        AnswerField("guessing", "object", "The attacker's chance of a hit; null without an "
                    "attacker (live).", nullable=True, members=(
                        _probability("hit_distinct", "P(hit) for distinct guesses."),
                        _probability("hit_independent", "P(hit) for independent guesses."),
                        AnswerField("guesses", "whole", "The guesses made."),
                        AnswerField("live", "whole", "Tokens valid at once."),
                        AnswerField("expected_years_independent", "magnitude",
                                    "Expected Julian years to the first hit at guess_rate; "
                                    "null when guesses is given.", nullable=True),
                        AnswerField("max_success", "text", "The ceiling, exactly; null when "
                                    "not given.", nullable=True),
                        AnswerField("within_max", "boolean", "True when the distinct-guess "
                                    "chance is within max_success; null when not given.",
                                    nullable=True),
                    )),
        AnswerField("entropy_bits", "number", "log2 of the space: the entropy of one "
                    "identifier."),
        AnswerField("shortest_compliant_length", "object", "The shortest length over the "
                    "same alphabet meeting every threshold given (random bits for a format "
                    "or bits); null for a space given by size.", nullable=True, members=(
                        AnswerField("length", "integer", "The length; null when no length "
                                    "up to 2^8192 values meets them.", nullable=True),
                        AnswerField("alphabet_size", "integer", "Symbols per position."),
                        AnswerField("entropy_bits", "number", "log2 of the space at that "
                                    "length.", nullable=True),
                    )),
        space_field("The scheme's identifier space."),
        bound_field("the reported probabilities"),
        AnswerField("cautions", "text", "What every figure assumes, and what it does not "
                    "replace."),
    ),
    compute=_answer,
    example={"bits": "96", "count": "1e9", "live": "1e5", "guesses": "1e12",
             "max_success": "1e-9"},
    premise=None,
)
