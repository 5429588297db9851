"""Zeros of ``X_xi`` in every chart of the model's atlas, with ``<mu, xi>`` and the weights there.

Multi-start Levenberg-Marquardt on ``X_xi(x) = 0`` from sampled points of each
chart (``model.atlas``: the main chart and ``Model(charts=...)``; the residual
and its Jacobian are one jitted function per chart, ``xi`` traced), then Newton
polishing and deduplication: within a chart by coordinates, across charts by
the image under the common ``embedding`` (where two charts see one point, its
value and weights must agree, else the atlas is refused). At each zero ``p`` the linearized
action ``L = flow * D X_xi(p)`` generates ``exp(t xi)`` on ``T_pM``; it has
eigenvalues ``+-i beta``. On a complex line of ``(T_pM, J)`` with ``J``
compatible with omega, ``exp(xi)`` acts by ``exp(i alpha)``: for an
eigenvector ``v = a + ib`` of ``i beta``, ``alpha = beta`` when
``omega(a, b) < 0`` and ``alpha = -beta`` otherwise (the signature of
``-(i/2) v^H Omega v`` on a repeated eigenvalue). These are the weights of
docs/references.md (finite-dimensional models): with the default convention positive
weights mean a local maximum of ``<mu, xi>``; in general the weight seen by
``<mu, xi>`` is ``sign * flow * alpha`` (:attr:`FixedPoint.hessian_weights`).

Are they all there? A compact Hamiltonian torus space with isolated fixed
points satisfies ``sum_p <mu(p), xi>^j / e_p(xi) = 0`` for ``0 <= j < n``
(Atiyah-Bott 1984, Berline-Vergne 1982: the low orders of the localization
formula, whose left side is analytic at ``s = 0``; at ``j = n`` the sum is
``n! vol / (2 pi)^n``). :func:`completeness` tests them (``FixedPoints.completeness``);
a chart missing a fixed point (at infinity) fails them, and the consequences
that sum over fixed points say so instead of reporting a mismatch.

Example
-------
>>> fps = hamcheck.fixed_points(model, [0.37, -1.21])           # doctest: +SKIP
>>> [(round(p.value, 3), p.weights) for p in fps]               # doctest: +SKIP
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .._jax import jax, jnp, quick_jit
from ..diagnose import vec
from ..errors import ModelError, UsageError
from ._common import algebra_vector, compiled, field_along, require_model

__all__ = ["Completeness", "FixedPoint", "FixedPoints", "completeness", "fixed_points", "line_decomposition"]

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
    """A zero of ``X_xi``: the point (in the coordinates of atlas chart ``chart``), ``<mu, xi>``, the weights ``alpha_k``."""

    point: np.ndarray
    value: float
    weights: tuple
    isolated: bool
    effective_sign: int = 1
    #: Index into ``model.atlas`` (0: the main chart) of the chart whose coordinates ``point`` is in.
    chart: int = 0
    #: ``mu(p)``, all components in the algebra's basis.
    moment: tuple = ()

    @property
    def hessian_weights(self) -> tuple:
        """``sign * flow * alpha_k``: positive means ``<mu, xi>`` has a local maximum along that line."""
        return tuple(self.effective_sign * w for w in self.weights)

    @property
    def euler(self) -> float:
        """``e_p(xi) = prod_k w_k``, the product of the Hessian weights (the equivariant Euler class at p)."""
        return math.prod(self.hessian_weights)

    def __repr__(self) -> str:
        iso = "" if self.isolated else ", not isolated"
        where = f", chart {self.chart}" if self.chart else ""
        return f"FixedPoint(x={vec(self.point)}{where}, value={vec([self.value], 10)[1:-1]}, weights={vec(self.weights, 6)}{iso})"


@dataclass(frozen=True)
class Completeness:
    """Are the fixed points found all there? The localization identities of a compact space, as a verdict.

    Every compact Hamiltonian torus space with isolated fixed points satisfies
    ``sum_p <mu(p), xi>^j / e_p(xi) = 0`` for ``0 <= j < n`` (and ``n! vol / (2 pi)^n``
    at ``j = n``), ``e_p`` the product of the Hessian weights. ``complete`` is
    True when they hold, False when they fail (fixed points are missing, or the
    space is not compact), None when they cannot be judged (``note`` says why).
    """

    complete: bool | None
    residual: float | None
    tolerance: float
    note: str

    def __repr__(self) -> str:
        return f"Completeness({self.note})"


@dataclass(frozen=True, eq=False)
class FixedPoints:
    """All fixed points found (in every chart of the atlas), with the search's bookkeeping and its completeness."""

    model: str
    xi: tuple
    points: tuple
    starts: int
    converged: int
    charts: int = 1
    completeness: Completeness | None = None

    def __len__(self):
        return len(self.points)

    def __iter__(self):
        return iter(self.points)

    def __getitem__(self, i):
        return self.points[i]

    @property
    def isolated(self) -> bool:
        return all(p.isolated for p in self.points)

    @property
    def complete(self) -> bool | None:
        """True when the identities of a compact space hold (see :class:`Completeness`)."""
        return self.completeness.complete if self.completeness is not None else None

    def __repr__(self) -> str:
        vals = vec([p.value for p in self.points], 6)[1:-1] if self.points else ""
        where = f" in {self.charts} charts" if self.charts > 1 else ""
        c = self.completeness
        verdict = {True: "complete", False: "incomplete", None: "completeness not judged"}[c.complete] if c else ""
        res = f" (identity residual {c.residual:.1e})" if c is not None and c.residual is not None else ""
        return (
            f"FixedPoints({self.model!r}, xi={vec(self.xi)}: {len(self.points)} found{where} from {self.starts} starts "
            f"({self.converged} converged); values [{vals}]; {verdict}{res})"
        )


