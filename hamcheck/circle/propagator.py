"""One propagator for periodic linear ODEs ``Y' = A(theta) Y``, ``Y(0) = I``, over one period.

Serves the Hill monodromy of :mod:`hamcheck.virasoro` (``A = [[0, 1], [-T/c, 0]]``)
and the holonomy of :mod:`hamcheck.loop_groups` (``A = (1/c) A_theta``).

Method: sixth-order Magnus steps on three Gauss–Legendre nodes per step
(Blanes, Casas, Oteo, Ros, "The Magnus expansion and some of its
applications", Phys. Rep. 470 (2009), the three-node sixth-order scheme; from
memory, its order is confirmed by the tests), with the coefficient evaluated
exactly between grid points as a trigonometric polynomial
(:class:`hamcheck.circle.Periodic`). The step count doubles until the error
estimate

    error = max|Y_2N - Y_N| / max(max|Y_2N|, 1) / 63

(the sixth-order Richardson estimate of the finer result, relative to its
size) reaches the target ``tol``. When a doubling no longer halves the
estimate the remaining change is round-off; it is accepted within
``circle.TOLERANCES.roundoff_slack`` times the target. Otherwise, or when
``max_steps`` is reached, :class:`hamcheck.ConvergenceError` is raised.

>>> import numpy as np
>>> from hamcheck import circle
>>> gen = circle.Periodic(np.array([[[0.0, 1.0], [-0.09, 0.0]]], dtype=complex), np.array([0]))
>>> P = circle.propagate(gen, expm=circle.expm_traceless2)   # psi'' + 0.09 psi = 0
>>> bool(abs(P.trace - 2 * np.cos(0.6 * np.pi)) < 1e-12)
True
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg

from ..errors import ConvergenceError, UsageError
from .periodic import TWO_PI, Periodic
from .tolerances import TOLERANCES

__all__ = ["Propagation", "propagate", "transport", "magnus_steps", "magnus6_exponent", "ordered_product", "prefix_products", "expm_traceless2"]

_G = math.sqrt(15.0) / 10.0
_NODES = (0.5 - _G, 0.5, 0.5 + _G)
#: float64 epsilon: an error estimate is never claimed below round-off
_EPS = float(np.finfo(float).eps)


def _mul(A, B):
    """Batched matrix products; real 2x2 written out (several times faster than matmul for them)."""
    if A.shape[-2:] != (2, 2) or np.iscomplexobj(A) or np.iscomplexobj(B):
        return A @ B
    return np.stack(
        [
            np.stack([A[..., 0, 0] * B[..., 0, 0] + A[..., 0, 1] * B[..., 1, 0], A[..., 0, 0] * B[..., 0, 1] + A[..., 0, 1] * B[..., 1, 1]], -1),
            np.stack([A[..., 1, 0] * B[..., 0, 0] + A[..., 1, 1] * B[..., 1, 0], A[..., 1, 0] * B[..., 0, 1] + A[..., 1, 1] * B[..., 1, 1]], -1),
        ],
        -2,
    )


def _comm(A, B):
    return _mul(A, B) - _mul(B, A)


def expm_traceless2(W):
    """exp of traceless 2x2 matrices (real or complex): ``cosh(s) I + sinh(s)/s W``, ``s^2 = -det W``."""
    s2 = W[..., 0, 0] ** 2 + W[..., 0, 1] * W[..., 1, 0]
    z = np.sqrt(s2.astype(complex))
    small = np.abs(s2) < 1e-8  # series to s^4: the first omitted term is below 1e-26
    zs = np.where(small, 1.0, z)
    ch = np.where(small, 1 + s2 / 2 + s2**2 / 24, np.cosh(zs))
    sh = np.where(small, 1 + s2 / 6 + s2**2 / 120, np.sinh(zs) / zs)
    if not np.iscomplexobj(W):
        ch, sh = np.real(ch), np.real(sh)
    E = sh[..., None, None] * W
    E[..., 0, 0] += ch
    E[..., 1, 1] += ch
    return E


def magnus_steps(generator: Periodic, N: int, expm=None) -> np.ndarray:
    """The N one-step propagators ``exp(Omega_j)`` (shape (N, n, n)) of the sixth-order Magnus scheme."""
    h = TWO_PI / N
    A1, A2, A3 = (generator.on_grid(N, nd * h) for nd in _NODES)
    return (expm or scipy.linalg.expm)(magnus6_exponent(A1, A2, A3, h))


def magnus6_exponent(A1, A2, A3, h):
    """The sixth-order Magnus exponent of one step of length ``h`` from the generator at the three
    Gauss–Legendre nodes (arrays ``(..., n, n)``); any linear ODE ``Y' = A Y``, real or complex."""
    B1 = h * A2
    B2 = (math.sqrt(15.0) * h / 3.0) * (A3 - A1)
    B3 = (10.0 * h / 3.0) * (A3 - 2 * A2 + A1)
    C1 = _comm(B1, B2)
    C2 = -_comm(B1, 2 * B3 + C1) / 60.0
    return B1 + B3 / 12.0 + _comm(-20 * B1 - B3 + C1, B2 + C2) / 240.0


