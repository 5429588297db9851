"""The moment map: a metric's boundary Hill potential, and the Virasoro orbit it lands on.

In hamcheck's Virasoro normalisation (``Phi_F T = (T o F) F'^2 + (c/2) S(F)``,
Hill operator ``c d^2 + T``) the developing map ``D`` of the metric restricted to
``z = e^{i theta}`` has Hill potential ``(c/2) S_theta(D(e^{i theta}))``; with
``S(D) = 2q`` and ``S_theta(e^{i theta}) = 1/2`` the chain rule gives
``T(theta) = c/4 - c z^2 q(z)`` (real on the circle by the reflection symmetry).

>>> from hamcheck import hyperbolic
>>> T = hyperbolic.boundary_potential(hyperbolic.poincare_disk(), c=2.0, M=8)
>>> T.tolist(), T.error < 1e-13
([0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5], True)
"""

from __future__ import annotations

import dataclasses

import numpy as np

from .. import circle, virasoro
from .._jax import jax, jnp, quick_jit
from ..errors import UsageError
from ._common import as_cones, check_c
from .quadratic import AccessoryFamily

#: Round-off of ``c/4 - c z^2 q`` from an exactly known q, relative to max |T| + |c|.
ROUND_OFF = 1e-14


class BoundaryPotential(np.ndarray):
    """T on ``theta_j = 2 pi j / M``: a read-only float64 numpy array with ``.error`` (estimated max abs
    error), ``.theta``, ``.c`` and ``.how`` (where q came from). Arithmetic returns plain arrays.
    Pass it as it is to :func:`hamcheck.virasoro.classify`.
    """

    def __new__(cls, values, error, c, how):
        obj = np.asarray(values, dtype=np.float64).copy().view(cls)
        obj.error, obj.c, obj.how = float(error), float(c), how
        obj.flags.writeable = False
        return obj

    def __array_finalize__(self, obj):
        self.error = getattr(obj, "error", None)
        self.c = getattr(obj, "c", None)
        self.how = getattr(obj, "how", None)

    def __array_wrap__(self, arr, context=None, return_scalar=False):
        out = np.asarray(arr)  # derived quantities do not inherit the error estimate
        return out[()] if return_scalar else out

    @property
    def theta(self) -> np.ndarray:
        return circle.grid(self.shape[0])

    def __reduce__(self):
        return (BoundaryPotential, (np.asarray(self), self.error, self.c, self.how))


def residues_from_u(u, cones, radius_factor: float = 0.5, n: int = 256):
    """Simple-pole coefficients ``b_j`` of ``q = u_zz - u_z^2`` from first derivatives of u only.

    ``(1/2 pi i) oint q dz = -(1/2 pi i) [oint u_z^2 dz + (1/4) oint e^{2u} d conj(z)]`` on a circle
    around p_j (Stokes, with ``u_{z conj z} = e^{2u}/4`` from Liouville's equation),
    so the second derivatives of a discrete u are never formed. Returns
    ``(b, change)``: the change between the radius and 0.6 x it estimates the error.
    """
    cones = as_cones(cones)
    g = quick_jit(jax.vmap(jax.grad(lambda x, y: u(x, y), argnums=(0, 1))))
    uu = quick_jit(jax.vmap(lambda x, y: u(x, y)))
    th = 2 * np.pi * np.arange(n) / n
    sing = [c.p for c in cones] + [1 / np.conj(c.p) for c in cones if abs(c.p) > 1e-12]
    out, change = [], 0.0
    for c in cones:
        others = [abs(s - c.p) for s in sing if abs(s - c.p) > 1e-12] + [1 - abs(c.p)]
        vals = []
        for f in (1.0, 0.6):
            eps = radius_factor * f * min(others)
            z = c.p + eps * np.exp(1j * th)
            dz = 1j * (z - c.p) * (2 * np.pi / n)
            ux, uy = g(jnp.asarray(z.real), jnp.asarray(z.imag))
            uz = (np.asarray(ux) - 1j * np.asarray(uy)) / 2
            e2u = np.exp(2 * np.asarray(uu(jnp.asarray(z.real), jnp.asarray(z.imag))))
            vals.append((-np.sum(uz**2 * dz) - 0.25 * np.sum(e2u * np.conj(dz))) / (2j * np.pi))
        out.append(vals[0])
        change = max(change, abs(vals[0] - vals[1]))
    return np.array(out), change