#: Relative residual of ``sum_p u_p^j / e_p = 0`` (j < n, ``u_p`` the values centred and scaled to [-1, 1])
#: against ``sum_p |u_p^j / e_p|`` above which the fixed points are incomplete. The weights come from
#: eigenvalues accurate to ~1e-13 relative, so complete data give <= 1e-12 (measured 1e-16..1e-14 on
#: CP^n and the sphere); one missing point of a generic xi leaves its share of the sum, O(0.01..1).
IDENTITY_RTOL = 1e-6
#: Relative accuracy assumed for each weight in the round-off estimate of the identities: the
#: eigenvalues of the linearization are good to a few 1e-15 of its norm (common practice); 1e-13 is generous.
WEIGHT_ROUNDOFF = 1e-13
#: Fixed points found in two charts are one point when their embeddings differ by at most this relative
#: to the largest embedding entry among the fixed points (polished zeros agree to ~1e-13; distinct fixed
#: points are O(1) apart).
ATLAS_DEDUP_RTOL = 1e-6
#: The same fixed point seen from two charts has the same ``<mu, xi>`` and weights to this accuracy,
#: relative to the largest |value| and |weight| (round-off ~1e-13); charts whose moment maps or
#: actions differ there do not describe one space.
ATLAS_AGREE_RTOL = 1e-8


def localization_terms(fps, j, centred=True):
    """``[u_p^j / e_p]`` over the fixed points, ``u_p`` the values (centred and scaled to [-1, 1] when ``centred``)."""
    v = np.array([p.value for p in fps], dtype=float)
    if centred and len(v):
        c = 0.5 * (v.max() + v.min())
        r = 0.5 * (v.max() - v.min())
        v = (v - c) / (r if r > 0 else max(abs(c), 1.0))
    return np.array([u**j / p.euler for u, p in zip(v, fps)])


def _where(fps) -> str:
    return "the chart" if fps.charts == 1 else f"the {fps.charts} charts of the atlas"


