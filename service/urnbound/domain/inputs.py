"""Load a question's parameters from query-string values into typed, normalized inputs.

The HTTP layer and the command line both call :func:`load_inputs` with the raw values
(name -> list of texts, as a query string or repeated options give them), so the two
parse, check and word their errors identically. Every problem found is collected into
one :class:`~urnbound.domain.errors.InvalidQuery`, keyed by the parameter at fault.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

from urnbound.core.errors import DomainError
from urnbound.domain.alphabets import Alphabet
from urnbound.domain.errors import InvalidQuery
from urnbound.domain.parameters import Choice, Form, Parameter
from urnbound.domain.spaces import IdSpace


@dataclass(frozen=True, slots=True)
class Inputs(Mapping[str, Any]):
    """The loaded values of one request: parameter or choice name -> value.

    Optional parameters that were not given are present with the value ``None``.
    """

    entries: Mapping[str, Any]

    def __getitem__(self, name: str) -> Any:
        return self.entries[name]

    def __iter__(self) -> Iterator[str]:
        return iter(self.entries)

    def __len__(self) -> int:
        return len(self.entries)

    def normalized(self) -> dict[str, object]:
        """The inputs in canonical form: two spellings of one question give one mapping.

        >>> from fractions import Fraction
        >>> Inputs({"count": 10**6, "max_risk": Fraction(1, 10**6)}).normalized()
        {'count': '1000000', 'max_risk': '1/1000000'}
        """
        return {name: canonical(value) for name, value in self.entries.items()}


def canonical(value: object) -> object:
    """A value as JSON-ready data that depends only on what the answer depends on."""
    if isinstance(value, IdSpace):
        return {
            "size": str(value.size),
            "description": value.description,
            "alphabet_size": value.alphabet_size,
            "length": value.length,
        }
    if isinstance(value, Alphabet):
        return {"name": value.name, "symbols": value.symbols, "size": value.size}
    if isinstance(value, Fraction):
        return f"{value.numerator}/{value.denominator}"
    if isinstance(value, bool) or value is None or isinstance(value, (str, float)):
        return value
    if isinstance(value, int):
        return str(value)
    raise TypeError(f"no canonical form for {type(value).__name__}")


Entry = Parameter | Choice


def parameters_of(entries: Sequence[Entry]) -> tuple[Parameter, ...]:
    """Every parameter a question with these entries takes, each once, in order."""
    found: dict[str, Parameter] = {}
    for entry in entries:
        for parameter in entry.parameters if isinstance(entry, Choice) else (entry,):
            found.setdefault(parameter.name, parameter)
    return tuple(found.values())


def accepted_names(entries: Sequence[Entry]) -> tuple[str, ...]:
    """Every parameter name a question with these entries takes, in order."""
    return tuple(parameter.name for parameter in parameters_of(entries))


def load_inputs(
    required: Sequence[Entry],
    optional: Sequence[Parameter],
    raw: Mapping[str, Sequence[str]],
) -> Inputs:
    """Parse and check ``raw`` (name -> texts given) against a question's parameters.

    :raises InvalidQuery: naming every parameter at fault: repeated, unknown, missing,
        malformed, out of range, or combined in a way the question does not take.
    """
    errors: dict[str, list[str]] = {}
    names = accepted_names([*required, *optional])
    texts = _single_texts(raw, names, errors)
    values: dict[str, Any] = {}
    for entry in required:
        if isinstance(entry, Choice):
            _load_choice(entry, texts, values, errors)
        elif entry.name in texts:
            _parse_into(entry, texts, values, errors)
        elif entry.name not in errors:
            errors[entry.name] = [f"missing: {entry.name}, {entry.rule}"]
    for parameter in optional:
        values[parameter.name] = None
        if parameter.name in texts:
            _parse_into(parameter, texts, values, errors)
    if errors:
        raise InvalidQuery(errors)
    return Inputs(values)


def _single_texts(
    raw: Mapping[str, Sequence[str]], names: Sequence[str], errors: dict[str, list[str]]
) -> dict[str, str]:
    """The one text given for each accepted name; repeats and unknown names are errors."""
    texts: dict[str, str] = {}
    for name, given in raw.items():
        if name not in names:
            errors[name] = [f"unknown parameter; this question takes {', '.join(names)}"]
        elif len(given) != 1:
            errors[name] = ["give this parameter once"]
        else:
            texts[name] = given[0]
    return texts


def _parse_into(
    parameter: Parameter,
    texts: Mapping[str, str],
    values: dict[str, Any],
    errors: dict[str, list[str]],
) -> bool:
    try:
        values[parameter.name] = parameter.parse(texts[parameter.name])
    except DomainError as error:
        errors[error.field or parameter.name] = [error.detail]
        return False
    return True


def _load_choice(
    choice: Choice,
    texts: Mapping[str, str],
    values: dict[str, Any],
    errors: dict[str, list[str]],
) -> None:
    given = [form for form in choice.forms if form.lead.name in texts]
    if len(given) != 1:
        _report_forms(choice, given, texts, errors)
        return
    (form,) = given
    parsed: dict[str, Any] = {}
    if not _parse_into(form.lead, texts, parsed, errors):
        return  # the lead's own fault first (an unknown alphabet before a missing length)
    if not _companions_fit(choice, form, texts, errors):
        return
    if not all(_parse_into(p, texts, parsed, errors) for p in form.companions):
        return
    try:
        values[choice.name] = form.build(*(parsed[p.name] for p in (form.lead, *form.companions)))
    except DomainError as error:
        errors[error.field or choice.name] = [error.detail]


def _report_forms(
    choice: Choice, given: list[Form], texts: Mapping[str, str], errors: dict[str, list[str]]
) -> None:
    if not given:
        if not any(name in errors for name in choice.leads):
            errors[choice.name] = [f"missing: give exactly one of {choice.forms_text}"]
        return
    leads = [form.lead.name for form in given]
    message = f"give exactly one of {choice.forms_text}; got {' and '.join(leads)}"
    for name in leads:
        errors[name] = [message]


def _companions_fit(
    choice: Choice, form: Form, texts: Mapping[str, str], errors: dict[str, list[str]]
) -> bool:
    fits = True
    for companion in form.companions:
        if companion.name not in texts:
            errors[companion.name] = [
                f"{companion.name} is required with {form.lead.name}: {companion.rule}"
            ]
            fits = False
    wanted = {p.name for p in form.companions}
    for parameter in choice.parameters:
        if parameter.name in texts and parameter.name not in wanted | set(choice.leads):
            owners = [f.lead.name for f in choice.forms if parameter in f.companions]
            errors[parameter.name] = [
                f"{parameter.name} goes with {', '.join(owners)}, not {form.lead.name}"
            ]
            fits = False
    return fits
