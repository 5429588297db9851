"""Tests of hamcheck.loop_groups.groups: matrix groups, their exponentials, the su(2) coordinate formulas.

References: docs/references.md, Loop groups (basis and inner product), scipy's expm as an oracle.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.linalg

from hamcheck import loop_groups as af
from helpers import rel

GROUPS = [af.SU2, af.SO3, af.U1, af.SU(3)]
#: exponentials and products of unitary matrices: a few hundred ulps
ROUNDOFF = 1e-13


def test_su2_basis_conventions():
    # references.md, Loop groups: e_k = -i sigma_k / 2, [e_j, e_k] = eps_jkl e_l, <e_j, e_k> = delta_jk / 2
    E = af.SU2.basis
    assert np.allclose(E[0] @ E[1] - E[1] @ E[0], E[2], atol=1e-15)
    assert np.allclose(E[1] @ E[2] - E[2] @ E[1], E[0], atol=1e-15)
    gram = -np.einsum("aij,bji->ab", E, E).real
    assert np.allclose(gram, np.eye(3) / 2, atol=1e-15)
    # so(3) with the scale 1/4 has the same structure constants and Gram matrix (su(2) = so(3))
    L = af.SO3.basis
    assert np.allclose(L[0] @ L[1] - L[1] @ L[0], L[2], atol=1e-15)
    assert np.allclose(np.diag(af.SO3.norms), np.eye(3) / 2, atol=1e-15)


@pytest.mark.parametrize("group", GROUPS, ids=lambda g: g.name)
def test_group_exp_matches_scipy(group):
    # common practice: closed-form exponentials against scipy's Pade expm
    rng = np.random.default_rng(3)
    X = group.element(2.0 * rng.standard_normal((5, group.dim)))
    ref = np.stack([scipy.linalg.expm(x) for x in X])
    assert rel(group.exp(X), ref) <= ROUNDOFF


def test_su2_coordinate_formulas_match_matrices_and_are_smooth_at_zero():
    # Ad_{exp X} is the rotation by |x| about x; dexp = (e^ad - 1)/ad (from memory)
    import jax

    Ad, dexp = jax.jit(af.su2_Ad), jax.jit(af.su2_dexp)  # compile once, not per eager op
    rng = np.random.default_rng(4)
    xs = np.concatenate([rng.standard_normal((3, 3)) * s for s in (1e-6, 0.3, 2.5)])
    for x in xs:
        y = rng.standard_normal(3)
        g = af.SU2.exp(af.SU2.element(x))
        assert rel(np.asarray(Ad(x, y)), af.SU2.coordinates(af.SU2.conj(g, af.SU2.element(y)))) <= ROUNDOFF
        dg = scipy.linalg.expm_frechet(af.SU2.element(x), af.SU2.element(y))[1]
        right = af.SU2.coordinates(dg @ np.conj(g.T))
        assert rel(np.asarray(dexp(x, y)), right) <= 1e-12
    # second derivative of dexp at 0 along (u, u): d^2/dt^2 dexp(tu) y = 2 * (1/6) u x (u x y)
    u, y = np.array([0.3, -0.2, 0.5]), np.array([1.0, 0.4, -0.7])
    f = lambda t: af.su2_dexp(t * u, y)  # noqa: E731
    second = np.asarray(jax.jit(jax.jacfwd(jax.jacfwd(f)))(0.0))
    assert np.all(np.isfinite(second))
    assert np.allclose(second, np.cross(u, np.cross(u, y)) / 3, rtol=1e-12, atol=1e-15)
