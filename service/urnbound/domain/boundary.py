"""The figures of an inverse answer's two boundary risks, shared by the inverse questions."""

from __future__ import annotations

from urnbound.core.results import CollisionRisk, Magnitude


def collision_of(risk: CollisionRisk | None) -> Magnitude | None:
    """The collision probability of ``risk``, or ``None`` where there is no neighbour."""
    return None if risk is None else risk.collision


def boundary_bound(answer: CollisionRisk, neighbour: CollisionRisk | None) -> float:
    """The larger of the two reported risks' relative error bounds."""
    bounds = [answer.relative_error_bound]
    if neighbour is not None:
        bounds.append(neighbour.relative_error_bound)
    return max(bounds)
