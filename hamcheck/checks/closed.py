"""``closed``: ``d omega = 0``, from the full derivative tensor or from random pairs of directions.

Up to ``Settings.full_tensor_max_dim`` the whole tensor
``(d omega)_ijk = d_i omega_jk + d_j omega_ki + d_k omega_ij`` is formed; above,
random pairs ``d omega(u, v, .)`` are taken as whole covectors (pairs keep
sensitivity at every dim; triples dilute sparse mistakes).

>>> from hamcheck.checks.closed import CHECK
>>> CHECK.tolerance.default, CHECK.tolerance.finite_differences
(1e-12, 1e-08)
"""

from __future__ import annotations

from .._jax import jnp
from ..diagnose import fails_at_worst
from ._base import CENTRAL_DIFFERENCES, FIRST_DERIVATIVES, TINY, Check, Tolerance, abs_matvec, over_probes, row_relative


def statement(sign: int, flow: int) -> str:
    return (
        "omega is closed, d omega = 0: d_i omega_jk + d_j omega_ki + d_k omega_ij = 0 for all i, j, k, "
        "where d_i is the derivative along the chart coordinate x_i."
    )


def exterior_derivative(model, x):
    """``(d omega)_ijk = d_i omega_jk + d_j omega_ki + d_k omega_ij`` and the bound of its terms.

    >>> import hamcheck, numpy as np                      # doctest: +SKIP
    >>> d_omega, scale = exterior_derivative(model, np.zeros(model.dim))  # doctest: +SKIP
    """
    D = jnp.moveaxis(model.ops.jacobian(model.form_at, x), 2, 0)  # D[i,j,k] = d_i omega_jk
    A = D.transpose(1, 2, 0)
    B = D.transpose(2, 0, 1)
    return D + A + B, jnp.abs(D) + jnp.abs(A) + jnp.abs(B)


def closed_full(model, x, probe):
    """``d omega`` from the full derivative tensor (small dim)."""
    defect, scale = exterior_derivative(model, x)
    return {"residual": row_relative(defect, scale)}


def closed_pairs(model, x, probe):
    """``d omega(u, v, .)`` as a whole covector for random pairs ``(u, v)``.

    Pairs keep full sensitivity at every dim where random triples dilute a
    sparse mistake like dim^-1.4 (measured). The pairs are consecutive entries
    of one list of directions, ``(d_0, d_1), (d_1, d_2), ...``, so each
    direction costs one jvp of the form shared by the two pairs it is in, and
    ``u^T (d_k omega) v`` is one vjp of the form with the cotangent ``u v^T``.
    """
    form = model.form_at
    ops = model.ops
    dirs = probe["directions"]
    D = over_probes(model, lambda u: ops.jvp(form, x, u), dirs)  # D[p] = d_{dirs[p]} omega
    U, V, Du, Dv = dirs[:-1], dirs[1:], D[:-1], D[1:]

    def one(u, v, Du, Dv):
        g = ops.vjp(form, x, jnp.outer(u, v))  # g_k = u^T (d_k omega) v
        defect = Du.T @ v + Dv @ u + g
        scale = abs_matvec(Du.T, v) + abs_matvec(Dv, u) + jnp.abs(g)
        return jnp.max(jnp.abs(defect)), jnp.max(scale)

    num, den = over_probes(model, one, U, V, Du, Dv)
    return {"residual": jnp.max(num) / jnp.maximum(jnp.max(den), TINY)}


def closed(model, x, probe):
    return closed_pairs(model, x, probe) if "directions" in probe else closed_full(model, x, probe)


def probes(model, rng, n, settings):
    if model.dim <= settings.full_tensor_max_dim:
        return {}
    # settings.pairs pairs of consecutive directions
    return {"directions": rng.standard_normal((n, settings.pairs + 1, model.dim))}


TOLERANCE = Tolerance(1e-12, FIRST_DERIVATIVES, 1e-8, CENTRAL_DIFFERENCES)

diagnose = fails_at_worst(
    "d omega != 0", "not-closed", "d omega does not vanish: relative residual {r:.2e} {where}. Fix: the coefficients "
    "of omega are not those of a closed form; recompute them (e.g. from a potential, omega = d theta or (i/2) d dbar K) "
    "and check each partial derivative",
)

CHECK = Check("closed", statement, closed, TOLERANCE, diagnose=diagnose, probes=probes, finding_kinds=("not-closed",))
