"""Query schemas: each endpoint's query string loads into a domain question."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

from marshmallow import Schema, ValidationError, fields, post_load, pre_load
from werkzeug.datastructures import MultiDict

from urnbound.core.errors import DomainError
from urnbound.core.limits import MAX_SIZE_BITS
from urnbound.domain import alphabets, numbers, spaces
from urnbound.domain.alphabets import Alphabet
from urnbound.domain.spaces import IdSpace

#: Parameters that each name one way of giving an alphabet.
ALPHABET_FORMS = ("alphabet", "alphabet_size", "alphabet_chars")
#: Parameters that each start one way of giving an identifier space.
SPACE_FORMS = ("bits", *ALPHABET_FORMS, "size")
SPACE_FORMS_TEXT = "bits; alphabet + length; alphabet_size + length; alphabet_chars + length; size"
ALPHABET_FORMS_TEXT = "alphabet; alphabet_size; alphabet_chars"


class Parsed(fields.Field[Any]):
    """A query parameter parsed by a domain function; its DomainError becomes a field error."""

    def __init__(self, parse: Callable[[str], object], **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.parse = parse

    def _deserialize(
        self, value: Any, attr: str | None, data: Mapping[str, Any] | None, **kwargs: Any
    ) -> Any:
        try:
            return self.parse(value)
        except DomainError as error:
            raise ValidationError(error.detail) from error


def _param(
    parse: Callable[[str], object], description: str, *, required: str = "", **schema: Any
) -> Parsed:
    messages = {"required": f"missing: {required}"} if required else {}
    return Parsed(
        parse,
        required=bool(required),
        error_messages=messages,
        metadata={"description": description, **schema},
    )


def _whole(field: str, low: int, high: int) -> Callable[[str], int]:
    return lambda text: numbers.parse_int_in_range(text, field, low, high)


_NUMBER_TEXT = r"^\s*[+-]?([0-9]+(\.[0-9]*)?|\.[0-9]+)([eE][+-]?[0-9]+)?\s*$"


def bits_field() -> Parsed:
    return _param(
        _whole("bits", 1, MAX_SIZE_BITS),
        "Space of 2^bits values (uniformly random bits).",
        type="integer", minimum=1, maximum=MAX_SIZE_BITS, example=64,
    )


def alphabet_field() -> Parsed:
    return _param(
        alphabets.named_alphabet,
        "A named alphabet; see GET /v1/alphabets.",
        type="string", enum=list(alphabets.NAMED_ALPHABETS), example="base64url",
    )


def alphabet_size_field() -> Parsed:
    low, high = alphabets.MIN_ALPHABET_SIZE, alphabets.MAX_ALPHABET_SIZE
    return _param(
        lambda text: alphabets.alphabet_of_size(_whole("alphabet_size", low, high)(text)),
        "An alphabet given only by its number of symbols.",
        type="integer", minimum=low, maximum=high, example=36,
    )


def alphabet_chars_field() -> Parsed:
    return _param(
        alphabets.alphabet_from_symbols,
        "A literal set of distinct symbols, URL-encoded (write + as %2B, or it reads as a "
        "space); a repeated symbol is an error.",
        type="string", minLength=alphabets.MIN_ALPHABET_SIZE,
        maxLength=alphabets.MAX_ALPHABET_SIZE, example="0123456789abcdef",
    )


def length_field() -> Parsed:
    return _param(
        _whole("length", 1, MAX_SIZE_BITS),
        "Symbols per identifier, with alphabet, alphabet_size or alphabet_chars; "
        "the space may hold at most 2^8192 values.",
        type="integer", minimum=1, maximum=MAX_SIZE_BITS, example=22,
    )


def size_field() -> Parsed:
    return _param(
        numbers.parse_size,
        "Number of possible identifier values, from 2 to 2^8192: digits, or scientific "
        "notation that denotes a whole number (1e9).",
        type="string", pattern=_NUMBER_TEXT, example="1e9",
    )


def count_field() -> Parsed:
    return _param(
        numbers.parse_count,
        "Number of identifiers drawn, from 0 to 10^60: digits, or scientific notation "
        "that denotes a whole number (2.5e12).",
        required="count, a whole number from 0 to 10^60",
        type="string", pattern=_NUMBER_TEXT, example="1e6",
    )


def max_risk_field() -> Parsed:
    return _param(
        numbers.parse_risk,
        "Largest acceptable probability of any collision, from 1e-300 up to but not "
        "including 1, as decimal or scientific text; compared exactly.",
        required="max_risk, a decimal number from 1e-300 up to but not including 1",
        type="string", pattern=_NUMBER_TEXT, example="1e-9",
    )


def load_query(schema: Schema, args: MultiDict[str, str]) -> Any:
    """Load a query string with ``schema``; a parameter given twice is an error."""
    repeated = sorted(name for name in args if len(args.getlist(name)) > 1)
    if repeated:
        raise ValidationError({name: ["give this parameter once"] for name in repeated})
    return schema.load(args.to_dict(flat=True))


class QuerySchema(Schema):
    """Base of the query schemas: every parameter once, no unknown parameter."""

    def allowed_text(self) -> str:
        """The accepted parameter names, for error messages."""
        return ", ".join(self.fields)

    @pre_load
    def check_parameters(self, data: Mapping[str, Any], **kwargs: Any) -> Mapping[str, Any]:
        unknown = [name for name in data if name not in self.fields]
        if unknown:
            message = f"unknown parameter; this endpoint takes {self.allowed_text()}"
            raise ValidationError({name: [message] for name in unknown})
        self.check_forms(data)
        return data

    def check_forms(self, data: Mapping[str, Any]) -> None:
        """Raise when parameters are combined in a way the endpoint does not take."""


def _form_errors(given: list[str], forms_text: str, group: str) -> dict[str, list[str]]:
    if not given:
        return {group: [f"missing: give exactly one of {forms_text}"]}
    message = f"give exactly one of {forms_text}; got {' and '.join(given)}"
    return {name: [message] for name in given}


def _space_form_errors(data: Mapping[str, Any]) -> dict[str, list[str]]:
    given = [name for name in SPACE_FORMS if name in data]
    if len(given) != 1:
        return _form_errors(given, SPACE_FORMS_TEXT, "space")
    (form,) = given
    if form in ALPHABET_FORMS and "length" not in data:
        return {"length": [f"length is required with {form}: a whole number from 1 to 8192"]}
    if form not in ALPHABET_FORMS and "length" in data:
        return {"length": [f"length goes with {ALPHABET_FORMS_TEXT.replace(';', ',')}, not {form}"]}
    return {}


class SpaceQuerySchema(QuerySchema):
    """An identifier space in exactly one form."""

    bits = bits_field()
    alphabet = alphabet_field()
    alphabet_size = alphabet_size_field()
    alphabet_chars = alphabet_chars_field()
    length = length_field()
    size = size_field()

    def check_forms(self, data: Mapping[str, Any]) -> None:
        errors = _space_form_errors(data)
        if errors:
            raise ValidationError(errors)


def space_of(data: Mapping[str, Any]) -> IdSpace:
    """The identifier space named by loaded space parameters."""
    try:
        if "bits" in data:
            return spaces.space_from_bits(data["bits"])
        if "size" in data:
            return spaces.space_from_size(data["size"])
        return spaces.space_from_alphabet(alphabet_of(data), data["length"])
    except DomainError as error:
        raise ValidationError({error.field or "space": [error.detail]}) from error


def alphabet_of(data: Mapping[str, Any]) -> Alphabet:
    """The alphabet named by loaded alphabet parameters (each loads to an Alphabet)."""
    name = next(form for form in ALPHABET_FORMS if form in data)
    alphabet: Alphabet = data[name]
    return alphabet


def space_key(space: IdSpace) -> dict[str, object]:
    """Everything an answer takes from a space: two spellings of one space give one key."""
    return {
        "size": space.size,
        "description": space.description,
        "alphabet_size": space.alphabet_size,
        "length": space.length,
    }


def alphabet_key(alphabet: Alphabet) -> dict[str, object]:
    """Everything an answer takes from an alphabet."""
    return {"name": alphabet.name, "symbols": alphabet.symbols, "size": alphabet.size}


def risk_key(max_risk: Fraction) -> str:
    """A risk target as its exact reduced fraction: ``1e-6`` and ``0.000001`` agree."""
    return f"{max_risk.numerator}/{max_risk.denominator}"


@dataclass(frozen=True, slots=True)
class CollisionQuestion:
    """How likely is a collision among ``count`` identifiers from ``space``?"""

    space: IdSpace
    count: int

    def normalized(self) -> dict[str, object]:
        """The question in canonical form, for cache keys and ETags."""
        return {"space": space_key(self.space), "count": self.count}


@dataclass(frozen=True, slots=True)
class LengthQuestion:
    """How long must identifiers over ``alphabet`` be for ``count`` of them at ``max_risk``?"""

    alphabet: Alphabet
    count: int
    max_risk: Fraction

    def normalized(self) -> dict[str, object]:
        """The question in canonical form, for cache keys and ETags."""
        return {
            "alphabet": alphabet_key(self.alphabet),
            "count": self.count,
            "max_risk": risk_key(self.max_risk),
        }


@dataclass(frozen=True, slots=True)
class CapacityQuestion:
    """How many identifiers can ``space`` take at ``max_risk``?"""

    space: IdSpace
    max_risk: Fraction

    def normalized(self) -> dict[str, object]:
        """The question in canonical form, for cache keys and ETags."""
        return {"space": space_key(self.space), "max_risk": risk_key(self.max_risk)}


class CollisionQuerySchema(SpaceQuerySchema):
    """Query of GET /v1/collisions: a space and a count."""

    count = count_field()

    @post_load
    def question(self, data: Mapping[str, Any], **kwargs: Any) -> CollisionQuestion:
        return CollisionQuestion(space_of(data), data["count"])


class CapacityQuerySchema(SpaceQuerySchema):
    """Query of GET /v1/capacity: a space and a risk target."""

    max_risk = max_risk_field()

    @post_load
    def question(self, data: Mapping[str, Any], **kwargs: Any) -> CapacityQuestion:
        return CapacityQuestion(space_of(data), data["max_risk"])


class LengthQuerySchema(QuerySchema):
    """Query of GET /v1/lengths: an alphabet (no length), a count and a risk target."""

    alphabet = alphabet_field()
    alphabet_size = alphabet_size_field()
    alphabet_chars = alphabet_chars_field()
    count = count_field()
    max_risk = max_risk_field()

    def check_forms(self, data: Mapping[str, Any]) -> None:
        given = [name for name in ALPHABET_FORMS if name in data]
        if len(given) != 1:
            raise ValidationError(_form_errors(given, ALPHABET_FORMS_TEXT, "alphabet"))

    @post_load
    def question(self, data: Mapping[str, Any], **kwargs: Any) -> LengthQuestion:
        return LengthQuestion(alphabet_of(data), data["count"], data["max_risk"])


@dataclass(frozen=True, slots=True)
class NoQuestion:
    """The question of an endpoint that takes no parameter."""

    def normalized(self) -> dict[str, object]:
        """Always empty."""
        return {}


class EmptyQuerySchema(QuerySchema):
    """Query of the endpoints that take no parameter."""

    @post_load
    def question(self, data: Mapping[str, Any], **kwargs: Any) -> NoQuestion:
        return NoQuestion()


@dataclass(frozen=True, slots=True)
class QuerySchemas:
    """One instance of each query schema, built once per app (building one is costly)."""

    collisions: CollisionQuerySchema
    lengths: LengthQuerySchema
    capacity: CapacityQuerySchema
    empty: EmptyQuerySchema


def query_schemas() -> QuerySchemas:
    """Fresh instances of the query schemas."""
    return QuerySchemas(
        CollisionQuerySchema(), LengthQuerySchema(), CapacityQuerySchema(), EmptyQuerySchema()
    )
