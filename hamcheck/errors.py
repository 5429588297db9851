"""The exception hierarchy: one root class, raised eagerly at declaration time."""

__all__ = ["HamcheckError", "ModelError", "UsageError"]


class HamcheckError(Exception):
    """Root of every exception hamcheck raises on purpose."""


class ModelError(HamcheckError, ValueError):
    """A declaration (model, algebra, convention) is malformed.

    The message names what was wrong and what was expected, e.g.
    ``form(x) returned shape (3, 3); expected (2, 2) for dim=2``.
    """


class UsageError(HamcheckError, ValueError):
    """A call's arguments are off (unknown check name, non-positive point count)."""
