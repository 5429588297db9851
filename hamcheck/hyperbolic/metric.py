"""Metrics ``g = e^{2u} |dz|^2`` on the unit disk with declared cone points.

>>> from hamcheck import hyperbolic
>>> m = hyperbolic.poincare_disk()
>>> d = m.distance(0j, 0.5)                      # 2 artanh(1/2) = log 3
>>> bool(abs(d - np.log(3.0)) < 1e-10), d.error < 1e-10
(True, True)
"""

from __future__ import annotations

import functools
import inspect
import math
import os
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import minimize
from scipy.special import roots_jacobi

from .._jax import jax, jnp, quick_jit
from ..errors import ModelError
from ._common import TWO_PI, Cone, Estimate, as_cones, as_point


def _caller_file():
    here = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    for frame in inspect.stack()[2:]:
        path = os.path.abspath(frame.filename)
        if path.startswith(here) or frame.filename.startswith("<") or "site-packages" in path:
            continue
        return path
    return None


@dataclass(frozen=True)
class Metric:
    """``g = e^{2u}|dz|^2`` on the unit disk: ``u(x, y)`` jax-traceable, cones ``[(p, alpha), ...]``.

    ``q`` is the holomorphic quadratic differential ``u_zz - u_z^2`` (a numpy
    callable of complex z) where it is known in closed form or solved for, else
    None. ``liouville_floor`` is the Liouville residual the construction itself
    carries (0 for closed forms; method A's measured discretisation residual),
    used by :func:`check_metric` as its tolerance floor.

    >>> import jax.numpy as jnp
    >>> m = Metric(lambda x, y: jnp.log(2 / (1 - x * x - y * y)))
    >>> round(float(m.u(0.0, 0.0)), 12) == round(math.log(2), 12)
    True
    """

    u: object
    cones: tuple = ()
    q: object = None
    name: str = "metric"
    liouville_floor: float = 0.0
    source: str | None = None
    construction: object = field(default=None, repr=False, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "cones", as_cones(self.cones))
        if self.source is None:
            object.__setattr__(self, "source", _caller_file())
        if not callable(self.u):
            raise ModelError(f"u must be a function u(x, y) written with jax.numpy; got {type(self.u).__name__}")
        if getattr(self.u, "lazy", False):
            return
        x0 = 0.05 + 0.1 * (self.cones[0].p.real if self.cones else 0.0)
        try:
            val = jax.grad(lambda x, y: self.u(x, y), argnums=(0, 1))(jnp.float64(x0), jnp.float64(0.07))
            out = self.u(jnp.float64(x0), jnp.float64(0.07))
        except Exception as exc:
            raise ModelError(
                f"u(x, y) could not be differentiated by jax ({type(exc).__name__}: {exc}); "
                "write u with jax.numpy, taking two real scalars and returning a real scalar"
            ) from None
        if jnp.shape(out) != ():
            raise ModelError(f"u(x, y) returned shape {jnp.shape(out)}; expected a real scalar")
        if not all(np.isfinite(float(v)) for v in val):
            raise ModelError(f"u(x, y) has non-finite derivatives at ({x0}, 0.07); expected a smooth function inside the disk")

    # ----------------------------------------------------------- evaluation
    @functools.cached_property
    def _u_vec(self):
        return quick_jit(jax.vmap(lambda x, y: self.u(x, y)))

    def u_at(self, z) -> np.ndarray:
        """u at complex points (numpy in, numpy out)."""
        z = np.asarray(z, dtype=complex)
        return np.asarray(self._u_vec(jnp.asarray(z.real.ravel()), jnp.asarray(z.imag.ravel()))).reshape(z.shape)

    def cone_at(self, z, tol: float = 1e-12):
        for c in self.cones:
            if abs(c.p - z) <= tol:
                return c
        return None

    # ------------------------------------------------------------- distance
    def distance(self, z1, z2, *, modes: int = 6, nodes: int = 32) -> Estimate:
        """Length of the shortest path from z1 to z2 in g, with an error estimate (``.error``).

        The path is ``z1 + (z2 - z1)(t + i h(t))`` with ``h = t(1-t) sum_k c_k T_k(2t-1)``,
        its length computed by Gauss–Jacobi quadrature with the weight
        ``t^(beta1-1) (1-t)^(beta2-1)`` of cone endpoints and minimised over c
        (BFGS, jax gradients); the estimate is the change when modes and nodes double.
        A local minimiser from the straight segment: paths that must bend
        around far-away features need a better start.
        """
        z1, z2 = as_point(z1, "z1"), as_point(z2, "z2")
        if z1 == z2:
            return Estimate(0.0, 0.0)
        c1, c2 = self.cone_at(z1), self.cone_at(z2)
        e1 = c1.beta - 1 if c1 else 0.0
        e2 = c2.beta - 1 if c2 else 0.0
        L1, c = _path_length(self.u, z1, z2, e1, e2, modes, nodes, None)
        L2, _ = _path_length(self.u, z1, z2, e1, e2, 2 * modes, 2 * nodes, c)
        err = abs(L2 - L1) + 1e-14 * L2
        if hasattr(self.construction, "u_change"):
            # a solved u carries its own error: a change du of u changes the length by ~ L du
            t = np.linspace(0, 1, 65)[1:-1]
            err += L2 * self.construction.u_change(z1 + t * (z2 - z1))
        return Estimate(L2, err, "shortest path by minimisation")


