"""Loop groups acting on connections on the circle (level-c gauge action).

Conventions (``/work/shared/reference/affine.md``; Pressley–Segal, *Loop
Groups*, ch. 4, from memory):

* SU(2) basis ``e_k = -i sigma_k / 2``, ``[e_j, e_k] = eps_jkl e_l``, inner
  product ``<X, Y> = -tr(XY)`` (so ``<e_j, e_k> = delta_jk / 2``); other groups
  use ``<X, Y> = -scale * tr(XY)`` with the scale stated on the group.
* Circle coordinate ``theta`` in ``[0, 2pi)``; functions on the circle are
  samples on the uniform grid ``theta_m = 2 pi m / M`` (shared machinery of
  :mod:`hamcheck.circle`).
* Connections ``A dtheta`` are arrays ``(M, d)`` of coordinates in the
  algebra's basis. Level-c gauge action (a LEFT action)
  ``g . A = g A g^-1 + c g' g^-1``; infinitesimally ``delta_xi A = [xi, A] + c xi'``
  and ``int <delta_xi A, eta> = -(int <A, [xi, eta]> + c int <xi, eta'>)``.
* Central cocycle ``omega(xi, eta) = c int <xi, eta'> dtheta``; adjoint action
  of the extension ``Ad_g(eta, b) = (g eta g^-1, b - int <g^-1 g', eta>)``.
* Holonomy: parallel transport ``U' = (1/c) A U``, ``U(0) = I``, so
  ``Hol(g . A) = g(0) Hol(A) g(0)^-1``.

Other normalisations convert as follows: a pairing ``<X, Y> = -tr(XY)/2`` or a
cocycle ``(c / 2 pi) int <xi, eta'>`` rescale the level (``c -> 2c`` or
``c -> c / 2 pi``); the action ``g A g^-1 - c g' g^-1`` is the level ``-c``
orbit with transport ``U' = -(1/c) A U``.

Example
-------
>>> import numpy as np
>>> from hamcheck import affine
>>> A = affine.constant_connection(0.3, 64)          # 0.3 e_3 on 64 points
>>> H = affine.holonomy(A, c=1.0)                      # U' = (1/c) A U around the circle
>>> bool(abs(H.trace.real - 2 * np.cos(0.3 * np.pi)) < 1e-12)
True
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg

from . import circle
from .cache import memoized
from ._jax import jax, jnp
from .circle import grid
from .errors import UsageError

__all__ = [
    "MatrixGroup",
    "SU2",
    "SO3",
    "U1",
    "SU",
    "Loop",
    "grid",
    "constant_connection",
    "gauge_action",
    "infinitesimal_action",
    "pairing",
    "central_cocycle",
    "extension_adjoint",
    "Holonomy",
    "holonomy",
    "su2_class",
    "stabilizer_dimension_fourier",
    "stabilizer_dimension_transport",
    "STABILIZER_RTOL",
    "HOLONOMY_TOL",
    "GAUGE_ACTION_TOL",
    "PAIRING_TOL",
    "check_gauge_action",
    "su2_Ad",
    "su2_dexp",
    "ChartFormulas",
    "STANDARD",
    "chart_labels",
    "degenerate_modes",
    "kks_form_at_base",
    "orbit_model",
    "OrbitResolution",
    "orbit_resolution_study",
    "summarize_resolution",
    "TruncatedLoopAlgebra",
    "truncated_algebra",
    "check_user_action",
    "classify",
    "classify_file",
    "format_classification",
    "add_holonomy_parser",
]

#: Relative singular value below which a direction counts as stabilising. The
#: exact kernel sits at round-off (1e-15) when the stabilizer is resolved by
#: the Fourier modes, and the nearest non-kernel value is ``|a/c - n|`` times
#: the scale; 1e-8 separates the two unless a/c is within 1e-8 of an integer
#: (then the class is numerically central and both methods say so).
STABILIZER_RTOL = 1e-8

#: Target error of the holonomy (max entry, absolute, for unitary matrices).
#: The sixth-order Magnus integrator reaches 1e-14 on smooth connections; 1e-12
#: leaves a margin of 100 for the a-posteriori estimate.
HOLONOMY_TOL = 1e-12


# ====================================================================== groups
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
        raise UsageError(f"group must be an affine.MatrixGroup (SU2, SO3, U1, SU(n)); got {type(group).__name__}")
    return group


def _check_level(c) -> float:
    try:
        c = float(c)
    except (TypeError, ValueError):
        raise UsageError(f"the level c must be a nonzero real number; got {c!r}") from None
    if not math.isfinite(c) or c == 0.0:
        raise UsageError(f"the level c must be a nonzero finite real number; got {c!r}")
    return c


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
# The circle machinery (grids, spectral derivatives, quadrature, interpolation)
# is shared with hamcheck.virasoro and lives in hamcheck.circle.
def _derivative(values) -> np.ndarray:
    """Spectral derivative of grid samples (numpy, via :class:`hamcheck.circle.Periodic`)."""
    values = np.asarray(values)
    return circle.Periodic.from_samples(values).derivative().on_grid(values.shape[0])


def _shifted_samples(values, N: int, shift: float) -> np.ndarray:
    """Trigonometric interpolant of grid samples, evaluated at ``2 pi j / N + shift``."""
    return circle.Periodic.from_samples(values).on_grid(N, shift)


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


# ============================================================ gauge action
def gauge_action(g: Loop, A, c: float) -> np.ndarray:
    """``g . A = g A g^-1 + c g' g^-1`` (coordinates on g's grid). A left action.

    >>> g = Loop.winding(SU2, 2, 16)
    >>> float(gauge_action(g, constant_connection(0.25, 16), 1.0)[0, 2])   # a -> a + 2c
    2.25
    """
    group = g.group
    A = _check_connection(A, group)
    if A.shape[0] != g.M:
        raise UsageError(f"A has {A.shape[0]} samples but the loop has {g.M}; sample both on the same grid")
    c = _check_level(c)
    return group.coordinates(group.conj(g.values, group.element(A))) + c * g.right_maurer_cartan()


def infinitesimal_action(xi, A, c: float, group: MatrixGroup = SU2, dxi=None) -> np.ndarray:
    """``delta_xi A = [xi, A] + c xi'`` (xi' spectral unless ``dxi`` is given)."""
    group = _check_group(group)
    A = _check_connection(A, group)
    xi = _check_connection(xi, group, "xi")
    dxi = _derivative(xi) if dxi is None else np.asarray(dxi)
    return group.bracket(xi, A) + _check_level(c) * dxi


def pairing(A, xi, group: MatrixGroup = SU2) -> float:
    """``int <A, xi> dtheta`` by the trapezoid rule."""
    return float(_integral(_check_group(group).inner(A, xi)))


def central_cocycle(xi, eta, c: float, group: MatrixGroup = SU2) -> float:
    """``c int <xi, eta'> dtheta`` (eta' spectral)."""
    return _check_level(c) * pairing(xi, _derivative(np.asarray(eta, dtype=float)), group)


def extension_adjoint(g: Loop, eta, b: float):
    """``Ad_g(eta, b) = (g eta g^-1, b - int <g^-1 g', eta>)`` of the central extension."""
    group = g.group
    eta = _check_connection(eta, group, "eta")
    moved = group.coordinates(group.conj(g.values, group.element(eta)))
    return moved, float(b) - pairing(g.left_maurer_cartan(), eta, group)


# ==================================================== a user's gauge action
#: Composition and holonomy covariance of a finite action: round-off of the
#: exponentials and of the holonomy (1e-13 measured) with a margin of 1000.
GAUGE_ACTION_TOL = 1e-10
#: The infinitesimal pairing identity with delta taken from the finite action
#: by a fourth-order central difference at step 1e-3: truncation ~1e-12,
#: round-off ~1e-13; 1e-8 leaves a margin of 1e4 and is far below a wrong
#: sign (relative residual ~1).
PAIRING_TOL = 1e-8


def _random_loop(group, rng, M, modes=2, scale=0.4):
    return Loop.exponential(
        group,
        {n: (scale * rng.standard_normal(group.dim) / (1 + n), scale * rng.standard_normal(group.dim) / (1 + n)) for n in range(modes + 1)},
        M,
    )


def _random_connection(group, rng, M, modes=3, scale=0.8):
    th = grid(M)
    A = np.zeros((M, group.dim))
    for n in range(modes + 1):
        A += np.cos(n * th)[:, None] * rng.standard_normal(group.dim) * scale / (1 + n)
        A += np.sin(n * th)[:, None] * rng.standard_normal(group.dim) * scale / (1 + n)
    return A


def _rel(defect, *terms):
    return float(np.max(np.abs(defect)) / max(max(float(np.max(np.abs(t))) for t in terms), 1e-300))


def check_gauge_action(action, c: float, group: MatrixGroup = SU2, *, M: int = 64, seed: int = 0) -> dict:
    """Check a user's finite gauge action ``action(g: Loop, A) -> A'`` at level c.

    Named checks (each ``{"residual", "tolerance", "passed"}``):

    * ``composition``: ``(g h) . A = g . (h . A)`` (a left action);
    * ``pairing_identity``: with ``delta_xi A = d/dt exp(t xi) . A`` (by
      differences), ``int <delta_xi A, eta> = -(int <A, [xi, eta]> + c int <xi, eta'>)``:
      fixes the sign and size of ``c g' g^-1`` against the level-c cocycle;
    * ``holonomy_covariance``: ``Hol(g . A) = g(0) Hol(A) g(0)^-1`` for the
      transport ``U' = (1/c) A U``.

    >>> out = check_gauge_action(lambda g, A: gauge_action(g, A, 1.0), 1.0)
    >>> all(v["passed"] for v in out.values())
    True
    """
    group = _check_group(group)
    c = _check_level(c)
    rng = np.random.default_rng(seed)
    A = _random_connection(group, rng, M)
    g, h = _random_loop(group, rng, M), _random_loop(group, rng, M)
    out = {}
    lhs = np.asarray(action(g @ h, A))
    rhs = np.asarray(action(g, np.asarray(action(h, A))))
    out["composition"] = (_rel(lhs - rhs, lhs, rhs), GAUGE_ACTION_TOL)
    # delta from the action along exp(t xi), xi a trigonometric polynomial
    th = grid(M)
    xi_c = rng.standard_normal((2, group.dim))
    xi = np.cos(th)[:, None] * xi_c[0] + np.sin(2 * th)[:, None] * xi_c[1]
    eta = _random_connection(group, rng, M, modes=2)
    step = 1e-3

    def moved(t):
        return np.asarray(action(Loop.exponential(group, {1: (t * xi_c[0], 0 * xi_c[0]), 2: (0 * xi_c[1], t * xi_c[1])}, M), A))

    delta = (8 * (moved(step) - moved(-step)) - (moved(2 * step) - moved(-2 * step))) / (12 * step)
    t1 = pairing(delta, eta, group)
    t2 = pairing(A, group.bracket(xi, eta), group)
    t3 = c * pairing(xi, _derivative(eta), group)
    out["pairing_identity"] = (abs(t1 + t2 + t3) / max(abs(t1) + abs(t2) + abs(t3), 1e-300), PAIRING_TOL)
    H = holonomy(A, c, group).matrix
    Hg = holonomy(np.asarray(action(g, A)), c, group).matrix
    target = group.conj(g.values[0], H)
    out["holonomy_covariance"] = (_rel(Hg - target, Hg, target), GAUGE_ACTION_TOL)
    return {k: {"residual": r, "tolerance": tol, "passed": bool(r <= tol)} for k, (r, tol) in out.items()}


# ================================================================= holonomy
# Sixth-order Magnus integrator on three Gauss-Legendre nodes per step
# (Blanes, Casas, Oteo, Ros, Phys. Rep. 470 (2009), the 6th-order scheme, from memory;
# the order is confirmed in tests against scipy's DOP853).
_GAUSS3 = (0.5 - math.sqrt(15) / 10, 0.5, 0.5 + math.sqrt(15) / 10)


def _comm(X, Y):
    return X @ Y - Y @ X


def _ordered_product(E: np.ndarray) -> np.ndarray:
    """``E[N-1] ... E[1] E[0]`` by pairwise (tree) multiplication."""
    n = E.shape[-1]
    while E.shape[0] > 1:
        if E.shape[0] % 2:
            E = np.concatenate([E, np.eye(n)[None]], axis=0)
        E = E[1::2] @ E[0::2]
    return E[0]


def _transport_steps(Am: np.ndarray, c: float, N: int, group: MatrixGroup) -> np.ndarray:
    h = 2 * np.pi / N
    B1, B2, B3 = (_shifted_samples(Am, N, h * t) / c for t in _GAUSS3)
    a1 = h * B2
    a2 = (math.sqrt(15) * h / 3) * (B3 - B1)
    a3 = (10 * h / 3) * (B3 - 2 * B2 + B1)
    c12 = _comm(a1, a2)
    Om = a1 + a3 / 12 + _comm(-20 * a1 - a3 + c12, a2 - _comm(a1, 2 * a3 + c12) / 60) / 240
    return group.exp(Om)


@dataclass(frozen=True)
class Holonomy:
    """Result of :func:`holonomy`: the matrix, its trace and an error estimate."""

    matrix: np.ndarray
    error: float
    steps: int

    @property
    def trace(self) -> complex:
        return complex(np.trace(self.matrix))


def holonomy(A, c: float, group: MatrixGroup = SU2, tol: float = HOLONOMY_TOL, max_steps: int = 2**20) -> Holonomy:
    """Parallel transport ``U' = (1/c) A U``, ``U(0) = I``, around the circle.

    ``A`` holds samples on a uniform grid; between them it is the
    trigonometric interpolant (exact for band-limited connections). The
    number of Magnus steps doubles until two successive holonomies agree to
    ``tol`` (the reported error is their difference over 63, the sixth-order
    Richardson estimate).

    >>> H = holonomy(constant_connection(1.0, 16), c=1.0)   # a/c = 1: central
    >>> bool(np.allclose(H.matrix, -np.eye(2), atol=1e-12))
    True
    """
    group = _check_group(group)
    A = _check_connection(A, group)
    c = _check_level(c)
    Am = group.element(A)
    N = max(64, 1 << int(math.ceil(math.log2(2 * A.shape[0]))))
    prev = _ordered_product(_transport_steps(Am, c, N, group))
    while True:
        N *= 2
        cur = _ordered_product(_transport_steps(Am, c, N, group))
        diff = float(np.max(np.abs(cur - prev)))
        if diff <= tol or N >= max_steps:
            break
        prev = cur
    if diff > tol:
        warnings.warn(
            f"holonomy did not reach tol={tol:.0e} within {N} steps (last change {diff:.1e}); "
            "the connection may be under-resolved by its grid",
            stacklevel=2,
        )
    return Holonomy(cur, diff / 63, N)


def su2_class(H) -> dict:
    """Conjugacy class of ``H`` in SU(2): trace, rotation angle, constant representative.

    ``H`` is conjugate to ``exp(phi e_3)`` with ``phi`` in ``[0, 2 pi]`` (the angle
    of the rotation ``Ad_H`` of R^3); the constant connection ``a e_3`` with
    ``a / c = phi / 2 pi`` in ``[0, 1]`` has this holonomy. ``phi`` is computed
    with ``atan2`` (well conditioned at ``H = +-I``, unlike ``arccos`` of the trace).
    """
    H = np.asarray(H)
    alpha, beta = H[0, 0], H[1, 0]
    half = math.atan2(math.hypot(alpha.imag, abs(beta)), alpha.real)
    return {"trace": float(2 * alpha.real), "rotation_angle": 2 * half, "a_over_c": half / np.pi}


# =============================================================== stabilizers
def _fourier_basis(M: int, K: int) -> tuple[np.ndarray, np.ndarray]:
    th = grid(M)
    cols = [np.ones(M)]
    dcols = [np.zeros(M)]
    for n in range(1, K + 1):
        cols += [np.cos(n * th), np.sin(n * th)]
        dcols += [-n * np.sin(n * th), n * np.cos(n * th)]
    return np.stack(cols, 1), np.stack(dcols, 1)


def stabilizer_dimension_fourier(A, c: float, group: MatrixGroup = SU2, modes: int | None = None) -> dict:
    """Dimension of ``{xi : [xi, A] + c xi' = 0}`` by Fourier analysis.

    ``xi`` ranges over trigonometric polynomials with ``|n| <= modes`` (default
    ``min(M // 2, 40)``); the map is evaluated on a grid fine enough that the
    products are not aliased, and the kernel is counted from singular values
    below ``STABILIZER_RTOL`` times the largest.
    """
    group = _check_group(group)
    A = _check_connection(A, group)
    c = _check_level(c)
    M = A.shape[0]
    K = min(M // 2, 40) if modes is None else int(modes)
    if K < 0:
        raise UsageError(f"modes must be >= 0; got {modes}")
    L = 2 * (M // 2 + K) + 1
    Af = _shifted_samples(A, L, 0.0)
    F, dF = _fourier_basis(L, K)
    d = group.dim
    E = np.eye(d)
    # column (j, a): xi = F_j e_a; delta = [e_a, A] F_j + c F_j' e_a
    brackets = np.stack([group.bracket(np.broadcast_to(E[a], Af.shape), Af) for a in range(d)])  # (d, L, d)
    cols = brackets[None] * F.T[:, None, :, None] + c * dF.T[:, None, :, None] * E[None, :, None, :]
    Lmat = cols.reshape(F.shape[1] * d, L * d).T * np.sqrt(np.repeat(group.norms[None], L, 0).ravel())[:, None]
    s = np.linalg.svd(Lmat, compute_uv=False)
    rel = s / s[0]
    dim = int(np.sum(rel < STABILIZER_RTOL))
    return {"dimension": dim, "smallest": rel[::-1][: dim + 2].tolist(), "modes": K}


def stabilizer_dimension_transport(A, c: float, group: MatrixGroup = SU2, hol: Holonomy | None = None) -> dict:
    """Dimension of the stabilizer from the holonomy: the centralizer of ``Hol(A)``.

    Solutions of ``c xi' = [A, xi]`` are ``xi = U xi_0 U^-1`` with ``U`` the
    parallel transport; they are periodic exactly when ``Hol xi_0 Hol^-1 = xi_0``.
    """
    group = _check_group(group)
    H = (hol or holonomy(A, c, group)).matrix
    conj = group.coordinates(group.conj(H, group.basis))  # row a: Ad_H e_a
    D = conj.T - np.eye(group.dim)
    s = np.linalg.svd(D, compute_uv=False) / 2.0  # |Ad_H - 1| <= 2
    dim = int(np.sum(s < STABILIZER_RTOL))
    return {"dimension": dim, "smallest": np.sort(s)[: dim + 2].tolist()}


# ========================================================== orbit chart (jax)
# su(2) in coordinates: [x.e, y.e] = (x cross y).e, <x.e, y.e> = x.y / 2,
# Ad_{exp(x.e)} = rotation by |x| about x. The chart's functions are written
# with these real 3-vectors (no complex matrices), which keeps third
# derivatives (closedness of the form) cheap to compile.
_SERIES_TERMS = 10


def _series(s, offset):
    """``sum_k (-s)^k / (2k + offset)!`` by Horner (jax)."""
    coeffs = [(-1) ** k / math.factorial(2 * k + offset) for k in range(_SERIES_TERMS)]
    out = coeffs[-1]
    for co in coeffs[-2::-1]:
        out = out * s + co
    return out


def _coefficients(s):
    """``f1 = (1 - cos r)/r^2`` and ``f2 = (r - sin r)/r^3`` of ``s = r^2`` (jax, elementwise).

    Closed forms for ``s >= 1``, Taylor series below, so every derivative is
    exact at ``s = 0``: the first omitted term is ``1/22! < 1e-21`` at ``s = 1``,
    and above 1 the closed forms lose no digits to cancellation.
    """
    small = s < 1.0
    t = jnp.where(small, 1.0, s)  # double-where: no NaN gradients from sqrt(0)
    r = jnp.sqrt(t)
    f1 = jnp.where(small, _series(s, 2), (1 - jnp.cos(r)) / t)
    f2 = jnp.where(small, _series(s, 3), (r - jnp.sin(r)) / (t * r))
    return f1, f2


def su2_Ad(x, y):
    """``Ad_{exp(x.e)} y`` on coordinates (last axis): rotation by ``|x|`` about ``x`` (jax).

    ``y + f0 x*y + f1 x*(x*y)`` with ``f0 = sin r / r = 1 - r^2 f2``.
    """
    s = jnp.sum(x * x, axis=-1, keepdims=True)
    f1, f2 = _coefficients(s)
    xy = jnp.cross(x, y)
    return y + (1 - s * f2) * xy + f1 * jnp.cross(x, xy)


def su2_dexp(x, y):
    """Right-trivialised derivative of exp: ``(d exp_X[Y]) exp(-X)`` in coordinates (jax).

    ``(e^ad - 1)/ad = 1 + f1 ad + f2 ad^2``; exact at ``x = 0`` with all derivatives.
    """
    s = jnp.sum(x * x, axis=-1, keepdims=True)
    f1, f2 = _coefficients(s)
    xy = jnp.cross(x, y)
    return y + f1 * xy + f2 * jnp.cross(x, xy)


@dataclass(frozen=True)
class ChartFormulas:
    """The formulas an orbit chart is built from (the standard ones by default).

    Each field can be switched to a common mistake so that its effect on the
    checks can be seen (the negative controls of ``tests/test_affine.py``):

    * ``trivialization``: ``"right"`` uses ``xi_i = (d_i g) g^-1`` (correct:
      ``d_i A = delta_{xi_i} A``); ``"left"`` uses ``g^-1 d_i g``.
    * ``action_sign``: ``+1`` for ``g A0 g^-1 + c g' g^-1``; ``-1`` flips the
      sign of ``c g' g^-1`` (the level ``-c`` orbit).
    * ``cocycle_factor``: coefficient of ``c int <xi_i, xi_j'>`` in the form.
    * ``form_sign``: overall sign of the form.
    """

    trivialization: str = "right"
    action_sign: int = 1
    cocycle_factor: float = 1.0
    form_sign: int = 1

    def __post_init__(self):
        if self.trivialization not in ("right", "left"):
            raise UsageError(f"trivialization must be 'right' or 'left'; got {self.trivialization!r}")
        if self.action_sign not in (1, -1) or self.form_sign not in (1, -1):
            raise UsageError("action_sign and form_sign must be +1 or -1")


STANDARD = ChartFormulas()

def chart_labels(modes) -> list[tuple[int, int, str]]:
    """``(mode, component a, "cos"/"sin"/"const")`` of each chart coordinate, in order.

    >>> chart_labels([0, 1])[:4]
    [(0, 0, 'const'), (0, 1, 'const'), (1, 0, 'cos'), (1, 0, 'sin')]
    """
    out = []
    for n in modes:
        if n == 0:
            out += [(0, 0, "const"), (0, 1, "const")]
        else:
            out += [(n, a, kind) for a in range(3) for kind in ("cos", "sin")]
    return out


def _normalise_modes(modes) -> tuple[int, ...]:
    if isinstance(modes, (int, np.integer)) and not isinstance(modes, bool):
        if modes < 0:
            raise UsageError(f"modes must be >= 0 (an int K means the modes 0..K); got {modes}")
        return tuple(range(int(modes) + 1))
    try:
        ms = sorted({int(m) for m in modes})
    except (TypeError, ValueError):
        raise UsageError(f"modes must be an int K (modes 0..K) or a list of non-negative ints; got {modes!r}") from None
    if not ms or ms[0] < 0:
        raise UsageError(f"modes must be non-empty and non-negative; got {list(modes)}")
    return tuple(ms)


def _design(modes, M):
    """``P[i, m, :]`` = coordinates of basis loop i at theta_m, and its theta-derivative."""
    labels = chart_labels(modes)
    th = grid(M)
    P = np.zeros((len(labels), M, 3))
    dP = np.zeros_like(P)
    for i, (n, a, kind) in enumerate(labels):
        if kind == "const":
            P[i, :, a] = 1.0
        elif kind == "cos":
            P[i, :, a], dP[i, :, a] = np.cos(n * th), -n * np.sin(n * th)
        else:
            P[i, :, a], dP[i, :, a] = np.sin(n * th), n * np.cos(n * th)
    return labels, P, dP


def _symmetry_fields(labels):
    """Linear vector fields of the torus e_3 and of the rotation on chart coordinates."""
    d = len(labels)
    index = {lab: i for i, lab in enumerate(labels)}
    V3 = np.zeros((d, d))
    Vr = np.zeros((d, d))
    for i, (n, a, kind) in enumerate(labels):
        # [e3, x.e] = (-x2, x1, 0): the e1 slot receives -x2, the e2 slot receives x1
        if a == 0:
            V3[i, index[(n, 1, kind)]] = -1.0
        elif a == 1:
            V3[i, index[(n, 0, kind)]] = 1.0
        # theta -> theta + t: d/dt (x_c cos + x_s sin)(theta + t) = n x_s cos - n x_c sin
        if kind == "cos":
            Vr[i, index[(n, a, "sin")]] = n
        elif kind == "sin":
            Vr[i, index[(n, a, "cos")]] = -n
    return V3, Vr


def degenerate_modes(a: float, c: float, modes) -> list[int]:
    """Modes n of the chart with ``|a/c| = n``: the form is degenerate there at the base point."""
    q = abs(a / c)
    n = round(q)
    return [n] if abs(q - n) <= 1e-12 * max(1.0, q) and n in _normalise_modes(modes) else []


def kks_form_at_base(a: float, c: float, modes) -> np.ndarray:
    """The closed block formula of the form at ``A0 = a e_3`` in chart coordinates.

    Per mode n >= 1 on (e1 cos, e1 sin, e2 cos, e2 sin): ``(pi/2)[c n I(x)J + a J(x)I]``;
    e_3 sector ``omega(e3 cos, e3 sin) = pi c n / 2``; constants ``omega(e1, e2) = pi a``.
    """
    labels = chart_labels(_normalise_modes(modes))
    index = {lab: i for i, lab in enumerate(labels)}
    W = np.zeros((len(labels), len(labels)))

    def put(i, j, v):
        W[i, j], W[j, i] = v, -v

    for n in sorted({lab[0] for lab in labels}):
        if n == 0:
            put(index[(0, 0, "const")], index[(0, 1, "const")], np.pi * a)
            continue
        for comp in range(3):
            put(index[(n, comp, "cos")], index[(n, comp, "sin")], np.pi * c * n / 2)
        for kind in ("cos", "sin"):
            put(index[(n, 0, kind)], index[(n, 1, kind)], np.pi * a / 2)
    return W


def _formula_params(formulas: ChartFormulas):
    return jnp.array([formulas.action_sign, formulas.cocycle_factor, formulas.form_sign], dtype=jnp.float64)


def _orbit_functions(a, c, modes, M, formulas: ChartFormulas):
    """Jax functions of the chart; ``weights`` (M,) are the quadrature weights.

    Only ``formulas.trivialization`` is fixed here; the signs and the cocycle
    factor are a runtime argument ``params`` of ``form`` and ``moment``.

    Passing the weights as an argument lets a resolution study reuse one
    compiled function for every sub-grid of a fine grid (weights 0 off it).
    """
    labels, P_np, dP_np = _design(modes, M)
    P, dP = jnp.asarray(P_np), jnp.asarray(dP_np)
    n2 = np.array([lab[0] ** 2 for lab in labels], dtype=float)
    ddP = -jnp.asarray(n2)[:, None, None] * P  # P'' for trig basis loops (constants: 0)
    a0 = jnp.array([0.0, 0.0, a])
    left = formulas.trivialization == "left"

    def frame(X, Y):
        """``(dexp_X Y, Ad_X a0)``, or ``Ad_X^-1 dexp_X Y`` for the left trivialisation."""
        s = jnp.sum(X * X, axis=-1, keepdims=True)
        f1, f2 = _coefficients(s)
        XY = jnp.cross(X, Y)
        D = Y + f1 * XY + f2 * jnp.cross(X, XY)
        Xa = jnp.cross(X, a0)
        R = a0 + (1 - s * f2) * Xa + f1 * jnp.cross(X, Xa)
        if left:
            XD = jnp.cross(X, D)
            D = D - (1 - s * f2) * XD + f1 * jnp.cross(X, XD)
        return D, R

    def fields(x, lvl):
        """Point ``A(x)`` (M, 3), ``xi_i`` (dim, M, 3) and their exact theta-derivatives."""
        X = jnp.einsum("i,imk->mk", x, P)
        dX = jnp.einsum("i,imk->mk", x, dP)
        ddX = jnp.einsum("i,imk->mk", x, ddP)
        Y = jnp.concatenate([P, dX[None]], axis=0)
        dY = jnp.concatenate([dP, ddX[None]], axis=0)
        (D, R), (dD, _) = jax.jvp(frame, (X, Y), (dX, dY))
        # the point is g A0 g^-1 + c g' g^-1 whatever the trivialisation used for xi
        g_right = frame_right(X, dX) if left else D[-1]
        return R + lvl * g_right, D[:-1], dD[:-1]

    def frame_right(X, dX):
        s = jnp.sum(X * X, axis=-1, keepdims=True)
        f1, f2 = _coefficients(s)
        XY = jnp.cross(X, dX)
        return dX + f1 * XY + f2 * jnp.cross(X, XY)

    def form(x, weights, params):
        """``params = (action_sign, cocycle_factor, form_sign)`` (runtime values: one compilation for all)."""
        A, xi, dxi = fields(x, params[0] * c)
        wxi = xi * (0.5 * weights)[None, :, None]  # <u, v> = u.v / 2, trapezoid weights
        # <A, [xi_i, xi_j]> = (1/2) A.(xi_i x xi_j) = (1/2) (A x xi_i).xi_j
        W = jnp.einsum("imk,jmk->ij", jnp.cross(A[None], wxi), xi) + params[1] * c * jnp.einsum("imk,jmk->ij", wxi, dxi)
        return params[2] * W

    def connection(x, params):
        lvl = params[0] * c
        X = jnp.einsum("i,imk->mk", x, P)
        dX = jnp.einsum("i,imk->mk", x, dP)
        return frame(X, X[None])[1] + lvl * frame_right(X, dX)

    def moment(x, weights, params):
        A = connection(x, params)
        h3 = 0.5 * jnp.sum(weights * A[:, 2])  # int <A, e3>
        hrot = 0.25 * jnp.sum(weights[:, None] * A * A) / c  # (1/2c) int <A, A>
        return jnp.array([h3, hrot])

    return labels, connection, form, moment


def orbit_model(a: float, c: float, modes, grid=None, *, radius: float = 0.5, formulas: ChartFormulas = STANDARD, name=None):
    """A truncated chart of the coadjoint orbit of ``A0 = a e_3`` at level ``c``.

    Chart ``x -> g_x = exp(X_x)``, ``X_x = sum_i x_i b_i`` over the real Fourier
    modes in ``modes`` (an int K means 0..K; mode 0 carries e1, e2 only, since
    e_3 stabilises ``A0``); point ``A(x) = g_x . A0``. The form is the pulled-back
    Kirillov–Kostant–Souriau form, exactly (the only error is the quadrature on
    ``grid`` points, default ``max(32, 16 (max mode + 1))``):

        omega_ij(x) = int <A, [xi_i, xi_j]> + c int <xi_i, xi_j'>,   xi_i = (d_i g) g^-1.

    Acting algebra (abelian): ``torus_e3`` (constant loops ``exp(t e_3)``,
    moment ``int <A, e_3>``) and ``rotation`` (``A(theta) -> A(theta + t)``,
    moment ``(1/2c) int <A, A>``). Convention ``sign=+1, flow=+1``:
    ``iota_{X_xi} omega = d<mu, xi>``. Sampled points: normal with norm about
    ``radius``.

    Warns (``UserWarning``) when ``a/c`` is an integer n among the modes: the
    form is degenerate there (drop mode n).

    >>> import hamcheck
    >>> m = orbit_model(0.3, 1.0, 1, grid=32)
    >>> m.dim, hamcheck.check(m, points=4).passed
    (8, True)
    """
    from .algebra import LieAlgebra
    from .model import Convention, Model

    try:
        a = float(a)
    except (TypeError, ValueError):
        raise UsageError(f"a must be a real number (A0 = a e_3); got {a!r}") from None
    c = _check_level(c)
    modes = _normalise_modes(modes)
    M = max(32, 16 * (max(modes) + 1)) if grid is None else grid
    if isinstance(M, bool) or not isinstance(M, (int, np.integer)) or M < 4:
        raise UsageError(f"grid must be an integer number of quadrature points >= 4; got {grid!r}")
    if M <= 2 * max(modes):
        raise UsageError(f"grid={M} cannot resolve mode {max(modes)}; use at least {16 * (max(modes) + 1)} points")
    for n in degenerate_modes(a, c, modes):
        warnings.warn(
            f"a/c = {a / c:g} is an integer: the orbit form is degenerate in mode n={n} of the chart "
            f"(the loops e1, e2 times {'constants' if n == 0 else f'cos {n}theta, sin {n}theta'} stabilise A0); "
            f"drop mode {n} from modes",
            UserWarning,
            stacklevel=2,
        )
    labels, _conn, form_w, moment_w = _orbit_functions(a, c, modes, int(M), formulas)
    weights = jnp.full(int(M), 2 * np.pi / int(M))
    # jit once here: the declaration-time validation then runs one compiled
    # program instead of dispatching (and compiling) hundreds of ops eagerly
    params = _formula_params(formulas)
    form = jax.jit(lambda x: form_w(x, weights, params))
    moment = jax.jit(lambda x: moment_w(x, weights, params))
    V3, Vr = _symmetry_fields(labels)
    V = jnp.asarray(np.stack([V3, Vr]))
    algebra = LieAlgebra.from_structure_constants(np.zeros((2, 2, 2)), names=["torus_e3", "rotation"])
    dim = len(labels)
    scale = float(radius) / math.sqrt(dim)
    model = Model(
        name or f"loop_orbit_a{a:g}_c{c:g}_K{max(modes)}",
        dim,
        form=form,
        algebra=algebra,
        moment=moment,
        vector_fields=lambda x: V @ x,
        sample=lambda rng: scale * rng.standard_normal(dim),
        convention=Convention(sign=1, flow=1),
        chart_labels=labels,
        construction=LoopOrbitChart(a=float(a), c=float(c), modes=tuple(modes), grid=int(M),
                                    connection=lambda x: _conn(jnp.asarray(x), params)),
    )
    return model


@dataclass(frozen=True)
class LoopOrbitChart:
    """What :func:`orbit_model` built: the orbit of ``a e_3`` at level ``c``, its modes and grid.

    ``connection(x)`` is the connection (``(grid, 3)`` samples in the basis ``e_k``) at the chart point ``x``.
    """

    a: float
    c: float
    modes: tuple
    grid: int
    connection: object = field(repr=False, compare=False)


# ====================================================== resolution studies
class _Shim:
    """Just enough of a Model for the kernels of :mod:`hamcheck.checks` (traced, autodiff)."""

    traced = True

    def __init__(self, form, moment, fields, convention):
        from .differentiation import AUTODIFF

        self.form_at, self.moment_at, self.fields_at = form, moment, fields
        self.convention = convention
        self.ops = AUTODIFF


@dataclass(frozen=True)
class OrbitResolution:
    """Residuals of an orbit chart's checks against the quadrature grid, with a verdict.

    ``studies`` maps a check name to a :class:`hamcheck.circle.ResolutionStudy`.
    ``verified`` is True only when the moment checks ran and every check is
    below its tolerance on the finest grid: closedness alone is weak for these
    charts (a wrong cocycle coefficient or a consistent sign flip is still
    closed), so a form is never called verified from closedness alone.
    """

    grids: tuple
    studies: dict
    verified: bool
    verdict: str

    def table(self) -> str:
        names = list(self.studies)
        lines = [f"{'grid M':>8}  " + "  ".join(f"{n:>13}" for n in names)]
        for k, M in enumerate(self.grids):
            lines.append(f"{M:>8}  " + "  ".join(f"{self.studies[n].residuals[k]:13.2e}" for n in names))
        for n, s in self.studies.items():
            lines.append(f"{n}: {s.verdict}: {s.message}")
        lines.append(f"verdict: {self.verdict}")
        return "\n".join(lines)

    __str__ = table

    def plot(self, path) -> str:
        """One PNG with every check's residual against M (semilog; needs matplotlib)."""
        try:
            import matplotlib

            matplotlib.use("Agg")
            import matplotlib.pyplot as plt
        except ImportError:
            raise UsageError("plotting needs matplotlib: pip install 'hamcheck[plots]'") from None
        fig, ax = plt.subplots(figsize=(5.5, 3.8))
        for n, s in self.studies.items():
            ax.semilogy(self.grids, np.maximum(s.residuals, 1e-17), "o-", label=n)
        ax.axhline(circle.ROUND_OFF_FLOOR, color="gray", ls=":", label="round-off floor")
        ax.set_xlabel("quadrature grid M")
        ax.set_ylabel("worst relative residual")
        ax.set_title("loop-group orbit chart: " + ("verified" if self.verified else "not verified"), fontsize=10)
        ax.legend(fontsize=8)
        fig.tight_layout()
        fig.savefig(path, dpi=100)
        plt.close(fig)
        return str(path)


@memoized(maxsize=8)
def _study_kernel(a, c, modes, fine, trivialization, checks):
    """One compiled residual function per chart shape, reused across grids and formula variants."""
    from . import checks as _checks
    from .model import Convention

    labels, _conn, form_w, moment_w = _orbit_functions(a, c, modes, fine, ChartFormulas(trivialization=trivialization))
    V = jnp.asarray(np.stack(_symmetry_fields(labels)))
    conv = Convention(sign=1, flow=1)
    kernels = {"antisymmetric": _checks.antisymmetric, "closed": _checks.closed_full, "moment_map": _checks.moment_map}

    @jax.jit
    def residuals(xs, weights, params):
        shim = _Shim(lambda y: form_w(y, weights, params), lambda y: moment_w(y, weights, params), lambda y: V @ y, conv)
        one = lambda x: jnp.stack([kernels[n](shim, x, {})["residual"] for n in checks])  # noqa: E731
        return jnp.max(jax.vmap(one)(xs), axis=0)

    return labels, residuals


def orbit_resolution_study(
    a: float,
    c: float,
    modes,
    grids=(8, 16, 24, 32, 48),
    *,
    checks=("antisymmetric", "closed", "moment_map"),
    points: int = 4,
    seed: int = 0,
    radius: float = 0.9,
    formulas: ChartFormulas = STANDARD,
) -> OrbitResolution:
    """Residuals of the orbit chart's checks as the quadrature grid M grows.

    All grids must divide one common fine grid (their least common multiple,
    at most 4096): the chart is built once on it and a grid of M points is the
    trapezoid rule with weights on every (fine/M)-th point, so one compiled
    function serves every M. The residuals are those of
    :mod:`hamcheck.checks` (worst over ``points`` sampled points of norm about
    ``radius``); each column gets a fitted decay from :mod:`hamcheck.circle`.

    >>> s = orbit_resolution_study(0.3, 1.0, 1, grids=(8, 16, 32), points=2)   # doctest: +SKIP
    >>> s.verified                                                          # doctest: +SKIP
    True
    """
    known = ("antisymmetric", "closed", "moment_map")
    checks = tuple(checks)
    bad = [n for n in checks if n not in known]
    if bad or not checks:
        raise UsageError(f"checks must be a non-empty subset of {known}; got {list(checks)}")
    grids = tuple(int(g) for g in grids)
    modes = _normalise_modes(modes)
    c = _check_level(c)
    if len(grids) < 2 or any(g <= 2 * max(modes) for g in grids):
        raise UsageError(f"give at least two grids, each > 2 x the highest mode {max(modes)}; got {list(grids)}")
    fine = math.lcm(*grids)
    if fine > 4096:
        raise UsageError(f"the grids {list(grids)} need a common fine grid of {fine} > 4096 points; choose grids with a small lcm")
    labels, residuals = _study_kernel(float(a), c, modes, fine, formulas.trivialization, checks)
    params = _formula_params(formulas)
    rng = np.random.default_rng(seed)
    dim = len(labels)
    xs = jnp.asarray(radius / math.sqrt(dim) * rng.standard_normal((points, dim)))
    table = {}
    for M in grids:
        wts = np.zeros(fine)
        wts[:: fine // M] = 2 * np.pi / M
        table[M] = np.asarray(residuals(xs, jnp.asarray(wts), params))
    return summarize_resolution(grids, {n: [float(table[M][k]) for M in grids] for k, n in enumerate(checks)})


def summarize_resolution(grids, residuals: dict) -> OrbitResolution:
    """Fitted decays and the verdict for a table ``{check name: residual per grid}``.

    The form is called verified only when ``moment_map`` is among the checks
    and every check is within its tolerance on the finest grid.
    """
    from .numerics import TOLERANCES

    grids = tuple(int(g) for g in grids)
    checks = tuple(residuals)
    studies = {
        n: circle.resolution_study(lambda M, n=n: residuals[n][grids.index(M)], grids, label="grid M") for n in checks
    }
    finest = {n: residuals[n][-1] for n in checks}
    ok = {n: finest[n] <= TOLERANCES.for_check(n) for n in checks}
    if "moment_map" not in checks:
        verified = False
        state = "holds" if all(ok.values()) else "fails"
        verdict = (
            f"{', '.join(checks)} {state} on the finest grid M={grids[-1]}, but the form is NOT verified: the "
            "moment checks were not run, and closedness alone does not pin the form (a wrong cocycle coefficient "
            "or a consistent sign flip is closed too)"
        )
    elif all(ok.values()):
        verified = True
        verdict = f"verified at M={grids[-1]}: {', '.join(checks)} hold to round-off"
    else:
        verified = False
        failing = [n for n in checks if not ok[n]]
        stalls = [n for n in failing if studies[n].verdict == "stalls"]
        why = (
            f"{', '.join(stalls)} do(es) not fall with M: a wrong formula, not the quadrature"
            if stalls
            else "residuals still falling: refine the grid"
        )
        verdict = f"not verified: {', '.join(failing)} above tolerance at M={grids[-1]} ({why})"
        if ok.get("closed") and not ok.get("moment_map", True):
            verdict += "; closed but the moment equation fails, so the form is closed and wrong"
    return OrbitResolution(grids, studies, verified, verdict)


# ================================================= the user's own action
def _loop_basis(K: int, M: int):
    th = grid(M)
    funcs = [np.ones(M)]
    derivs = [np.zeros(M)]
    modes = [0]
    for n in range(1, K + 1):
        funcs += [np.cos(n * th), np.sin(n * th)]
        derivs += [-n * np.sin(n * th), n * np.cos(n * th)]
        modes += [n, n]
    return np.stack(funcs, 1), np.stack(derivs, 1), np.array(modes)


@dataclass(frozen=True, eq=False)
class TruncatedLoopAlgebra:
    """The loop algebra on real modes ``|n| <= K`` with the standard level-c action.

    Coefficient vectors have length ``d * (2K + 1)``: for each basis element
    ``e_a`` of the group, the constant, then ``cos n theta, sin n theta`` for
    n = 1..K. Products are computed on ``4K + 2`` points and projected back to
    modes ``<= K``. ``reference`` is the standard cocycle ``c int <xi, eta'>``:
    by affine.md's pairing identity ``-<delta_xi A, eta> - <A, [xi, eta]>``
    equals it, so the standard action has ratio 1.
    """

    K: int
    c: float
    group: MatrixGroup = SU2

    @property
    def _grid(self):
        F, dF, modes = _loop_basis(self.K, 4 * self.K + 2)
        return F, dF, modes

    @property
    def modes(self) -> np.ndarray:
        return np.tile(self._grid[2], self.group.dim)

    def values(self, v):
        F = self._grid[0]
        return F @ np.asarray(v, dtype=float).reshape(self.group.dim, -1).T

    def derivative_values(self, v):
        dF = self._grid[1]
        return dF @ np.asarray(v, dtype=float).reshape(self.group.dim, -1).T

    def coefficients(self, f):
        F = self._grid[0]
        M = F.shape[0]
        norms = np.full(F.shape[1], M / 2.0)
        norms[0] = M
        return ((F.T @ np.asarray(f)) / norms[:, None]).T.ravel()

    def bracket(self, X, Y):
        return self.coefficients(self.group.bracket(self.values(X), self.values(Y)))

    def pairing(self, T, X):
        return pairing(self.values(T), self.values(X), self.group)

    def action(self, X, T):
        """``delta_X T = [X, T] + c X'`` projected to modes <= K."""
        return self.coefficients(self.group.bracket(self.values(X), self.values(T)) + self.c * self.derivative_values(X))

    def reference(self, X, Y):
        return self.c * pairing(self.values(X), self.derivative_values(Y), self.group)


def truncated_algebra(K: int, c: float, group: MatrixGroup = SU2) -> TruncatedLoopAlgebra:
    """The standard truncated loop algebra (a template and the reference for user actions)."""
    if isinstance(K, bool) or not isinstance(K, (int, np.integer)) or K < 3:
        raise UsageError(f"K must be an integer >= 3 (the de-aliased bands need it); got {K!r}")
    return TruncatedLoopAlgebra(int(K), _check_level(c), _check_group(group))


def check_user_action(bracket, pairing_fn, action, K: int, c: float, *, group: MatrixGroup = SU2, samples: int = 4, seed: int = 0):
    """Check a user's infinitesimal action on connections, on the modes of :func:`truncated_algebra`.

    Uses the shared :func:`hamcheck.cocycles.check_coadjoint_action` with the
    left-action sign (``[V_xi, V_eta] = -V_[xi, eta]``, central term
    ``-<delta_xi A, eta> - <A, [xi, eta]>``) and the reference ``c int <xi, eta'>``
    (affine.md's cocycle), so a level
    off by ``2 pi`` or ``1/2`` is reported as a ``central-cocycle`` finding with
    that ratio.

    >>> alg = truncated_algebra(4, c=1.5)
    >>> rep = check_user_action(alg.bracket, alg.pairing, alg.action, 4, 1.5)
    >>> rep.passed, round(rep.ratio, 8)
    (True, 1.0)
    """
    from .cocycles import check_coadjoint_action

    alg = truncated_algebra(K, c, group)
    return check_coadjoint_action(
        bracket,
        pairing_fn,
        action,
        alg.modes,
        reference=alg.reference,
        reference_name=f"the level-{alg.c:g} loop cocycle c int <xi, eta'>",
        sign=-1,
        samples=samples,
        seed=seed,
    )


# ============================================================ classification
def classify(A, c: float, group: MatrixGroup = SU2, *, modes: int | None = None) -> dict:
    """Holonomy, conjugacy class, stabilizer (two ways) and constant representative of ``A``.

    ``A`` has shape (M, d): samples on a uniform grid. For SU(2) the class is
    ``central +I``, ``central -I`` or ``regular`` with the rotation angle and
    the constant representative ``a e_3`` (``a/c`` in ``[0, 1]``).

    >>> d = classify(constant_connection(0.5, 32), c=0.5)     # a/c = 1: Hol = -I
    >>> d["class"], d["stabilizer_dim"], round(d["a"], 12)
    ('central -I', 3, 0.5)
    """
    group = _check_group(group)
    A = _check_connection(A, group)
    c = _check_level(c)
    H = holonomy(A, c, group)
    st_t = stabilizer_dimension_transport(A, c, group, hol=H)
    st_f = stabilizer_dimension_fourier(A, c, group, modes=modes)
    out = {
        "group": group.name,
        "c": c,
        "samples": int(A.shape[0]),
        "holonomy": H.matrix,
        "holonomy_error": H.error,
        "steps": H.steps,
        "trace": H.trace,
        "stabilizer_dim": st_t["dimension"],
        "stabilizer_dim_fourier": st_f["dimension"],
        "stabilizer_singular_values": {"transport": st_t["smallest"], "fourier": st_f["smallest"]},
    }
    if group.kind == "su2":
        cl = su2_class(H.matrix)
        out.update(cl)
        out["a"] = c * cl["a_over_c"]
        q = cl["a_over_c"]
        out["class"] = "central +I" if st_t["dimension"] == 3 and q < 0.5 else (
            "central -I" if st_t["dimension"] == 3 else "regular"
        )
    else:
        ang = np.sort(np.angle(np.linalg.eigvals(H.matrix)))
        out["eigenvalue_angles"] = ang.tolist()
        out["class"] = "central" if st_t["dimension"] == group.dim else "non-central"
    out["agree"] = st_t["dimension"] == st_f["dimension"]
    return out


def classify_file(path, c=None, *, group: MatrixGroup = SU2, M: int = 512) -> dict:
    """Load a connection from .npy/.csv/.py (shared loader :func:`hamcheck.circle.load_periodic_samples`).

    The file holds ``A`` as samples on a uniform grid: shape (M, d) real
    coordinates in the basis ``e_k`` (three columns for SU(2)). A .py file
    defines ``A`` (array or function of theta) and optionally ``c``.
    """
    data = circle.load_periodic_samples(path, "A", params=("c",), M=M)
    vals = data.values
    if np.iscomplexobj(vals) or vals.ndim != 2 or vals.shape[1] != group.dim:
        raise UsageError(
            f"{path}: A must be real samples of shape (M, {group.dim}) (coordinates in the {group.name} basis "
            f"e_k = -i sigma_k / 2, one row per grid point); got shape {vals.shape}"
        )
    if c is None:
        c = data.params.get("c")
    if c is None:
        raise UsageError(f"no level for {path}: pass --c VALUE (or define c = ... in a .py file)")
    tail, warning = circle.resolution_warning(vals, "A")
    out = classify(vals, c, group)
    out.update({"file": data.source, "input": data.kind, "spectral_tail": tail})
    if warning:
        out["warning"] = warning
    return out


def format_classification(d: dict) -> str:
    """Plain-text rendering of :func:`classify` / :func:`classify_file`."""
    lines = []
    if "file" in d:
        lines.append(f"{d['file']}: {d['samples']} samples ({d['input']}), level c = {d['c']:g}, {d['group']}")
    H = np.asarray(d["holonomy"])
    rows = ", ".join("[" + ", ".join(f"{z.real:.10g}{z.imag:+.10g}i" for z in row) + "]" for row in H)
    lines += [
        f"  class               {d['class']}",
        f"  trace of holonomy   {d['trace'].real:.13g}   (error ~{d['holonomy_error']:.0e}, {d['steps']} steps)",
        f"  holonomy            [{rows}]",
    ]
    if "rotation_angle" in d:
        # 12 digits: the holonomy is good to ~1e-13, not to the last bit
        lines.append(f"  rotation angle      {d['rotation_angle']:.12g}  (Ad of the holonomy, in [0, 2pi])")
        lines.append(f"  constant on orbit   a e_3 with a = {d['a']:.12g}  (a/c = {d['a_over_c']:.12g})")
    else:
        lines.append(f"  eigenvalue angles   {', '.join(f'{t:.12g}' for t in d['eigenvalue_angles'])}")
    agree = "agree" if d["agree"] else "DISAGREE (near an integer a/c, or under-resolved)"
    lines.append(
        f"  stabilizer dim      {d['stabilizer_dim']} (transport), {d['stabilizer_dim_fourier']} (Fourier kernel): {agree}"
    )
    if "warning" in d:
        lines.append(f"  warning: {d['warning']}")
    return "\n".join(lines)


def _jsonable(d: dict) -> dict:
    out = {}
    for k, v in d.items():
        if isinstance(v, np.ndarray) and np.iscomplexobj(v):
            out[k] = {"real": v.real.tolist(), "imag": v.imag.tolist()}
        elif isinstance(v, complex):
            out[k] = {"real": v.real, "imag": v.imag}
        elif isinstance(v, np.ndarray):
            out[k] = v.tolist()
        else:
            out[k] = v
    return out


def add_holonomy_parser(sub) -> None:
    """``hamcheck holonomy FILE [--c C] [--group SU2|SO3|U1|SU3] [--json]``."""
    p = sub.add_parser("holonomy", help="holonomy, conjugacy class and stabilizer of a connection A dtheta in a file")
    p.add_argument("file", metavar="FILE", help=".npy/.csv (M rows x 3 columns for SU(2)) or .py defining A and c")
    p.add_argument("--c", type=float, default=None, help="the level c (else c from a .py file)")
    p.add_argument("--group", choices=("SU2", "SO3", "U1", "SU3"), default="SU2", help="structure group (default SU2)")
    p.add_argument("--json", action="store_true", help="print JSON instead of text")
    p.set_defaults(run=run_holonomy)


def run_holonomy(args) -> int:
    import json

    group = {"SU2": SU2, "SO3": SO3, "U1": U1, "SU3": SU(3)}[args.group]
    d = classify_file(args.file, args.c, group=group)
    print(json.dumps(_jsonable(d), indent=2) if args.json else format_classification(d))
    return 0
