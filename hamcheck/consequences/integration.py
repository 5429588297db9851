"""Integrals over a model's chart against the Liouville measure ``omega^n / n!``.

The chart's domain (``Model(domain=...)``: per-coordinate bounds, infinite
allowed, covering the manifold up to measure zero; all of ``R^dim`` when not
declared) is mapped onto the unit cube:

* all of ``R^d`` (d >= 2): hyperspherical coordinates with radius
  ``r = c u / (1 - u)``, so integrands that decay like ``|x|^-(d+1)`` or faster
  (e.g. the Liouville density of a compact manifold in an affine chart) stay
  bounded, with no corner singularity as a product of per-axis maps would have;
* otherwise per coordinate: affine on ``[lo, hi]``, ``lo + c u / (1 - u)`` on a
  half-line, ``c tan(pi (u - 1/2))`` on a line.

In dimension <= :data:`CUBATURE_MAX_DIM` the cube is integrated by adaptive
cubature (``scipy.integrate.cubature``, product Gauss-Kronrod), above it by
scrambled Sobol quasi-Monte Carlo with independent randomizations, whose
spread gives the stated error. The integrand is evaluated by one jitted,
vmapped function per model, called on fixed-size padded batches.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._jax import jax, jnp, quick_jit
from ..errors import ModelError, UsageError
from ._common import compiled, log_liouville

__all__ = ["CUBATURE_MAX_DIM", "cube_map", "integrate", "weighted_samples"]

#: Highest chart dimension integrated by adaptive cubature (product rules grow
#: like 21^d nodes per region; at d = 4 that is 2e5 nodes, still fast jitted).
CUBATURE_MAX_DIM = 4
#: Points per jitted evaluation batch (fixed, so one compilation serves all calls).
BATCH = 8192
#: Points vmapped together inside that batch (``jax.lax.map(..., batch_size=VMAP_BATCH)``). One vmap over
#: all 8192 points hung jaxlib 0.10.2's CPU runtime (every thread idle) within 5 to 25 evaluations of the
#: u(3) orbit's integrand (batched LAPACK inverses and determinants); sub-batches of 256 ran 500
#: evaluations without a hang and as fast (measured; DEVELOPERS.md, Known limits).
VMAP_BATCH = 256
#: Randomizations of the scrambled Sobol set; their spread / sqrt(R) is the error.
QMC_RANDOMIZATIONS = 8


def _transform(model):
    """``u in (0,1)^d -> (x, log|dx/du|)`` for the model's domain (traceable)."""
    d = model.dim
    pts = _samples(model)
    dom = model.domain if model.domain is not None else tuple((-np.inf, np.inf) for _ in range(d))
    lo = np.array([b[0] for b in dom])
    hi = np.array([b[1] for b in dom])
    if d >= 2 and np.all(np.isinf(lo)) and np.all(np.isinf(hi)):
        c = float(np.median(np.linalg.norm(pts, axis=1)))
        c = c if np.isfinite(c) and c > 0 else 1.0

        def spherical(u):
            rho = u[0]
            r = c * rho / (1.0 - rho)
            logj = jnp.log(c) - 2.0 * jnp.log1p(-rho) + (d - 1) * jnp.log(r)
            phis = [jnp.pi * u[j] for j in range(1, d - 1)] + [2.0 * jnp.pi * u[d - 1]]
            logj = logj + (d - 2) * jnp.log(jnp.pi) + jnp.log(2.0 * jnp.pi)
            x, prod = [], r
            for j, phi in enumerate(phis):
                x.append(prod * jnp.cos(phi))
                prod = prod * jnp.sin(phi)
                if j < d - 2:
                    logj = logj + (d - 2 - j) * jnp.log(jnp.abs(jnp.sin(phi)))
            x.append(prod)
            return jnp.stack(x), logj

        return spherical, f"R^{d} (hyperspherical, radius scale {c:.3g})"

    scale = np.ones(d)
    for i in range(d):
        if np.isinf(lo[i]) or np.isinf(hi[i]):
            ref = hi[i] if np.isinf(lo[i]) and not np.isinf(hi[i]) else (lo[i] if not np.isinf(lo[i]) else 0.0)
            s = float(np.median(np.abs(pts[:, i] - ref)))
            scale[i] = s if np.isfinite(s) and s > 0 else 1.0

    def per_axis(u):
        xs, logj = [], 0.0
        for i in range(d):
            ui, c = u[i], scale[i]
            if np.isfinite(lo[i]) and np.isfinite(hi[i]):
                xs.append(lo[i] + (hi[i] - lo[i]) * ui)
                logj = logj + np.log(hi[i] - lo[i])
            elif np.isfinite(lo[i]):
                xs.append(lo[i] + c * ui / (1.0 - ui))
                logj = logj + np.log(c) - 2.0 * jnp.log1p(-ui)
            elif np.isfinite(hi[i]):
                xs.append(hi[i] - c * ui / (1.0 - ui))
                logj = logj + np.log(c) - 2.0 * jnp.log1p(-ui)
            else:
                t = jnp.pi * (ui - 0.5)
                xs.append(c * jnp.tan(t))
                logj = logj + np.log(c * np.pi) - 2.0 * jnp.log(jnp.cos(t))
        return jnp.stack(xs), logj

    label = "declared domain" if model.domain is not None else f"R^{d}"
    return per_axis, label


