"""Virasoro coadjoint orbits: Hill potentials, Schwarzian, monodromy, orbit charts, localization.

Conventions (those of ``shared/reference/virasoro.md``)
-------------------------------------------------------
* Circle ``R/2piZ``, coordinate ``theta``; coadjoint vectors ``(T, c)``, T a
  2pi-periodic function (a quadratic differential ``T dtheta^2``); Hill operator
  ``c d^2/dtheta^2 + T``. Pairing ``<(T, c), (X, a)> = int_0^{2pi} T X dtheta + c a``.
* Lifted diffeomorphisms ``F(theta + 2pi) = F(theta) + 2pi``, ``F' > 0``, act by
  the pullback ``Phi_F T = (T o F) F'^2 + (c/2) S(F)``, with the Schwarzian
  ``S(F) = F'''/F' - (3/2)(F''/F')^2``. Phi is a RIGHT action:
  ``Phi_G Phi_F = Phi_{F o G}``; the left coadjoint action is ``Phi_{F^-1}``.
* ``delta_X T = d/dt Phi_{theta + tX} T = X T' + 2 X' T + (c/2) X'''``.
* Bracket ``[X, Y] = X'Y - XY'`` (minus the usual vector-field bracket), for
  which ``X -> delta_X`` is a homomorphism.
* Gelfand–Fuchs cocycle ``GF(X, Y) = (1/2) int X' Y'' = (1/2) int X''' Y``;
  ``<delta_X T, Y> = <T, [X, Y]> + c GF(X, Y)``.

Converting from other normalisations
------------------------------------
* ``c/12`` convention (``Phi_F T = (T o F)F'^2 + (c/12) S(F)``, common in CFT):
  use ``c_here = c_there / 6``. ``c/24`` convention: ``c_here = c_there / 12``.
  A Hill equation written ``psi'' + u psi = 0`` is ``c = 1, T = u``; the
  Schrödinger form ``-psi'' + u psi = 0`` is ``c = 1, T = -u`` (only ``T/c``
  enters the monodromy and the class).
* The usual vector-field bracket ``[X d, Y d] = (XY' - X'Y) d`` is ``-[X, Y]``
  here; with it, ``delta`` is an anti-homomorphism (declare ``sign=-1`` in
  :func:`hamcheck.cocycles.check_coadjoint_action`).
* Complex modes ``X_m = e^{i m theta}``: ``[X_m, X_n] = i(m - n) X_{m+n}``,
  ``GF(X_m, X_n) = -i pi m^3 delta_{m+n,0}``.

Orbit chart and model convention
--------------------------------
:func:`orbit_model` uses the chart ``F_x = theta + sum_n a_n cos n theta + b_n
sin n theta`` (``x = (a_n1, b_n1, a_n2, b_n2, ...)``), the point
``T(x) = Phi_{F_x} T0`` and the exact pulled-back KKS form
``omega_ij = int d_i T (d_j F / F') dtheta``. Rotations ``r_t(theta) = theta + t``
act on the orbit by the left coadjoint action ``Ad*_{r_t} = Phi_{r_{-t}}``, in
the chart ``(a_n, b_n) -> R(n t)(a_n, b_n)``; the moment map is
``mu(x) = int T(x) dtheta``. With ``delta_1 T = -X_rotation`` the reference's
``iota_{delta_X T} omega = -dH_X`` becomes ``iota_{X_rot} omega = +d mu``:
declared as ``hamcheck.Convention(sign=+1, flow=+1)``.

Example
-------
>>> from hamcheck import virasoro
>>> inv = virasoro.classify(1.0, c=1.0)          # T0/c = 1 = n^2/4 with n = 2
>>> inv["class"], inv["stabilizer_dim"]
('+identity', 3)
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np

from . import circle
from ._jax import jax, jnp
from .algebra import LieAlgebra
from .errors import UsageError
from .model import Convention, Model

__all__ = [
    "Diffeo",
    "schwarzian",
    "transform",
    "delta",
    "bracket",
    "gelfand_fuchs",
    "truncated_algebra",
    "check_user_action",
    "Monodromy",
    "monodromy",
    "rotation_number",
    "stabilizer_fourier",
    "stabilizer_ode",
    "constant_representative",
    "classify",
    "classify_file",
    "format_classification",
    "potential_from_developing_map",
    "developing_map",
    "orbit_model",
    "kks_base_form",
    "base_form_residual",
    "base_form_check",
    "add_classify_parser",
    "chart_resolution_study",
    "rotation_weights",
    "zeta_one_loop",
    "counterterm_sum",
    "counterterm_limit",
    "MONODROMY_TOL",
    "CLASS_TOL",
    "STABILIZER_TOL",
]

TWO_PI = 2.0 * np.pi

#: Target estimated error of the monodromy matrix relative to its norm. The
#: sixth-order Magnus integrator is refined by doubling the step count until
#: the change / 63 falls below this; products of N 2x2 matrices carry
#: round-off ~ sqrt(N) 1e-16 ~ 1e-14, so 1e-12 is reachable with margin.
MONODROMY_TOL = 1e-12

#: |trace -+ 2| below this (relative to ||M||, plus 1e3 x the monodromy's
#: error estimate) counts as parabolic or +-identity: the class is decided
#: no finer than the monodromy is known. 1e-9 sits 1e3 above MONODROMY_TOL.
CLASS_TOL = 1e-9

#: Relative singular value below which a direction counts as stabilizing:
#: exact kernels sit at 1e-15 (constants) to 1e-11 (smooth potentials at the
#: default truncation); the nearest genuine directions are O(1e-3) or larger
#: unless T0 is within 1e-6 of a degenerate value.
STABILIZER_TOL = 1e-8


# ----------------------------------------------------------- diffeomorphisms
@dataclass(frozen=True)
class Diffeo:
    """A lifted diffeomorphism ``F(theta) = theta + u(theta)``, u a trigonometric polynomial.

    >>> import numpy as np
    >>> F = Diffeo.from_real_modes([1, 2], a=[0.1, 0.0], b=[0.0, 0.05])
    >>> bool(F.min_derivative() > 0)
    True
    """

    displacement: circle.Periodic

    @classmethod
    def from_real_modes(cls, modes, a, b, a0: float = 0.0) -> "Diffeo":
        return cls(circle.Periodic.from_real_modes(modes, a, b, a0))

    @classmethod
    def random(cls, rng, modes=(1, 2, 3), strength: float = 0.5) -> "Diffeo":
        """A random diffeomorphism with ``max |u'| <= strength < 1`` (so ``F' >= 1 - strength``)."""
        if not 0 < strength < 1:
            raise UsageError(f"strength must be in (0, 1) so that F' > 0; got {strength}")
        modes = np.asarray(modes, dtype=int)
        a, b = rng.standard_normal(modes.size), rng.standard_normal(modes.size)
        scale = strength * rng.uniform(0.5, 1.0) / np.sum(modes * (np.abs(a) + np.abs(b)))
        return cls.from_real_modes(modes, scale * a, scale * b, rng.uniform(-np.pi, np.pi))

    def __call__(self, theta, derivative: int = 0):
        u = self.displacement(theta, derivative)
        if derivative == 0:
            return theta + u
        if derivative == 1:
            return 1.0 + u
        return u

    def min_derivative(self, M: int = 1024) -> float:
        return float(np.min(self(circle.grid(M), 1)))


def _as_periodic(T, what="T") -> circle.Periodic:
    if isinstance(T, circle.Periodic):
        return T
    if callable(T):
        return circle.Periodic.from_function(T, 1024).trimmed()
    arr = np.asarray(T, dtype=float) if not np.iscomplexobj(np.asarray(T)) else None
    if arr is None:
        raise UsageError(f"{what} must be real; got complex values")
    if arr.ndim == 0:
        if not np.isfinite(arr):
            raise UsageError(f"{what} must be finite; got {float(arr)}")
        return circle.Periodic(np.array([complex(arr)]), np.array([0]), True)
    if arr.ndim != 1:
        raise UsageError(f"{what} must be a number, 1-d samples on a uniform grid, a callable or a Periodic; got shape {arr.shape}")
    return circle.Periodic.from_samples(arr).trimmed()


def _check_c(c):
    try:
        c = float(c)
    except (TypeError, ValueError):
        raise UsageError(f"the central charge c must be a number; got {c!r}") from None
    if not math.isfinite(c) or c == 0:
        raise UsageError(f"the central charge c must be finite and non-zero; got {c}")
    return c


def schwarzian_from_derivatives(F1, F2, F3):
    """``S(F) = F'''/F' - (3/2)(F''/F')^2`` from the derivatives (jax or numpy)."""
    return F3 / F1 - 1.5 * (F2 / F1) ** 2


def schwarzian(F, M: int = 256) -> np.ndarray:
    """Samples of ``S(F)`` on M grid points for a :class:`Diffeo` (exact derivatives)."""
    th = circle.grid(M)
    return np.asarray(schwarzian_from_derivatives(F(th, 1), F(th, 2), F(th, 3)))


def transform(T, c, F: Diffeo, M: int = 256) -> np.ndarray:
    """Samples of ``Phi_F T = (T o F) F'^2 + (c/2) S(F)`` on M grid points.

    ``T o F`` is evaluated exactly for a trigonometric polynomial T (samples
    are interpolated spectrally, a callable is called at F(theta_j)).
    """
    c = _check_c(c)
    th = circle.grid(M)
    Fv = F(th)
    TF = np.asarray(T(Fv)) if callable(T) and not isinstance(T, circle.Periodic) else _as_periodic(T)(Fv)
    F1, F2, F3 = F(th, 1), F(th, 2), F(th, 3)
    return TF * F1**2 + 0.5 * c * schwarzian_from_derivatives(F1, F2, F3)


def delta(X, T, c):
    """``delta_X T = X T' + 2 X' T + (c/2) X'''`` on grid samples (jax, spectral derivatives)."""
    X, T = jnp.asarray(X), jnp.asarray(T)
    return X * circle.derivative(T) + 2 * circle.derivative(X) * T + 0.5 * c * circle.derivative(X, 3)


def bracket(X, Y):
    """``[X, Y] = X'Y - XY'`` on grid samples (jax)."""
    return circle.derivative(X) * Y - X * circle.derivative(Y)


def gelfand_fuchs(X, Y):
    """``GF(X, Y) = (1/2) int X' Y'' dtheta`` on grid samples (jax)."""
    return 0.5 * circle.integrate(circle.derivative(X) * circle.derivative(Y, 2))


