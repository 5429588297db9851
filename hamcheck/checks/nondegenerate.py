"""``nondegenerate``: the smallest singular value of omega is not negligible (it must stay ABOVE its tolerance).

The value compared is the smallest singular value over ``max(largest here,
median largest over the sample)``: a 2x2 antisymmetric matrix has equal singular
values, so the plain ratio cannot see a form shrinking to zero. From the worst
samples an L-BFGS-B search (inside the sample's bounding box) looks for
degenerate points between them.

>>> from hamcheck.checks.nondegenerate import CHECK
>>> CHECK.compare
'above'
"""

from __future__ import annotations

import numpy as np

from .._jax import jax, jnp
from ._family import compile_for
from ..diagnose import Diagnosis, at
from ._base import TINY, Check, Tolerance, import_in_background


def statement(sign: int, flow: int) -> str:
    return (
        "omega is nondegenerate: the matrix omega_ij(x) is invertible everywhere. The residual is its "
        "smallest singular value relative to its typical largest one, and must stay ABOVE the tolerance."
    )


#: Largest dim whose singular values come from a full SVD; above, from one LU factorisation
#: (an SVD of a 512 x 512 matrix took 84 ms, its LU 11 ms, a Hermitian eigenvalue solve 370 ms).
SVD_MAX_DIM = 64
#: Inverse and power iteration steps on W^T W above SVD_MAX_DIM (each a pair of triangular solves
#: or matrix-vector products): from a random start the estimates converge like
#: (sigma_min / sigma_next)^(2k), and for the worst start within a factor n^(1/4k) (1.3 at dim 512).
ITERATIONS = 6


def singular_range(W):
    """Smallest and largest singular value of the form matrix ``W``.

    Up to ``SVD_MAX_DIM`` from an SVD. Above, from one LU factorisation: inverse
    iteration on ``W^T W`` for the smallest (an estimate from above, exact for a
    singular ``W``: a zero pivot gives 0) and power iteration for the largest (an
    estimate from below), each ``ITERATIONS`` steps from a fixed start.

    >>> import jax.numpy as jnp
    >>> [float(s) for s in singular_range(jnp.array([[0.0, 2.0], [-2.0, 0.0]]))]
    [2.0, 2.0]
    """
    d = W.shape[0]
    if d <= SVD_MAX_DIM:
        s = jnp.linalg.svd(W, compute_uv=False)
        return s[-1], s[0]
    from jax.scipy.linalg import lu_factor, lu_solve

    lu = lu_factor(W)
    # a fixed start with no special direction (all components of similar size, irregular signs)
    start = jnp.cos(jnp.arange(1, d + 1, dtype=W.dtype) * 2.399963)
    y = start / jnp.linalg.norm(start)
    inv = y
    for _ in range(ITERATIONS):
        z = lu_solve(lu, lu_solve(lu, y, trans=1))  # (W^T W)^-1 y = W^-1 W^-T y
        inv = jnp.linalg.norm(z)
        y = z / inv
    smin = jnp.where(jnp.isfinite(inv) & (inv > 0), 1.0 / jnp.sqrt(inv), 0.0)
    y = start / jnp.linalg.norm(start)
    big = jnp.zeros((), W.dtype)
    for _ in range(ITERATIONS):
        z = W.T @ (W @ y)
        big = jnp.linalg.norm(z)
        y = z / jnp.maximum(big, TINY)
    return smin, jnp.sqrt(big)


def nondegenerate(model, x, probe):
    smin, smax = singular_range(model.form_at(x))
    return {"residual": smin / jnp.maximum(smax, TINY), "smax": smax}


def relative_to_typical_scale(out) -> np.ndarray:
    """smallest singular value over max(largest here, median largest over points).

    A 2x2 antisymmetric matrix has equal singular values, so the plain ratio
    cannot see a form that shrinks to zero; measuring against the typical size
    of the form over the sample can.
    """
    smax = np.asarray(out["smax"], dtype=float)
    smin = np.asarray(out["residual"], dtype=float) * smax
    finite = np.isfinite(smax)
    typical = np.median(smax[finite]) if finite.any() else 1.0
    return smin / np.maximum(np.maximum(smax, typical), np.finfo(float).tiny)


def prepare(model, settings):
    """Import the search's optimiser (``scipy.optimize``, 0.15-0.2 s) while the checks compile."""
    if settings.search_starts > 0:
        import_in_background("scipy.optimize")


