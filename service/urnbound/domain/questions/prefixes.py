"""GET /v1/prefixes: how risky is it to keep only a prefix of a digest?

A digest of ``digest_bits`` bits is shortened to its first ``prefix_bits`` bits, or to
its first ``prefix_chars`` characters in ``encoding`` (``base16``: 4 bits a character,
``base32``: 5, ``base64url``: 6; RFC 4648; default base16). For ``count`` stored items
the answer gives ``any_collision``, the chance that two stored prefixes are equal (the
birthday bound over 2^t values); ``new_item_ambiguous``, the chance that one more item's
prefix equals one of the ``count`` stored prefixes, 1 - (1 - 2^-t)^count; the expected
number of equal pairs; and ``security_strength`` after NIST SP 800-107 Rev. 1: a t-bit
truncation offers about t/2 bits against collisions and t bits against preimages, never
more than the full digest. With ``max_risk``, ``shortest_prefix`` gives the fewest bits
(and characters of the encoding) that keep each of the two risks within it.

A prefix longer than the digest is refused, naming both parameters.

Example: ``GET /v1/prefixes?digest_bits=256&prefix_chars=12&encoding=base16&count=1e6``
"""

from __future__ import annotations

from collections.abc import Mapping
from fractions import Fraction
from types import MappingProxyType
from typing import Any

from urnbound.core.errors import DomainError
from urnbound.core.exact import magnitude_of_fraction
from urnbound.core.inverse import fewest_bits
from urnbound.core.limits import MAX_BITS, MAX_TEXT_CHARS, MIN_BITS
from urnbound.core.pairwise import collision_risk
from urnbound.core.prefixes import ambiguity, fewest_unambiguous_bits, truncation_strength
from urnbound.core.results import EXACT
from urnbound.domain import numbers
from urnbound.domain.alternatives import chosen_group
from urnbound.domain.errors import InvalidQuery
from urnbound.domain.inputs import Inputs
from urnbound.domain.parameters import COUNT, MAX_RISK, Parameter
from urnbound.domain.question import (
    Answer,
    AnswerField,
    Context,
    Question,
    bound_field,
    count_field,
    method_field,
)

#: Bits per character of the encodings a prefix may be written in (RFC 4648).
ENCODINGS: Mapping[str, int] = MappingProxyType({"base16": 4, "base32": 5, "base64url": 6})
#: The encoding assumed when none is given (digests are most often written in hex).
DEFAULT_ENCODING = "base16"
STRENGTH_SOURCE = "NIST SP 800-107 Rev. 1, sections 4 and 5.1"
#: What the risks rest on (a digest is not drawn by a random generator).
PREMISE = (
    "These figures treat the digests of distinct items as independent and uniformly "
    "distributed, as a sound cryptographic hash function gives on distinct inputs. The "
    "risks describe accidental collisions only; against a deliberate attacker the "
    "truncation offers security_strength at most. They are no substitute for your "
    "organisation's security policy and the standards that apply to you."
)


def _whole(name: str) -> Parameter:
    return Parameter(
        name,
        lambda text: numbers.parse_int_in_range(text, name, MIN_BITS, MAX_BITS),
        numbers.whole_rule(MIN_BITS, MAX_BITS, scientific=False),
        "",
        "64",
        {"type": "integer", "minimum": MIN_BITS, "maximum": MAX_BITS},
    )


def _described(parameter: Parameter, description: str, example: str) -> Parameter:
    return Parameter(parameter.name, parameter.parse, parameter.rule, description, example,
                     parameter.schema)


def _encoding(text: str) -> str:
    name = text.strip().lower() if isinstance(text, str) else ""
    if name not in ENCODINGS:
        raise DomainError(f"encoding must be one of: {', '.join(ENCODINGS)}", field="encoding")
    return name


DIGEST_BITS = _described(_whole("digest_bits"), "Bits of the full digest (256 for SHA-256).",
                         "256")
PREFIX_BITS = _described(_whole("prefix_bits"), "Bits kept of the digest (or give "
                         "prefix_chars).", "48")
PREFIX_CHARS = _described(_whole("prefix_chars"), "Characters kept of the digest written in "
                          "encoding (or give prefix_bits).", "12")
ENCODING = Parameter(
    "encoding",
    _encoding,
    "one of " + ", ".join(ENCODINGS) + " (any case)",
    f"How the digest is written: base16 4 bits a character, base32 5, base64url 6 (RFC "
    f"4648); default {DEFAULT_ENCODING}.",
    "base16",
    {"type": "string", "enum": list(ENCODINGS), "maxLength": MAX_TEXT_CHARS},
)

_PREFIX = (("prefix_bits",), ("prefix_chars",))


def _prefix_bits(inputs: Inputs, encoding: str) -> int:
    """The bits kept, checked against the digest."""
    digest = inputs["digest_bits"]
    if chosen_group(inputs, _PREFIX) == 0:
        bits, name, given = inputs["prefix_bits"], "prefix_bits", f"{inputs['prefix_bits']} bits"
    else:
        chars = inputs["prefix_chars"]
        bits, name = chars * ENCODINGS[encoding], "prefix_chars"
        given = f"{chars} {encoding} characters, {bits} bits"
    if bits > digest:
        message = f"the prefix ({given}) is longer than the digest ({digest} bits)"
        raise InvalidQuery({name: [message], "digest_bits": [message]})
    return int(bits)


