"""Harmonic oscillators on R^2n with a torus acting by chosen integer weights.

Coordinates x = (x_1, y_1, ..., x_n, y_n), z_k = x_k + i y_k, omega = sum dx_k ^ dy_k.
Generator a rotates z_k with speed W[a, k]; moment map mu_a = -sum_k W[a, k] |z_k|^2 / 2
(finite.md row 1, in the project's default convention).
"""

import jax.numpy as jnp
import numpy as np

import hamcheck


def build(weights, name="oscillator"):
    W = np.atleast_2d(np.asarray(weights, dtype=float))
    r, n = W.shape
    rot = np.array([[0.0, -1.0], [1.0, 0.0]])
    basis = [np.kron(np.diag(W[a]), rot) for a in range(r)]
    torus = hamcheck.LieAlgebra.from_matrices(basis, names=[f"t{a + 1}" for a in range(r)])
    Omega = np.kron(np.eye(n), np.array([[0.0, 1.0], [-1.0, 0.0]]))

    def moment(x):
        z2 = x[0::2] ** 2 + x[1::2] ** 2
        return -jnp.asarray(W) @ z2 / 2

    return hamcheck.Model(
        name,
        2 * n,
        form=lambda x: jnp.asarray(Omega),
        algebra=torus,
        moment=moment,
        action=lambda g, x: g @ x,
    )


# a 2-torus acting on C^3 with weights (1, 2, 0) and (0, 1, 3)
oscillator = build([[1, 2, 0], [0, 1, 3]], name="oscillator-C3")
