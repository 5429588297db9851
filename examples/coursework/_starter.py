"""Starter code handed out with homework 3 ("Symmetry in mechanics", invented course).

Phase space of one particle: T*R^3 with coordinates x = (q1, q2, q3, p1, p2, p3).
Students import what they need from here and declare two hamcheck.Model objects:

  Part A  angular momentum: SO(3) rotating q and p together, omega = sum dq_i ^ dp_i;
  Part B  a charged particle in the uniform magnetic field (0, 0, b) along the z axis:
          omega_b = sum dq_i ^ dp_i + b dq1 ^ dq2, symmetric under rotations about z.

The file name starts with "_", so `hamcheck check examples/coursework` does not
treat it as a submission.
"""

import jax.numpy as jnp
import numpy as np

import hamcheck

L1 = np.array([[0.0, 0.0, 0.0], [0.0, 0.0, -1.0], [0.0, 1.0, 0.0]])
L2 = np.array([[0.0, 0.0, 1.0], [0.0, 0.0, 0.0], [-1.0, 0.0, 0.0]])
L3 = np.array([[0.0, -1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 0.0]])

SO3 = hamcheck.LieAlgebra.from_matrices([L1, L2, L3], names=["L1", "L2", "L3"])
ROTATIONS_ABOUT_Z = hamcheck.LieAlgebra.from_matrices([L3], names=["Lz"])

#: sum dq_i ^ dp_i as a matrix: omega(u, v) = u^T CANONICAL v
CANONICAL = np.block([[np.zeros((3, 3)), np.eye(3)], [-np.eye(3), np.zeros((3, 3))]])

#: field strength used in Part B
B = 0.7


def split(x):
    return x[:3], x[3:]


def rotate_both(g, x):
    """The cotangent lift of a rotation: g.(q, p) = (g q, g p)."""
    q, p = split(x)
    return jnp.concatenate([g @ q, g @ p])


def magnetic_form(field_strength):
    """omega = sum dq_i ^ dp_i + B3(q) dq1 ^ dq2 for a function B3 of the position q."""

    def form(x):
        b3 = field_strength(x[:3])
        twist = jnp.zeros((6, 6)).at[0, 1].set(b3).at[1, 0].set(-b3)
        return jnp.asarray(CANONICAL) + twist

    return form