def completeness(fps, n: int) -> Completeness:
    """Test ``sum_p <mu(p), xi>^j / e_p(xi) = 0`` (``0 <= j < n``) on the fixed points found.

    Shift and scale of the values do not matter (the identities for all ``j < n``
    together are invariant), so the values are centred and scaled to [-1, 1]
    first, which keeps the terms of one size.
    """
    tol = IDENTITY_RTOL
    where = _where(fps)
    if n < 1:
        return Completeness(None, None, tol, "not judged: a 0-dimensional space")
    if not fps.isolated:
        return Completeness(None, None, tol, "not judged: the fixed points are not isolated (choose a generic xi)")
    if len(fps) == 0:
        return Completeness(
            False, None, tol,
            f"no fixed point found in {where}: a compact Hamiltonian torus space has at least two (mu^xi has a "
            "maximum and a minimum); use more starts, or declare the charts holding them (Model(charts=..., embedding=...))",
        )
    wmax = max(abs(w) for p in fps for w in p.hessian_weights)
    rel_err = np.array([sum(WEIGHT_ROUNDOFF * wmax / abs(w) for w in p.hessian_weights) for p in fps])
    residual, roundoff = 0.0, 0.0
    for j in range(n):
        t = localization_terms(fps, j)
        scale = float(np.sum(np.abs(t)))
        if scale == 0.0:  # every term vanishes (equal values, j >= 1): nothing to test at this order
            continue
        residual = max(residual, abs(math.fsum(t)) / scale)
        roundoff = max(roundoff, float(np.sum(np.abs(t) * rel_err)) / scale)
    if roundoff > tol / 100:
        return Completeness(
            None, residual, tol,
            f"not judged: nearly vanishing weights make the identities uncertain to {roundoff:.0e} (choose another xi)",
        )
    count = f"{len(fps)} fixed point{'s' if len(fps) != 1 else ''}"
    if residual <= tol:
        return Completeness(
            True, residual, tol,
            f"the {count} found satisfy sum_p <mu(p), xi>^j / e_p(xi) = 0 for j < {n} "
            f"(relative residual {residual:.0e} <= {tol:g})",
        )
    return Completeness(False, residual, tol, missing_message(fps, n, residual))


def missing_message(fps, n, residual) -> str:
    """One line: fixed points are missing, how that was seen, and what to do."""
    count = f"{len(fps)} found" if len(fps) != 1 else "1 found"
    return (
        f"fixed points missing from {_where(fps)} (probably at infinity): the {count} fail "
        f"sum_p <mu(p), xi>^j / e_p(xi) = 0 for j < {n}, which every compact Hamiltonian torus space satisfies "
        f"(relative residual {residual:.2g} > {IDENTITY_RTOL:g}); declare the charts holding the others with "
        "Model(charts=..., embedding=...) or use more starts (or, if the space is not compact, the identities do not apply)"
    )


