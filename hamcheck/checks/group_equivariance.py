"""``group_equivariance``: ``mu(g.x) = Ad*_g mu(x)`` at sampled group elements (needs a finite action).

>>> from hamcheck.checks.group_equivariance import CHECK
>>> CHECK.tolerance.default
1e-10
"""

from __future__ import annotations

import numpy as np

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


def coadjoint(algebra, g, mu):
    """``Ad*_g mu`` in the basis, the same linear map as ``algebra.coadjoint`` in O(n^3 + k n^2).

    ``<Ad*_g mu, e_b> = sum_c mu_c coord_c(g^-1 e_b g)`` and the coordinates are the
    linear map ``P [Re vec; Im vec]`` (least squares in the basis), so with
    ``Z = reshape(P^T mu)`` (real and imaginary halves) the component is
    ``Re <g^-H Z g^H, e_b>``: one solve and two products of n x n matrices instead of
    conjugating all k basis matrices (k n^3; 3 s for 64 points of CP^64).

    >>> import numpy as np, hamcheck                                     # doctest: +SKIP
    >>> np.allclose(coadjoint(algebra, g, mu), algebra.coadjoint(g, mu))  # doctest: +SKIP
    True
    """
    basis = np.asarray(algebra.basis)
    m = basis.shape[1]
    half = jnp.asarray(algebra._pinv).T @ mu  # (2 m^2,): the functional mu o coord on [Re vec; Im vec]
    Z = (half[: m * m] + 1j * half[m * m:]).reshape(m, m)
    gh = jnp.conj(g).T
    Y = jnp.linalg.solve(gh, Z @ gh)  # g^-H Z g^H
    return jnp.real(jnp.einsum("ij,bij->b", jnp.conj(Y), jnp.asarray(basis)))


def group_equivariance(model, x, probe):
    g = probe["g"]
    lhs = model.moment_at(model.action_at(g, x))
    rhs = coadjoint(model.algebra, g, model.moment_at(x))
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
