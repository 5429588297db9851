"""Localization on the sl2 orbit ``Diff(S^1)/PSL(2, R)``: rotation weights and the regularised one-loop factor.

>>> round(counterterm_limit(1.0), 12) == round(0.5 * math.log(2 * math.pi), 12)
True
"""

from __future__ import annotations

import math

import numpy as np

from .._jax import jax, jnp, quick_jit
from .diffeomorphisms import _check_c
from .orbit_chart import orbit_model

__all__ = ["rotation_weights", "zeta_one_loop", "counterterm_sum", "counterterm_limit"]

TWO_PI = 2.0 * np.pi


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
    H = np.asarray(quick_jit(jax.hessian(lambda x: model.moment(x)[0]))(x0))
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
