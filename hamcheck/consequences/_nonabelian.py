"""Reduced volumes for a nonabelian group of rank one (``su(2)``, ``so(3)``) at a level it fixes.

Why a torus is enough. Let ``H`` act with moment map ``mu`` and let ``0`` (the
only level a semisimple ``H`` fixes) be a regular value with ``H`` acting
locally freely on ``Z = mu^{-1}(0)``. Near ``Z`` the space is ``Z x h*`` with
the Liouville measure ``vol(H) vol(M_0) d lambda`` (normal form of a free
action; ``vol(H)`` in the invariant volume form dual to the basis of the
coordinates ``lambda``), so ``vol(M_0) = rho(0) / vol(H)`` with ``rho`` the
density of ``mu_* (omega^n / n!)``. ``rho`` is invariant under ``Ad^*``; in
coordinates orthonormal for an invariant inner product (here minus the
Killing form) it is radial on ``h* = R^3``, and its marginal along a unit
``h`` in a maximal torus is the DH density ``f(t)`` of ``<mu, h>``:
``f(t) = 2 pi int_|t|^inf rho(r) r dr``, so ``f'(t) = -2 pi t rho(t)`` and

    ``vol(M_0) = -f''(0) / (2 pi vol(H))``,     ``vol(H) = P * 4 pi / kappa^2``,

where ``P`` is the period of ``exp(t h)`` acting on ``M`` and
``kappa = |[xi, h]|`` for a unit ``xi`` orthogonal to ``h`` (``H -> H/T`` is a
Riemannian submersion onto the ``Ad``-orbit of ``h``, a unit sphere, scaled by
``kappa``). The ratio is independent of the basis and of the scale of the
inner product. (Derived here; it is the rank-one case of the correspondence
between abelian and nonabelian reduction, Martin 2000 (from memory).)

Two estimates of ``f''(0)``, independent in what they sample:

* ``torus fixed points``: ``f`` is the piecewise polynomial of Duistermaat-Heckman
  from the isolated fixed points of ``exp(t h)`` (found in every chart of the
  atlas and tested complete), so
  ``f''(0) = (2 pi)^n sum_{<mu(p),h> > 0} <mu(p),h>^(n-3) / ((n-3)! e_p)``: exact
  up to the round-off of the weights.
* ``Liouville samples``: ``f`` is a polynomial of degree ``< n`` (even, by the
  Weyl reflection ``h -> -h``) on a window free of the values ``<mu(p), h>``;
  a weighted least-squares fit of the scrambled-Sobol Liouville samples of
  ``<mu, h>`` (smooth window ``(1 - (t/W)^2)^3``) gives its ``t^2``
  coefficient. The error is the spread over independent scramblings plus the
  change from window ``W`` to ``W/2``.

Example
-------
>>> from models import polygons                            # doctest: +SKIP
>>> hamcheck.reduce(polygons.build([1, 1, 1, 1, 1]), [0, 0, 0]).volume / math.pi**2   # doctest: +SKIP
10.0000000...
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .._jax import jnp
from ..errors import ModelError, UsageError
from .fixed_points import WEIGHT_ROUNDOFF, fixed_points
from .integration import integrate

__all__ = ["VolumeEstimate", "rank_one_volumes"]

#: Multi-start count for the torus fixed points (a product of k spheres has 2^k;
#: random starts must reach every basin, so more than the default 64).
FIXED_POINT_STARTS = 256
#: Largest order of a kernel of the action tried when measuring the period of
#: ``exp(t h)`` on the space (the element ``exp(P/q h)`` acts trivially).
KERNEL_ORDERS = 12
#: ``exp(P/q h)`` acts trivially when it moves sampled points (through the
#: embedding, or the chart) by at most this relative amount (round-off: 1e-15).
TRIVIAL_RTOL = 1e-9
#: The two tori agree when their volumes differ by less than this many times
#: their summed round-off bounds, plus this relative floor (round-off: 1e-14).
AGREE_FACTOR = 10.0
AGREE_RTOL = 1e-9
#: Sobol points per randomization of the Laplace-transform cross-check.
LAPLACE_SAMPLES = 2**12


@dataclass(frozen=True)
class VolumeEstimate:
    """One estimate of a reduced volume: the method, the value and its error estimate."""

    method: str
    value: float
    error: float

    def __repr__(self) -> str:
        return f"VolumeEstimate({self.method}: {self.value:.10g} +- {self.error:.1e})"


def _killing(c):
    """``K_ij = tr(ad_i ad_j)`` with ``(ad_i)_lk = c[i, k, l]`` (structure constants ``[b_i, b_k] = c_ikl b_l``)."""
    return np.einsum("ikl,jlk->ij", c, c)


def _matrix_period(model, xi):
    """Period of ``exp(t xi)`` in the matrix group of the algebra (None if not a matrix algebra or not closed)."""
    if not model.algebra.is_matrix:
        return None
    mat = np.einsum("a,akl->kl", xi, model.algebra.basis)
    w = np.linalg.eigvals(mat).imag
    w = np.abs(w[np.abs(w) > 1e-9 * max(np.abs(w).max(), 1e-300)])
    if w.size == 0:
        return None
    unit = w.min()
    ratios = w / unit
    if np.max(np.abs(ratios - np.round(ratios))) > 1e-8:
        return None
    g = 0
    for v in np.round(ratios).astype(int):
        g = math.gcd(g, int(v))
    return 2 * math.pi / (unit * g)


def _acts_trivially(model, g, rng) -> bool:
    emb = model.embedding
    for _ in range(4):
        x = np.asarray(model.sample(rng), dtype=float)
        y = np.asarray(model.action_at(jnp.asarray(g), jnp.asarray(x)))
        a, b = (np.asarray(emb(jnp.asarray(x))), np.asarray(emb(jnp.asarray(y)))) if emb is not None else (x, y)
        if not np.all(np.isfinite(b)) or np.max(np.abs(a - b)) > TRIVIAL_RTOL * max(np.max(np.abs(a)), 1.0):
            return False
    return True


def _effective_period(model, xi, seed):
    """Period of ``exp(t xi)`` acting on the space: the matrix period over the order of the kernel it meets."""
    from scipy.linalg import expm

    P = _matrix_period(model, xi)
    if P is None or not model.has_action:
        return P, "the period of the matrix group"
    mat = np.einsum("a,akl->kl", xi, model.algebra.basis)
    rng = np.random.default_rng([seed, 7])
    for q in range(KERNEL_ORDERS, 1, -1):
        if _acts_trivially(model, expm(P / q * mat), rng):
            return P / q, f"the period of the action (the matrix group's over a kernel of order {q})"
    return P, "the period of the action"


def _from_fixed_points(fps, n, a0):
    """``f''(a0)`` from the DH piecewise polynomial, with a round-off bound from the weights."""
    if n < 3:
        return None, None
    wmax = max(abs(w) for p in fps for w in p.hessian_weights)
    terms, bound = [], 0.0
    for p in fps:
        v = p.value - a0
        if v <= 0:
            continue
        t = (2 * math.pi) ** n * v ** (n - 3) / (math.factorial(n - 3) * p.euler)
        rel = sum(WEIGHT_ROUNDOFF * wmax / abs(w) for w in p.hessian_weights) + (n - 3) * WEIGHT_ROUNDOFF
        terms.append(t)
        bound += abs(t) * (rel + 1e-15)
    if not terms:
        return None, None
    return math.fsum(terms), bound


def rank_one_volumes(model, B, c, lam, *, seed, group_volume):
    """Estimates of ``vol(mu_h^{-1}(lam) / H)`` for ``H`` of rank one (see the module docstring).

    Returns ``(estimates, note)``: a tuple of :class:`VolumeEstimate` (best
    first; empty when none could be made) and a one-line account of how the
    volume of ``H`` was found or why nothing was computed.
    """
    m = B.shape[0]
    K = _killing(c)
    if m != 3 or np.any(np.linalg.eigvalsh(-0.5 * (K + K.T)) <= 0):
        return (), (f"not computed: volumes for a nonabelian group are computed for compact groups of rank one "
                    f"(su(2), so(3)); this subalgebra has dimension {m}"
                    + ("" if m != 3 else " and is not compact (its Killing form is not negative definite)"))
    G = -0.5 * (K + K.T)  # invariant inner product in the coordinates of B
    a = np.zeros(m)
    a[-1] = 1.0
    h = a / math.sqrt(a @ G @ a)  # unit element of a maximal torus (the last basis direction)
    # a second maximal torus: the next-to-last basis direction made orthogonal to h (the first or any
    # other direction if that one is parallel to h)
    rest = [e - (e @ G @ h) * h for e in np.eye(m)[[m - 2] + list(range(m - 2))]]
    xi_o = next(v for v in rest if v @ G @ v > 1e-12 * np.trace(G))
    xi_o = xi_o / math.sqrt(xi_o @ G @ xi_o)
    br = np.einsum("i,j,ijk->k", xi_o, h, c)
    kappa2 = float(br @ G @ br)
    xi = B.T @ h  # the torus generator in the algebra's coordinates
    if group_volume is not None:
        vol_H = float(group_volume) * math.sqrt(np.linalg.det(G))
        how_H = "the group volume given"
    else:
        P, how_P = _effective_period(model, xi, seed)
        if P is None:
            return (), "not computed: pass group_volume (volume of H in the basis of the subalgebra)"
        vol_H = P * 4 * math.pi / kappa2
        how_H = f"vol(H) = period x 4 pi / kappa^2 with {how_P}"
    a0 = float(h @ lam)
    n = model.dim // 2
    scale = 1.0 / (2 * math.pi * vol_H)
    estimates, notes, used = [], [how_H], None
    for label, t in (("last basis direction", h), ("next-to-last basis direction", xi_o)):
        est, note, fps = _torus_estimate(model, B.T @ t, float(t @ lam), n, scale, seed, label)
        if est is not None and used is None:
            used = fps
        if est is None:
            notes.append(note)
        else:
            estimates.append(est)
    if len(estimates) == 2:
        a, b = estimates
        gap = abs(a.value - b.value)
        if gap > AGREE_FACTOR * (a.error + b.error) + AGREE_RTOL * abs(a.value):
            return (), (f"not computed: the two maximal tori give different volumes ({a.value:.10g} and {b.value:.10g}); "
                        "the fixed points found are suspect (try another seed, or declare charts holding them all)")
        notes.append(f"the two tori agree to {gap / max(abs(a.value), 1e-300):.1e}")
    if estimates:
        loc = _laplace_check(model, used, n, seed)
        if loc[0] is False:
            return (), "not computed: " + loc[1]
        notes.append(loc[1])
    return tuple(estimates), "; ".join(notes)


def _torus_estimate(model, xi, a0, n, scale, seed, label):
    """The volume from the DH polynomial of ``exp(t xi)`` (``xi`` a unit torus generator), or why not."""
    fps = fixed_points(model, xi, starts=FIXED_POINT_STARTS, seed=seed)
    if not (len(fps) and fps.isolated and fps.complete):
        why = fps.completeness.note if fps.completeness is not None else "none found"
        return None, f"torus along the {label} not used: {why}", fps
    f2, err = _from_fixed_points(fps, n, a0)
    if f2 is None:
        return None, f"torus along the {label} not used: no fixed point above the level", fps
    return VolumeEstimate(f"DH density of the torus along the {label} ({len(fps)} fixed points)",
                          -f2 * scale, abs(err * scale)), "", fps


def _laplace_check(model, fps, n, seed):
    """``(ok, note)``: does the integral of ``exp(s <mu, xi>)`` match the fixed-point sum the volume used?

    The two-sided Laplace transform determines the DH density, so agreement
    at one ``s`` (an independent quasi-Monte-Carlo integral) is evidence that
    the piecewise polynomial differentiated above is the right one.
    """
    from .localization import _agree, fixed_point_sum

    xi = np.asarray(fps.xi)
    s = 1.0 / max(max(abs(p.value) for p in fps), 1e-300)
    try:
        integral = integrate(model, xi, s, samples=LAPLACE_SAMPLES, seed=seed)
    except (ModelError, UsageError) as exc:
        return None, f"the Laplace transform was not compared ({exc})"
    fsum = fixed_point_sum(fps, s, n)
    rel = abs(integral.value - fsum) / max(abs(fsum), 1e-300)
    if not _agree(integral.value, integral.error, fsum):
        return False, (f"the fixed-point data fail localization: integral of exp(s <mu, h>) at s = {s:.3g} is "
                       f"{integral.value:.10g} +- {integral.error:.1e}, the fixed-point sum {fsum:.10g}")
    return True, (f"localization at s = {s:.3g} confirms the DH data to {rel:.1e} "
                  f"(relative error of the integral {integral.error / max(abs(fsum), 1e-300):.1e})")
