"""``equivariance``: infinitesimal equivariance ``omega(X_a, X_b) = sign*flow <mu, [e_a, e_b]>``.

The defect ``c_ab = omega(X_a, X_b) - s <mu, [e_a, e_b]>`` is kept per point: a
constant ``c`` that is a coboundary ``s <lambda, [e_a, e_b]>`` means ``mu`` is
shifted by ``lambda``; any other constant is a central 2-cocycle.

>>> from hamcheck.checks.equivariance import CHECK
>>> "sign*flow = -1" in CHECK.state((1, -1))
True
"""

from __future__ import annotations

import numpy as np

from .._jax import jnp
from ..diagnose import Diagnosis, vec
from ._base import CENTRAL_DIFFERENCES, FIRST_DERIVATIVES, TINY, Check, Tolerance, row_relative, signed


def statement(sign: int, flow: int) -> str:
    s = sign * flow
    return (
        f"infinitesimal equivariance, with sign*flow = {s:+d}: omega(X_a, X_b) = "
        f"{signed(s, '<mu, [e_a, e_b]>')} for all pairs a, b. A constant mismatch means mu is off by a "
        "constant (or is equivariant only for a central extension)."
    )


def equivariance(model, x, probe):
    W = model.form_at(x)
    X = model.fields_at(x)
    mu = model.moment_at(x)
    C = jnp.asarray(model.algebra.structure_constants)
    s = model.convention.effective_sign
    lhs = X @ W @ X.T
    rhs = s * jnp.einsum("abc,c->ab", C, mu)
    cocycle = lhs - rhs
    scale = jnp.abs(X) @ jnp.abs(W) @ jnp.abs(X).T + jnp.einsum("abc,c->ab", jnp.abs(C), jnp.abs(mu))
    return {"residual": row_relative(cocycle, scale), "cocycle": cocycle, "scale": jnp.max(scale)}


#: through vector fields that may themselves be differences of the action when finite differences are used
TOLERANCE = Tolerance(1e-12, FIRST_DERIVATIVES, 1e-8, CENTRAL_DIFFERENCES)

CONSTANT = Tolerance(
    1e-9,
    "spread of the equivariance cocycle across points, relative to its scale, below which it counts as constant",
    1e-6,
    "the cocycle inherits the differences' error (1e-8 relative)",
)


def diagnose(ev) -> Diagnosis:
    if not ev.failed:
        return Diagnosis()
    C = ev.model.algebra.structure_constants
    names = ev.model.algebra.names
    s = ev.model.convention.effective_sign
    coc = ev.out["cocycle"]
    scale = max(float(np.max(ev.out["scale"])), TINY)
    mean = coc.mean(axis=0)
    spread = float(np.max(np.abs(coc - mean))) / scale
    if spread > ev.tolerances.constant:
        return Diagnosis(
            f"omega(X_a, X_b) - s<mu, [e_a, e_b]> varies over the chart (spread {spread:.1e}), so it is not a "
            "constant shift; fix the moment equation first"
        )
    k = len(names)
    A = s * C.reshape(k * k, k)
    lam, *_ = np.linalg.lstsq(A, -mean.reshape(-1), rcond=None)
    misfit = np.linalg.norm(A @ lam + mean.reshape(-1)) / max(np.linalg.norm(mean), TINY)
    if misfit <= ev.tolerances.fit and np.any(C):
        return Diagnosis(f"mu is shifted by a constant {vec(lam)}", ((
            "moment-offset",
            f"the moment map is off by a constant: mu - lambda is equivariant for lambda = {vec(lam)} "
            f"(components along {', '.join(names)}). Fix: subtract lambda from the moment map",
            {"offset": lam, "cocycle": mean, "misfit": misfit},
        ),))
    pairs = [f"c({names[a]},{names[b]}) = {mean[a, b]:.4g}" for a in range(k) for b in range(a + 1, k) if abs(mean[a, b]) > 1e-9 * scale]
    return Diagnosis("equivariant only for a central extension", ((
        "central-cocycle",
        "omega(X_a, X_b) - s<mu, [e_a, e_b]> is a constant 2-cocycle that is not a coboundary "
        f"({'; '.join(pairs)}): no constant shift of mu removes it. The moment map is equivariant only "
        "for the central extension of the algebra by this cocycle; declare the extended algebra (add a "
        "central generator) if that is intended",
        {"cocycle": mean, "misfit_as_coboundary": misfit},
    ),))


CHECK = Check(
    "equivariance", statement, equivariance, TOLERANCE, diagnose=diagnose,
    finding_kinds=("moment-offset", "central-cocycle"), extra_tolerances=(("constant", CONSTANT),),
)