# -------------------------------------------------- truncated algebra (modes)
@dataclass(frozen=True)
class TruncatedVirasoro:
    """The standard truncated bracket, pairing, action and ``c GF`` on real mode vectors.

    Vectors are ``[a0, a1, b1, ..., aK, bK]`` (see :func:`hamcheck.circle.vector_modes`);
    products are formed on a grid of ``4K + 4`` points (no aliasing below mode K).
    """

    K: int
    c: float
    central: float = 0.5  # the coefficient of c X''' in delta

    @property
    def modes(self):
        return circle.vector_modes(self.K)

    @property
    def M(self):
        return 4 * self.K + 4

    def _g(self, v):
        return np.asarray(circle.mode_vector_to_samples(np.asarray(v, float), self.M))

    def _v(self, f):
        return circle.samples_to_mode_vector(np.asarray(f), self.K)

    def bracket(self, X, Y):
        return self._v(bracket(self._g(X), self._g(Y)))

    def pairing(self, T, X):
        return float(circle.integrate(self._g(T) * self._g(X)))

    def action(self, X, T):
        Xg, Tg = self._g(X), self._g(T)
        lin = Xg * circle.derivative(Tg) + 2 * circle.derivative(Xg) * Tg
        return self._v(lin + self.central * self.c * circle.derivative(Xg, 3))

    def reference(self, X, Y):
        return self.c * float(gelfand_fuchs(self._g(X), self._g(Y)))


