"""The upper half-plane with PSL(2, R) acting by Möbius maps.

omega = dx ^ dy / y^2; basis H = diag(1, -1), E = e_12, F = e_21 of sl(2, R);
mu^H = -2x/y, mu^E = -1/y, mu^F = (x^2 + y^2)/y (docs/references.md F6).
The chart is the whole upper half-plane: its domain is declared as y > 0, so
integrals and searches stay in it.
"""

import jax.numpy as jnp
import numpy as np

import hamcheck

SL2 = hamcheck.LieAlgebra.from_matrices(
    [np.array([[1.0, 0.0], [0.0, -1.0]]), np.array([[0.0, 1.0], [0.0, 0.0]]), np.array([[0.0, 0.0], [1.0, 0.0]])],
    names=["H", "E", "F"],
)


def form(x):
    return jnp.array([[0.0, 1.0], [-1.0, 0.0]]) / x[1] ** 2


def moment(x):
    return jnp.array([-2 * x[0] / x[1], -1 / x[1], (x[0] ** 2 + x[1] ** 2) / x[1]])


def mobius(g, x):
    z = x[0] + 1j * x[1]
    w = (g[0, 0] * z + g[0, 1]) / (g[1, 0] * z + g[1, 1])
    return jnp.array([w.real, w.imag])


def sample(rng):
    return np.array([rng.standard_normal(), np.exp(0.5 * rng.standard_normal())])


half_plane = hamcheck.Model("half-plane", 2, form=form, algebra=SL2, moment=moment, action=mobius, sample=sample,
                            domain=[(-np.inf, np.inf), (0.0, np.inf)], chart_labels=["x", "y"])
