"""Solutions of ``y'' + q(z) y = 0`` continued along paths in the complex plane.

A fixed-order integrator (sixth-order Magnus with three Gauss nodes per step,
complex 2x2 matrices) on equal steps of a parametrised path, refined by step
doubling until the change / 63 falls below the tolerance: the propagator comes
with an error estimate, so a numerical error is never mistaken for geometry.
Segments and circles are the only paths needed (loops around cone points,
rays from the boundary).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..circle.propagator import expm_traceless2, magnus6_exponent, ordered_product
from ..errors import ConvergenceError

#: Target error of a propagator relative to its norm; products of N 2x2
#: steps carry round-off ~ sqrt(N) 1e-16, so 1e-13 is reachable for N < 1e5.
PROPAGATOR_TOL = 1e-13

_G = math.sqrt(15.0) / 10.0
_NODES = np.array([0.5 - _G, 0.5, 0.5 + _G])


@dataclass(frozen=True)
class Segment:
    """``z(t) = a + t (b - a)``, t in [0, 1]."""

    a: complex
    b: complex

    def __call__(self, t):
        return self.a + t * (self.b - self.a), np.full_like(t, self.b - self.a, dtype=complex)


@dataclass(frozen=True)
class Circle:
    """``z(t) = center + r e^{i(phase + 2 pi t)}`` counter-clockwise, t in [0, 1]."""

    center: complex
    r: float
    phase: float

    def __call__(self, t):
        e = np.exp(1j * (self.phase + 2 * np.pi * t))
        return self.center + self.r * e, 2j * np.pi * self.r * e


def _steps(q, path, N):
    """The N Magnus-6 step propagators (Blanes, Casas, Oteo, Ros, Phys. Rep. 470 (2009); from memory,
    order 6 verified in the tests)."""
    h = 1.0 / N
    t = (np.arange(N)[:, None] + _NODES[None, :]) * h
    z, dz = path(t)
    A = np.zeros(t.shape + (2, 2), complex)
    A[..., 0, 1] = dz
    A[..., 1, 0] = -dz * q(z)
    return expm_traceless2(magnus6_exponent(A[:, 0], A[:, 1], A[:, 2], h))


@dataclass(frozen=True)
class Propagator:
    """``Y(1) = matrix Y(0)`` for ``(y, dy/dz)`` along a path; ``error`` relative to ``||matrix||``."""

    matrix: np.ndarray
    error: float
    steps: int


def propagate(q, path, *, tol: float = PROPAGATOR_TOL, steps: int = 32, max_steps: int = 2**17) -> Propagator:
    """Propagate ``(y, y')`` along ``path`` by Magnus-6 with step doubling to ``tol``.

    >>> P = propagate(lambda z: 0 * z - 1.0, Segment(0j, 1 + 0j))   # y'' = y: cosh, sinh
    >>> bool(abs(P.matrix[0, 0] - np.cosh(1)) < 1e-13)
    True
    """
    N = int(steps)
    prev = ordered_product(_steps(q, path, N))
    best = np.inf
    while True:
        N *= 2
        if N > max_steps:
            raise ConvergenceError(
                f"continuing y'' + q y = 0 along {path} did not reach {tol:.0e} in {max_steps} steps "
                f"(estimate {best:.1e}): the path passes too close to a pole of q"
            )
        cur = ordered_product(_steps(q, path, N))
        scale = max(np.abs(cur).max(), 1.0)
        err = np.abs(cur - prev).max() / scale / 63.0
        if not np.all(np.isfinite(cur)):
            raise ConvergenceError(f"continuing y'' + q y = 0 along {path} gave non-finite values: a pole lies on the path")
        if err <= tol or (err >= 0.5 * best and best < 1e3 * tol):
            return Propagator(cur, float(max(err, 1e-16)), N)
        best = min(best, err)
        prev = cur


def chain(*props: Propagator) -> Propagator:
    """Compose propagators applied in the order given (first one first)."""
    M = np.eye(2, dtype=complex)
    err = 0.0
    for P in props:
        M = P.matrix @ M
        err += P.error * max(np.abs(P.matrix).max(), 1.0)
    return Propagator(M, err / max(np.abs(M).max(), 1.0), sum(P.steps for P in props))


def boundary_frame(w: complex) -> np.ndarray:
    """``G`` with ``(y, dy/dz) = G (psi, dpsi/dtheta)`` at ``z = w = e^{i theta}`` for ``psi = y (i z)^{-1/2}``.

    ``psi`` solves the boundary Hill equation ``psi'' + (1/4 - z^2 q) psi = 0`` in theta;
    real ``(psi, psi')`` there are the frame in which the monodromy of a complete
    metric is real (the developing map sends the boundary circle to the real line).
    """
    s = np.sqrt(1j * w)
    return np.array([[s, 0.0], [1j / (2 * s), 1.0 / s]], dtype=complex)
