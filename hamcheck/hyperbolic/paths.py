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


def _mul(A, B):
    return np.einsum("...ij,...jk->...ik", A, B)


def _comm(A, B):
    return _mul(A, B) - _mul(B, A)


def _expm_traceless(W):
    """exp of traceless 2x2 (complex) matrices: ``cosh(s) I + sinh(s)/s W``, ``s^2 = -det W``."""
    s2 = W[..., 0, 0] ** 2 + W[..., 0, 1] * W[..., 1, 0]
    s = np.sqrt(s2 + 0j)
    small = np.abs(s2) < 1e-6
    ss = np.where(small, 1.0, s)
    ch = np.where(small, 1 + s2 / 2 + s2**2 / 24 + s2**3 / 720, np.cosh(ss))
    sh = np.where(small, 1 + s2 / 6 + s2**2 / 120 + s2**3 / 5040, np.sinh(ss) / ss)
    E = sh[..., None, None] * W
    E[..., 0, 0] += ch
    E[..., 1, 1] += ch
    return E


def _steps(q, path, N):
    """The N Magnus-6 step propagators (Blanes, Casas, Oteo, Ros, Phys. Rep. 470 (2009); from memory,
    order 6 verified in the tests)."""
    h = 1.0 / N
    t = (np.arange(N)[:, None] + _NODES[None, :]) * h
    z, dz = path(t)
    A = np.zeros(t.shape + (2, 2), complex)
    A[..., 0, 1] = dz
    A[..., 1, 0] = -dz * q(z)
    A1, A2, A3 = A[:, 0], A[:, 1], A[:, 2]
    B1 = h * A2
    B2 = (math.sqrt(15.0) * h / 3.0) * (A3 - A1)
    B3 = (10.0 * h / 3.0) * (A3 - 2 * A2 + A1)
    C1 = _comm(B1, B2)
    C2 = -_comm(B1, 2 * B3 + C1) / 60.0
    W = B1 + B3 / 12.0 + _comm(-20 * B1 - B3 + C1, B2 + C2) / 240.0
    return _expm_traceless(W)


def _product(E):
    """``E[N-1] ... E[0]`` by pairwise reduction."""
    while E.shape[0] > 1:
        if E.shape[0] % 2:
            E = np.concatenate([E[:-2], _mul(E[-1], E[-2])[None]])
            continue
        E = _mul(E[1::2], E[0::2])
    return E[0]


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
    prev = _product(_steps(q, path, N))
    best = np.inf
    while True:
        N *= 2
        if N > max_steps:
            raise ConvergenceError(
                f"continuing y'' + q y = 0 along {path} did not reach {tol:.0e} in {max_steps} steps "
                f"(estimate {best:.1e}): the path passes too close to a pole of q"
            )
        cur = _product(_steps(q, path, N))
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
