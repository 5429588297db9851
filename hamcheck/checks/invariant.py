"""``invariant``: the group preserves omega, ``L_{X_xi} omega = 0``, along random ``xi`` and directions ``u``.

``(L_X omega)(u, .) = (D_X omega)^T u + omega^T (DX u) + DX^T (omega^T u)``.

>>> from hamcheck.checks.invariant import CHECK
>>> CHECK.tolerance.finite_differences
1e-06
"""

from __future__ import annotations

from .._jax import jnp
from ..diagnose import fails_at_worst
from ._base import FIRST_DERIVATIVES, NESTED_DIFFERENCES, TINY, Check, Tolerance, abs_matvec, over_probes


def statement(sign: int, flow: int) -> str:
    return "the action preserves omega: the Lie derivative L_{X_a} omega = 0 for every basis element e_a."


def probes(model, rng, n, settings):
    m = settings.probes
    return {
        "xi": rng.standard_normal((n, m, model.algebra.dim)),
        "u": rng.standard_normal((n, m, model.dim)),
    }


def invariant(model, x, probe):
    """``(L_X omega)(u, .) = (D_X omega)^T u + omega^T (DX u) + DX^T (omega^T u)``."""
    W = model.form_at(x)
    fields = model.fields_at(x)
    ops = model.ops

    def one(xi, u):
        # derivatives of the fields along u and back along W^T u, through the shared linearization at x
        X = xi @ fields
        DW = ops.jvp(model.form_at, x, X)
        DXu = xi @ ops.jvp(model.fields_at, x, u)
        t3 = ops.vjp(model.fields_at, x, jnp.outer(xi, W.T @ u))
        defect = DW.T @ u + W.T @ DXu + t3
        scale = abs_matvec(DW.T, u) + abs_matvec(W.T, DXu) + jnp.abs(t3)
        return jnp.max(jnp.abs(defect)), jnp.max(scale)

    num, den = over_probes(model, one, probe["xi"], probe["u"])
    return {"residual": jnp.max(num) / jnp.maximum(jnp.max(den), TINY)}


TOLERANCE = Tolerance(1e-12, FIRST_DERIVATIVES, 1e-6, NESTED_DIFFERENCES)

diagnose = fails_at_worst("L_X omega != 0", "not-invariant", (
    "the group does not preserve omega: L_X omega has relative size {r:.2e} {where}. Fix: check that the action (or "
    "the vector fields) is the one that preserves this form; a Hamiltonian action must be symplectic"
))

CHECK = Check(
    "invariant", statement, invariant, TOLERANCE, diagnose=diagnose, probes=probes, finding_kinds=("not-invariant",)
)