def truncated_algebra(K: int, c: float) -> TruncatedVirasoro:
    """The Virasoro algebra truncated to modes ``<= K`` in this module's conventions.

    >>> alg = truncated_algebra(4, c=1.0)
    >>> alg.modes.tolist()
    [0, 1, 1, 2, 2, 3, 3, 4, 4]
    """
    if isinstance(K, bool) or not isinstance(K, (int, np.integer)) or K < 3:
        raise UsageError(f"K must be an integer >= 3; got {K!r}")
    return TruncatedVirasoro(int(K), _check_c(c))


def check_user_action(bracket, pairing, action, K: int, c: float, *, sign: int = +1, samples: int = 4, seed: int = 0):
    """Check a user's truncated Virasoro action against the Gelfand–Fuchs cocycle ``c GF``.

    The user's functions act on real mode vectors ``[a0, a1, b1, ..., aK, bK]``.
    Returns a :class:`hamcheck.cocycles.CocycleReport`; a ``central-cocycle``
    finding gives the ratio of the user's central term to ``c GF`` (1/6 for a
    ``c/12`` normalisation where ``c/2`` is meant).
    """
    from .cocycles import check_coadjoint_action

    ref = truncated_algebra(K, c)
    return check_coadjoint_action(
        bracket, pairing, action, ref.modes, reference=ref.reference,
        reference_name="c x Gelfand-Fuchs", sign=sign, samples=samples, seed=seed,
    )


# ----------------------------------------------------------------- monodromy
_G = math.sqrt(15.0) / 10.0
_NODES = (0.5 - _G, 0.5, 0.5 + _G)


def _mul(A, B):
    """Batched 2x2 products written out (faster than matmul for tiny matrices)."""
    return np.stack(
        [
            np.stack([A[..., 0, 0] * B[..., 0, 0] + A[..., 0, 1] * B[..., 1, 0], A[..., 0, 0] * B[..., 0, 1] + A[..., 0, 1] * B[..., 1, 1]], -1),
            np.stack([A[..., 1, 0] * B[..., 0, 0] + A[..., 1, 1] * B[..., 1, 0], A[..., 1, 0] * B[..., 0, 1] + A[..., 1, 1] * B[..., 1, 1]], -1),
        ],
        -2,
    )


def _comm(A, B):
    return _mul(A, B) - _mul(B, A)


def _expm_traceless(W):
    """exp of traceless 2x2 matrices: ``cosh(s) I + sinh(s)/s W``, ``s^2 = -det W``."""
    s2 = W[..., 0, 0] ** 2 + W[..., 0, 1] * W[..., 1, 0]
    z = np.sqrt(s2.astype(complex))
    small = np.abs(s2) < 1e-8
    zs = np.where(small, 1.0, z)
    ch = np.where(small, 1 + s2 / 2 + s2**2 / 24, np.real(np.cosh(zs)))
    sh = np.where(small, 1 + s2 / 6 + s2**2 / 120, np.real(np.sinh(zs) / zs))
    E = sh[..., None, None] * W
    E[..., 0, 0] += ch
    E[..., 1, 1] += ch
    return E


def _step_matrices(q: circle.Periodic, N: int):
    """Sixth-order Magnus steps for ``Y' = [[0, 1], [-q, 0]] Y`` on N equal steps.

    Blanes, Casas, Oteo, Ros, Phys. Rep. 470 (2009), the three-point Gauss
    scheme (from memory; its order 6 is verified by the tests).
    """
    h = TWO_PI / N
    As = []
    for nd in _NODES:
        qv = q.on_grid(N, nd * h)
        A = np.zeros((N, 2, 2))
        A[:, 0, 1] = 1.0
        A[:, 1, 0] = -qv
        As.append(A)
    A1, A2, A3 = As
    B1 = h * A2
    B2 = (math.sqrt(15.0) * h / 3.0) * (A3 - A1)
    B3 = (10.0 * h / 3.0) * (A3 - 2 * A2 + A1)
    C1 = _comm(B1, B2)
    C2 = -_comm(B1, 2 * B3 + C1) / 60.0
    W = B1 + B3 / 12.0 + _comm(-20 * B1 - B3 + C1, B2 + C2) / 240.0
    return _expm_traceless(W)


def _prefix(E):
    """``P[j] = E[j-1] ... E[0]`` for j = 0..N (P[0] = I), by doubling (Hillis–Steele)."""
    arr = E.copy()
    off = 1
    n = arr.shape[0]
    while off < n:
        arr = np.concatenate([arr[:off], _mul(arr[off:], arr[:-off])])
        off *= 2
    return np.concatenate([np.eye(2)[None], arr])


def _product(E):
    """``E[N-1] ... E[0]`` by pairwise (tree) reduction."""
    arr = E
    while arr.shape[0] > 1:
        if arr.shape[0] % 2:
            arr = np.concatenate([arr[:-2], _mul(arr[-1], arr[-2])[None]])
            continue
        arr = _mul(arr[1::2], arr[0::2])
    return arr[0]


@dataclass(frozen=True)
class Monodromy:
    """Monodromy of ``c psi'' + T psi = 0`` over one period.

    ``matrix`` maps ``(psi, psi')(0)`` to ``(psi, psi')(2 pi)`` (first-order
    system ``Y' = [[0, 1], [-T/c, 0]] Y``, ``Y(0) = I``); ``error`` estimates its
    error relative to ``||matrix||``; ``steps`` Magnus steps were used.
    """

    matrix: np.ndarray
    error: float
    steps: int
    q: circle.Periodic  # T / c

    @property
    def trace(self) -> float:
        return float(np.trace(self.matrix))

    def fundamental(self):
        """``Phi(theta_j)`` at ``theta_j = 2 pi j / steps``, j = 0..steps (shape (steps + 1, 2, 2))."""
        return _prefix(_step_matrices(self.q, self.steps))


