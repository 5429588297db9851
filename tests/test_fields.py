"""hamcheck._fields: the Hamiltonian vector field solved from omega (one definition for checks and consequences)."""

import jax.numpy as jnp
import numpy as np
import pytest

import hamcheck
from hamcheck._fields import hamiltonian_field
from hamcheck.consequences import _common


def test_plane_rotation_field():
    # omega = dx^dy, H = <mu, xi> = -(x^2 + y^2)/2: v^i omega_ij = d_j H gives v = (-y, x), the rotation
    # (common practice: Hamilton's equations of the harmonic oscillator)
    u1 = hamcheck.LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])])
    plane = hamcheck.Model("plane", 2, form=lambda x: jnp.array([[0.0, 1.0], [-1.0, 0.0]]), algebra=u1,
                           moment=lambda x: jnp.array([-(x @ x) / 2]), action=lambda g, x: g @ x)
    v = hamiltonian_field(plane, jnp.array([0.3, -0.8]), jnp.array([1.0]))
    assert np.asarray(v) == pytest.approx([0.8, 0.3], rel=1e-15)
    negated = hamcheck.Model("plane", 2, form=plane.form, algebra=u1, moment=plane.moment, action=plane.action,
                             convention=hamcheck.Convention(sign=-1))
    assert np.asarray(hamiltonian_field(negated, jnp.array([0.3, -0.8]), jnp.array([1.0]))) == pytest.approx([-0.8, -0.3])


def test_consequences_use_the_same_function():
    assert _common.hamiltonian_field is hamiltonian_field