def _build(model):
    def residual(x, xi):
        return field_along(model, x, xi)

    def linearization(x, xi):
        return jax.jacfwd(residual)(x, xi)

    return (
        quick_jit(residual),
        quick_jit(linearization),
        quick_jit(jax.vmap(residual, in_axes=(0, None))),
        quick_jit(lambda x, xi: model.moment_at(x) @ xi),
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


def _search(model, xi, starts, rng, max_iterations):
    """Multi-start Levenberg-Marquardt plus Newton polish for the zeros of ``X_xi`` in one chart."""
    from scipy.optimize import least_squares

    res, lin, res_many, _ = _functions(model)
    xi_j = jnp.asarray(xi)
    x0s = np.stack([np.asarray(model.sample(rng), dtype=float) for _ in range(starts)])
    fields = np.asarray(res_many(jnp.asarray(x0s), xi_j))
    typical = float(np.median(np.max(np.abs(fields), axis=1)))
    if not np.isfinite(typical) or typical == 0.0:
        typical = 1.0
    dom = np.asarray(model.domain) if model.domain is not None else None
    def finite(a):
        # a step that leaves the chart: stop this start here (LAPACK would print warnings on NaN input)
        if not np.all(np.isfinite(a)):
            raise FloatingPointError("left the chart")
        return a

    fun = lambda x: finite(np.asarray(res(jnp.asarray(x), xi_j)))  # noqa: E731
    jac = lambda x: finite(np.asarray(lin(jnp.asarray(x), xi_j)))  # noqa: E731
    found = []
    converged = 0
    for x0 in x0s:
        try:
            sol = least_squares(fun, x0, jac=jac, method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=max_iterations)
        except Exception:  # a start that leaves the chart (non-finite values): not a zero, try the next
            continue
        x = sol.x
        for _ in range(3):  # Newton polish to round-off
            if not np.all(np.isfinite(x)):
                break
            try:
                x = x - np.linalg.lstsq(jac(x), fun(x), rcond=None)[0]
            except (np.linalg.LinAlgError, FloatingPointError):
                break
        try:
            r = fun(x) if np.all(np.isfinite(x)) else np.array([np.inf])
        except FloatingPointError:
            continue
        if not np.all(np.isfinite(r)) or np.max(np.abs(r)) > ZERO_RTOL * typical:
            continue
        if dom is not None and (np.any(x <= dom[:, 0]) or np.any(x >= dom[:, 1])):
            continue
        converged += 1
        if any(np.max(np.abs(x - q)) <= DEDUP_RTOL * (1.0 + np.max(np.abs(q))) for q in found):
            continue
        found.append(x)
    return found, converged


def _embed(chart, x):
    f = compiled(chart, "embedding", lambda m: quick_jit(lambda y: jnp.asarray(m.embedding(y), dtype=jnp.float64)))
    return np.asarray(f(jnp.asarray(x)))


def _merge_charts(model, points):
    """Keep one of each fixed point seen from several charts (same image under the embedding), checking they agree."""
    if len(model.atlas) == 1 or len(points) < 2:
        return points
    emb = [_embed(model.atlas[p.chart], p.point) for p in points]
    scale = max(float(np.max(np.abs(e))) for e in emb) or 1.0
    vscale = max(max(abs(p.value) for p in points), 1e-300)
    kept = []
    for i, p in enumerate(points):
        same = next((k for k in kept if np.max(np.abs(emb[i] - emb[k])) <= ATLAS_DEDUP_RTOL * scale), None)
        if same is None:
            kept.append(i)
            continue
        q = points[same]
        bad = abs(p.value - q.value) > ATLAS_AGREE_RTOL * vscale
        if p.isolated and q.isolated and len(p.weights) == len(q.weights):
            wscale = max(max((abs(w) for w in p.weights + q.weights), default=0.0), 1e-300)
            bad = bad or np.max(np.abs(np.sort(p.weights) - np.sort(q.weights)), initial=0) > ATLAS_AGREE_RTOL * wscale
        if bad:
            raise ModelError(
                f"charts {q.chart} ({model.atlas[q.chart].name!r}) and {p.chart} ({model.atlas[p.chart].name!r}) of "
                f"{model.name!r} disagree at the same fixed point (embedding {vec(emb[i])}): <mu, xi> = "
                f"{q.value:.10g} and {p.value:.10g}, weights {vec(q.weights)} and {vec(p.weights)}; declare every chart "
                "with the same moment map and action of the one space"
            )
    return [points[k] for k in kept]


def fixed_points(model, xi, *, starts: int = 64, seed: int = 0, max_iterations: int = 200) -> FixedPoints:
    """The zeros of ``X_xi`` in every chart of the model's atlas (multi-start root finding), deduplicated.

    Each comes with ``value = <mu(p), xi>``, ``mu(p)``, the chart it was found in
    and the weights of the linearized action (see the module docstring).
    ``starts`` sampled starts per chart. Fixed points outside every chart, or
    outside its declared domain, are not found; ``completeness`` says whether
    those found satisfy the identities of a compact space (when they fail,
    fixed points are missing: declare ``Model(charts=..., embedding=...)``).

    Example
    -------
    >>> fps = fixed_points(model, [1.0, 0.0, 0.0])     # doctest: +SKIP
    >>> fps[0].weights, fps.complete                   # doctest: +SKIP
    """
    require_model(model, "fixed_points")
    if isinstance(starts, bool) or not isinstance(starts, (int, np.integer)) or starts < 1:
        raise UsageError(f"starts must be a positive integer; got {starts!r}")
    xi = algebra_vector(model, xi)
    xi_j = jnp.asarray(xi)
    points, converged = [], 0
    for k, chart in enumerate(model.atlas):
        rng = np.random.default_rng(seed if k == 0 else [seed, k])
        found, conv = _search(chart, xi, int(starts), rng, max_iterations)
        converged += conv
        _, _, _, ham = _functions(chart)
        for p in found:
            alphas, _, isolated = line_decomposition(chart, p, xi)
            mu = np.asarray(chart.moment_at(jnp.asarray(p)))
            points.append(
                FixedPoint(p, float(ham(jnp.asarray(p), xi_j)), tuple(float(a) for a in alphas), isolated,
                           model.convention.effective_sign, k, tuple(float(v) for v in mu))
            )
    points = _merge_charts(model, points)
    points.sort(key=lambda fp: -fp.value)
    fps = FixedPoints(model.name, tuple(float(v) for v in xi), tuple(points), int(starts), converged, len(model.atlas))
    return FixedPoints(fps.model, fps.xi, fps.points, fps.starts, fps.converged, fps.charts,
                       completeness(fps, model.dim // 2))
