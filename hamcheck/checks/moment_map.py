"""``moment_map``: the moment equation ``X_a^i omega_ij = sign d_j mu_a``.

The diagnosis fits one factor per generator over all points
(``lhs ~ lam_a * rhs``): all ``-1`` is a sign mistake, other constants a scale.

>>> from hamcheck.checks.moment_map import CHECK
>>> CHECK.state((-1, 1)).split(":")[1].strip()[:30]
'X_a^i omega_ij = -d_j mu_a for'
"""

from __future__ import annotations

import numpy as np

from .._jax import jnp
from ..diagnose import Diagnosis, vec
from ._base import CENTRAL_DIFFERENCES, FIRST_DERIVATIVES, TINY, Check, Tolerance, row_relative, signed


def statement(sign: int, flow: int) -> str:
    return (
        f"the moment equation, with sign = {sign:+d}: X_a^i omega_ij = {signed(sign, 'd_j mu_a')} for every "
        "basis element e_a (contract the fundamental vector field X_a into the FIRST slot of omega; "
        f"the result must be {'' if sign > 0 else 'minus '}the differential of the component mu_a = <mu, e_a>)."
    )


def moment_map(model, x, probe):
    W = model.form_at(x)
    X = model.fields_at(x)
    lhs = X @ W  # (iota_{X_a} omega)_j
    rhs = model.convention.sign * model.ops.jacobian(model.moment_at, x)
    scale = jnp.abs(X) @ jnp.abs(W) + jnp.abs(rhs)
    # pooled sums for the least-squares factor per generator: lhs ~ lam_a * rhs
    return {
        "residual": row_relative(lhs - rhs, scale),
        "lr": jnp.sum(lhs * rhs, axis=1),
        "rr": jnp.sum(rhs * rhs, axis=1),
        "ll": jnp.sum(lhs * lhs, axis=1),
    }


TOLERANCE = Tolerance(1e-12, FIRST_DERIVATIVES, 1e-8, CENTRAL_DIFFERENCES)


def diagnose(ev) -> Diagnosis:
    if not ev.failed:
        return Diagnosis()
    conv = ev.model.convention
    names = ev.model.algebra.names
    lr, rr, ll = (ev.out[k].sum(axis=0) for k in ("lr", "rr", "ll"))
    fits = rr > TINY
    lam = np.where(fits, lr / np.where(fits, rr, 1.0), np.nan)
    misfit = np.sqrt(np.maximum(ll - 2 * lam * lr + lam**2 * rr, 0.0) / np.maximum(ll, TINY))
    misfit = np.where(fits, misfit, np.where(ll > TINY, 1.0, 0.0))
    lam = np.where(fits, lam, np.where(ll > TINY, np.nan, 1.0))
    data = {"factors": lam, "misfit": misfit, "point": ev.worst_point}
    fit = ev.tolerances.fit
    if not np.all(misfit <= fit) or not np.all(np.isfinite(lam)):
        bad = [names[a] for a in range(len(names)) if not misfit[a] <= fit]
        return Diagnosis(f"no constant factor explains it (generators {', '.join(bad)})")
    if np.all(np.abs(lam + 1) <= fit * 10):
        return Diagnosis("mu has the opposite sign", ((
            "moment-sign",
            f"iota_X omega = -{'' if conv.sign == 1 else '-'}d mu: the moment map satisfies the moment "
            f"equation with the opposite sign for the declared convention (sign={conv.sign:+d}, "
            f"flow={conv.flow:+d}). Fix: negate the moment map, or declare "
            f"Convention(sign={-conv.sign:+d}, flow={conv.flow:+d})",
            data,
        ),))
    shown = vec(lam)
    same = np.allclose(lam, lam[0], rtol=1e-6)
    how = (
        f"multiply mu by {lam[0]:.6g} (or divide omega by {lam[0]:.6g})"
        if same
        else f"multiply each component mu_a by the factor shown, {shown}"
    )
    return Diagnosis(f"mu is off by factors {shown}", ((
        "moment-scale",
        f"the moment equation holds up to constant factors: iota_(X_a) omega = lam_a * sign * d mu_a with "
        f"lam = {shown} for ({', '.join(names)}). Fix: {how}",
        data,
    ),))


CHECK = Check(
    "moment_map", statement, moment_map, TOLERANCE, diagnose=diagnose, finding_kinds=("moment-sign", "moment-scale"),
)
