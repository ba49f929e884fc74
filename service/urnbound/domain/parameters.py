"""The query parameters questions are built from, each defined once: parser, range and docs.

A :class:`Parameter` is one query parameter: its name (as in the API; the command line
writes ``--count`` for ``count`` and ``--max-risk`` for ``max_risk``), the function that
parses its text, the allowed form and range as a phrase formed from ``core.limits``, a
description, an example and the hints its OpenAPI schema carries. A :class:`Choice` is a
group of ways to give one thing (an identifier space, an alphabet), of which a request
gives exactly one; each way is a :class:`Form`: a leading parameter, the parameters that
must come with it, and the function that builds the value from them.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

from urnbound.core.limits import (
    MAX_ALPHABET_SIZE,
    MAX_AT_LEAST,
    MAX_BIG_TEXT_CHARS,
    MAX_BITS,
    MAX_BUCKETS,
    MAX_COUNT,
    MAX_ITEMS,
    MAX_LOAD,
    MAX_MULTIPLICITY,
    MAX_SIZE,
    MAX_SIZE_BITS,
    MAX_TEXT_CHARS,
    MIN_ALPHABET_SIZE,
    MIN_AT_LEAST,
    MIN_BITS,
    MIN_BUCKETS,
    MIN_LENGTH,
    MIN_LOAD,
    MIN_MULTIPLICITY,
    MIN_SPACE_SIZE,
)
from urnbound.domain import alphabets, durations, formats, numbers, spaces

#: Pattern of the decimal text that counts, sizes and risk targets are written in.
NUMBER_PATTERN = r"^\s*[+-]?([0-9]+(\.[0-9]*)?|\.[0-9]+)([eE][+-]?[0-9]+)?\s*$"


@dataclass(frozen=True, slots=True)
class Parameter:
    """One query parameter.

    :ivar name: the parameter's name in the query string.
    :ivar parse: text -> value; raises ``DomainError`` naming the parameter and its range.
    :ivar rule: the allowed form and range, as a phrase ("a whole number from 1 to 8192, ...").
    :ivar description: what the parameter means.
    :ivar example: a value to show in documentation.
    :ivar schema: OpenAPI schema hints (type, minimum, maximum, pattern, enum, maxLength).

    >>> COUNT.option, COUNT.parse("2.5e3")
    ('--count', 2500)
    """

    name: str
    parse: Callable[[str], Any]
    rule: str
    description: str
    example: str
    schema: Mapping[str, object] = field(default_factory=dict)

    @property
    def option(self) -> str:
        """The command-line option: ``--`` and the name with ``-`` for ``_``."""
        return "--" + self.name.replace("_", "-")


@dataclass(frozen=True, slots=True)
class Form:
    """One way of giving a choice: a leading parameter and those that must come with it.

    :ivar build: (lead value, companion values...) -> the value of the choice.
    """

    lead: Parameter
    companions: tuple[Parameter, ...]
    build: Callable[..., Any]

    @property
    def text(self) -> str:
        """The form as callers write it: ``alphabet + length``."""
        return " + ".join(p.name for p in (self.lead, *self.companions))


@dataclass(frozen=True, slots=True)
class Choice:
    """A thing given in exactly one of several forms (an identifier space, an alphabet).

    :ivar name: the name its value goes by in the loaded inputs, and in errors when no
        form is given at all.
    """

    name: str
    description: str
    forms: tuple[Form, ...]

    @property
    def parameters(self) -> tuple[Parameter, ...]:
        """Every parameter of every form, each once, in order."""
        seen: dict[str, Parameter] = {}
        for form in self.forms:
            for parameter in (form.lead, *form.companions):
                seen.setdefault(parameter.name, parameter)
        return tuple(seen.values())

    @property
    def forms_text(self) -> str:
        """``bits; alphabet + length; ...``: the forms, for messages."""
        return "; ".join(form.text for form in self.forms)

    @property
    def leads(self) -> tuple[str, ...]:
        """The names that each start one form."""
        return tuple(form.lead.name for form in self.forms)


def _whole(name: str, low: int, high: int) -> Callable[[str], int]:
    def parse(text: str) -> int:
        return numbers.parse_int_in_range(text, name, low, high)

    return parse


def _big_number_schema() -> dict[str, object]:
    return {"type": "string", "pattern": NUMBER_PATTERN, "maxLength": MAX_BIG_TEXT_CHARS}


BITS = Parameter(
    "bits",
    _whole("bits", MIN_BITS, MAX_BITS),
    numbers.whole_rule(MIN_BITS, MAX_BITS, scientific=False),
    "A space of 2^bits values: uniformly random bits.",
    "64",
    {"type": "integer", "minimum": MIN_BITS, "maximum": MAX_BITS},
)

ALPHABET = Parameter(
    "alphabet",
    alphabets.named_alphabet,
    "one of " + ", ".join(alphabets.NAMED_ALPHABETS) + " (any case)",
    "A named alphabet (see GET /v1/alphabets); matched without regard to case.",
    "base64url",
    {"type": "string", "enum": list(alphabets.NAMED_ALPHABETS), "maxLength": MAX_TEXT_CHARS},
)

ALPHABET_SIZE = Parameter(
    "alphabet_size",
    lambda text: alphabets.alphabet_of_size(
        _whole("alphabet_size", MIN_ALPHABET_SIZE, MAX_ALPHABET_SIZE)(text)
    ),
    numbers.whole_rule(MIN_ALPHABET_SIZE, MAX_ALPHABET_SIZE, scientific=False),
    "An alphabet given only by its number of symbols.",
    "36",
    {"type": "integer", "minimum": MIN_ALPHABET_SIZE, "maximum": MAX_ALPHABET_SIZE},
)

SYMBOLS = Parameter(
    "symbols",
    alphabets.alphabet_from_symbols,
    f"from {MIN_ALPHABET_SIZE} to {MAX_ALPHABET_SIZE:,} distinct symbols",
    "The alphabet as its literal symbols, URL-encoded (write + as %2B, or it reads as a "
    "space); a repeated symbol is an error.",
    "0123456789abcdef",
    {"type": "string", "minLength": MIN_ALPHABET_SIZE, "maxLength": MAX_ALPHABET_SIZE},
)

LENGTH = Parameter(
    "length",
    _whole("length", MIN_LENGTH, MAX_SIZE_BITS),
    numbers.whole_rule(MIN_LENGTH, MAX_SIZE_BITS, scientific=False)
    + f", and the space may hold at most {numbers.bound_text(MAX_SIZE)} values",
    "Symbols per identifier, with alphabet, alphabet_size or symbols.",
    "22",
    {"type": "integer", "minimum": MIN_LENGTH, "maximum": MAX_SIZE_BITS},
)

SIZE = Parameter(
    "size",
    numbers.parse_size,
    numbers.whole_rule(MIN_SPACE_SIZE, MAX_SIZE, scientific=True),
    "The number of possible identifier values, given directly.",
    "1e9",
    _big_number_schema(),
)

COUNT = Parameter(
    "count",
    numbers.parse_count,
    numbers.whole_rule(0, MAX_COUNT, scientific=True),
    "The number of identifiers drawn (counts past the space give a risk of exactly 1).",
    "1e6",
    _big_number_schema(),
)

MAX_RISK = Parameter(
    "max_risk",
    numbers.parse_risk,
    numbers.risk_rule(),
    "The largest acceptable probability of any collision; compared exactly.",
    "1e-9",
    {"type": "string", "pattern": NUMBER_PATTERN, "maxLength": MAX_TEXT_CHARS},
)

FORMAT = Parameter(
    "format",
    formats.named_format,
    "one of " + ", ".join(formats.NAMED_FORMATS) + " (any case)",
    "A named identifier format (see GET /v1/formats): its random bits are the space; for "
    "a time-ordered format, those of one tick.",
    "uuid-v4",
    {"type": "string", "enum": list(formats.NAMED_FORMATS), "maxLength": MAX_TEXT_CHARS},
)

TICK = Parameter(
    "tick",
    lambda text: durations.parse_duration(text, field="tick"),
    durations.duration_rule(),
    "The tick of a custom time-ordered layout, as an ISO 8601 duration (with random_bits): "
    "identifiers can coincide only within one tick.",
    "PT0.001S",
    {"type": "string", "maxLength": MAX_TEXT_CHARS},
)

RANDOM_BITS = Parameter(
    "random_bits",
    _whole("random_bits", MIN_BITS, MAX_BITS),
    numbers.whole_rule(MIN_BITS, MAX_BITS, scientific=False),
    "Random bits each identifier of a custom time-ordered layout draws within a tick.",
    "74",
    {"type": "integer", "minimum": MIN_BITS, "maximum": MAX_BITS},
)

#: An identifier space, in exactly one of seven forms.
SPACE = Choice(
    "space",
    "The identifier space: bits; alphabet, alphabet_size or symbols with length; size; "
    "format; or tick with random_bits.",
    (
        Form(BITS, (), spaces.space_from_bits),
        Form(ALPHABET, (LENGTH,), spaces.space_from_alphabet),
        Form(ALPHABET_SIZE, (LENGTH,), spaces.space_from_alphabet),
        Form(SYMBOLS, (LENGTH,), spaces.space_from_alphabet),
        Form(SIZE, (), spaces.space_from_size),
        Form(FORMAT, (), formats.space_of_format),
        Form(TICK, (RANDOM_BITS,), formats.custom_layout_space),
    ),
)

#: An alphabet, in exactly one of three forms (for questions that choose the length).
ALPHABET_CHOICE = Choice(
    "alphabet",
    "The alphabet: a name, a number of symbols, or the literal symbols.",
    (
        Form(ALPHABET, (), lambda alphabet: alphabet),
        Form(ALPHABET_SIZE, (), lambda alphabet: alphabet),
        Form(SYMBOLS, (), lambda alphabet: alphabet),
    ),
)

#: Every parameter defined here, by name.
PARAMETERS: Mapping[str, Parameter] = MappingProxyType(
    {p.name: p for p in (BITS, ALPHABET, ALPHABET_SIZE, SYMBOLS, LENGTH, SIZE, COUNT, MAX_RISK,
                         FORMAT, TICK, RANDOM_BITS)}
)

# --- occupancy questions: /v1/loads, /v1/coverage, multiplicity on /v1/collisions ---------


def _count_in(name: str, low: int, high: int) -> Callable[[str], int]:
    def parse(text: str) -> int:
        return numbers.parse_count(text, field=name, minimum=low, maximum=high)

    return parse


def _big_whole(name: str, low: int, high: int, description: str, example: str) -> Parameter:
    return Parameter(name, _count_in(name, low, high),
                     numbers.whole_rule(low, high, scientific=True), description, example,
                     _big_number_schema())


BUCKETS = _big_whole("buckets", MIN_BUCKETS, MAX_BUCKETS,
                     "The number of equally likely buckets (hash slots, shards, partitions, "
                     "values).", "1e4")

ITEMS = _big_whole("count", 0, MAX_ITEMS,
                   "The number of items placed, each independently and uniformly.", "1e6")

DRAWS = _big_whole("draws", 0, MAX_ITEMS,
                   "The number of independent uniform draws over the buckets.", "1e5")

LOAD = _big_whole("load", MIN_LOAD, MAX_LOAD,
                  "A bucket load k: the answer is the chance that some bucket holds at least "
                  "k items.", "3")

LOAD_MAX_RISK = Parameter(
    "max_risk",
    numbers.parse_risk,
    numbers.risk_rule(),
    "The largest acceptable chance that some bucket reaches the load; compared exactly.",
    "1e-6",
    {"type": "string", "pattern": NUMBER_PATTERN, "maxLength": MAX_TEXT_CHARS},
)

AT_LEAST = Parameter(
    "at_least",
    _whole("at_least", MIN_AT_LEAST, MAX_AT_LEAST),
    numbers.whole_rule(MIN_AT_LEAST, MAX_AT_LEAST, scientific=False) + ", default 1",
    "How many times every bucket must be used (1: every bucket used at all).",
    "1",
    {"type": "integer", "minimum": MIN_AT_LEAST, "maximum": MAX_AT_LEAST, "default": 1},
)

TARGET = Parameter(
    "target",
    lambda text: numbers.parse_risk(text, field="target"),
    numbers.risk_rule(),
    "The chance of using every bucket that the draws must reach; compared exactly.",
    "0.99",
    {"type": "string", "pattern": NUMBER_PATTERN, "maxLength": MAX_TEXT_CHARS},
)

MULTIPLICITY = Parameter(
    "multiplicity",
    _whole("multiplicity", MIN_MULTIPLICITY, MAX_MULTIPLICITY),
    numbers.whole_rule(MIN_MULTIPLICITY, MAX_MULTIPLICITY, scientific=False) + ", default 2",
    "How many identifiers must share one value to count as a collision (2: any repeat).",
    "3",
    {"type": "integer", "minimum": MIN_MULTIPLICITY, "maximum": MAX_MULTIPLICITY,
     "default": 2},
)

#: The load to price (an int) or the risk budget to find the smallest load for (a Fraction).
LOAD_OR_RISK = Choice(
    "load",
    "Either load (the chance of reaching it) or max_risk (the smallest load within it).",
    (
        Form(LOAD, (), lambda load: load),
        Form(LOAD_MAX_RISK, (), lambda risk: risk),
    ),
)

#: The draws to price (an int) or the target chance to find the fewest draws for (a Fraction).
DRAWS_OR_TARGET = Choice(
    "draws",
    "Either draws (the chance that they use every bucket) or target (the fewest draws "
    "that reach it).",
    (
        Form(DRAWS, (), lambda draws: draws),
        Form(TARGET, (), lambda target: target),
    ),
)