def monodromy(T, c, *, tol: float = MONODROMY_TOL, min_steps: int = 64, max_steps: int = 2**21) -> Monodromy:
    """The Hill monodromy of ``(T, c)`` to an estimated relative error ``tol``.

    ``T``: a number, samples on a uniform grid, a callable of theta or a
    :class:`hamcheck.circle.Periodic`. Step counts are ``min_steps * 2^j``.

    >>> import numpy as np
    >>> m = monodromy(0.09, c=1.0)          # k = 0.3: trace 2 cos(0.6 pi)
    >>> bool(abs(m.trace - 2 * np.cos(0.6 * np.pi)) < 1e-12)
    True
    """
    c = _check_c(c)
    p = _as_periodic(T)
    q = circle.Periodic(p.coefficients / c, p.wavenumbers, True)
    qmax = float(np.sum(np.abs(q.coefficients)))
    N = int(min_steps)
    # resolve the potential's modes and the local oscillation frequency sqrt|q|
    while N < 4 * q.degree or N < 8 * math.sqrt(qmax) + 16:
        N *= 2
    prev = _product(_step_matrices(q, N))
    best_err = np.inf
    while True:
        N2 = 2 * N
        if N2 > max_steps:
            raise UsageError(
                f"the monodromy did not converge to {tol:.0e} within {max_steps} steps (estimate {best_err:.1e}); "
                "the potential is too large or too oscillatory for the requested accuracy: raise max_steps or tol"
            )
        cur = _product(_step_matrices(q, N2))
        scale = max(np.abs(cur).max(), 1.0)
        err = np.abs(cur - prev).max() / scale / 63.0
        if err <= tol or (err >= 0.5 * best_err and best_err < 1e3 * tol):
            # converged, or stuck at the round-off floor just above tol
            return Monodromy(cur, float(max(err, 1e-16)), N2, q)
        best_err = min(best_err, err)
        prev, N = cur, N2


# ------------------------------------------------------------ invariants
def _class_of(m: Monodromy):
    M = m.matrix
    t = m.trace
    scale = max(np.abs(M).max(), 1.0)
    tol = CLASS_TOL * scale + 1e3 * m.error * scale
    for s, name in ((1, "+"), (-1, "-")):
        if abs(t - 2 * s) <= tol:
            if np.abs(M - s * np.eye(2)).max() <= tol:
                return f"{name}identity"
            return f"parabolic{name}"
    return "elliptic" if abs(t) < 2 else "hyperbolic"


def _angles(P, v):
    """Prüfer angles phi = atan2(psi, psi') along the path ``P[j] v``, unwrapped."""
    Y = P @ v
    return np.unwrap(np.arctan2(Y[:, 0], Y[:, 1]))


def rotation_number(m: Monodromy, P=None) -> float:
    """``rho = lim phi(theta)/theta`` for the Prüfer angle ``phi' = cos^2 phi + (T/c) sin^2 phi``.

    Exact from one period: for elliptic monodromy ``2 pi rho = alpha + 2 pi m``
    with ``cos alpha = tr/2`` and the integer part from the winding of one
    solution; otherwise ``2 pi rho`` is the winding of an eigen-direction (a
    multiple of pi).
    """
    P = m.fundamental() if P is None else P
    M = m.matrix
    cls = _class_of(m)
    if cls == "elliptic":
        # phi is the angle of w = (psi', psi): orientation reversed w.r.t. (psi, psi')
        sin_sign = np.sign(-M[1, 0])
        alpha = math.acos(max(-1.0, min(1.0, m.trace / 2)))
        if sin_sign < 0:
            alpha = TWO_PI - alpha
        D = _angles(P, np.array([1.0, 0.0]))
        wind = math.floor((D[-1] - D[0]) / TWO_PI)
        return (alpha + TWO_PI * wind) / TWO_PI
    if cls.endswith("identity"):
        v = np.array([1.0, 0.0])
    else:
        w, V = np.linalg.eig(M)
        v = np.real(V[:, int(np.argmax(np.abs(w)))])
    D = _angles(P, v)
    return round((D[-1] - D[0]) / np.pi) / 2.0


