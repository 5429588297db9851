"""Hamiltonian flows: integrate ``X_H`` of ``H = <mu, xi>`` and compare with the group action.

The vector field is solved from the form, ``v^i omega_ij = sign d_j H``, so it
uses only ``form`` and ``moment`` (never the declared vector fields). Its flow
for time ``t`` should be ``exp(flow * t * xi) . x0`` (``flow`` from the
model's convention), and every moment component ``<mu, eta>`` with
``[eta, xi] = 0`` is conserved. Integration is scipy's DOP853 at ``rtol``
1e-12 with a right-hand side compiled once per model (``xi`` traced).

Example
-------
>>> tr = hamcheck.flow(oscillator, [1.0], [1.0, 0.0], 3.0)      # doctest: +SKIP
>>> tr.end, tr.action_error                                     # doctest: +SKIP
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._jax import jax, jnp, quick_jit
from ..errors import UsageError
from ._common import algebra_vector, compiled, fmt, hamiltonian_field, require_model

__all__ = ["Flow", "flow", "FLOW_RTOL"]

#: DOP853 relative tolerance: its global error then stays near 1e-11 over a
#: few periods of a rotation (measured on oscillators), far below O(1) mistakes.
FLOW_RTOL = 1e-12
#: Absolute tolerance as a fraction of the size of the starting point.
FLOW_ATOL = 1e-13
#: Singular values of ``ad_xi`` below this (relative) span the centralizer of xi.
CENTRALIZER_RTOL = 1e-9


@dataclass(frozen=True, eq=False)
class Flow:
    """A trajectory of the Hamiltonian flow of ``<mu, xi>``.

    ``times`` and ``points`` (one row per time); ``conserved`` holds the
    largest relative drift of the moment components commuting with ``xi``
    (``<mu, xi>`` included); ``action_error`` the largest relative distance
    to ``action(exp(flow t xi), x0)``, or None without a finite action.
    """

    model: str
    xi: tuple
    times: np.ndarray
    points: np.ndarray
    conserved: float
    action_error: float | None
    evaluations: int

    @property
    def end(self) -> np.ndarray:
        return self.points[-1]

    def __repr__(self) -> str:
        act = "no finite action" if self.action_error is None else f"vs action {self.action_error:.1e}"
        return (
            f"Flow({self.model!r}, xi={fmt(self.xi)}, t={self.times[-1]:g}: end={fmt(self.end)}, "
            f"conserved to {self.conserved:.1e}, {act})"
        )


def _build(model):
    rhs = quick_jit(lambda x, xi: hamiltonian_field(model, x, xi))
    mom = quick_jit(jax.vmap(model.moment_at))
    target = None
    if model.has_action:
        flow_sign = model.convention.flow

        def act(t, xi, x0):
            return model.action_at(model.algebra.exp(flow_sign * t * xi), x0)

        target = quick_jit(jax.vmap(act, in_axes=(0, None, None)))
    return rhs, mom, target


def centralizer(model, xi) -> np.ndarray:
    """Orthonormal rows spanning ``{eta : [eta, xi] = 0}`` in algebra coordinates."""
    ad = np.einsum("a,abc->cb", xi, model.algebra.structure_constants)
    _, s, vt = np.linalg.svd(ad)
    tol = CENTRALIZER_RTOL * max(s[0] if s.size else 0.0, 1e-300)
    return vt[s <= tol] if s[0] > 0 else np.eye(len(xi))


def flow(model, xi, x0, t) -> Flow:
    """Integrate the Hamiltonian vector field of ``<mu, xi>`` from ``x0``.

    ``t`` is a final time or an increasing array of output times (from 0).
    """
    from scipy.integrate import solve_ivp

    require_model(model, "flow")
    xi = algebra_vector(model, xi)
    try:
        x0 = np.asarray(x0, dtype=float)
        times = np.atleast_1d(np.asarray(t, dtype=float))
    except (TypeError, ValueError):
        raise UsageError(f"x0 must be a point of dim {model.dim} and t a time or array of times") from None
    if x0.shape != (model.dim,) or not np.all(np.isfinite(x0)):
        raise UsageError(f"x0 must be a finite point of shape ({model.dim},); got shape {x0.shape}")
    if times.ndim != 1 or not np.all(np.isfinite(times)) or np.any(np.diff(times) <= 0) or times[0] == 0 and len(times) == 1:
        raise UsageError(f"t must be a nonzero time or an increasing array of times; got {t!r}")
    rhs, mom, target = compiled(model, "flow", _build)
    xi_j = jnp.asarray(xi)
    scale = max(float(np.max(np.abs(x0))), 1.0)
    sol = solve_ivp(
        lambda _, x: np.asarray(rhs(jnp.asarray(x), xi_j)),
        (0.0, float(times[-1])),
        x0,
        method="DOP853",
        t_eval=times,
        rtol=FLOW_RTOL,
        atol=FLOW_ATOL * scale,
    )
    if not sol.success:
        raise UsageError(f"the flow could not be integrated to t={times[-1]:g}: {sol.message}")
    pts = sol.y.T
    mus = np.asarray(mom(jnp.asarray(np.vstack([x0[None], pts]))))
    Z = centralizer(model, xi)
    proj = mus @ Z.T
    drift = float(np.max(np.abs(proj[1:] - proj[0]))) / max(float(np.max(np.abs(mus))), 1e-300)
    err = None
    if target is not None:
        exact = np.asarray(target(jnp.asarray(times), xi_j, jnp.asarray(x0)))
        err = float(np.max(np.abs(exact - pts))) / max(float(np.max(np.abs(exact))), float(np.max(np.abs(pts))), 1e-300)
    return Flow(model.name, tuple(float(v) for v in xi), times, pts, drift, err, int(sol.nfev))
