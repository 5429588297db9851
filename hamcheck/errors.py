"""The exception hierarchy: one root class, each error also a fitting builtin.

Every exception hamcheck raises on purpose derives from :class:`HamcheckError`,
so ``except hamcheck.HamcheckError`` catches them all; the builtin base lets
callers who think in builtins (``ValueError``, ``KeyError``) keep doing so.
"""

__all__ = [
    "ConvergenceError",
    "FrozenModelError",
    "HamcheckError",
    "LoadError",
    "ModelError",
    "UnknownNameError",
    "UsageError",
]


class HamcheckError(Exception):
    """Root of every exception hamcheck raises on purpose."""


class ModelError(HamcheckError, ValueError):
    """A declaration (model, algebra, convention) is malformed.

    The message names what was wrong and what was expected, e.g.
    ``form(x) returned shape (3, 3); expected (2, 2) for dim=2``.
    """


class UsageError(HamcheckError, ValueError):
    """A call's arguments are off (unknown check name, non-positive point count)."""


class UnknownNameError(UsageError, KeyError):
    """A name (of a check, a finding kind, a model in a file) that hamcheck does not know."""

    def __str__(self) -> str:  # KeyError would quote the message
        return str(self.args[0]) if self.args else ""


class FrozenModelError(HamcheckError, AttributeError):
    """An attribute of a declared :class:`~hamcheck.Model` was set; models are immutable."""


class ConvergenceError(HamcheckError, ArithmeticError):
    """A numerical method (an integrator, an iteration) did not reach its accuracy target.

    The message says what was tried and what to change (more steps, a finer grid).
    """


class LoadError(HamcheckError):
    """A model file could not be loaded: ``str()`` is one line ``FILE: REASON``.

    ``reason`` is the part without the file; ``kind`` the outcome status it
    maps to (``"load-error"`` or ``"out-of-memory"``).
    """

    def __init__(self, file: str, reason: str, kind: str = "load-error"):
        super().__init__(f"{file}: {reason}" if file else reason)
        self.file, self.reason, self.kind = file, reason, kind