def stabilizer_ode(m: Monodromy, P=None, M: int | None = None):
    """Stabilizer from periodic products of solutions: ``X = psi Q psi^T`` with ``M Q M^T = Q``.

    Returns ``(dim, basis)`` with ``basis`` of shape (dim, M) on the grid of
    ``M`` points (default: the step grid without its end point).
    """
    P = m.fundamental() if P is None else P
    Mm = m.matrix
    sym = [np.array([[1.0, 0.0], [0.0, 0.0]]), np.array([[0.0, 1.0], [1.0, 0.0]]), np.array([[0.0, 0.0], [0.0, 1.0]])]
    L = np.stack([(Mm @ S @ Mm.T - S)[np.triu_indices(2)] for S in sym], axis=1)
    u, s, vt = np.linalg.svd(L)
    scale = max(np.abs(Mm).max() ** 2, 1.0)
    tol = STABILIZER_TOL * scale + 1e3 * m.error * scale
    null = vt[s <= tol] if s.size else vt
    dim = int(null.shape[0])
    psi = P[:-1, 0, :]  # rows (psi1, psi2)(theta_j)
    if M is not None:
        if m.steps % M:
            raise UsageError(f"M = {M} must divide the step count {m.steps}")
        psi = psi[:: m.steps // M]
    basis = []
    for coef in null:
        Q = sum(cf * S for cf, S in zip(coef, sym))
        X = np.einsum("ja,ab,jb->j", psi, Q, psi)
        basis.append(X / np.abs(X).max())
    return dim, np.array(basis).reshape(dim, psi.shape[0])


def _fourier_kernel(p: circle.Periodic, c: float, K: int):
    d = p.degree
    Mg = 4 * (K + d) + 8
    th = circle.grid(Mg)
    Tg = p.on_grid(Mg)
    T1 = p.derivative().on_grid(Mg)
    n = circle.vector_modes(K).astype(float)
    is_sin = np.r_[False, np.tile([False, True], K)]
    ph = np.outer(th, n)

    def basis(order):
        s = order * np.pi / 2 + np.where(is_sin, -np.pi / 2, 0.0)  # sin x = cos(x - pi/2)
        return n**order * np.cos(ph + s)

    X, X1, X3 = basis(0), basis(1), basis(3)
    D = X * T1[:, None] + 2 * X1 * Tg[:, None] + 0.5 * c * X3
    # a bound on the terms of delta_X T per mode; the +1 keeps mode 0's scale finite
    bounds = 0.5 * abs(c) * (n**3 + 1) + 2 * (n + 1) * np.abs(Tg).max() + np.abs(T1).max()
    A = circle.samples_to_mode_vector(D, K + d) / bounds[None, :]
    u, s, vt = np.linalg.svd(A, full_matrices=False)
    return s / s[0], vt, bounds


def stabilizer_fourier(T, c, K: int | None = None, M: int | None = None):
    """Stabilizer as the kernel of ``X -> delta_X T`` on real modes ``<= K``.

    Columns are scaled by a bound on their terms (``|c|/2 (n^3 + 1) + 2 (n + 1)
    max|T| + max|T'|``) so the singular values are relative. For a non-constant T the
    stabilizer is not band-limited and its smallest singular values fall
    spectrally with K: without K, K doubles from ``max(24, 2 deg T + 8)`` until a
    kernel appears (the stabilizer is never trivial). Returns ``(dim, basis,
    singular_values)``; basis on M grid points.
    """
    c = _check_c(c)
    p = _as_periodic(T)
    d = p.degree
    Ks = [int(K)] if K is not None else [max(24, 2 * d + 8) * 2**j for j in range(3)]
    for Kc in Ks:
        s_rel, vt, bounds = _fourier_kernel(p, c, Kc)
        s_full = np.r_[s_rel, np.zeros(vt.shape[0] - s_rel.size)]
        null = vt[s_full <= STABILIZER_TOL]
        if null.shape[0]:
            break
    Mout = M or 4 * (Kc + d) + 8
    basis = []
    for v in null:
        cf = v / bounds
        X = circle.Periodic.from_real_modes(np.arange(1, Kc + 1), cf[1::2], cf[2::2], cf[0]).on_grid(Mout)
        basis.append(X / np.abs(X).max())
    return len(basis), np.array(basis).reshape(len(basis), Mout), s_rel


def _subspace_distance(A, B):
    """Largest sine of the principal angles between row spans (inf when dims differ)."""
    if A.shape[0] != B.shape[0]:
        return float("inf")
    if A.shape[0] == 0:
        return 0.0
    qa, _ = np.linalg.qr(A.T)
    qb, _ = np.linalg.qr(B.T)
    # sines of the principal angles directly (1 - cos^2 would lose half the digits)
    return float(np.linalg.svd(qb - qa @ (qa.T @ qb), compute_uv=False).max())


def constant_representative(cls: str, rho: float, trace: float, matrix, c: float):
    """The constant ``T0`` on the orbit with these invariants, or ``(None, reason)``.

    Orbits of constants (from memory; classical, e.g. Balog–Fehér–Palla 1998):
    elliptic with ``2 rho`` not an integer: ``T0 = c rho^2``; ``+-identity`` with
    ``rho = n/2``: ``T0 = c n^2/4``; hyperbolic with ``rho = 0``:
    ``T0 = -c (arccosh(tr/2) / 2pi)^2``; parabolic with ``rho = 0`` of the
    orientation of ``T0 = 0`` (``M - I = [[0, 2pi], [0, 0]]``): ``T0 = 0``.
    """
    if cls == "elliptic":
        return c * rho**2, "elliptic: T0 = c rho^2"
    if cls.endswith("identity"):
        n = int(round(2 * rho))
        if n >= 1:
            return c * n**2 / 4, f"central monodromy with rho = {n}/2: T0 = c n^2/4, n = {n}"
        return None, "identity monodromy with rotation number 0 has no constant representative"
    if cls == "hyperbolic":
        if rho == 0 and trace > 2:
            return -c * (math.acosh(trace / 2) / TWO_PI) ** 2, "hyperbolic with rho = 0: T0 = -c (arccosh(tr/2)/2pi)^2"
        return None, f"hyperbolic with rotation number {rho:g} != 0: no constant on this orbit"
    if cls == "parabolic+" and rho == 0:
        N = np.asarray(matrix) - np.eye(2)
        if N[1, 0] - N[0, 1] < 0:
            return 0.0, "parabolic with rho = 0, orientation of T0 = 0"
        return None, "parabolic with rho = 0 but the orientation opposite to T0 = 0: no constant on this orbit"
    return None, f"{cls} with rotation number {rho:g}: no constant on this orbit"


def classify(T, c, *, K: int | None = None) -> dict:
    """Class and invariants of the Hill potential ``(T, c)``.

    Keys: ``class`` (elliptic, hyperbolic, parabolic+/-, +identity, -identity),
    ``trace``, ``monodromy``, ``monodromy_error``, ``steps``,
    ``rotation_number``, ``stabilizer_dim`` (from the solutions),
    ``stabilizer_dim_fourier``, ``stabilizer_agreement`` (sine of the largest
    principal angle between the two bases), ``constant_representative``
    (``T0`` or None) and ``constant_note``.
    """
    c = _check_c(c)
    p = _as_periodic(T)
    m = monodromy(p, c)
    P = m.fundamental()
    cls = _class_of(m)
    rho = rotation_number(m, P)
    Mcmp = 64
    while m.steps % Mcmp:
        Mcmp //= 2
    dim_ode, B_ode = stabilizer_ode(m, P, M=Mcmp)
    dim_f, B_f, svals = stabilizer_fourier(p, c, K=K, M=Mcmp)
    T0, note = constant_representative(cls, rho, m.trace, m.matrix, c)
    return {
        "class": cls,
        "trace": m.trace,
        "monodromy": m.matrix.tolist(),
        "monodromy_error": m.error,
        "steps": m.steps,
        "rotation_number": rho,
        "stabilizer_dim": dim_ode,
        "stabilizer_dim_fourier": dim_f,
        "stabilizer_agreement": _subspace_distance(B_ode, B_f),
        "constant_representative": T0,
        "constant_note": note,
        "c": c,
        "modes": p.degree,
    }


def classify_file(path, c=None, *, M: int = 512) -> dict:
    """Load T from a .npy/.csv/.py file (see :func:`hamcheck.circle.load_periodic_samples`) and classify it.

    ``c`` from the argument, else from a .py file's ``c``; one of them is required.
    """
    data = circle.load_periodic_samples(path, "T", params=("c",), M=M)
    if np.iscomplexobj(data.values) or data.values.ndim != 1:
        raise UsageError(f"{path}: T must be real scalar samples (one per grid point); got shape {data.values.shape}")
    if c is None:
        c = data.params.get("c")
    if c is None:
        raise UsageError(f"no central charge for {path}: pass --c VALUE (or define c = ... in a .py file)")
    tail, warning = circle.resolution_warning(data.values, "T")
    out = classify(data.values, c)
    out.update({"file": data.source, "input": data.kind, "samples": data.M, "spectral_tail": tail})
    if warning:
        out["warning"] = warning
    return out


def format_classification(d: dict) -> str:
    """Plain-text rendering of :func:`classify` / :func:`classify_file` output."""
    lines = []
    if "file" in d:
        lines.append(f"{d['file']}: {d['samples']} samples ({d['input']}), c = {d['c']:g}")
    M = np.asarray(d["monodromy"])
    lines += [
        f"  class               {d['class']}",
        f"  trace               {d['trace']:.15g}   (error ~{d['monodromy_error']:.0e}, {d['steps']} steps)",
        f"  monodromy           [[{M[0, 0]:.10g}, {M[0, 1]:.10g}], [{M[1, 0]:.10g}, {M[1, 1]:.10g}]]",
        f"  rotation number     {d['rotation_number']:.15g}",
        f"  stabilizer dim      {d['stabilizer_dim']} (solutions), {d['stabilizer_dim_fourier']} (Fourier kernel); "
        f"bases agree to {d['stabilizer_agreement']:.1e}",
    ]
    T0 = d["constant_representative"]
    lines.append(f"  constant on orbit   {'none' if T0 is None else f'{T0:.15g}'}  ({d['constant_note']})")
    if "warning" in d:
        lines.append(f"  warning: {d['warning']}")
    return "\n".join(lines)


# ------------------------------------------------------ projective structures
def potential_from_developing_map(f, c, M: int = 256) -> np.ndarray:
    """``(c/2) S(f)`` on M grid points for a developing map ``f`` (a jax-traceable callable of theta).

    ``f(theta + 2pi) = A . f(theta)`` for a Möbius A; the potential is periodic
    and its monodromy class is that of A (trace up to sign, as A is projective).
    Give ``f`` without poles on the circle (e.g. in an affine chart that
    avoids infinity, or as ``tan`` of a smooth angle written with jnp).
    """
    c = _check_c(c)
    th = jnp.asarray(circle.grid(M))

    @jax.jit
    def S_of(t):
        g1 = jax.grad(f)
        g2 = jax.grad(g1)
        g3 = jax.grad(g2)
        return jax.vmap(lambda s: schwarzian_from_derivatives(g1(s), g2(s), g3(s)))(t)

    try:
        S = S_of(th)
    except Exception as exc:
        raise UsageError(f"could not differentiate the developing map f ({type(exc).__name__}: {exc}); write it with jax.numpy") from None
    S = np.asarray(S)
    if not np.all(np.isfinite(S)):
        raise UsageError("S(f) is not finite on the grid: f has a pole or a critical point there; use a chart without poles")
    return 0.5 * c * S


def developing_map(T, c, M: int = 256) -> dict:
    """A developing map for ``(T, c)``: ``f = psi1 / psi2`` with ``psi1(0) = 1, psi2'(0) = 1``.

    Returns ``psi`` (shape (M, 2): psi1, psi2 on the grid), ``angle`` (a
    smooth lift of ``atan2(psi1, psi2)``, so ``f = tan(angle)``), and ``mobius``
    ``A = M^T`` with ``f(theta + 2pi) = (A00 f + A01)/(A10 f + A11)``.
    """
    c = _check_c(c)
    mono = monodromy(T, c, min_steps=int(M))
    P = mono.fundamental()
    psi = P[:-1, 0, :][:: mono.steps // M]
    angle = np.unwrap(np.arctan2(psi[:, 0], psi[:, 1]))
    return {"psi": psi, "angle": angle, "mobius": mono.matrix.T, "monodromy": mono}


# ---------------------------------------------------------------- orbit charts
def _default_transform(T0F, F1, F2, F3, c):
    return T0F * F1**2 + 0.5 * c * schwarzian_from_derivatives(F1, F2, F3)


def _default_tangent(dF, F1):
    return dF / F1[:, None]


def _chart_bases(modes, th):
    n = np.asarray(modes, dtype=float)
    ph = np.outer(th, n)
    out = []
    for p in range(4):
        s = p * np.pi / 2
        cos_p = n**p * np.cos(ph + s)
        sin_p = n**p * np.sin(ph + s)
        out.append(np.stack([cos_p, sin_p], axis=2).reshape(th.size, 2 * n.size))
    return [jnp.asarray(b) for b in out]


def orbit_model(T0, c, modes, grid: int | None = None, *, amplitude: float = 0.4, transform=None, tangent=None, name=None) -> Model:
    """The Fourier-truncated orbit chart through ``T0`` with its exact pulled-back KKS form.

    Chart ``F_x = theta + sum_{n in modes} a_n cos n theta + b_n sin n theta``,
    ``x = (a_n1, b_n1, ...)``; point ``T(x) = Phi_{F_x} T0``; form
    ``omega_ij(x) = int d_i T(x) (d_j F_x / F_x') dtheta`` (trapezoid on ``grid``
    points, default ``max(64, 24 max(modes) + 8 deg T0)``: closedness
    residuals reach round-off near 24 x the highest mode at amplitude 0.4). For a constant T0 the
    rotations act (``(a_n, b_n) -> R(n t)(a_n, b_n)``) with moment map
    ``int T(x)``; convention ``Convention(sign=+1, flow=+1)`` (see module doc).

    A non-constant ``T0`` (number, samples, callable or Periodic) is allowed:
    rotations then do not preserve the chart, so the model carries the zero
    vector field and only antisymmetry, closedness and nondegeneracy are real
    checks (a warning says so).

    ``transform(T0F, F1, F2, F3, c)`` and ``tangent(dF, F1)`` (jax) replace the
    transformation law and the tangent map ``X_i = d_i F / F'``: the hooks for
    checking a user's own formulas. Samples are drawn with
    ``sum n (|a_n| + |b_n|) <= amplitude`` so ``F' >= 1 - amplitude``.

    >>> import hamcheck
    >>> model = orbit_model(0.1, 1.0, [1, 2], grid=64)
    >>> hamcheck.check(model, points=4).passed
    True
    """
    c = _check_c(c)
    modes = [int(n) for n in np.atleast_1d(modes)]
    if not modes or any(n < 1 for n in modes) or len(set(modes)) != len(modes):
        raise UsageError(f"modes must be distinct positive integers; got {modes}")
    if not 0 < amplitude < 1:
        raise UsageError(f"amplitude must lie in (0, 1) so that F' > 0 on the chart; got {amplitude}")
    p = _as_periodic(T0, "T0")
    constant = p.degree == 0
    T0c = float(np.real(p.coefficients[p.wavenumbers == 0].sum())) if constant else None
    M = int(grid) if grid is not None else max(64, 24 * max(modes) + 8 * p.degree)
    if M <= 2 * max(modes):
        raise UsageError(f"grid = {M} cannot resolve mode {max(modes)}; expected grid > {2 * max(modes)} (16x is advised)")
    if constant:
        for n in modes:
            if abs(T0c - c * n * n / 4) <= 1e-9 * max(abs(T0c), abs(c) * n * n / 4):
                warnings.warn(
                    f"mode n={n} has T0 = c n^2/4 = {T0c:g}: the KKS form is degenerate at the base point "
                    f"(delta_X T0 = 0 for X = cos {n} theta, sin {n} theta). Drop mode {n} from modes"
                    + (" (at the sl2 point T0 = c/4 start the chart at n = 2)" if n == 1 else ""),
                    stacklevel=2,
                )
    else:
        warnings.warn(
            "non-constant base potential: rotations do not preserve the chart, so the model carries the zero "
            "vector field; only antisymmetry, closedness and nondegeneracy are real checks",
            stacklevel=2,
        )
    phi = transform or _default_transform
    tang = tangent or _default_tangent
    th = circle.grid(M)
    th_j = jnp.asarray(th)
    D0, D1, D2, D3 = _chart_bases(modes, th)
    dim = 2 * len(modes)
    w = TWO_PI / M
    nvec = np.repeat(np.asarray(modes, dtype=float), 2)

    def point(x):
        F = th_j + D0 @ x
        F1, F2, F3 = 1.0 + D1 @ x, D2 @ x, D3 @ x
        T0F = jnp.full_like(F, T0c) if constant else p(F)
        return phi(T0F, F1, F2, F3, c), F1

    # jitted so that eager calls (declaration, base-point comparisons) compile once;
    # inside hamcheck.check's own jit they are simply inlined
    @jax.jit
    def form(x):
        J = jax.jacfwd(lambda y: point(y)[0])(x)
        F1 = 1.0 + D1 @ x
        X = tang(D0, F1)
        return w * (J.T @ X)

    if constant:
        algebra = LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])], names=["rotation"])

        @jax.jit
        def moment(x):
            return jnp.reshape(w * jnp.sum(point(x)[0]), (1,))

        def fields(x):
            a, b = x[0::2], x[1::2]
            n = jnp.asarray(modes, dtype=jnp.float64)
            return jnp.stack([-n * b, n * a], axis=1).reshape(1, dim)

        def action(g, x):
            pairs = x.reshape(len(modes), 2)
            powers, gp = {}, jnp.eye(2, dtype=g.dtype)
            for k in range(1, max(modes) + 1):
                gp = gp @ g
                powers[k] = gp
            return jnp.concatenate([powers[n] @ pairs[i] for i, n in enumerate(modes)])

        extra = {"vector_fields": fields, "action": action}
    else:
        algebra = LieAlgebra.from_structure_constants(np.zeros((1, 1, 1)), names=["none"])

        def moment(x):
            return jnp.zeros((1,))

        extra = {"vector_fields": lambda x: jnp.zeros((1, dim))}

    def sample(rng):
        x = rng.standard_normal(dim)
        return amplitude * rng.uniform(0.2, 1.0) * x / np.sum(nvec * np.abs(x))

    label = name or f"virasoro_orbit(T0={'%g' % T0c if constant else 'non-constant'}, c={c:g}, modes={modes}, M={M})"
    built = VirasoroOrbitChart(T0=T0c if constant else p, c=c, modes=tuple(modes), grid=M, point=point)
    return Model(label, dim, form, algebra, moment, sample=sample, convention=Convention(sign=+1, flow=+1),
                 construction=built, **extra)


