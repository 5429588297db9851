"""Compact matrix groups, their loops on the circle, and constant connections.

SU(2) basis ``e_k = -i sigma_k / 2``, ``[e_j, e_k] = eps_jkl e_l``, inner
product ``<X, Y> = -tr(XY)`` (so ``<e_j, e_k> = delta_jk / 2``); other groups
use ``<X, Y> = -scale * tr(XY)`` with the scale stated on the group. A loop is
sampled on the uniform grid ``theta_m = 2 pi m / M`` of :mod:`hamcheck.circle`
together with its exact derivative.

>>> g = Loop.winding(SU2, 2, 16)
>>> bool(abs(np.trace(g.values[4]) - 2 * np.cos(np.pi / 2)) < 1e-14)   # exp(2 theta e_3) at theta = pi/2
True
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.linalg

from .. import circle
from ..circle import grid
from ..errors import UsageError

__all__ = ["MatrixGroup", "SU2", "SO3", "U1", "SU", "Loop", "grid", "constant_connection"]


def _pauli():
    return np.array(
        [[[0, 1], [1, 0]], [[0, -1j], [1j, 0]], [[1, 0], [0, -1]]], dtype=np.complex128
    )


def _np_coefficients(s):
    """``(sin r / r, (1 - cos r)/r^2, (r - sin r)/r^3)`` of ``s = r^2`` (numpy; series below s = 1)."""
    s = np.asarray(s, dtype=float)
    small = s < 1.0
    t = np.where(small, 1.0, s)
    r = np.sqrt(t)
    out = []
    for offset, closed in ((1, np.sin(r) / r), (2, (1 - np.cos(r)) / t), (3, (r - np.sin(r)) / (t * r))):
        series = sum((-s) ** k / math.factorial(2 * k + offset) for k in range(10))
        out.append(np.where(small, series, closed))
    return out


def _rotation_exp(x, y=None):
    """so(3) = su(2) in coordinates: ``exp`` as the rotation matrix ``I + f0 K + f1 K^2``
    and, with ``y``, the right-trivialised derivative ``dexp_x(y) = y + f1 x*y + f2 x*(x*y)``."""
    s = np.sum(x * x, axis=-1)
    f0, f1, f2 = _np_coefficients(s)
    K = np.zeros(x.shape[:-1] + (3, 3))
    K[..., 0, 1], K[..., 0, 2], K[..., 1, 2] = -x[..., 2], x[..., 1], -x[..., 0]
    K = K - np.swapaxes(K, -1, -2)
    R = np.eye(3) + f0[..., None, None] * K + f1[..., None, None] * (K @ K)
    if y is None:
        return R
    xy = np.cross(x, y)
    return R, y + f1[..., None] * xy + f2[..., None] * np.cross(x, xy)


@dataclass(frozen=True, eq=False)
class MatrixGroup:
    """A compact matrix group: basis of its Lie algebra and invariant inner product.

    ``<X, Y> = -scale * tr(XY)``. The basis is orthogonal for it, with
    ``<e_a, e_a> = norms[a]``. ``kind`` selects closed-form exponentials
    (``"su2"``, ``"so3"``, ``"u1"``) or scipy's ``expm`` (``"general"``).
    """

    name: str
    basis: np.ndarray  # (d, n, n)
    scale: float
    kind: str = "general"

    @property
    def dim(self) -> int:
        return self.basis.shape[0]

    @property
    def size(self) -> int:
        return self.basis.shape[1]

    @property
    def norms(self) -> np.ndarray:
        return -self.scale * np.einsum("aij,aji->a", self.basis, self.basis).real

    def __repr__(self) -> str:
        return f"MatrixGroup({self.name}, dim={self.dim}, {self.size}x{self.size})"

    # coordinates <-> matrices, grid-wise (leading axes are free)
    def element(self, coords) -> np.ndarray:
        return np.einsum("...a,aij->...ij", np.asarray(coords, dtype=float), self.basis)

    def coordinates(self, mats) -> np.ndarray:
        ip = -self.scale * np.einsum("...ij,aji->...a", np.asarray(mats), self.basis)
        return ip.real / self.norms

    def inner(self, x, y) -> np.ndarray:
        """``<x, y>`` of coordinate arrays (last axis), pointwise."""
        return np.sum(np.asarray(x) * np.asarray(y) * self.norms, axis=-1)

    def bracket(self, x, y) -> np.ndarray:
        X, Y = self.element(x), self.element(y)
        return self.coordinates(X @ Y - Y @ X)

    def exp(self, mats) -> np.ndarray:
        """``exp`` of algebra matrices ``(..., n, n)`` (closed forms where known)."""
        mats = np.asarray(mats)
        if self.kind == "su2":
            # (x.e)^2 = -(|x|/2)^2 I: exp = cos(r/2) I + sinc-type term
            x = self.coordinates(mats)
            half = 0.5 * np.linalg.norm(x, axis=-1)
            c = np.cos(half)[..., None, None]
            s = np.sinc(half / np.pi)[..., None, None]
            return c * np.eye(2) + s * mats
        if self.kind == "u1":
            return np.exp(mats)
        if self.kind == "so3":
            return _rotation_exp(self.coordinates(mats)).astype(complex)
        # compact group: X is anti-Hermitian, so exp(X) = V e^{-i lam} V^* from iX = V lam V^*
        H = 1j * mats
        lam, V = np.linalg.eigh((H + np.conj(np.swapaxes(H, -1, -2))) / 2)
        return (V * np.exp(-1j * lam)[..., None, :]) @ np.conj(np.swapaxes(V, -1, -2))

    def exp_with_derivative(self, X, dX):
        """``(exp X, d/dtheta exp X(theta))`` for algebra coordinates X, X' (exact, batched).

        SU(2) and SO(3): closed forms (``g' = dexp_X(X') g``); U(1): ``g X'``;
        otherwise the block-triangular exponential ``expm([[X, X'], [0, X]])``.
        """
        X, dX = np.asarray(X, dtype=float), np.asarray(dX, dtype=float)
        if self.kind in ("su2", "so3"):
            _R, d = _rotation_exp(X, dX)
            g = self.exp(self.element(X))
            return g, self.element(d) @ g
        Xm, dXm = self.element(X), self.element(dX)
        if self.kind == "u1":
            g = np.exp(Xm)
            return g, dXm * g
        n = self.size
        big = np.zeros(Xm.shape[:-2] + (2 * n, 2 * n), dtype=complex)
        big[..., :n, :n] = big[..., n:, n:] = Xm
        big[..., :n, n:] = dXm
        E = scipy.linalg.expm(big)
        return E[..., :n, :n], E[..., :n, n:]

    def conj(self, g, X) -> np.ndarray:
        """``g X g^-1`` for unitary ``g`` (inverse = conjugate transpose)."""
        return g @ X @ np.conj(np.swapaxes(g, -1, -2))


SU2 = MatrixGroup("SU(2)", -0.5j * _pauli(), 1.0, "su2")
#: so(3) with L_k (L_k)_ij = -eps_kij, [L_j, L_k] = eps_jkl L_l; the scale 1/4
#: makes ``<L_j, L_k> = delta_jk / 2``, the SU(2) normalisation under su(2) = so(3).
SO3 = MatrixGroup(
    "SO(3)",
    np.array(
        [[[0, 0, 0], [0, 0, -1], [0, 1, 0]], [[0, 0, 1], [0, 0, 0], [-1, 0, 0]], [[0, -1, 0], [1, 0, 0], [0, 0, 0]]],
        dtype=np.complex128,
    ),
    0.25,
    "so3",
)
#: u(1) spanned by ``e = -i/2`` (so that U(1) = the e_3 torus of SU(2) on one entry).
U1 = MatrixGroup("U(1)", np.array([[[-0.5j]]]), 1.0, "u1")


def SU(n: int) -> MatrixGroup:
    """SU(n) with the generalised Gell-Mann basis times ``-i/2`` (``<X, Y> = -tr XY``).

    >>> SU(3).dim
    8
    """
    if not isinstance(n, (int, np.integer)) or n < 2:
        raise UsageError(f"SU(n) needs an integer n >= 2; got {n!r}")
    if n == 2:
        return SU2
    mats = []
    for j in range(n):
        for k in range(j + 1, n):
            s = np.zeros((n, n), complex)
            s[j, k] = s[k, j] = 1
            mats.append(s)
            a = np.zeros((n, n), complex)
            a[j, k], a[k, j] = -1j, 1j
            mats.append(a)
    for l in range(1, n):
        d = np.zeros((n, n), complex)
        d[np.arange(l), np.arange(l)] = 1
        d[l, l] = -l
        mats.append(d * np.sqrt(2.0 / (l * (l + 1))))
    return MatrixGroup(f"SU({n})", -0.5j * np.array(mats), 1.0)


def _check_group(group) -> MatrixGroup:
    if not isinstance(group, MatrixGroup):
        raise UsageError(f"group must be a loop_groups.MatrixGroup (SU2, SO3, U1, SU(n)); got {type(group).__name__}")
    return group


def _check_level(c) -> float:
    return circle.coupling(c, "level c")


def _check_connection(A, group, what="A") -> np.ndarray:
    A = np.asarray(A)
    if np.iscomplexobj(A):
        raise UsageError(f"{what} must hold real coordinates in the {group.name} basis; got complex values")
    if A.ndim != 2 or A.shape[1] != group.dim or A.shape[0] < 3:
        raise UsageError(
            f"{what} must have shape (M, {group.dim}): samples on a uniform grid of M >= 3 points, one column "
            f"per basis element of {group.name}; got shape {A.shape}"
        )
    if not np.all(np.isfinite(A)):
        raise UsageError(f"{what} contains NaN or inf; expected finite samples")
    return A.astype(float)


# ======================================================= periodic functions
def _derivative(values) -> np.ndarray:
    """Spectral derivative of grid samples (numpy, via :class:`hamcheck.circle.Periodic`)."""
    values = np.asarray(values)
    return circle.Periodic.from_samples(values).derivative().on_grid(values.shape[0])


def _integral(values) -> np.ndarray:
    """The trapezoid rule of :func:`hamcheck.circle.integrate`, in numpy (no jax dispatch per call)."""
    values = np.asarray(values)
    return values.sum(axis=0) * (2 * np.pi / values.shape[0])


# ====================================================================== loops
@dataclass(frozen=True, eq=False)
class Loop:
    """A loop ``g: S^1 -> G`` sampled on a uniform grid, with its exact derivative.

    ``values[m] = g(theta_m)`` and ``derivative[m] = g'(theta_m)`` as matrices.
    Build with :meth:`exponential` (``g = exp X`` for a trigonometric
    polynomial ``X``: derivative exact), :meth:`winding` or :meth:`from_samples`
    (spectral derivative).

    >>> g = Loop.exponential(SU2, {1: ([0.3, 0, 0], [0, 0.2, 0])}, 32)
    >>> g.values.shape, g.derivative.shape
    ((32, 2, 2), (32, 2, 2))
    """

    group: MatrixGroup
    values: np.ndarray
    derivative: np.ndarray

    @property
    def M(self) -> int:
        return self.values.shape[0]

    @classmethod
    def exponential(cls, group, modes: dict, M: int) -> "Loop":
        """``g(theta) = exp(X(theta))``, ``X = sum_n C_n cos n theta + S_n sin n theta``.

        ``modes`` maps ``n >= 0`` to ``(C_n, S_n)`` coordinate vectors. The
        derivative uses the exact derivative of ``exp`` (Fréchet derivative
        along ``X'``), not differences.
        """
        group = _check_group(group)
        th = grid(M)
        X = np.zeros((M, group.dim))
        dX = np.zeros((M, group.dim))
        for n, pair in modes.items():
            C, S = (np.broadcast_to(np.asarray(v, dtype=float), (group.dim,)) for v in pair)
            X += np.cos(n * th)[:, None] * C + np.sin(n * th)[:, None] * S
            dX += n * (-np.sin(n * th)[:, None] * C + np.cos(n * th)[:, None] * S)
        g, dg = group.exp_with_derivative(X, dX)
        return cls(group, g, dg)

    @classmethod
    def winding(cls, group, k: int, M: int, axis: int = 2) -> "Loop":
        """``exp(k theta e_axis)``; in SU(2) a closed loop only for even k."""
        group = _check_group(group)
        e = group.basis[axis]
        th = grid(M)
        g = group.exp(k * th[:, None, None] * e)
        return cls(group, g, k * e @ g)

    @classmethod
    def from_samples(cls, group, values) -> "Loop":
        """Samples of ``g`` (matrices); the derivative is spectral (accuracy set by M)."""
        values = np.asarray(values, dtype=complex)
        return cls(_check_group(group), values, _derivative(values))

    def __matmul__(self, other: "Loop") -> "Loop":
        """Pointwise product ``(g h)(theta)``, derivative by the product rule."""
        return Loop(self.group, self.values @ other.values, self.derivative @ other.values + self.values @ other.derivative)

    def inverse(self) -> "Loop":
        gi = np.conj(np.swapaxes(self.values, -1, -2))
        return Loop(self.group, gi, -gi @ self.derivative @ gi)

    def right_maurer_cartan(self) -> np.ndarray:
        """Coordinates of ``g' g^-1``."""
        gi = np.conj(np.swapaxes(self.values, -1, -2))
        return self.group.coordinates(self.derivative @ gi)

    def left_maurer_cartan(self) -> np.ndarray:
        """Coordinates of ``g^-1 g'``."""
        gi = np.conj(np.swapaxes(self.values, -1, -2))
        return self.group.coordinates(gi @ self.derivative)


def constant_connection(a: float, M: int, group: MatrixGroup = SU2, axis: int = 2) -> np.ndarray:
    """Samples of the constant connection ``a e_axis`` (default ``a e_3``)."""
    A = np.zeros((M, _check_group(group).dim))
    A[:, axis] = a
    return A
