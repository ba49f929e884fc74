"""The registry of questions: every ``QUESTION`` defined in ``urnbound.domain.questions``.

The HTTP layer, the OpenAPI document and the command line are generated from a
:class:`Registry`; tests build their own from questions of their own.
"""

from __future__ import annotations

import importlib
import pkgutil
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from functools import cache
from types import MappingProxyType

from urnbound.domain import questions
from urnbound.domain.question import Question


@dataclass(frozen=True, slots=True)
class Registry:
    """Questions by name, in a fixed order; names and paths are unique.

    >>> registry = default_registry()
    >>> registry["collisions"].path
    '/v1/collisions'
    """

    questions: tuple[Question, ...]
    by_name: Mapping[str, Question] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        _require_unique("name", [q.name for q in self.questions])
        _require_unique("path", [q.path for q in self.questions])
        object.__setattr__(self, "by_name", MappingProxyType({q.name: q for q in self.questions}))

    def __getitem__(self, name: str) -> Question:
        return self.by_name[name]

    def __iter__(self) -> Iterator[Question]:
        return iter(self.questions)

    def __len__(self) -> int:
        return len(self.questions)


def _require_unique(what: str, values: Iterable[str]) -> None:
    seen: set[str] = set()
    for value in values:
        if value in seen:
            raise ValueError(f"two questions share the {what} {value!r}")
        seen.add(value)


def discovered_questions() -> tuple[Question, ...]:
    """``QUESTION`` of every module in ``urnbound.domain.questions``, ordered by path."""
    found = []
    for module_info in pkgutil.iter_modules(questions.__path__):
        module = importlib.import_module(f"{questions.__name__}.{module_info.name}")
        question = getattr(module, "QUESTION", None)
        if isinstance(question, Question):
            found.append(question)
    return tuple(sorted(found, key=lambda q: q.path))


@cache
def default_registry() -> Registry:
    """The service's questions (built once per process; it is immutable)."""
    return Registry(discovered_questions())