@dataclass(frozen=True)
class VirasoroOrbitChart:
    """What :func:`orbit_model` built: base potential ``T0`` (a number or a
    :class:`~hamcheck.circle.Periodic`), central charge, modes, quadrature grid, and ``point``."""

    T0: object
    c: float
    modes: tuple
    grid: int
    point: object = field(repr=False, compare=False, default=None)


def kks_base_form(T0, c, modes) -> np.ndarray:
    """The closed formula for omega at the base point in chart coordinates.

    ``omega(d/da_n, d/db_n) = pi n (c n^2 - 4 T0) / 2``, different n do not pair
    (equivalently ``omega(cos n, sin n) = 2 pi / (n (c n^2 - 4 T0))`` for
    tangent vectors, virasoro.md).
    """
    modes = [int(n) for n in np.atleast_1d(modes)]
    W = np.zeros((2 * len(modes), 2 * len(modes)))
    for i, n in enumerate(modes):
        v = np.pi * n * (c * n * n - 4 * T0) / 2
        W[2 * i, 2 * i + 1], W[2 * i + 1, 2 * i] = v, -v
    return W


def base_form_residual(model: Model) -> float:
    """Relative difference between the model's form at x = 0 and :func:`kks_base_form`."""
    info = model.construction
    if not isinstance(info, VirasoroOrbitChart) or isinstance(info.T0, circle.Periodic):
        raise UsageError("base_form_residual needs a model from orbit_model with a constant T0")
    W = np.asarray(model.form(jnp.zeros(model.dim)))
    ref = kks_base_form(info.T0, info.c, info.modes)
    return float(np.abs(W - ref).max() / max(np.abs(ref).max(), 1e-300))


