"""The diagnosis protocol: :class:`Evidence` in, :class:`Diagnosis` out, and shared helpers.

Each check's diagnosis lives in its own module of :mod:`hamcheck.checks`. It
receives the check's :class:`Evidence` (its per-point outputs at the finite
points) and returns a :class:`Diagnosis`: a status note, findings
``(kind, message, data)`` that say what is wrong and how to fix it, and trust
notes that never fail a model. Diagnoses are least-squares fits pooled over all
points (a sign, a factor per generator, a constant offset, a constant
2-cocycle); a fit is accepted only when its relative misfit is below
``Tolerances.fit``, otherwise the failure is reported without a guess.

>>> import numpy as np
>>> ev = Evidence(None, np.array([[0.5, 1.0]]), {}, np.array([0.3]), 1e-12, None, True, 0)
>>> at(ev)
'at x = (0.5, 1)'
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Evidence", "Diagnosis", "at", "fails_at_worst", "vec"]


@dataclass
class Evidence:
    """What one check measured, restricted to the points where it is finite."""

    model: object
    points: np.ndarray  # (n, dim) chart coordinates
    out: dict  # kernel outputs, each (n, ...)
    residual: np.ndarray  # (n,)
    tolerance: float
    tolerances: object  # hamcheck.Tolerances
    failed: bool
    worst: int  # index into points

    @property
    def worst_point(self) -> np.ndarray:
        return self.points[self.worst]

    @property
    def worst_residual(self) -> float:
        return self.residual[self.worst]


@dataclass(frozen=True)
class Diagnosis:
    """A check's verdict in words: ``note`` for the table, ``findings`` and ``trust`` as ``(kind, message, data)``."""

    note: str = ""
    findings: tuple = ()
    trust: tuple = ()


#: Entries at most this many float64 round-offs of the vector's largest entry print as 0: a fitted
#: offset of (0.3, -3.9e-17, -0.2) is (0.3, 0, -0.2) to every digit a least-squares fit can resolve
#: (its round-off is a few eps times the scale, common practice).
ROUNDOFF_ULPS = 64


def vec(v, digits=4) -> str:
    """A vector for a message, with entries that are zero to round-off (relative to its scale) shown as 0.

    >>> vec([0.3, -3.925e-17, -0.2]), vec([1e-20, 2e-20])
    ('(0.3, 0, -0.2)', '(1e-20, 2e-20)')
    """
    return "(" + ", ".join(_num(x, digits) for x in _zero_roundoff(v)) + ")"


def _zero_roundoff(v) -> np.ndarray:
    """``v`` with entries below ``ROUNDOFF_ULPS`` round-offs of ``max |v|`` set to 0 (non-finite entries kept)."""
    v = np.atleast_1d(np.asarray(v, dtype=float))
    finite = np.isfinite(v)
    scale = float(np.max(np.abs(v[finite]))) if finite.any() else 0.0
    small = finite & (np.abs(v) <= ROUNDOFF_ULPS * np.finfo(float).eps * scale)
    return np.where(small, 0.0, v)


def _num(x: float, digits: int) -> str:
    return "0" if x == 0 else f"{x:.{digits}g}"


def at(ev: Evidence) -> str:
    return f"at x = {vec(ev.worst_point)}"


def fails_at_worst(note: str, kind: str, message: str, key: str = "residual"):
    """The diagnosis of a check whose failure has one cause: one finding at the worst point.

    ``message`` is a template with the fields ``{r}`` (the worst residual) and
    ``{where}`` (``"at x = (...)"``).
    """

    def diagnose(ev: Evidence) -> Diagnosis:
        if not ev.failed:
            return Diagnosis()
        r = ev.worst_residual
        return Diagnosis(note, ((kind, message.format(r=r, where=at(ev)), {"point": ev.worst_point, key: r}),))

    return diagnose