def ordered_product(E) -> np.ndarray:
    """``E[N-1] ... E[1] E[0]`` by pairwise (tree) reduction (round-off grows like log N)."""
    arr = np.asarray(E)
    while arr.shape[0] > 1:
        if arr.shape[0] % 2:
            arr = np.concatenate([arr[:-2], _mul(arr[-1], arr[-2])[None]])
            continue
        arr = _mul(arr[1::2], arr[0::2])
    return arr[0]


def prefix_products(E) -> np.ndarray:
    """``P[j] = E[j-1] ... E[0]`` for j = 0..N (P[0] = I), by doubling (Hillis–Steele)."""
    arr = np.array(E)
    off, n = 1, arr.shape[0]
    while off < n:
        arr = np.concatenate([arr[:off], _mul(arr[off:], arr[:-off])])
        off *= 2
    return np.concatenate([np.eye(arr.shape[-1], dtype=arr.dtype)[None], arr])


def transport(generator: Periodic, steps: int, expm=None) -> np.ndarray:
    """``Y(2 pi)`` with exactly ``steps`` Magnus steps (no error control; for order studies)."""
    return ordered_product(magnus_steps(generator, int(steps), expm))


@dataclass(frozen=True)
class Propagation:
    """``Y(2 pi)`` for ``Y' = A Y``, ``Y(0) = I``: a monodromy or a holonomy.

    ``error`` is the estimate of the module docstring (relative to
    ``max(||Y||, 1)``), ``tolerance`` the target it was refined to, ``steps``
    the Magnus steps used. ``generator`` is ``A`` as a trigonometric polynomial.
    """

    matrix: np.ndarray
    error: float
    steps: int
    tolerance: float
    generator: Periodic = field(repr=False, compare=False, default=None)
    expm: object = field(repr=False, compare=False, default=None)

    @property
    def trace(self):
        """The trace (complex for a complex matrix, else float)."""
        t = np.trace(self.matrix)
        return complex(t) if np.iscomplexobj(self.matrix) else float(t)

    def fundamental(self) -> np.ndarray:
        """``Y(theta_j)`` at ``theta_j = 2 pi j / steps``, j = 0..steps (shape (steps + 1, n, n))."""
        return prefix_products(magnus_steps(self.generator, self.steps, self.expm))


def _starting_steps(generator: Periodic, min_steps: int) -> int:
    """Resolve the coefficient's modes (4 x degree) and its local frequency (spectral radius)."""
    M = max(64, 4 * generator.degree + 1)
    radius = float(np.abs(np.linalg.eigvals(generator.on_grid(M))).max())
    N = int(min_steps)
    while N < 4 * generator.degree or N < 8 * radius + 16:
        N *= 2
    return N


def propagate(generator: Periodic, *, tol: float | None = None, min_steps: int = 64, max_steps: int = 2**21, expm=None) -> Propagation:
    """Propagate ``Y' = A(theta) Y`` around the circle to the error estimate ``tol``.

    ``generator``: ``A`` as a :class:`~hamcheck.circle.Periodic` with (n, n)
    values; ``expm`` the exponential of the Magnus generators (default scipy's;
    :func:`expm_traceless2` or a group's closed form are faster). ``tol``
    defaults to ``circle.TOLERANCES.propagator``. Step counts are
    ``min_steps * 2^j``.
    """
    if not isinstance(generator, Periodic) or len(generator.value_shape) != 2 or generator.value_shape[0] != generator.value_shape[1]:
        raise UsageError("the generator must be a circle.Periodic with square-matrix values")
    tol = TOLERANCES.propagator if tol is None else float(tol)
    if not tol > 0:
        raise UsageError(f"the propagator's tolerance must be positive; got {tol}")
    N = _starting_steps(generator, min_steps)
    prev = transport(generator, N, expm)
    best = np.inf
    while True:
        N2 = 2 * N
        if N2 > max_steps:
            raise ConvergenceError(
                f"the propagator did not reach its target {tol:.0e} within {max_steps} steps (estimate {best:.1e}); "
                "the coefficient is too large or too oscillatory (or under-resolved by its grid) for the requested "
                "accuracy: raise max_steps or tol, or sample it on a finer grid"
            )
        cur = transport(generator, N2, expm)
        err = float(np.abs(cur - prev).max() / max(np.abs(cur).max(), 1.0) / 63.0)
        stalled = err >= 0.5 * best and err <= TOLERANCES.roundoff_slack * tol
        if err <= tol or stalled:
            return Propagation(cur, max(err, _EPS), N2, tol, generator, expm)
        best = min(best, err)
        prev, N = cur, N2