def _family_fit(family: AccessoryFamily, b):
    """Accessory parameters x closest to measured residues b (cones off the origin); residual."""
    b = np.asarray(b, complex)[list(family.off)]
    if not family.dim:
        return np.zeros(0), float(np.abs(b - family.b_part).max(initial=0.0))
    A = np.vstack([family.N.real, family.N.imag])
    r = np.concatenate([(b - family.b_part).real, (b - family.b_part).imag])
    x = np.linalg.lstsq(A, r, rcond=None)[0]
    return x, float(np.abs(family.residues(x) - b).max())


def _residue_sensitivity(family: AccessoryFamily, z):
    """max over z of sum_j |dq/db_j| (bound on |dq| per unit error of every b_j, reflections included)."""
    tot = np.zeros(z.shape)
    for i in family.off:
        p = family.cones[i].p
        tot += 1 / np.abs(z - p) + np.abs(p) ** 2 / np.abs(z - 1 / np.conj(p))
        if family.origin is not None:
            tot += (1 + np.abs(p) ** 2) / np.abs(z)
    return tot


def boundary_potential(metric, c, M: int = 256) -> BoundaryPotential:
    """``T(theta_j) = c/4 - c z^2 q(z)`` at ``z = e^{i theta_j}``, ``theta_j = 2 pi j / M``, with ``.error``.

    q comes from the metric's closed form or solved accessory parameters when
    known; otherwise from its rational structure (:mod:`.quadratic`) with the
    residues measured by contour integrals of u inside the disk, never by
    differentiating u at the boundary where it blows up.
    """
    c = check_c(c)
    M = int(M)
    if M < 3:
        raise UsageError(f"M must be at least 3 grid points; got {M}")
    z = np.exp(1j * circle.grid(M))
    family = AccessoryFamily.of(metric.cones) if metric.cones else None
    if metric.q is not None:
        vals = c / 4 - c * z**2 * metric.q(z)
        err_b = getattr(getattr(metric.construction, "accessory", None), "error", 0.0)
        how = "q known" if not err_b else "q from method B"
    else:
        if family is None:
            vals = np.full(M, c / 4, complex)
            err_b, how = 0.0, "q = 0 (no cone points)"
        else:
            b, change = residues_from_u(metric.u, metric.cones)
            x, fit = _family_fit(family, b)
            vals = c / 4 - c * z**2 * family.q(x)(z)
            err_b, how = change + fit, "q from residues of u"
    scale = np.abs(vals.real).max() + abs(c)
    err = ROUND_OFF * scale + np.abs(vals.imag).max()
    if family is not None and err_b:
        err += abs(c) * err_b * float(_residue_sensitivity(family, z).max())
    return BoundaryPotential(vals.real, err, c, how)


def classify_metric(metric, c: float = 1.0, M: int = 256):
    """The Virasoro orbit of the metric's boundary potential: the
    :class:`hamcheck.circle.OrbitClassification` of :func:`hamcheck.virasoro.classify` of T, with
    ``boundary_error`` (T's estimated error), ``how`` and ``metric`` in its ``details``.

    >>> from hamcheck import hyperbolic
    >>> d = classify_metric(hyperbolic.cone_disk(4 * np.pi))
    >>> d["class"], d["stabilizer_dim"]
    ('+identity', 3)
    """
    T = boundary_potential(metric, c, M)
    out = virasoro.classify(np.asarray(T), c=c)
    extra = {"boundary_error": float(T.error), "how": T.how, "metric": metric.name}
    return dataclasses.replace(out, details={**out.details, **extra})
