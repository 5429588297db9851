"""Method A: Liouville's equation ``Laplacian u = e^{2u}`` solved by Newton's method for a bounded correction.

``u = log(2/(1-|z|^2)) + sum_j (beta_j - 1) log|(z - p_j)/(1 - conj(p_j) z)| + v`` with
``v = 0`` on the circle; the first two terms carry the boundary blow-up and the cone
singularities exactly (the log of a disk automorphism is harmonic away from p_j).
We split ``v = sum_j w_j + v'`` where ``w_j`` is the exact one-cone correction (see
:func:`background`), so the Newton unknown v' (called v below) is bounded, vanishes on
the circle, and is zero for one cone: ``Laplacian v = e^{2 u_P} (P e^{2v} - 1 - sum_j (P_j - 1))``
with ``P = prod_j P_j``.
Discretisation: Chebyshev in r (on [-1, 1], odd N, so no node at the centre) times
Fourier in theta (half-step shifted), collocation as in Trefethen, *Spectral Methods
in MATLAB* (2000), program 29; dense Newton. v is not smooth at the cone points
(``v ~ |z - p|^{2 beta}``) nor at the circle (``(1-r)^2 log(1-r)`` terms), so the
convergence is algebraic: the error is estimated from a coarser grid.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg

from .._jax import jax, jnp, quick_jit
from ..errors import ConvergenceError
from ._common import as_cones

#: Newton stops when the update falls below this (max abs, v is O(1)).
NEWTON_TOL = 1e-13


def cheb(N):
    """Chebyshev differentiation matrix and points ``x_j = cos(pi j / N)`` (Trefethen, program cheb)."""
    x = np.cos(np.pi * np.arange(N + 1) / N)
    c = np.r_[2.0, np.ones(N - 1), 2.0] * (-1.0) ** np.arange(N + 1)
    X = np.tile(x, (N + 1, 1)).T
    dX = X - X.T
    D = np.outer(c, 1 / c) / (dX + np.eye(N + 1))
    D -= np.diag(D.sum(axis=1))
    return D, x


def _fourier_d2(M, dt):
    col = np.r_[-np.pi**2 / (3 * dt**2) - 1 / 6, 0.5 * (-1.0) ** np.arange(2, M + 1) / np.sin(dt * np.arange(1, M) / 2) ** 2]
    return scipy.linalg.toeplitz(col)


def _log_rho2(x, y, p):
    """``log |phi_p(z)|^2`` with ``phi_p = (z - p)/(1 - conj(p) z)``, accurate near the circle (jax)."""
    dz2 = (x - p.real) ** 2 + (y - p.imag) ** 2
    den = (1 - p.real * x - p.imag * y) ** 2 + (p.imag * x - p.real * y) ** 2  # |1 - conj(p) z|^2
    near = jnp.log1p(-(1 - abs(p) ** 2) * (1 - (x * x + y * y)) / den)
    return jnp.where(dz2 > 0.25 * den, near, jnp.log(dz2 / den))


def background(cones):
    """``u0(x, y)`` (jax) and ``log_factors(x, y)`` -> ``log P_j`` for each cone.

    u0 is the Poincaré factor plus, for each cone, the exact one-cone solution's
    deviation from it: ``(beta - 1) log rho + log beta + log(1 - rho^2) - log(1 - rho^{2 beta})``
    with ``rho = |phi_j(z)|`` (the cone disk pulled back by the automorphism
    phi_j). So the one-cone problem is solved exactly by v = 0 and v only
    carries the interaction of the cones. ``P_j = e^{2 u_j} / e^{2 u_P}``.
    """
    ps = [(complex(c.p), c.beta) for c in cones]

    def log_factors(x, y):
        out = []
        for p, b in ps:
            L = _log_rho2(x, y, p)
            out.append((b - 1) * L + 2 * math.log(b) + 2 * jnp.log(-jnp.expm1(L)) - 2 * jnp.log(-jnp.expm1(b * L)))
        return jnp.stack(out) if out else jnp.zeros((0,) + jnp.shape(x))

    def u0(x, y):
        return jnp.log(2.0) - jnp.log1p(-(x * x + y * y)) + 0.5 * jnp.sum(log_factors(x, y), axis=0)

    return u0, log_factors


@dataclass(frozen=True)
class LiouvilleSolution:
    """Method A's result on an ``(N, M)`` grid: nodal values of v and their spectral interpolant.

    ``update``: last Newton step; ``iterations``; ``coefficients`` of v
    (Chebyshev x Fourier) for :meth:`v`.
    """

    cones: tuple
    N: int
    M: int
    iterations: int
    update: float
    coefficients: np.ndarray = field(repr=False)  # (N+1, M) complex: sum_k a_km T_k(r) e^{i m theta}
    wavenumbers: np.ndarray = field(repr=False)
    seconds: float = 0.0
    kappa: tuple = ()  # coefficients of the singular terms chi_j, included in v

    def v(self, x, y):
        """The correction v at (x, y) (jax, traceable)."""
        r = jnp.sqrt(x * x + y * y)
        th = jnp.arctan2(y, x)
        k = jnp.arange(self.N + 1)
        T = jnp.cos(k * jnp.arccos(jnp.clip(r, -1.0, 1.0)))
        e = jnp.exp(1j * jnp.asarray(self.wavenumbers) * th)
        return jnp.real(T @ jnp.asarray(self.coefficients) @ e)

    def u(self, x, y):
        u0, _ = background(self.cones)
        return u0(x, y) + self.v(x, y)


def _chi(cone):
    """``rho^{2 beta} (1 - rho^2)``: the singular term of v at a cone, vanishing on the circle.

    Near a cone of angle 2 pi beta, in the coordinate zeta = phi(z), Liouville's
    equation forces ``u = (beta - 1) log rho + H + ... + kappa rho^{2 beta}`` with
    ``4 beta^2 kappa = e^{2H}``. The one-cone factor has ``H = log 2 beta``, kappa = 1;
    the other cones shift H by delta, so the correction carries
    ``(e^{2 delta} - 1) chi``; subtracting it leaves v' with no rho^{2 beta} term.
    """
    p, b = complex(cone.p), cone.beta

    def chi(x, y):
        L = _log_rho2(x, y, p)
        return jnp.exp(b * L) * (-jnp.expm1(L))

    return chi


def _laplacian(f):
    H = jax.hessian(f, argnums=(0, 1))

    def lap(x, y):
        h = H(x, y)
        return h[0][0] + h[1][1]

    return lap


def _nodal_interpolant(v, N, M, shift):
    coef, k = _coefficients(v, N, M, shift)

    def ev(z):
        r, th = abs(z), math.atan2(z.imag, z.real)
        T = np.cos(np.arange(N + 1) * math.acos(min(r, 1.0)))
        return float(np.real(T @ coef @ np.exp(1j * k * th)))

    return ev


def _delta_parts(cones, chi):
    """What the shift of the regular part of u at each cone owes to the other cones, fixed by the cones alone.

    ``base[j]``: half the sum of the other cones' log factors at ``p_j``;
    ``at[i, j] = chi_i(p_j)`` (zero on the diagonal). Then :func:`_delta` is
    ``base[j] + sum_i kappa_i at[i, j] + v(p_j)``: computed once, not at every
    Newton step (each a handful of small jax evaluations).
    """
    n = len(cones)
    base, at = np.zeros(n), np.zeros((n, n))
    for j, c in enumerate(cones):
        x, y = c.p.real, c.p.imag
        if n > 1:
            _, log_factors = background([o for i, o in enumerate(cones) if i != j])
            base[j] = 0.5 * float(jnp.sum(log_factors(x, y)))
        for i in range(n):
            if i != j:
                at[i, j] = float(chi[i](x, y))
    return base, at


def _delta(cones, j, kappa, parts, vals):
    """Shift of the regular part of u at cone j away from its one-cone value."""
    base, at = parts
    return base[j] + float(kappa @ at[:, j]) + vals(cones[j].p)


def _coefficients(v, N, M, shift):
    """Chebyshev x Fourier coefficients of nodal values v (r-major, interior radii)."""
    N2 = (N - 1) // 2
    V = v.reshape(N2, M)
    full = np.zeros((N + 1, M))
    full[1 : N2 + 1] = V
    full[N - 1 : N2 : -1] = np.roll(V, -M // 2, axis=1)  # v(-r, th) = v(r, th + pi)
    k = np.fft.fftfreq(M, 1.0 / M).astype(int)
    Fh = np.fft.fft(full, axis=1) / M * np.exp(-1j * k * shift)[None, :]
    ny = Fh[:, M // 2] / 2  # split the Nyquist mode so the interpolant is real
    Fh = np.concatenate([Fh[:, : M // 2], ny[:, None], Fh[:, M // 2 + 1 :], ny[:, None]], axis=1)
    k = np.concatenate([k[: M // 2], [-(M // 2)], k[M // 2 + 1 :], [M // 2]])
    ext = np.concatenate([Fh, Fh[-2:0:-1]], axis=0)  # DCT-I through an FFT
    a = np.fft.fft(ext, axis=0)[: N + 1] / N
    a[0] /= 2
    a[N] /= 2
    return a, k


def solve_liouville(cones, N: int = 41, M: int = 64, *, max_iter: int = 60, singular: bool = True) -> LiouvilleSolution:
    """Newton's method on the collocated equation for v (N odd: Chebyshev order, M even: angles)."""
    t0 = time.perf_counter()
    cones = as_cones(cones)
    N = int(N) | 1
    M = int(M) + (int(M) % 2)
    D, x = cheb(N)
    N2 = (N - 1) // 2
    D2 = D @ D
    r = x[1 : N2 + 1]
    dt = 2 * np.pi / M
    shift = 0.5 * dt
    for c in cones:  # keep collocation nodes off the cone points (P is infinite there)
        rr, tt = abs(c.p), math.atan2(c.p.imag, c.p.real)
        if np.min(np.abs(r - rr)) < 1e-3 and np.min(np.abs(np.angle(np.exp(1j * (tt - shift - dt * np.arange(M)))))) < 1e-3:
            shift += 0.37 * dt
    th = shift + dt * np.arange(M)
    A1, A2 = D2[1 : N2 + 1, 1 : N2 + 1], D2[1 : N2 + 1, N - 1 : N2 : -1]
    E1, E2 = D[1 : N2 + 1, 1 : N2 + 1], D[1 : N2 + 1, N - 1 : N2 : -1]
    R = np.diag(1 / r)
    Z = np.zeros((M // 2, M // 2))
    I2 = np.eye(M // 2)
    flip = np.block([[Z, I2], [I2, Z]])
    L = np.kron(A1 + R @ E1, np.eye(M)) + np.kron(A2 + R @ E2, flip) + np.kron(R @ R, _fourier_d2(M, dt))
    X = (r[:, None] * np.cos(th)[None, :]).ravel()
    Y = (r[:, None] * np.sin(th)[None, :]).ravel()
    _, log_factors = background(cones)
    Xj, Yj = jnp.asarray(X), jnp.asarray(Y)
    # each evaluation below is one small program: evaluated eagerly, every jax operation of these
    # closed forms (and of the Hessian in _laplacian) compiled on its own, hundreds in all
    logPj = np.asarray(quick_jit(log_factors)(Xj, Yj)).reshape(len(cones), -1)
    P = np.exp(logPj.sum(axis=0))
    # Laplacian u0 = e^{2 u_P} (1 + sum_j (P_j - 1)): each one-cone factor solves Liouville exactly
    S = 1.0 + np.expm1(logPj).sum(axis=0)
    E = 4.0 / (1 - (X * X + Y * Y)) ** 2
    chi = [_chi(c) for c in cones]
    Chi = np.array([np.asarray(quick_jit(jax.vmap(f))(Xj, Yj)) for f in chi]).reshape(len(cones), -1)
    LChi = np.array([np.asarray(quick_jit(jax.vmap(_laplacian(f)))(Xj, Yj)) for f in chi]).reshape(len(cones), -1)
    parts = _delta_parts(cones, chi) if singular and len(cones) > 1 else None
    kappa = np.zeros(len(cones))
    v = np.zeros_like(X)
    upd = change = np.inf
    # Newton steps for v, each followed by the update of the singular coefficients (see _chi);
    # kappa depends on v only through v(p_j), weakly, so the joint iteration converges fast
    for it in range(1, max_iter + 1):
        G = np.exp(2 * (kappa @ Chi)) if len(cones) else 1.0
        src = E * S + (kappa @ LChi if len(cones) else 0.0)
        ev = P * G * np.exp(2 * v)
        F = L @ v - (E * ev - src)
        J = L - np.diag(2 * E * ev)
        dv = scipy.linalg.solve(J, -F)
        v = v + dv
        upd = float(np.abs(dv).max())
        if singular and len(cones) > 1:
            vals = _nodal_interpolant(v, N, M, shift)
            new = np.array([math.expm1(2 * _delta(cones, j, kappa, parts, vals)) for j in range(len(cones))])
            change = float(np.abs(new - kappa).max())
            kappa = new
        else:
            change = 0.0
        if max(upd, change) < NEWTON_TOL or (it > 6 and max(upd, change) < 1e-11):
            break
    else:
        raise ConvergenceError(f"Newton's method for Liouville's equation did not converge in {max_iter} steps "
                               f"(last update {max(upd, change):.1e})")
    v = v + (kappa @ Chi if len(cones) else 0.0)
    a, k = _coefficients(v, N, M, shift)
    return LiouvilleSolution(cones, N, M, it, upd, np.asarray(a, complex), k, time.perf_counter() - t0, tuple(kappa))