def search_degenerate(model, pts, r, out, settings):
    """Local minimisation of the relative smallest singular value from the worst samples.

    Bounded by the samples' bounding box (and the declared ``domain``); each end
    point is pulled back into the samples' convex hull (:func:`_within_hull`), so
    the search never reports a point outside the region the model samples from.
    A search that stops early only misses points; it cannot fail a model.
    """
    if settings.search_starts <= 0 or pts.shape[0] == 0:
        return pts, r, "no search for degenerate points (search_starts=0)"
    from scipy.optimize import minimize

    typical = float(np.median(out["smax"]))
    lo, hi = pts.min(axis=0), pts.max(axis=0)
    if model.traced:
        def make(m):
            # the typical scale is an argument, so the program is reused across calls
            def ratio_t(x, t):
                smin, smax = singular_range(m.form_at(x))
                return smin / jnp.maximum(jnp.maximum(smax, t), 1e-300)

            return jax.value_and_grad(ratio_t)

        from .run import FAST_COMPILE  # the cheap optimisation level of the checks' programs

        spec = (jax.ShapeDtypeStruct((model.dim,), jnp.float64), jax.ShapeDtypeStruct((), jnp.float64))
        grad_fn = compile_for(model, ("degeneracy-search", settings.fast_compile), make, spec,
                              FAST_COMPILE if settings.fast_compile else None)
        fun = lambda x: grad_fn(x, jnp.float64(typical))  # noqa: E731

        def objective(x):
            v, g = fun(jnp.asarray(x))
            v, g = float(v), np.asarray(g, dtype=float)
            return (v, g) if np.isfinite(v) and np.all(np.isfinite(g)) else (1e300, np.zeros_like(x))

        jac = True
    else:
        def objective(x):
            try:
                s = np.linalg.svd(np.asarray(model.form(np.asarray(x)), dtype=float), compute_uv=False)
            except Exception:
                return 1e300
            v = s[-1] / max(s[0], typical, 1e-300)
            return v if np.isfinite(v) else 1e300

        jac = False
    if model.domain is not None:  # a declared domain bounds the search too
        box = np.asarray(model.domain, dtype=float)
        lo, hi = np.maximum(lo, box[:, 0]), np.minimum(hi, box[:, 1])
    starts = np.argsort(r)[: settings.search_starts if model.dim <= 64 else 1]
    found_x, found_r = [], []
    for i in starts:
        try:
            sol = minimize(
                objective, pts[i], jac=jac, method="L-BFGS-B", bounds=list(zip(lo, hi)),
                options={"maxiter": settings.search_iterations},
            )
        except Exception:
            continue
        # never beyond the samples' convex hull: the box's corners may lie outside the chart's region
        x_end = _within_hull(pts, pts[i], np.asarray(sol.x, dtype=float))
        value = objective(x_end)
        value = float(value[0] if jac else value)
        if np.isfinite(value) and value < 1e299:
            found_x.append(x_end)
            found_r.append(value)
    if not found_r:
        return pts, r, "search for degenerate points found nothing finite"
    best = int(np.argmin(found_r))
    note = f"search from the {len(starts)} worst samples reached {found_r[best]:.1e}"
    if found_r[best] < r.min():
        pts = np.vstack([pts, found_x[best][None]])
        r = np.append(r, found_r[best])
    return pts, r, note


def _within_hull(pts, start, end):
    """The point farthest along the segment ``start -> end`` inside the convex hull of ``pts``.

    ``start`` is a sample (in the hull). The search may end outside the region the
    model samples from (the bounding box is larger than the hull), where its chart
    need not be valid: a degenerate point there is no fault of the model. One
    linear programme: maximise ``s`` with ``start + s (end - start) = pts^T w``,
    ``w >= 0``, ``sum w = 1``, ``0 <= s <= 1``.
    """
    d = end - start
    if not np.any(d):
        return end
    from scipy.optimize import linprog

    n = pts.shape[0]
    A = np.vstack([np.hstack([pts.T, -d[:, None]]), np.hstack([np.ones(n), [0.0]])])
    b = np.append(start, 1.0)
    cost = np.zeros(n + 1)
    cost[-1] = -1.0
    try:
        sol = linprog(cost, A_eq=A, b_eq=b, bounds=[(0, None)] * n + [(0, 1)], method="highs")
    except (ValueError, np.linalg.LinAlgError):
        return start
    if sol.status != 0:
        return start
    return start + float(np.clip(sol.x[-1], 0.0, 1.0)) * d


TOLERANCE = Tolerance(
    1e-10,
    "smallest over (typical) largest singular value of the form matrix below which a point counts as "
    "degenerate: a singular matrix gives about dim * 1e-16; larger values are genuine (if ill-conditioned) "
    "nondegenerate forms",
)

ILL_CONDITIONED = Tolerance(
    1e-7,
    "ratio below which a point is nondegenerate but the residuals of other checks there lose digits; "
    "reported as a diagnosis of trust, not as a failure",
)


def diagnose(ev) -> Diagnosis:
    r = ev.worst_residual
    if not ev.failed:
        if r >= ev.tolerances.ill_conditioned:
            return Diagnosis()
        return Diagnosis(trust=((
            "ill-conditioned",
            f"omega is nearly degenerate at x = {np.array2string(ev.worst_point, precision=4)} (relative "
            f"singular value {r:.1e}); residuals of other checks there lose about "
            f"{-np.log10(r):.0f} digits",
            {"point": ev.worst_point, "ratio": r},
        ),))
    hint = " (dim is odd: no 2-form is nondegenerate in odd dimension)" if ev.model.dim % 2 else ""
    return Diagnosis("omega degenerates", ((
        "degenerate",
        f"omega is degenerate{hint}: smallest relative singular value {r:.2e} "
        f"{at(ev)}. Fix: restrict the chart's domain (sample) away from this point, or correct the form",
        {"point": ev.worst_point, "ratio": r},
    ),))


CHECK = Check(
    "nondegenerate", statement, nondegenerate, TOLERANCE, diagnose=diagnose, compare="above",
    residuals=relative_to_typical_scale, refine=search_degenerate, prepare=prepare, finding_kinds=("degenerate",),
    extra_tolerances=(("ill_conditioned", ILL_CONDITIONED),),
)
