"""The error hierarchy raised by the core and domain layers."""

from __future__ import annotations


class ServiceError(Exception):
    """Base of every error the service raises on purpose.

    :param detail: a sentence for the caller.
    :param field: the request field at fault, when there is one.
    """

    def __init__(self, detail: str, *, field: str | None = None) -> None:
        super().__init__(detail)
        self.detail = detail
        self.field = field


class DomainError(ServiceError, ValueError):
    """An input outside the range the service answers for."""


class NoConvergence(ServiceError, ArithmeticError):
    """A bounded iteration did not reach the accuracy it was asked for."""
