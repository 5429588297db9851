"""Shared pieces of :mod:`hamcheck.hyperbolic`: cone points, estimates with errors, input checks.

A cone point of angle ``alpha = 2 pi beta`` at ``p`` (``|p| < 1``) makes the
conformal factor behave like ``u = (beta - 1) log|z - p| + O(1)``; the
quadratic differential ``q`` then has a double pole with coefficient
``(1 - beta^2) / 4`` at ``p`` (verified in ``tests/test_hyperbolic_metric.py``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import UsageError

TWO_PI = 2.0 * math.pi


@dataclass(frozen=True)
class Cone:
    """A cone point: position ``p`` in the unit disk and angle ``alpha > 0``.

    >>> Cone(0.3j, math.pi).beta
    0.5
    """

    p: complex
    alpha: float

    @property
    def beta(self) -> float:
        return self.alpha / TWO_PI

    @property
    def double_pole(self) -> float:
        """The coefficient ``(1 - beta^2) / 4`` of ``(z - p)^-2`` in q."""
        return (1.0 - self.beta**2) / 4.0

    def __repr__(self) -> str:
        return f"Cone(p={complex(self.p):.6g}, alpha={self.alpha / math.pi:.6g} pi)"


def as_cones(cones, *, below_two_pi: bool = False, what: str = "cones") -> tuple[Cone, ...]:
    """Validate ``[(p, alpha), ...]`` (or :class:`Cone`s): one message naming the bad entry."""
    if cones is None:
        return ()
    if isinstance(cones, Cone):
        cones = [cones]
    try:
        items = list(cones)
    except TypeError:
        raise UsageError(f"{what} must be a list of (p, alpha) pairs; got {cones!r}") from None
    out = []
    for i, item in enumerate(items):
        if isinstance(item, Cone):
            p, alpha = item.p, item.alpha
        else:
            try:
                p, alpha = item
                p, alpha = complex(p), float(alpha)
            except (TypeError, ValueError):
                raise UsageError(f"{what}[{i}] = {item!r}: expected a pair (p, alpha) with complex p and real alpha") from None
        if not (math.isfinite(p.real) and math.isfinite(p.imag) and abs(p) < 1):
            raise UsageError(f"{what}[{i}]: the cone point p = {p} must lie inside the unit disk (|p| < 1)")
        if not (math.isfinite(alpha) and alpha > 0):
            raise UsageError(f"{what}[{i}]: the cone angle alpha = {alpha} must be a positive number (radians)")
        if below_two_pi and not alpha < TWO_PI:
            raise UsageError(
                f"{what}[{i}]: cone_metric solves for angles below 2 pi; got alpha = {alpha / math.pi:g} pi "
                "(for one cone point of any angle use cone_disk)"
            )
        out.append(Cone(complex(p), float(alpha)))
    for i in range(len(out)):
        for j in range(i):
            if abs(out[i].p - out[j].p) < 1e-9:
                raise UsageError(f"{what}[{j}] and {what}[{i}] sit at the same point {out[i].p}; merge them into one cone")
    return tuple(out)


class Estimate(float):
    """A number with an error estimate: behaves as the float ``value``; ``.error`` bounds its error.

    >>> d = Estimate(1.5, 2e-12)
    >>> float(d) + 1, d.error
    (2.5, 2e-12)
    """

    def __new__(cls, value, error, note: str = ""):
        obj = super().__new__(cls, float(value))
        obj._error = float(error)
        obj._note = note
        return obj

    @property
    def error(self) -> float:
        return self._error

    @property
    def value(self) -> float:
        return float(self)

    @property
    def note(self) -> str:
        return self._note

    def __repr__(self) -> str:
        return f"{float(self):.15g} (+- {self._error:.1e})"

    def __reduce__(self):
        return (Estimate, (float(self), self._error, self._note))


def as_point(z, what="z") -> complex:
    try:
        z = complex(z)
    except (TypeError, ValueError):
        raise UsageError(f"{what} must be a complex number (a point of the unit disk); got {z!r}") from None
    if not abs(z) < 1:
        raise UsageError(f"{what} = {z} must lie inside the unit disk (|z| < 1)")
    return z


def disk_automorphism(a: complex):
    """``phi_a(z) = (z - a) / (1 - conj(a) z)`` (numpy, complex), which sends a to 0."""
    a = complex(a)

    def phi(z):
        z = np.asarray(z, dtype=complex)
        return (z - a) / (1 - np.conj(a) * z)

    return phi


def check_c(c) -> float:
    try:
        c = float(c)
    except (TypeError, ValueError):
        raise UsageError(f"the central charge c must be a number; got {c!r}") from None
    if not math.isfinite(c) or c == 0:
        raise UsageError(f"the central charge c must be finite and non-zero; got {c}")
    return c