def _shortest(count: int, max_risk: Fraction | None, digest: int, per_char: int,
              limit: int) -> dict[str, Any] | None:
    if max_risk is None:
        return None

    def sized(bits: int | None) -> dict[str, Any]:
        if bits is None:
            return {"bits": None, "chars": None, "within_digest": False}
        return {"bits": bits, "chars": -(-bits // per_char), "within_digest": bits <= digest}

    try:
        pairwise_bits: int | None = fewest_bits(count, max_risk, exact_digit_limit=limit).length
    except DomainError:
        pairwise_bits = None  # no space up to 2^8192 keeps the risk within max_risk
    return {
        "max_risk": f"{max_risk.numerator}/{max_risk.denominator}",
        "any_collision": sized(pairwise_bits),
        "new_item_ambiguous": sized(fewest_unambiguous_bits(count, max_risk,
                                                            exact_digit_limit=limit)),
    }


def _answer(inputs: Inputs, context: Context) -> Answer:
    encoding = inputs["encoding"] or DEFAULT_ENCODING
    bits = _prefix_bits(inputs, encoding)
    count, limit = inputs["count"], context.exact_digit_limit
    pairwise = collision_risk(2**bits, count, exact_digit_limit=limit)
    ambiguous = ambiguity(bits, count, exact_digit_limit=limit)
    strength = truncation_strength(inputs["digest_bits"], bits)
    method = EXACT if pairwise.method == ambiguous.method == EXACT else "asymptotic"
    return Answer(
        {
            "any_collision": pairwise.collision,
            "new_item_ambiguous": ambiguous.hit,
            "expected_colliding_pairs": magnitude_of_fraction(count * (count - 1),
                                                              2 * 2**bits),
            "security_strength": {"collision_bits": strength.collision_bits,
                                  "preimage_bits": strength.preimage_bits,
                                  "source": STRENGTH_SOURCE},
            "shortest_prefix": _shortest(count, inputs["max_risk"], inputs["digest_bits"],
                                         ENCODINGS[encoding], limit),
            "prefix_bits": bits,
            "encoding": encoding,
            "prefix_chars": -(-bits // ENCODINGS[encoding]),
            "digest_bits": inputs["digest_bits"],
            "count": count,
            "method": method,
            "relative_error_bound": max(pairwise.relative_error_bound,
                                        ambiguous.relative_error_bound),
        },
        method,
    )


def _sized_field(name: str, risk: str) -> AnswerField:
    return AnswerField(name, "object", f"The shortest prefix that keeps {risk} within "
                       "max_risk.", members=(
                           AnswerField("bits", "integer", "Fewest bits; null past 8192.",
                                       nullable=True),
                           AnswerField("chars", "integer", "Fewest characters of the "
                                       "encoding holding those bits.", nullable=True),
                           AnswerField("within_digest", "boolean",
                                       "True when the digest has that many bits."),
                       ))


QUESTION = Question(
    name="prefixes",
    path="/v1/prefixes",
    summary="Collision and ambiguity risk of a truncated digest, its strength, and the "
            "shortest safe prefix.",
    description=__doc__ or "",
    inputs=(DIGEST_BITS, COUNT),
    optional=(PREFIX_BITS, PREFIX_CHARS, ENCODING, MAX_RISK),
    answer=(
        AnswerField("any_collision", "probability",
                    "P(two of the count stored prefixes are equal): the birthday bound."),
        AnswerField("new_item_ambiguous", "probability",
                    "P(one more item's prefix equals a stored one): 1 - (1 - 2^-t)^count."),
        AnswerField("expected_colliding_pairs", "magnitude",
                    "Expected number of equal pairs, C(count, 2) / 2^t."),
        AnswerField("security_strength", "object", "Strength of the truncation in bits.",
                    members=(
                        AnswerField("collision_bits", "number",
                                    "About t/2, never more than half the digest."),
                        AnswerField("preimage_bits", "integer",
                                    "t, never more than the digest."),
                        AnswerField("source", "text", "Where the rule comes from."),
                    )),
        AnswerField("shortest_prefix", "object", "With max_risk: the fewest bits and "
                    "characters for each risk; null without it.", nullable=True, members=(
                        AnswerField("max_risk", "text", "The budget, as an exact fraction."),
                        _sized_field("any_collision", "any_collision"),
                        _sized_field("new_item_ambiguous", "new_item_ambiguous"),
                    )),
        AnswerField("prefix_bits", "integer", "Bits kept, t."),
        AnswerField("encoding", "text", "The encoding characters are counted in.",
                    enum=tuple(ENCODINGS)),
        AnswerField("prefix_chars", "integer", "Characters of the encoding holding t bits."),
        AnswerField("digest_bits", "integer", "Bits of the full digest."),
        count_field("Items stored."),
        method_field("the two risks"),
        bound_field("the two risks"),
    ),
    compute=_answer,
    example={"digest_bits": "256", "prefix_chars": "12", "encoding": "base16",
             "count": "1e6"},
    premise=PREMISE,
)
