"""The errors the domain layer raises, including the one for a query that does not load.

The HTTP layer and the command line import errors from here, never from the core.
"""

from __future__ import annotations

from collections.abc import Mapping

from urnbound.core.errors import DomainError, NoConvergence, ServiceError

__all__ = ["DomainError", "InvalidQuery", "NoConvergence", "ServiceError"]


class InvalidQuery(DomainError):
    """Parameters missing, malformed, unknown, repeated, out of range or combined wrongly.

    :ivar errors: each parameter (or parameter group) at fault -> messages stating the
        allowed form or range.

    >>> InvalidQuery({"count": ["count must be ..."]}).detail
    'count: count must be ...'
    """

    def __init__(self, errors: Mapping[str, list[str]]) -> None:
        self.errors = {name: list(messages) for name, messages in errors.items()}
        super().__init__(summary(self.errors), field=next(iter(self.errors), None))


def summary(errors: Mapping[str, list[str]]) -> str:
    """One sentence naming every field at fault (the message itself when there is one)."""
    names = sorted(errors)
    if len(names) == 1 and len(errors[names[0]]) == 1:
        return f"{names[0]}: {errors[names[0]][0]}"
    return f"The query has problems with: {', '.join(names)}. See errors for each field."
