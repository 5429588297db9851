"""Zeros of ``X_xi`` in the chart, with ``<mu, xi>`` and the weights there.

Multi-start Levenberg-Marquardt on ``X_xi(x) = 0`` from sampled points (the
residual and its Jacobian are one jitted function per model, ``xi`` traced),
then Newton polishing and deduplication. At each zero ``p`` the linearized
action ``L = flow * D X_xi(p)`` generates ``exp(t xi)`` on ``T_pM``; it has
eigenvalues ``+-i beta``. On a complex line of ``(T_pM, J)`` with ``J``
compatible with omega, ``exp(xi)`` acts by ``exp(i alpha)``: for an
eigenvector ``v = a + ib`` of ``i beta``, ``alpha = beta`` when
``omega(a, b) < 0`` and ``alpha = -beta`` otherwise (the signature of
``-(i/2) v^H Omega v`` on a repeated eigenvalue). These are the weights of
docs/references.md (finite-dimensional models): with the default convention positive
weights mean a local maximum of ``<mu, xi>``; in general the weight seen by
``<mu, xi>`` is ``sign * flow * alpha`` (:attr:`FixedPoint.hessian_weights`).

Example
-------
>>> fps = hamcheck.fixed_points(model, [0.37, -1.21])           # doctest: +SKIP
>>> [(round(p.value, 3), p.weights) for p in fps]               # doctest: +SKIP
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._jax import jax, jnp
from ._common import algebra_vector, compiled, field_along, fmt, require_model

__all__ = ["FixedPoint", "FixedPoints", "fixed_points", "line_decomposition"]

#: A start has converged when ``|X_xi| <= ZERO_RTOL * typical |X_xi|`` over the
#: sampled points; Newton-polished zeros reach ~1e-15 relative.
ZERO_RTOL = 1e-10
#: Two zeros closer than this (relative to 1 + |x|) are the same fixed point;
#: polished zeros agree to ~1e-13, distinct fixed points are O(1) apart.
DEDUP_RTOL = 1e-6
#: Eigenvalues of the linearization smaller than this times its norm count as
#: zero (a non-isolated fixed point); round-off gives ~1e-15.
WEIGHT_RTOL = 1e-8
#: Relative gap under which two rotation speeds form one repeated weight.
CLUSTER_RTOL = 1e-6


@dataclass(frozen=True, eq=False)
class FixedPoint:
    """A zero of ``X_xi``: the point, ``<mu(p), xi>``, and the weights ``alpha_k``."""

    point: np.ndarray
    value: float
    weights: tuple
    isolated: bool
    effective_sign: int = 1

    @property
    def hessian_weights(self) -> tuple:
        """``sign * flow * alpha_k``: positive means ``<mu, xi>`` has a local maximum along that line."""
        return tuple(self.effective_sign * w for w in self.weights)

    def __repr__(self) -> str:
        iso = "" if self.isolated else ", not isolated"
        return f"FixedPoint(x={fmt(self.point)}, value={self.value:.10g}, weights={fmt(self.weights, 6)}{iso})"


@dataclass(frozen=True, eq=False)
class FixedPoints:
    """All fixed points found, with the search's bookkeeping."""

    model: str
    xi: tuple
    points: tuple
    starts: int
    converged: int

    def __len__(self):
        return len(self.points)

    def __iter__(self):
        return iter(self.points)

    def __getitem__(self, i):
        return self.points[i]

    @property
    def isolated(self) -> bool:
        return all(p.isolated for p in self.points)

    def __repr__(self) -> str:
        vals = ", ".join(f"{p.value:.6g}" for p in self.points)
        return (
            f"FixedPoints({self.model!r}, xi={fmt(self.xi)}: {len(self.points)} found from {self.starts} starts "
            f"({self.converged} converged); values [{vals}])"
        )


def _build(model):
    def residual(x, xi):
        return field_along(model, x, xi)

    def linearization(x, xi):
        return jax.jacfwd(residual)(x, xi)

    return (
        jax.jit(residual),
        jax.jit(linearization),
        jax.jit(jax.vmap(residual, in_axes=(0, None))),
        jax.jit(lambda x, xi: model.moment_at(x) @ xi),
    )


def _functions(model):
    return compiled(model, "fixed_points", _build)


