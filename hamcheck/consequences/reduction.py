"""Marsden-Weinstein reduction, checked at sampled points of the level set.

Points of ``Z = {<mu, h_j> = level_j}`` are found by Gauss-Newton projection
(minimum-norm steps) from sampled points. At each: the level is a regular
value (``d mu_h`` has full rank), the action of ``H`` is locally free (the
fields ``X_{h_j}`` are independent), and the kernel of ``omega`` restricted to
``T Z`` is exactly the span of the orbit directions of ``H_level`` (the
stabilizer of the level in ``h``). The reduced dimension is
``dim - dim h - dim h_level``. The reduced volume (when ``H_level = H``) is the
DH density of ``mu_h`` at the level divided by the volume of ``H`` in the
basis ``h_j`` (computed for tori with integral weights, else ``group_volume``):
exact from the fixed points for a circle, else a kernel estimate with
Richardson extrapolation over scrambled Sobol samples. For a nonabelian ``H``
of rank one (``su(2)``, ``so(3)``) at ``0`` the volume comes from the DH
density of a maximal torus (:mod:`._nonabelian`), estimated twice: from the
torus fixed points and from Liouville samples (``volume_estimates``).

Example
-------
>>> red = hamcheck.reduce(c3, [-1.5])           # C^3 // U(1) at |z|^2 = 3: CP^2
>>> red.dim, red.volume                         # doctest: +SKIP
(4, 22.2066...)
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .._jax import jax, jnp, quick_jit
from ..errors import UsageError
from ._common import compiled, require_model, subalgebra_basis
from .fixed_points import fixed_points
from .integration import weighted_samples
from ._nonabelian import rank_one_volumes
from .moment_image import dh_density

__all__ = ["Reduction", "reduce", "torus_volume"]

#: Relative smallest singular value below which d mu_h (regularity) or the
#: fields X_h (local freeness) count as rank-deficient: round-off gives 1e-16,
#: genuine ranks at sampled points stay above 1e-6. Projections onto a critical level stop
#: at |dmu| ~ 1e-6 relative (linear convergence), so critical levels need a larger floor.
RANK_RTOL = 1e-4
#: Level-set projection: converged at this relative misfit of mu_h.
PROJECTION_RTOL = 1e-12
PROJECTION_ITERATIONS = 60
#: Kernel density bandwidths (fractions of the spread of mu_h) for the
#: Richardson-extrapolated density at the level (bias ~ eps^2); wide enough that
#: the sampling noise (measured over independent scramblings) stays ~1e-2.
KDE_BANDWIDTH = 0.1
#: Independent scramblings of the Sobol samples for the kernel estimate; its
#: error is the Richardson correction plus ERROR_FACTOR standard errors.
KDE_REPLICATES = 4
ERROR_FACTOR = 3.0
#: A kernel estimate whose error exceeds this fraction of itself is not
#: reported: the density does not settle (typically a non-compact reduced space).
VOLUME_MAX_RTOL = 0.1


@dataclass(frozen=True, eq=False)
class Reduction:
    """Hypotheses and outcome of reduction at ``level``."""

    model: str
    level: tuple
    points: int
    regular: bool
    locally_free: bool
    kernel_is_orbit: bool
    dim: int
    volume: float | None
    volume_error: float | None
    volume_method: str
    worst_regularity: float
    worst_freeness: float
    worst_kernel: float
    #: Every estimate of the volume made (best first); ``volume`` is the first.
    volume_estimates: tuple = ()

    def __repr__(self) -> str:
        vol = "volume not computed" if self.volume is None else f"volume={self.volume:.10g} +- {self.volume_error:.1e}"
        return (
            f"Reduction({self.model!r} at {list(self.level)}: regular={self.regular}, locally_free={self.locally_free}, "
            f"kernel=orbits {self.kernel_is_orbit}, dim={self.dim}, {vol}, {self.points} points)"
        )


def _lattice_gcd(Lam):
    m = Lam.shape[0]
    from itertools import combinations

    g = 0
    for cols in combinations(range(Lam.shape[1]), m):
        g = math.gcd(g, abs(int(round(np.linalg.det(Lam[:, cols])))))
    return g


def torus_volume(algebra, B) -> float | None:
    """Volume of the torus ``exp(span B)`` in the basis ``B`` (None if not a closed torus with integral weights)."""
    if not algebra.is_matrix:
        return None
    mats = np.einsum("ja,akl->jkl", B, algebra.basis)
    gen = np.einsum("j,jkl->kl", 1 + 0.1 * np.arange(len(B)) ** 0.5 * np.sqrt(2), mats)
    _, V = np.linalg.eig(gen)
    Vinv = np.linalg.inv(V)
    Lam = np.stack([np.real(np.diag(Vinv @ M @ V) / 1j) for M in mats])
    if np.max(np.abs(Lam - np.round(Lam))) > 1e-8:
        return None
    g = _lattice_gcd(np.round(Lam))
    return None if g == 0 else (2 * math.pi) ** len(B) / g


def _build(model):
    def mu_h(x, B):
        return B @ model.moment_at(x)

    def geometry(x, B):
        J = jax.jacfwd(mu_h)(x, B)
        return J, B @ model.fields_at(x), model.form_at(x)

    return quick_jit(mu_h), quick_jit(jax.jacfwd(mu_h)), quick_jit(geometry)


def _null(A, tol, scale=0.0):
    """Null space of ``A``: singular values below ``tol`` times the largest (or ``scale``, if larger) count as 0."""
    _, s, vt = np.linalg.svd(A)
    r = int(np.sum(s > tol * max(s[0] if s.size else 0, scale, 1e-300)))
    return vt[r:].T


def reduce(model, level, subalgebra=None, *, samples: int = 16, seed: int = 0, group_volume=None,
           volume_samples: int = 2**15) -> Reduction:
    """Check the hypotheses and conclusion of Marsden-Weinstein at ``level`` and report dim and volume.

    ``subalgebra``: names, indices or vectors spanning ``h`` (default: all of g);
    ``level``: the components ``<mu, h_j>`` of the level.
    """
    require_model(model, "reduce")
    B = subalgebra_basis(model, subalgebra, "subalgebra")
    m = B.shape[0]
    lam = np.atleast_1d(np.asarray(level, dtype=float))
    if lam.shape != (m,) or not np.all(np.isfinite(lam)):
        raise UsageError(f"level must have {m} finite components (one per element of the subalgebra); got {level!r}")
    C = model.algebra.structure_constants
    br = np.einsum("ia,jb,abc->ijc", B, B, C)
    coords, *_ = np.linalg.lstsq(B.T, br.reshape(-1, br.shape[-1]).T, rcond=None)
    if np.max(np.abs(B.T @ coords - br.reshape(-1, br.shape[-1]).T), initial=0) > 1e-9 * max(1.0, np.abs(br).max()):
        raise UsageError("subalgebra is not closed under the bracket; give a basis of a subalgebra")
    c = coords.T.reshape(m, m, m)
    M = np.einsum("ijl,l->ij", c, lam)
    h_lam = _null(M, 1e-10) if np.any(M) else np.eye(m)
    k_lam = h_lam.shape[1]
    mu_h, jac, geometry = compiled(model, "reduction", _build)
    Bj = jnp.asarray(B)
    rng = np.random.default_rng(seed)
    scale = max(float(np.max(np.abs(lam))), 1.0)
    pts, typ_J, typ_X = [], [], []
    for _ in range(samples * 4):
        if len(pts) == samples:
            break
        x = np.asarray(model.sample(rng), dtype=float)
        J0, X0, _ = (np.asarray(a) for a in geometry(jnp.asarray(x), Bj))
        typ_J.append(np.linalg.norm(J0, 2))
        typ_X.append(np.linalg.norm(X0, 2))
        for _ in range(PROJECTION_ITERATIONS):
            r = np.asarray(mu_h(jnp.asarray(x), Bj)) - lam
            if not np.all(np.isfinite(r)) or np.max(np.abs(r)) <= PROJECTION_RTOL * scale:
                break
            J = np.asarray(jac(jnp.asarray(x), Bj))
            x = x - J.T @ np.linalg.lstsq(J @ J.T, r, rcond=None)[0]
        r = np.asarray(mu_h(jnp.asarray(x), Bj)) - lam
        if np.all(np.isfinite(r)) and np.max(np.abs(r)) <= PROJECTION_RTOL * scale:
            pts.append(x)
    if not pts:
        raise UsageError(f"no sampled point could be projected onto the level {list(lam)}: is it in the image of mu?")
    # ranks relative to the typical size over the samples (a single row always has full relative rank)
    tJ, tX = float(np.median(typ_J)), float(np.median(typ_X))
    reg, free, kern = [], [], []
    for x in pts:
        J, X, W = (np.asarray(a) for a in geometry(jnp.asarray(x), Bj))
        sJ = np.linalg.svd(J, compute_uv=False)
        sX = np.linalg.svd(X, compute_uv=False)
        reg.append(sJ[-1] / max(sJ[0], tJ, 1e-300))
        free.append(sX[-1] / max(sX[0], tX, 1e-300))
        T = _null(J, RANK_RTOL)  # tangent space of Z
        K = T.T @ W @ T
        # relative to omega itself: on a 0-dimensional reduction K is round-off and all of T Z is kernel
        ker = T @ _null(K, RANK_RTOL, np.linalg.norm(W, 2)) if K.size else np.zeros((model.dim, 0))
        orbit = (h_lam.T @ X).T  # directions of H_level orbits (d x k_lam)
        if ker.shape[1] != k_lam:
            kern.append(1.0)
            continue
        Q, _ = np.linalg.qr(orbit)
        kern.append(float(np.linalg.norm(ker - Q @ (Q.T @ ker)) / max(np.linalg.norm(ker), 1e-300)))
    regular = bool(min(reg) > RANK_RTOL)
    locally_free = bool(min(free) > RANK_RTOL)
    kernel_ok = bool(max(kern) < 1e-8)
    dim = model.dim - m - k_lam
    volume, err, how = None, None, "not computed: the level is not fixed by H (H_level != H)"
    estimates = ()
    if k_lam == m and regular and locally_free and np.any(c):
        estimates, how = rank_one_volumes(model, B, c, lam, seed=seed, group_volume=group_volume)
        if estimates:
            volume, err = estimates[0].value, estimates[0].error
            how = f"{estimates[0].method}; {how}"
    elif k_lam == m and regular and locally_free:
        vol_h = group_volume if group_volume is not None else torus_volume(model.algebra, B) if not np.any(c) else None
        if vol_h is None:
            how = "not computed: pass group_volume (volume of H in the basis of the subalgebra)"
        else:
            f, ferr, how = _density_at(model, B, lam, seed, volume_samples)
            if f is not None:
                volume, err = f / vol_h, ferr / vol_h
    return Reduction(
        model.name, tuple(float(v) for v in lam), len(pts), regular, locally_free, kernel_ok, dim, volume, err, how,
        float(min(reg)), float(min(free)), float(max(kern)), tuple(estimates),
    )


def _density_at(model, B, lam, seed, volume_samples):
    """DH density of mu_h at lam: exact from fixed points for a circle, else a kernel estimate."""
    n = model.dim // 2
    if B.shape[0] == 1:
        fps = fixed_points(model, B[0], seed=seed)
        if len(fps) and fps.isolated:
            return float(dh_density(fps, n, lam[0])), 0.0, "DH density from the fixed points of the circle"
    m = B.shape[0]
    f1s, f2s = [], []
    for r in range(KDE_REPLICATES):
        _, w, mu = weighted_samples(model, volume_samples, seed=1000 * seed + r)
        y = mu @ B.T - lam
        if r == 0:  # one bandwidth for every replicate
            spread = np.sqrt(np.average(y ** 2, axis=0, weights=w) - np.average(y, axis=0, weights=w) ** 2)

        def kde(eps):
            h = eps * spread
            k = np.exp(-0.5 * np.sum((y / h) ** 2, axis=1)) / ((2 * np.pi) ** (m / 2) * np.prod(h))
            return float(np.sum(w * k))

        f1s.append(kde(KDE_BANDWIDTH))
        f2s.append(kde(2 * KDE_BANDWIDTH))
    f1, f2 = float(np.mean(f1s)), float(np.mean(f2s))
    f = (4 * f1 - f2) / 3
    noise = float(np.std([(4 * a - b) / 3 for a, b in zip(f1s, f2s)], ddof=1)) / math.sqrt(KDE_REPLICATES)
    err = abs(f1 - f2) / 3 + ERROR_FACTOR * noise
    how = (f"kernel estimate of the DH density (Richardson over two bandwidths, {KDE_REPLICATES} x "
           f"{volume_samples} Liouville samples)")
    if not np.isfinite(f) or err > VOLUME_MAX_RTOL * abs(f):
        return None, None, (
            f"not computed: the kernel estimate of the DH density does not settle (relative error "
            f"{err / max(abs(f), 1e-300):.2g} > {VOLUME_MAX_RTOL:g}): the reduced space may not be compact "
            "(infinite volume), or the samples are too few near the level (pass more volume_samples)")
    return f, err, how
