"""T*R^3 with the cotangent lift of SO(3): g.(q, p) = (g q, g p), mu = q x p.

omega = sum dq_i ^ dp_i; mu^xi(q, p) = <p, X_xi(q)> (finite.md row 5).
"""

import jax.numpy as jnp
import numpy as np

import hamcheck

SO3 = hamcheck.LieAlgebra.from_matrices(
    [
        np.array([[0.0, 0.0, 0.0], [0.0, 0.0, -1.0], [0.0, 1.0, 0.0]]),
        np.array([[0.0, 0.0, 1.0], [0.0, 0.0, 0.0], [-1.0, 0.0, 0.0]]),
        np.array([[0.0, -1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 0.0]]),
    ],
    names=["L1", "L2", "L3"],
)
OMEGA = np.block([[np.zeros((3, 3)), np.eye(3)], [-np.eye(3), np.zeros((3, 3))]])


def moment(x):
    return jnp.cross(x[:3], x[3:])


def lift(g, x):
    return jnp.concatenate([g @ x[:3], g @ x[3:]])


cotangent_so3 = hamcheck.Model(
    "cotangent-SO3", 6, form=lambda x: jnp.asarray(OMEGA), algebra=SO3, moment=moment, action=lift
)
