"""HTTP layer: init_api wires the question routes, problem details, metrics and the access log.

Every module here may import Flask except ``schemas`` and ``rendering``, which the command
line uses to print answers exactly as the API sends them.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from flask import Flask

    from urnbound.config import Settings


def init_api(app: Flask, settings: Settings) -> None:
    """Register everything HTTP on ``app``, whose state the factory has already built."""
    from urnbound.api.wiring import wire

    wire(app, settings)
