"""Urnbound: collision-probability answers for random identifiers."""

from __future__ import annotations

__version__ = "0.1.0"

__all__ = ["__version__", "create_app"]


def __getattr__(name: str) -> object:
    # Import the Flask factory lazily so that the numerical core can be used
    # (and tested) without pulling in the web stack.
    if name == "create_app":
        from urnbound.app import create_app

        return create_app
    raise AttributeError(name)