#: Relative difference between the chart's form at the base point and the
#: closed mode formula: both are exact up to the quadrature's round-off
#: (measured 4e-16 to 6e-16), a wrong coefficient gives O(1).
BASE_FORM_TOL = 1e-12


def base_form_check(model: Model):
    """Named check ``kks_base_form``: the form at x = 0 equals :func:`kks_base_form`.

    Catches what closedness cannot: a consistently wrong Schwarzian
    coefficient or sign of c gives another valid orbit (closed, invariant,
    with a moment map) but the wrong form. Returns a
    :class:`hamcheck.CheckResult`.
    """
    from .report import CheckResult

    r = base_form_residual(model)
    failed = not (r <= BASE_FORM_TOL)
    info = model.construction
    msg = (
        f"omega at T0 differs from pi n (c n^2 - 4 T0)/2 by {r:.1e} (relative): the chart uses another central "
        "charge or coefficient (check the c/2 in front of S(F) and the sign of c)"
        if failed
        else f"omega at T0 = {info.T0:g} matches the mode formula for modes {list(info.modes)}"
    )
    return CheckResult(
        "kks_base_form", "fail" if failed else "pass", r, BASE_FORM_TOL, tuple(0.0 for _ in range(model.dim)), msg, 1,
        "omega(d/da_n, d/db_n) = pi n (c n^2 - 4 T0)/2 at the base point, other pairings 0",
    )


