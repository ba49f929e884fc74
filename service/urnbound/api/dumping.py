"""Answer bodies as JSON-ready values, built from a question's declared members by kind.

The marshmallow schemas of ``schemas.py`` document every answer (they generate the
OpenAPI components) and define its shape; dumping through them cost about a fifth of a
first answer's time, so bodies are built here instead, by one small function per kind.
``tests/api/test_dumping.py`` holds the two equal, member for member, on every registered
question's example and on answers with null, infinite and nested members.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from types import MappingProxyType
from typing import Any

import gmpy2

from urnbound.domain.question import RECORD_KINDS, AnswerField, Question

#: A function from one member's value to its JSON-ready form.
Dumper = Callable[[Any], Any]


def _member(source: Any, name: str) -> Any:
    """A member of an answer value: a mapping's key or an object's attribute."""
    if isinstance(source, Mapping):
        return source.get(name)
    return getattr(source, name, None)


#: Above this many bits an integer is written by GMP (Python's int-to-text is quadratic:
#: 500 counts of 2,460 digits took 31 ms, GMP's some 5 ms); below, Python's is faster.
_GMP_TEXT_BITS = 1024


def whole_text(value: int) -> str:
    """The decimal text of ``value``, the same digits either way."""
    if value.bit_length() > _GMP_TEXT_BITS:
        return str(gmpy2.mpz(value))
    return str(value)


def finite(value: Any) -> float | None:
    """A float, or null when it is not finite (JSON has no Infinity); never -0."""
    if value is None or not math.isfinite(value):
        return None
    return float(value) + 0.0


def _magnitude(value: Any) -> dict[str, Any]:
    return {
        "value": finite(value.value),
        "decimal": value.decimal,
        "log10": finite(value.log10),
        "relative_error_bound": finite(value.relative_error_bound),
    }


def _space(value: Any) -> dict[str, Any]:
    alphabet_size, length = value.alphabet_size, value.length
    return {
        "size": str(int(value.size)),
        "bits": float(value.bits),
        "description": str(value.description),
        "alphabet_size": None if alphabet_size is None else int(alphabet_size),
        "length": None if length is None else int(length),
    }


def _fraction(value: Any) -> dict[str, str]:
    return {"numerator": str(int(value.numerator)), "denominator": str(int(value.denominator))}


def _alphabets(value: Any) -> list[dict[str, Any]]:
    return [
        {"name": str(_member(a, "name")), "size": int(_member(a, "size")),
         "symbols": str(_member(a, "symbols")), "source": str(_member(a, "source"))}
        for a in value
    ]


#: The dumper of each plain kind of member (``None`` is dumped as null before these run).
KIND_DUMPERS: Mapping[str, Dumper] = MappingProxyType({
    "probability": _magnitude,
    "magnitude": _magnitude,
    "whole": lambda value: whole_text(int(value)),
    "integer": int,
    "number": finite,
    "text": str,
    "space": _space,
    "fraction": _fraction,
    "alphabets": _alphabets,
    "boolean": bool,
})


def _nullable(dump: Dumper) -> Dumper:
    return lambda value: None if value is None else dump(value)


def member_dumper(member: AnswerField) -> Dumper:
    """The dumper of one answer member, records and lists of records included."""
    if member.kind not in RECORD_KINDS:
        return _nullable(KIND_DUMPERS[member.kind])
    record = record_dumper(member.members)
    if member.kind == "records":
        return _nullable(lambda values: [record(value) for value in values])
    return _nullable(record)


def record_dumper(members: tuple[AnswerField, ...]) -> Callable[[Any], dict[str, Any]]:
    """The dumper of a record with ``members``, in their declared order."""
    parts = tuple((m.name, member_dumper(m)) for m in members)

    def dump(source: Any) -> dict[str, Any]:
        return {name: part(_member(source, name)) for name, part in parts}

    return dump


def answer_dumper(question: Question) -> Callable[[Mapping[str, Any]], dict[str, Any]]:
    """The dumper of ``question``'s answer values, ending with its premise when it has one."""
    dump = record_dumper(question.answer)
    premise = question.premise
    if premise is None:
        return dump

    def with_premise(values: Mapping[str, Any]) -> dict[str, Any]:
        document = dump(values)
        document["assumptions"] = values.get("assumptions", premise)
        return document

    return with_premise
