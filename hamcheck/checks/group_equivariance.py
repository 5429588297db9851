"""``group_equivariance``: ``mu(g.x) = Ad*_g mu(x)`` at sampled group elements (needs a finite action).

>>> from hamcheck.checks.group_equivariance import CHECK
>>> CHECK.tolerance.default
1e-10
"""

from __future__ import annotations

from .._jax import jnp
from ..diagnose import Diagnosis, at
from ._base import GROUP_ELEMENTS, TINY, Check, Tolerance, group_elements, needs_action


def statement(sign: int, flow: int) -> str:
    return (
        "equivariance under the group: mu(g.x) = Ad*_g mu(x), i.e. <mu(g.x), e_b> = <mu(x), Ad_{g^-1} e_b>, "
        "at sampled group elements g."
    )


def probes(model, rng, n, settings):
    return {"g": group_elements(model, rng, n, settings.group_scale)}


def group_equivariance(model, x, probe):
    g = probe["g"]
    lhs = model.moment_at(model.action_at(g, x))
    rhs = model.algebra.coadjoint(g, model.moment_at(x))
    sc = jnp.maximum(jnp.maximum(jnp.max(jnp.abs(lhs)), jnp.max(jnp.abs(rhs))), TINY)
    return {"residual": jnp.max(jnp.abs(lhs - rhs)) / sc}


TOLERANCE = Tolerance(
    1e-10,
    "relative difference of mu(g.x) and Ad*_g mu(x): " + GROUP_ELEMENTS,
    None,
    "no derivative involved",
)


def diagnose(ev) -> Diagnosis:
    if not ev.failed:
        return Diagnosis()
    return Diagnosis(f"mu(g.x) != Ad*_g mu(x) (relative {ev.worst_residual:.1e} {at(ev)})")


CHECK = Check(
    "group_equivariance", statement, group_equivariance, TOLERANCE, diagnose=diagnose, probes=probes,
    applies=needs_action("test mu(g.x) = Ad*_g mu(x)"),
)
