"""Answer bodies of registered questions: load, compute and dump, identically for HTTP and CLI.

No Flask here, so that ``urnbound <question> --json`` prints, byte for byte, the body the
API sends for the same question: both call :meth:`Renderer.render` on inputs that
:meth:`Question.load` produced from the same texts.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

from urnbound.api.dumping import answer_dumper
from urnbound.domain.inputs import Inputs
from urnbound.domain.question import Context, Question
from urnbound.domain.registry import Registry

#: Media type of an answer body, and of a chart of it.
JSON_MEDIA_TYPE = "application/json"
SVG_MEDIA_TYPE = "image/svg+xml"


@dataclass(frozen=True, slots=True)
class CachedAnswer:
    """A serialized answer body, the method that produced it (if any) and its media type."""

    body: bytes
    method: str | None = None
    media_type: str = JSON_MEDIA_TYPE


def json_body(document: Mapping[str, object]) -> bytes:
    """Serialize an answer as strict JSON (no NaN or Infinity), compactly."""
    return _BODY_JSON.encode(document).encode()


#: ``json.dumps(..., allow_nan=False, separators=(",", ":"))``, built once.
_BODY_JSON = json.JSONEncoder(allow_nan=False, separators=(",", ":"))


@dataclass(frozen=True, slots=True)
class Renderer:
    """One answer dumper per registered question (``dumping.py``), built once."""

    dumpers: Mapping[str, Callable[[Mapping[str, Any]], dict[str, Any]]]

    def render(self, question: Question, inputs: Inputs, context: Context) -> CachedAnswer:
        """The answer to ``question`` for ``inputs``, serialized."""
        answer = question.answer_to(inputs, context)
        document = self.dumpers[question.name](answer.values)
        return CachedAnswer(json_body(document), answer.method)

    def render_chart(self, question: Question, inputs: Inputs, context: Context) -> CachedAnswer:
        """The chart of the answer to ``question`` (which must declare one), as SVG."""
        if question.chart is None:
            raise ValueError(f"question {question.name} has no chart")
        answer = question.answer_to(inputs, context)
        document = self.dumpers[question.name](answer.values)
        return CachedAnswer(question.chart(document), answer.method, SVG_MEDIA_TYPE)


def renderer_for(registry: Registry) -> Renderer:
    """A renderer for every question of ``registry``."""
    return Renderer(MappingProxyType({q.name: answer_dumper(q) for q in registry}))