def _path_length(u, z1, z2, e1, e2, K, n, start):
    x, w = roots_jacobi(n, e2, e1)  # weight (1-x)^e2 (1+x)^e1 on [-1, 1]
    t = jnp.asarray((1 + x) / 2)
    w = jnp.asarray(w / 2 ** (e1 + e2 + 1))
    D = complex(z2 - z1)
    k = jnp.arange(K)
    Tk = jnp.cos(k[None, :] * jnp.arccos(2 * t[:, None] - 1))
    # d/dt T_k(2t - 1) = 2 k U_{k-1}(2t - 1); with s = arccos(2t - 1): 2 k sin(k s)/sin(s)
    s = jnp.arccos(2 * t - 1)[:, None]
    dTk = 2 * k[None, :] * jnp.sin(k[None, :] * s) / jnp.sin(s)
    uv = jax.vmap(u)
    base = t * (1 - t)
    dbase = 1 - 2 * t

    def length(c):
        h = base * (Tk @ c)
        dh = dbase * (Tk @ c) + base * (dTk @ c)
        zr = z1.real + D.real * t - D.imag * h
        zi = z1.imag + D.imag * t + D.real * h
        speed = abs(D) * jnp.sqrt(1 + dh * dh)
        ue = uv(zr, zi) - e1 * jnp.log(t) - e2 * jnp.log(1 - t)
        return jnp.sum(w * jnp.exp(ue) * speed)

    f = quick_jit(jax.value_and_grad(length))
    c0 = np.zeros(K)
    if start is not None:
        c0[: start.size] = start

    def fun(c):
        v, g = f(jnp.asarray(c))
        return float(v), np.asarray(g)

    res = minimize(fun, c0, jac=True, method="BFGS", options={"gtol": 1e-13, "maxiter": 500})
    return float(res.fun), res.x


# ---------------------------------------------------------------- closed forms
def poincare_disk() -> Metric:
    """The Poincaré disk ``u = log(2/(1 - |z|^2))``: curvature -1, q = 0.

    >>> float(poincare_disk().u(0.0, 0.0)) == math.log(2.0)
    True
    """
    return Metric(lambda x, y: jnp.log(2.0) - jnp.log1p(-(x * x + y * y)), (), lambda z: 0 * np.asarray(z, complex),
                  "poincare_disk", construction="closed form")


def cone_disk(alpha: float, center=0j) -> Metric:
    """One cone point of angle alpha (any alpha > 0) at ``center``: the pull-back of the Poincaré disk by
    ``w^beta`` (beta = alpha / 2 pi) after the automorphism ``w = (z - center)/(1 - conj(center) z)``.

    ``u = log(2 beta) + (beta - 1) log|w| - log(1 - |w|^{2 beta}) + log|w'(z)|`` and
    ``q = (1 - beta^2)/4 (w'/w)^2``.

    >>> m = cone_disk(np.pi)
    >>> complex(m.q(0.5)) == (1 - 0.25) / 4 / 0.25
    True
    """
    (cone,) = as_cones([(center, alpha)])
    p, b = cone.p, cone.beta

    def u(x, y):
        dz2 = (x - p.real) ** 2 + (y - p.imag) ** 2
        den = (1 - p.real * x - p.imag * y) ** 2 + (p.imag * x - p.real * y) ** 2
        L = jnp.log1p(-(1 - abs(p) ** 2) * (1 - (x * x + y * y)) / den)  # log|w|^2, exact near the circle
        L = jnp.where(dz2 > 0.25 * den, L, jnp.log(dz2 / den))
        return math.log(2 * b) + 0.5 * (b - 1) * L - jnp.log(-jnp.expm1(b * L)) + jnp.log(1 - abs(p) ** 2) - jnp.log(den)

    a = cone.double_pole

    def q(z):
        z = np.asarray(z, complex)
        r = 1 / (z - p) + np.conj(p) / (1 - np.conj(p) * z)  # w'/w
        return a * r * r

    return Metric(u, (cone,), q, f"cone_disk(alpha={alpha / math.pi:g} pi, center={complex(center):g})",
                  construction="closed form")


def poincare_distance(z1, z2) -> float:
    """``arccosh(1 + 2|z1 - z2|^2 / ((1 - |z1|^2)(1 - |z2|^2)))`` (the standard formula)."""
    return math.acosh(1 + 2 * abs(z1 - z2) ** 2 / ((1 - abs(z1) ** 2) * (1 - abs(z2) ** 2)))


__all__ = ["Metric", "poincare_disk", "cone_disk", "poincare_distance", "Cone", "TWO_PI"]