def chart_resolution_study(T0, c, modes, grids, *, check: str = "closed", points: int = 4, seed: int = 0, transform=None, tangent=None):
    """Residual of one check of :func:`orbit_model` against the quadrature grid, with a fitted decay.

    A residual that does not fall is reported (verdict ``stalls``) as a
    failure of the construction, not of the truncation.
    """
    from .suite import check as run_check

    def residual(M):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            mdl = orbit_model(T0, c, modes, grid=M, transform=transform, tangent=tangent)
        r = run_check(mdl, points=points, seed=seed, only=[check]).results[check]
        return r.residual if r.residual is not None else float("nan")

    return circle.resolution_study(residual, grids, label="grid M")


# ------------------------------------------------------------- localization
def rotation_weights(c, N: int, grid: int | None = None):
    """Weights of the rotation at ``T0 = c/4`` from the chart with modes 2..N.

    Eigenvalues of ``omega^-1 Hess H`` at the base point are ``+-i w``; returns
    ``(weights sorted, hessian eigenvalues)``. Expected weights n = 2..N; the
    Hessian is negative definite for c > 0 (a local maximum of ``int T``).
    """
    c = _check_c(c)
    model = orbit_model(c / 4, c, list(range(2, int(N) + 1)), grid=grid)
    x0 = jnp.zeros(model.dim)
    W = np.asarray(model.form(x0))
    H = np.asarray(jax.jit(jax.hessian(lambda x: model.moment(x)[0]))(x0))
    ev = np.linalg.eigvals(np.linalg.solve(W, H))
    w = np.sort(np.abs(ev.imag))[::2]
    return w, np.linalg.eigvalsh(0.5 * (H + H.T))


def zeta_one_loop(t, dps: int = 30):
    """``prod_{n>=2} 2pi/(t n)`` by zeta regularisation (mpmath), and the closed form ``t^{3/2}/(2pi)^2``.

    ``sum_{n>=2} 1 = zeta(0) - 1 = -3/2`` and ``sum_{n>=2} log n = -zeta'(0) = log sqrt(2pi)``.
    """
    import mpmath

    with mpmath.workdps(dps):
        t = mpmath.mpf(t)
        count = mpmath.zeta(0) - 1
        logsum = -mpmath.zeta(0, derivative=1)
        reg = mpmath.exp(count * mpmath.log(2 * mpmath.pi / t) - logsum)
        closed = t ** mpmath.mpf(1.5) / (2 * mpmath.pi) ** 2
        return reg, closed


def counterterm_sum(lam, N: int) -> float:
    """``L_N = sum_{n=2}^N log(lam n) - [N log L - N + (1/2) log L]``, ``L = lam N`` (mpmath, 30 digits)."""
    import mpmath

    with mpmath.workdps(30):
        lam = mpmath.mpf(lam)
        L = lam * N
        s = mpmath.fsum(mpmath.log(lam * n) for n in range(2, int(N) + 1))
        return float(s - (N * mpmath.log(L) - N + mpmath.log(L) / 2))


def counterterm_limit(lam) -> float:
    """``lim L_N = -(3/2) log lam + (1/2) log 2pi`` (the power 3/2 of the one-loop factor)."""
    return -1.5 * math.log(lam) + 0.5 * math.log(TWO_PI)


# ------------------------------------------------------------- command line
def add_classify_parser(sub) -> None:
    """``hamcheck classify FILE [--c C] [--json]`` (wired through ``hamcheck.cli.SUBCOMMANDS``)."""
    p = sub.add_parser("classify", help="class, monodromy, rotation number and stabilizer of a Hill potential T in a file")
    p.add_argument("file", metavar="FILE", help=".npy/.csv samples of T on a uniform grid, or a .py file defining T and c")
    p.add_argument("--c", type=float, default=None, help="the central charge c (else c from a .py file)")
    p.add_argument("--json", action="store_true", help="print JSON instead of text")
    p.set_defaults(run=run_classify)


def run_classify(args) -> int:
    import json

    d = classify_file(args.file, args.c)
    print(json.dumps(d, indent=2) if args.json else format_classification(d))
    return 0