def _samples(model, n=256, seed=12345):
    rng = np.random.default_rng(seed)
    return np.stack([np.asarray(model.sample(rng), dtype=float) for _ in range(n)])


def cube_map(model):
    """The cached ``(map, label)`` from the unit cube onto the model's domain."""
    return compiled(model, "cube_map", _transform)


def _build_integrand(model):
    to_x, _ = cube_map(model)

    def one(u, s, xi):
        x, logj = to_x(u)
        mu = model.moment_at(x)
        return jnp.exp(s * (mu @ xi) + log_liouville(model, x) + logj), x, mu

    return quick_jit(lambda U, s, xi: jax.lax.map(lambda u: one(u, s, xi), U, batch_size=VMAP_BATCH))


def _evaluator(model):
    return compiled(model, "integrand", _build_integrand)


def _evaluate(model, u, s, xi):
    """Integrand, points and moments at cube points ``u`` (padded to :data:`BATCH`)."""
    f = _evaluator(model)
    vals, xs, mus = [], [], []
    for start in range(0, u.shape[0], BATCH):
        chunk = u[start : start + BATCH]
        m = chunk.shape[0]
        if m < BATCH:
            chunk = np.concatenate([chunk, np.full((BATCH - m, u.shape[1]), 0.5)])
        v, x, mu = f(jnp.asarray(chunk), float(s), jnp.asarray(xi, dtype=float))
        vals.append(np.asarray(v)[:m])
        xs.append(np.asarray(x)[:m])
        mus.append(np.asarray(mu)[:m])
    vals = np.concatenate(vals)
    if not np.all(np.isfinite(vals)):
        i = int(np.argmax(~np.isfinite(vals)))
        x_bad = np.concatenate(xs)[i]
        raise ModelError(
            f"the integrand exp(s <mu, xi>) |Pf omega| is not finite at x = {np.array2string(x_bad, precision=4)} "
            "(form or moment non-finite there, or exp overflowed). Declare the chart's domain with "
            "Model(domain=[(lo, hi), ...]) so integration stays where the model is defined, or use a smaller s"
        )
    return vals, np.concatenate(xs), np.concatenate(mus)


@dataclass(frozen=True)
class Integral:
    value: float
    error: float
    evaluations: int
    method: str
    domain: str


def integrate(model, xi, s, *, rtol=1e-8, samples=2**14, seed=0) -> Integral:
    """``int exp(s <mu, xi>) omega^n/n!`` over the chart's domain, with an error estimate."""
    built = model.construction
    if getattr(built, "covers_once", True) is False:
        # a builder that knows its chart is local (hamcheck.orbits.OrbitChart) says so: no integral over it
        raise ModelError(
            f"{model.name!r} is charted by {getattr(built, 'kind', 'a local')} coordinates that do not cover the space "
            f"once ({getattr(built, 'reason', 'a local chart')}); pass a covering chart and its domain (chart=, domain=)"
        )
    d = model.dim
    _, label = cube_map(model)
    xi = np.asarray(xi, dtype=float)
    if d <= CUBATURE_MAX_DIM:
        from scipy.integrate import cubature

        count = [0]

        def f(u):
            count[0] += u.shape[0]
            return _evaluate(model, np.asarray(u), s, xi)[0]

        res = cubature(f, np.zeros(d), np.ones(d), rule="gk21", rtol=rtol, atol=0.0, max_subdivisions=100000)
        if res.status != "converged":
            raise UsageError(
                f"adaptive cubature did not reach rtol={rtol:g} (estimate {res.estimate:.6g} +- {res.error:.1e}); "
                "the integrand may not be integrable over the domain, or rtol is too tight"
            )
        return Integral(float(res.estimate), float(res.error), count[0], "adaptive cubature (gk21)", label)
    u_sets = _sobol(d, samples, seed)
    means = [float(np.mean(_evaluate(model, u, s, xi)[0])) for u in u_sets]
    err = float(np.std(means, ddof=1) / np.sqrt(len(means)))
    return Integral(float(np.mean(means)), err, samples * len(means), f"scrambled Sobol QMC ({len(means)} x {samples})", label)


def _sobol(d, samples, seed):
    from scipy.stats import qmc

    m = int(np.ceil(np.log2(max(samples, 2))))
    out = []
    for r in range(QMC_RANDOMIZATIONS):
        u = qmc.Sobol(d, scramble=True, seed=np.random.default_rng([seed, r])).random_base2(m)
        out.append(np.clip(u, 1e-15, 1 - 1e-15))
    return out


def weighted_samples(model, samples=2**14, seed=0):
    """Points ``x`` with weights ``w`` (sum w f(x) ~ int f omega^n/n!) and their moments, by scrambled Sobol."""
    u = _sobol(model.dim, samples, seed)[0]
    zero = np.zeros(model.algebra.dim)
    w, x, mu = _evaluate(model, u, 0.0, zero)
    return x, w / u.shape[0], mu