def line_decomposition(model, p, xi):
    """The complex lines of ``(T_pM, J)`` under ``exp(t xi)``: ``(alphas, vectors, isolated)``.

    ``vectors[:, k]`` spans line k with ``J v = i v``; for a commuting ``eta``
    its weight is ``Re(v^H L_eta v / (i v^H v))``.
    """
    _, lin, _, _ = _functions(model)
    flow = model.convention.flow
    L = flow * np.asarray(lin(jnp.asarray(p), jnp.asarray(xi)))
    W = np.asarray(model.form_at(jnp.asarray(p)))
    d = L.shape[0]
    ev, V = np.linalg.eig(L)
    norm = max(np.abs(L).max(), 1e-300)
    pos = np.flatnonzero(ev.imag > WEIGHT_RTOL * norm)
    betas = ev.imag[pos]
    order = np.argsort(betas)
    pos, betas = pos[order], betas[order]
    alphas, vecs = [], []
    i = 0
    while i < len(pos):
        j = i + 1
        while j < len(pos) and betas[j] - betas[i] <= CLUSTER_RTOL * max(betas[i], 1e-300):
            j += 1
        Vc = V[:, pos[i:j]]
        H = -0.5j * Vc.conj().T @ W @ Vc
        h_ev, h_vec = np.linalg.eigh(0.5 * (H + H.conj().T))
        beta = float(np.mean(betas[i:j]))
        for e, c in zip(h_ev, h_vec.T):
            v = Vc @ c
            if e < 0:  # omega(a, b) < 0: exp(xi) turns this line by +beta
                alphas.append(beta)
                vecs.append(v)
            else:
                alphas.append(-beta)
                vecs.append(v.conj())
        i = j
    isolated = 2 * len(alphas) == d
    return np.array(alphas), (np.stack(vecs, axis=1) if vecs else np.zeros((d, 0), complex)), isolated


def fixed_points(model, xi, *, starts: int = 64, seed: int = 0, max_iterations: int = 200) -> FixedPoints:
    """The zeros of ``X_xi`` in the chart (multi-start root finding), deduplicated.

    Each comes with ``value = <mu(p), xi>`` and the weights of the linearized
    action (see the module docstring). Fixed points outside the chart, or
    outside its declared domain, are not found: choose a chart that holds them
    all when the fixed-point data feed a localization formula.

    Example
    -------
    >>> fps = fixed_points(model, [1.0, 0.0, 0.0])     # doctest: +SKIP
    >>> fps[0].weights                                 # doctest: +SKIP
    """
    from scipy.optimize import least_squares

    from ..errors import UsageError

    require_model(model, "fixed_points")
    if isinstance(starts, bool) or not isinstance(starts, (int, np.integer)) or starts < 1:
        raise UsageError(f"starts must be a positive integer; got {starts!r}")
    xi = algebra_vector(model, xi)
    res, lin, res_many, ham = _functions(model)
    xi_j = jnp.asarray(xi)
    rng = np.random.default_rng(seed)
    x0s = np.stack([np.asarray(model.sample(rng), dtype=float) for _ in range(starts)])
    fields = np.asarray(res_many(jnp.asarray(x0s), xi_j))
    typical = float(np.median(np.max(np.abs(fields), axis=1)))
    if not np.isfinite(typical) or typical == 0.0:
        typical = 1.0
    dom = np.asarray(model.domain) if model.domain is not None else None
    fun = lambda x: np.asarray(res(jnp.asarray(x), xi_j))  # noqa: E731
    jac = lambda x: np.asarray(lin(jnp.asarray(x), xi_j))  # noqa: E731
    found = []
    converged = 0
    for x0 in x0s:
        try:
            sol = least_squares(fun, x0, jac=jac, method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=max_iterations)
        except Exception:
            continue
        x = sol.x
        for _ in range(3):  # Newton polish to round-off
            if not np.all(np.isfinite(x)):
                break
            try:
                x = x - np.linalg.lstsq(jac(x), fun(x), rcond=None)[0]
            except np.linalg.LinAlgError:
                break
        r = fun(x) if np.all(np.isfinite(x)) else np.array([np.inf])
        if not np.all(np.isfinite(r)) or np.max(np.abs(r)) > ZERO_RTOL * typical:
            continue
        if dom is not None and (np.any(x <= dom[:, 0]) or np.any(x >= dom[:, 1])):
            continue
        converged += 1
        if any(np.max(np.abs(x - q)) <= DEDUP_RTOL * (1.0 + np.max(np.abs(q))) for q in found):
            continue
        found.append(x)
    points = []
    for p in found:
        alphas, _, isolated = line_decomposition(model, p, xi)
        points.append(
            FixedPoint(p, float(ham(jnp.asarray(p), xi_j)), tuple(float(a) for a in alphas), isolated,
                       model.convention.effective_sign)
        )
    points.sort(key=lambda fp: -fp.value)
    return FixedPoints(model.name, tuple(float(v) for v in xi), tuple(points), int(starts), converged)
